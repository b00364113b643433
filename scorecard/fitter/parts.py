"""Fitting a table too large to hold as one design matrix: the design is made a part of the rows at a time."""

from __future__ import annotations

import warnings

import numpy as np
from scipy import linalg, special

from ..errors import FitError, ScorecardWarning
from .guards import CLEARLY_FULL_RANK, quoted
from .result import INTERCEPT_NAME, FitResult
from .solvers import DEFAULT_MAX_ITERATIONS, MAX_HALVINGS

PART_ROWS = 250_000  # rows of the design made at a time; memory stays at PART_ROWS × columns × 8 bytes
_SEPARATED_SIZE = 30.0  # a coefficient this large on unit-scale WoE columns means probabilities of e^-30


def fit_logistic_by_parts(design_part, goods, bads, *, names, start=None, part_rows: int = PART_ROWS,
                          max_iterations: int | None = None, tolerance: float = 1e-12) -> FitResult:
    """Fit the log-odds of good:bad by Newton's method, making the design a part of the rows at a time.

    For pattern tables of millions of rows, whose design matrix would not fit in memory beside
    the fitter's working copies. Each step sums the score and the information over the parts;
    the step is halved while the cost does not fall.

    Parameters
    ----------
    design_part : callable
        ``design_part(rows)`` returns the features (no intercept column) of the rows in the slice
        ``rows``, as a float array of shape (rows, p).
    goods, bads : numpy.ndarray
        Weighted goods and bads per row.
    names : sequence of str
        The p characteristics' names.
    start : array_like, optional
        Coefficients to start from, intercept first (default: the intercept-only estimate).
    part_rows : int
        Rows per part.
    max_iterations : int, optional
        Most Newton steps (default 100).
    tolerance : float
        Stop when half the Newton decrement (the predicted fall of the cost) is below this.

    Returns
    -------
    FitResult
        As ``fit_logistic`` with the Newton solver; ``solver`` is "newton (by parts)".

    Raises
    ------
    FitError
        The information matrix is singular (dependent characteristics, named), or the estimates
        grow without bound (goods and bads separated; the largest coefficients are named).

    Notes
    -----
    The same maximum-likelihood estimates as ``fit_logistic``: the cost, its gradient and the
    information are sums over rows, so summing them part by part changes nothing but rounding.
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    names = (INTERCEPT_NAME, *names)
    total = float(goods.sum() + bads.sum())
    parts = [slice(first, min(first + part_rows, len(goods))) for first in range(0, len(goods), part_rows)]
    beta = np.zeros(len(names)) if start is None else np.asarray(start, float).copy()
    if start is None:
        beta[0] = np.log(goods.sum()) - np.log(bads.sum())
    limit = DEFAULT_MAX_ITERATIONS["newton"] if max_iterations is None else max_iterations

    def design(rows):
        return np.column_stack([np.ones(rows.stop - rows.start), design_part(rows)])

    def cost(b):
        return sum(_part_cost(design(rows) @ b, goods[rows], bads[rows]) for rows in parts) / total

    def score_and_information(b):
        score, information = np.zeros(len(b)), np.zeros((len(b), len(b)))
        for rows in parts:
            x = design(rows)
            good_probability = special.expit(x @ b)
            score += x.T @ (goods[rows] - (goods[rows] + bads[rows]) * good_probability)
            weight = (goods[rows] + bads[rows]) * good_probability * (1 - good_probability)
            information += (x * weight[:, None]).T @ x
        return score, information

    trace, converged, iterations = [cost(beta)], False, 0
    while iterations < limit:
        score, information = score_and_information(beta)
        step = _solve_information(information, score, names)
        decrease = float(score @ step) / (2 * total)  # half the Newton decrement, per unit weight
        if decrease < tolerance:
            # near the optimum the full step is the last quadratic correction: take it, and stop
            beta, iterations, converged = beta + step, iterations + 1, True
            trace.append(cost(beta))
            break
        for halvings in range(MAX_HALVINGS):
            candidate = beta + step * 0.5**halvings
            candidate_cost = cost(candidate)
            if candidate_cost <= trace[-1]:
                break
        else:
            converged = True  # no fraction of the step lowers the cost: the optimum to rounding
            break
        beta, iterations = candidate, iterations + 1
        trace.append(candidate_cost)
        if np.abs(beta[1:]).max(initial=0.0) > _SEPARATED_SIZE:
            largest = [names[j] for j in np.argsort(-np.abs(beta))[:3] if j > 0]
            raise FitError(
                f"the estimates grow without bound: goods and bads look separated by {quoted(largest)}. "
                "Group their bins more coarsely, or leave one of them out."
            )
    score, information = score_and_information(beta)
    covariance = _solve_information(information, np.eye(len(beta)), names)
    covariance = (covariance + covariance.T) / 2
    std_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    z_values = np.divide(beta, std_errors, out=np.full_like(beta, np.nan), where=std_errors > 0)
    log_likelihood = -trace[-1] * total
    deviance = -2.0 * log_likelihood
    if not converged:
        warnings.warn(f"the fit stopped after {iterations} Newton steps before converging.", ScorecardWarning, stacklevel=2)
    return FitResult(
        names=names, coefficients=beta, std_errors=std_errors, z_values=z_values,
        p_values=2.0 * special.ndtr(-np.abs(z_values)), covariance=covariance, log_likelihood=log_likelihood,
        deviance=deviance, aic=deviance + 2 * beta.size, bic=deviance + beta.size * np.log(total), n_observations=total,
        iterations=iterations, converged=converged, cost_trace=tuple(trace), solver="newton (by parts)", l2=0.0,
    )


def _part_cost(eta: np.ndarray, goods: np.ndarray, bads: np.ndarray) -> float:
    return float(goods @ np.logaddexp(0.0, -eta) + bads @ np.logaddexp(0.0, eta))


def _solve_information(information: np.ndarray, right: np.ndarray, names) -> np.ndarray:
    """Solve ``information · x = right`` by Cholesky on the unit-diagonal rescaling; name dependent columns."""
    scale = np.sqrt(np.clip(np.diag(information), np.finfo(float).tiny, None))
    scaled = information / np.outer(scale, scale)
    try:
        factor = linalg.cho_factor(scaled)
    except linalg.LinAlgError:
        factor = None
    eigenvalues, vectors = np.linalg.eigh(scaled)
    if factor is None or eigenvalues[0] < CLEARLY_FULL_RANK * eigenvalues[-1]:
        involved = [names[j] for j in np.flatnonzero(np.abs(vectors[:, 0]) > 0.1) if j > 0]
        raise FitError(
            f"characteristics {quoted(involved)} are linearly dependent (or nearly), so their coefficients cannot "
            "be told apart. Leave one of them out."
        )
    right = np.asarray(right, float)
    solved = linalg.cho_solve(factor, right / (scale if right.ndim == 1 else scale[:, None]))
    return solved / (scale if solved.ndim == 1 else scale[:, None])
