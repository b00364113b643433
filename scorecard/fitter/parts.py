"""Fitting a table too large to hold as one design matrix: the same fit, its design made a part of the rows at a time.

The cost, its gradient and its curvature are sums over rows, so they are added up part by part
(``scorecard.fitter.problem.Parts``) and everything else is the core's own: the same
standardisation, Newton's method with the same stopping rule, the same guards against dependence
and separation, and the same result. Only memory differs: ``part_rows`` rows of the design at a time.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np

from ..errors import FitError, ScorecardWarning
from .guards import raise_if_dependent
from .inputs import check_names, checked_counts, checked_start
from .problem import PartCounts, Parts, design_matrix, make_problem, no_standardisation
from .result import INTERCEPT_NAME, FitResult
from .solvers import DEFAULT_MAX_ITERATIONS, StoppingRule, fit_problem, not_converged_message

PART_ROWS = 250_000  # rows of the design made at a time; memory stays at PART_ROWS × columns × 8 bytes


def fit_logistic_by_parts(design_part, goods, bads, *, names, start=None, part_rows: int = PART_ROWS,
                          max_iterations: int | None = None, tolerance: float = 1e-10,
                          gradient_tolerance: float = 1e-11, guard: bool = True) -> FitResult:
    """Fit the log-odds of good:bad by Newton's method, making the design a part of the rows at a time.

    For pattern tables of millions of rows, whose design matrix would not fit in memory beside
    the fitter's working copies.

    Parameters
    ----------
    design_part : callable
        ``design_part(rows)`` returns the features (no intercept column) of the rows in the slice
        ``rows``, as a float array of shape (rows, p).
    goods, bads : numpy.ndarray or PartCounts
        Weighted goods and bads per row; or made a part at a time (``PartCounts``, checked where they were
        made: a row table kept on disk).
    names : sequence of str
        The p characteristics' names.
    start : array_like, optional
        Coefficients to start from, intercept first (default: the intercept-only estimate).
    part_rows : int
        Rows per part.
    max_iterations, tolerance, gradient_tolerance, guard
        As for ``fit_logistic`` with the Newton solver.

    Returns
    -------
    FitResult
        As ``fit_logistic`` with the Newton solver; ``solver`` is "newton (by parts)".

    Raises
    ------
    FitError
        As ``fit_logistic``: dependent characteristics or separated goods and bads are named.

    Notes
    -----
    The same maximum-likelihood estimates as ``fit_logistic``: the cost, its gradient and the
    information are sums over rows, so summing them part by part changes nothing but rounding.
    """
    names = tuple(map(str, names))
    check_names(names, len(names))
    goods, bads = (goods, bads) if isinstance(goods, PartCounts) else checked_counts(goods, bads, len(np.asarray(goods)))
    all_names = (INTERCEPT_NAME, *names)
    if part_rows < 1:
        raise FitError(f"part_rows = {part_rows!r}: give a whole number >= 1.")

    def make(rows: slice) -> np.ndarray:
        return design_matrix(np.asarray(design_part(rows), dtype=float), True)

    problem = make_problem(Parts(make, len(goods), len(all_names), part_rows), goods, bads, l2=0.0, intercept=True)
    start = None if start is None else checked_start(start, all_names)
    if guard:
        raise_if_dependent(problem, all_names)
    limit = DEFAULT_MAX_ITERATIONS["newton"] if max_iterations is None else int(max_iterations)
    rule = StoppingRule(limit, tolerance, gradient_tolerance, no_standardisation(problem))
    result = fit_problem(problem, all_names, rule, solver="newton", l2=0.0, start=start, standardise=True, checks=guard)
    if not result.converged:
        warnings.warn(not_converged_message(result), ScorecardWarning, stacklevel=2)
    return dataclasses.replace(result, solver="newton (by parts)")
