"""Fitting where the rows are: Newton's method on sums an engine adds up, one pass over the rows per step.

When a pattern table is too large to bring into this process, the engine that holds it (a SQL
engine, a cluster) adds up, at given coefficients, everything a Newton step needs: the negative
log-likelihood, the score vector and the information matrix (the weighted cross-product). Here
those sums are turned into steps, with step-halving and the same stopping rule and tolerances as
``fit_logistic`` with the Newton solver, and into the same kind of result. The estimates agree
with an in-memory fit on the same table to the tolerance of the fit (not to the last bit: the
engine adds in its own order).
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy import linalg, special

from ..errors import FitError, ScorecardWarning
from .result import INTERCEPT_NAME, FitResult
from .solvers import DEFAULT_MAX_ITERATIONS, MAX_HALVINGS, not_converged_message


@dataclass(frozen=True)
class Sums:
    """What one pass over the rows returns at some coefficients (intercept first).

    Attributes
    ----------
    loss : float
        Σ goods·ln(1 + e^−η) + bads·ln(1 + e^η), the negative log-likelihood.
    score : numpy.ndarray
        Σ x·(goods·(1 − p) − bads·p), the gradient of the log-likelihood.
    information : numpy.ndarray
        Σ (goods + bads)·p·(1 − p)·x·x', minus its Hessian.
    """

    loss: float
    score: np.ndarray
    information: np.ndarray


def fit_logistic_by_sums(sums: Callable[[np.ndarray], tuple], *, names: Sequence[str], goods: float, bads: float,
                         spread: np.ndarray, max_iterations: int | None = None, tolerance: float = 1e-10,
                         gradient_tolerance: float = 1e-11) -> FitResult:
    """Fit the log-odds of good:bad by Newton's method, each step from one pass of sums over the rows.

    Parameters
    ----------
    sums : callable
        ``sums(beta)`` returns (loss, score, information) at coefficients ``beta`` (intercept first):
        the fields of ``Sums``, from one pass over the rows.
    names : sequence of str
        The characteristics' names.
    goods, bads : float
        Total weighted goods and bads (the start is the intercept-only estimate ln(goods / bads)).
    spread : numpy.ndarray
        The weighted standard deviation of each characteristic's column: the stopping rule judges
        the gradient in standardised units, as ``fit_logistic`` does.
    max_iterations, tolerance, gradient_tolerance
        As for ``fit_logistic`` with the Newton solver.

    Returns
    -------
    FitResult
        ``solver`` is "newton (in the engine)".

    Raises
    ------
    FitError
        The information matrix is singular (characteristics that depend on each other, or goods
        and bads separated); the message names the columns it can.
    """
    names = (INTERCEPT_NAME, *map(str, names))
    total = float(goods + bads)
    limit = DEFAULT_MAX_ITERATIONS["newton"] if max_iterations is None else int(max_iterations)
    beta = np.zeros(len(names))
    beta[0] = np.log(goods) - np.log(bads)
    scale = np.concatenate([[1.0], np.asarray(spread, dtype=float)])
    def at(coefficients: np.ndarray) -> Sums:
        loss, score, information = sums(coefficients)
        return Sums(float(loss), np.asarray(score, dtype=float), np.asarray(information, dtype=float))

    current = at(beta)
    trace, decrease = [current.loss / total], np.inf

    def met(decrease: float, point: Sums) -> bool:
        return decrease <= tolerance and float(np.max(np.abs(point.score * scale))) / total <= gradient_tolerance

    while not met(decrease, current) and len(trace) <= limit:
        step = _newton_step(current, names)
        for halvings in range(MAX_HALVINGS):
            candidate = beta + step * 0.5**halvings
            found = at(candidate)
            if found.loss <= current.loss:
                break
        else:  # no fraction of the step lowers the cost: only the gradient can still tell
            decrease = 0.0
            break
        decrease = (current.loss - found.loss) / total
        beta, current = candidate, found
        trace.append(found.loss / total)
    result = _result(beta, current, names, total, len(trace) - 1, met(decrease, current), tuple(trace))
    if not result.converged:
        warnings.warn(not_converged_message(result), ScorecardWarning, stacklevel=2)
    return result


def _newton_step(at: Sums, names: tuple[str, ...]) -> np.ndarray:
    """Solve information · step = score, with the information scaled to a unit diagonal first (Jacobi)."""
    diagonal = np.sqrt(np.clip(np.diag(at.information), np.finfo(float).tiny, None))
    scaled = at.information / np.outer(diagonal, diagonal)
    try:
        return linalg.cho_solve(linalg.cho_factor(scaled), at.score / diagonal) / diagonal
    except linalg.LinAlgError:
        raise FitError(_singular_message(scaled, names)) from None


def _singular_message(scaled: np.ndarray, names: tuple[str, ...]) -> str:
    values, vectors = linalg.eigh(scaled)
    involved = [names[j] for j in np.flatnonzero(np.abs(vectors[:, 0]) > 0.1)]
    return (f"the model cannot be fitted: the information matrix is singular (smallest eigenvalue {values[0]:.3g}); "
            f"{', '.join(map(repr, involved))} depend on each other or separate goods from bads. "
            "Leave one of them out, or join the classes that hold only goods or only bads.")


def _result(beta: np.ndarray, at: Sums, names: tuple[str, ...], total: float, iterations: int, converged: bool,
            trace: tuple[float, ...]) -> FitResult:
    diagonal = np.sqrt(np.clip(np.diag(at.information), np.finfo(float).tiny, None))
    scaled = at.information / np.outer(diagonal, diagonal)
    covariance = linalg.cho_solve(linalg.cho_factor(scaled), np.eye(len(beta))) / np.outer(diagonal, diagonal)
    covariance = (covariance + covariance.T) / 2
    std_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    z_values = np.divide(beta, std_errors, out=np.full_like(beta, np.nan), where=std_errors > 0)
    log_likelihood = -at.loss
    return FitResult(
        names=names, coefficients=beta, std_errors=std_errors, z_values=z_values, p_values=2.0 * special.ndtr(-np.abs(z_values)),
        covariance=covariance, log_likelihood=log_likelihood, deviance=-2.0 * log_likelihood,
        aic=-2.0 * log_likelihood + 2 * beta.size, bic=-2.0 * log_likelihood + beta.size * np.log(total),
        n_observations=total, iterations=iterations, converged=converged, cost_trace=trace,
        solver="newton (in the engine)", l2=0.0,
    )
