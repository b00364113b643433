"""Nested fits on one design in memory: the trial fits of a stepwise search and the score tests between them.

A stepwise search fits a model, score-tests every column outside it, lets the best one in and
fits again, many times over the same rows. Here each point the search visits is evaluated in one
pass over the rows: the fitted probabilities, the score (the gradient of the log-likelihood) and
the information (the weighted cross-product) of the model's columns. That one cross-product
serves the point's Newton step and, at the estimate, the fit's covariance; widened to the columns
outside the model, it gives their score tests (``score_parts``). The next model starts at the
same point, its newcomer's coefficient at 0, so the widened cross-product is also its first
Newton step, at no cost.

A trial fit stops when its next Newton step would move no coefficient by more than
``RANKING_TOLERANCE`` of its standard error. The statistics a search decides by (score
statistics, Wald z-values) are then within about that many standard errors of their values at
the exact estimate, far inside anything a decision or a logged p-value could show; the stopping
rule of ``fit_logistic`` asks for one or two Newton steps more. The model a search ends with is
fitted again by ``fit_logistic``, to its full tolerance and with its guards.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass

import numpy as np
from scipy import linalg, special
from scipy.linalg import blas

from ..errors import FitError
from .guards import numerically_singular_message
from .problem import CHUNK_ROWS, Problem, SingularInformation
from .result import INTERCEPT_NAME, FitResult
from .solvers import DEFAULT_MAX_ITERATIONS, MAX_HALVINGS

# A trial fit stops when no coefficient's next Newton step exceeds this share of its standard error.
RANKING_TOLERANCE = 1e-6

# Newton steps under this many standard errors are taken without checking that the log-likelihood
# rises: so close to the estimate its quadratic model is exact far beyond the rounding of the change.
UNCHECKED_STEP = 1e-4


class NestedFits:
    """Trial fits of models made of columns of one design, and score tests of the columns outside each.

    Parameters
    ----------
    design : numpy.ndarray, shape (n_rows, p)
        One column per candidate (no intercept column; every model has an intercept). Read, never written.
    goods, bads : numpy.ndarray, shape (n_rows,)
        Weighted goods and bads per row.
    names : sequence of str
        The candidates' names, one per column.
    l2 : float
        Ridge penalty on every coefficient but the intercept, as for ``fit_logistic``.
    max_iterations : int, optional
        Most Newton steps per fit (default 100).
    """

    def __init__(self, design: np.ndarray, goods: np.ndarray, bads: np.ndarray, *, names: Sequence[str],
                 l2: float = 0.0, max_iterations: int | None = None):
        self.design = design
        self.names = (INTERCEPT_NAME, *names)  # by column: 0 is the intercept
        self.column = {name: j for j, name in enumerate(self.names)}
        self.goods, self.bads = np.asarray(goods, dtype=float), np.asarray(bads, dtype=float)
        self.weights = self.goods + self.bads
        self.total = float(self.weights.sum())
        self.l2 = float(l2)
        self.max_iterations = max_iterations or DEFAULT_MAX_ITERATIONS["newton"]
        self._last: _Point | None = None  # the last fit's estimate, where the next fit starts
        self._widened: _Widened | None = None  # the last cross-product widened for score tests

    def fit(self, names: Sequence[str]) -> FitResult:
        """Fit the model of these columns, from the last fit's estimate (a newcomer's coefficient at 0).

        Returns
        -------
        FitResult
            As ``fit_logistic`` gives, with ``converged`` meaning the ranking tolerance was met.

        Raises
        ------
        FitError
            The information matrix is numerically singular (dependent or separating columns).
        """
        columns = (0, *(self.column[name] for name in names))
        point = self._start(columns)
        trace, iterations, settled = [point.cost(self.l2)], 0, False
        while True:
            step, covariance = self._newton_step(point)
            standard_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
            moves = np.abs(step) / np.where(standard_errors > 0, standard_errors, 1.0)
            settled = bool(np.all(moves <= RANKING_TOLERANCE))
            if settled or iterations >= self.max_iterations:
                break
            following = self._step(point, step, checked=not np.all(moves <= UNCHECKED_STEP))
            if following is None:  # no fraction of the step raises the log-likelihood: rounding decides
                break
            point, iterations = following, iterations + 1
            trace.append(point.cost(self.l2))
        self._last = point
        return self._result((INTERCEPT_NAME, *names), point, covariance, iterations, settled, trace)

    def score_parts(self, fit: FitResult | None, candidates: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
        """Return the score U and its variance V of adding each candidate to a fitted model (None: the intercept alone).

        Notes
        -----
        U = z'(g − nπ), V = z'Wz − z'WX (X'WX)⁻¹ X'Wz with W = nπ(1 − π), all at the model's
        estimate; U²/V is the score (Rao) statistic, χ² with one degree of freedom under the null
        (C. R. Rao, 1948; standard in stepwise logistic regression).
        """
        point = self._point_of(fit)
        wanted = [self.column[name] for name in candidates]
        columns = point.columns + tuple(dict.fromkeys(c for c in wanted if c not in point.columns))
        score, information = self._widen(point, columns)
        self._widened = _Widened(point, columns, score, information)
        inside = np.arange(len(point.columns))
        outside = np.array([columns.index(c) for c in wanted], dtype=int)
        cross = information[np.ix_(inside, outside)]
        explained = np.einsum("ij,ij->j", cross, linalg.solve(information[np.ix_(inside, inside)], cross, assume_a="pos"))
        return score[outside], information[outside, outside] - explained

    # ----------------------------------------------------------------------------------------

    def _start(self, columns: tuple[int, ...]) -> _Point:
        """The first point of a fit: the last estimate, newcomers at 0; its evaluation reused when one was made there."""
        last = self._last
        if last is None:
            beta = np.zeros(len(columns))
            beta[0] = np.log(self.goods.sum()) - np.log(self.bads.sum())  # the intercept-only estimate
            return self._evaluate(columns, beta)
        known = dict(zip(last.columns, last.beta))
        beta = np.array([known.get(c, 0.0) for c in columns])
        widened = self._widened
        if (widened is not None and widened.point is last and set(last.columns) <= set(columns)
                and set(columns) <= set(widened.columns)):
            # the same linear predictor as the last estimate: its widened cross-product is this point's
            where = [widened.columns.index(c) for c in columns]
            return _Point(columns, beta, last.curvature, last.residual, last.row_loss, last.loss,
                          widened.score[where], widened.information[np.ix_(where, where)])
        return self._evaluate(columns, beta)

    def _point_of(self, fit: FitResult | None) -> _Point:
        if fit is None:
            columns, beta = (0,), np.array([np.log(self.goods.sum()) - np.log(self.bads.sum())])
        else:
            columns, beta = (0, *(self.column[name] for name in fit.names[1:])), np.asarray(fit.coefficients)
        last = self._last
        if last is not None and last.columns == columns and np.array_equal(last.beta, beta):
            return last
        point = self._evaluate(columns, beta)
        self._last = point
        return point

    def _newton_step(self, point: _Point) -> tuple[np.ndarray, np.ndarray]:
        """The Newton step of the penalised log-likelihood at the point, and the inverse of its curvature."""
        ridge = np.full(len(point.columns), self.l2)
        ridge[0] = 0.0
        curvature = point.information + np.diag(ridge)
        try:
            factor = linalg.cho_factor(curvature)
        except linalg.LinAlgError:
            raise self._singular(point, curvature) from None
        covariance = linalg.cho_solve(factor, np.eye(len(point.columns)))
        return linalg.cho_solve(factor, point.score - ridge * point.beta), (covariance + covariance.T) / 2

    def _step(self, point: _Point, step: np.ndarray, *, checked: bool) -> _Point | None:
        """The first of step, step/2, step/4, … that does not lower the penalised log-likelihood."""
        for halvings in range(MAX_HALVINGS):
            following = self._evaluate(point.columns, point.beta + step * 0.5**halvings, previous=point)
            penalty = 0.5 * self.l2 * float(following.beta[1:] @ following.beta[1:] - point.beta[1:] @ point.beta[1:])
            if not checked or following.change + penalty <= 0:
                return following
        return None

    def _evaluate(self, columns: tuple[int, ...], beta: np.ndarray, previous: _Point | None = None) -> _Point:
        """One pass over the rows at ``beta``: probabilities, score and information, and the change in loss from ``previous``."""
        n_rows, k = len(self.goods), len(columns)
        curvature, residual, row_loss = np.empty(n_rows), np.empty(n_rows), np.empty(n_rows)
        score, upper, change = np.zeros(k), np.zeros((k, k), order="F"), 0.0
        for rows, chunk in self._chunks(columns):
            eta = chunk @ beta
            good, bad = special.expit(eta), special.expit(-eta)
            goods, bads = self.goods[rows], self.bads[rows]
            residual[rows] = goods * bad - bads * good
            curvature[rows] = self.weights[rows] * good * bad
            # each row's loss from the probabilities it already has; the change is added up row by
            # row, so it keeps its own precision where the loss itself could not show it
            row_loss[rows] = -(goods * np.log(good) + bads * np.log(bad))
            score += chunk.T @ residual[rows]
            upper = blas.dsyrk(1.0, chunk * np.sqrt(curvature[rows])[:, None], beta=1.0, c=upper, trans=1, overwrite_c=1)
            if previous is not None:
                change += float(np.sum(row_loss[rows] - previous.row_loss[rows]))
        loss = float(row_loss.sum()) if previous is None else previous.loss + change
        information = np.triu(upper) + np.triu(upper, 1).T
        return _Point(columns, beta, curvature, residual, row_loss, loss, score, information, change)

    def _widen(self, point: _Point, columns: tuple[int, ...]) -> tuple[np.ndarray, np.ndarray]:
        """Score and information over more columns at a point already evaluated (its weights kept)."""
        k = len(columns)
        score, upper = np.zeros(k), np.zeros((k, k), order="F")
        for rows, chunk in self._chunks(columns):
            score += chunk.T @ point.residual[rows]
            upper = blas.dsyrk(1.0, chunk * np.sqrt(point.curvature[rows])[:, None], beta=1.0, c=upper, trans=1,
                               overwrite_c=1)
        return score, np.triu(upper) + np.triu(upper, 1).T

    def _chunks(self, columns: tuple[int, ...]) -> Iterator[tuple[slice, np.ndarray]]:
        """The chosen columns (0: the intercept's ones) of a chunk of rows at a time, column by column in memory."""
        n_rows = len(self.goods)
        buffer = np.empty((min(CHUNK_ROWS, n_rows), len(columns)), order="F")
        for first in range(0, n_rows, CHUNK_ROWS):
            rows = slice(first, min(first + CHUNK_ROWS, n_rows))
            chunk = buffer[: rows.stop - rows.start]
            for position, column in enumerate(columns):
                if column == 0:
                    chunk[:, position] = 1.0
                else:
                    chunk[:, position] = self.design[rows, column - 1]
            yield rows, chunk

    def _singular(self, point: _Point, curvature: np.ndarray) -> FitError:
        names = tuple(self.names[column] for column in point.columns)
        design = np.column_stack([np.ones(len(self.goods)), *(self.design[:, c - 1] for c in point.columns[1:])])
        scale = np.sqrt(np.clip(np.diag(curvature), np.finfo(float).tiny, None))
        problem = Problem(design, self.goods, self.bads, np.zeros(len(names)), True)
        singular = SingularInformation(curvature / np.outer(scale, scale), problem, point.beta)
        return FitError(numerically_singular_message(singular, names, intercept=True))

    def _result(self, names, point: _Point, covariance, iterations: int, settled: bool, trace) -> FitResult:
        standard_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
        z_values = np.divide(point.beta, standard_errors, out=np.full_like(point.beta, np.nan), where=standard_errors > 0)
        deviance = 2.0 * point.loss
        return FitResult(
            names=names, coefficients=point.beta, std_errors=standard_errors, z_values=z_values,
            p_values=2.0 * special.ndtr(-np.abs(z_values)), covariance=covariance, log_likelihood=-point.loss,
            deviance=deviance, aic=deviance + 2 * point.beta.size, bic=deviance + point.beta.size * np.log(self.total),
            n_observations=self.total, iterations=iterations, converged=settled,
            cost_trace=tuple(cost / self.total for cost in trace), solver="newton", l2=self.l2,
        )


@dataclass(frozen=True, eq=False)
class _Point:
    """A model's coefficients and what one pass over the rows gives at them."""

    columns: tuple[int, ...]  # design columns, 0 the intercept
    beta: np.ndarray
    curvature: np.ndarray  # n·π(1 − π) per row
    residual: np.ndarray  # goods·(1 − π) − bads·π per row
    row_loss: np.ndarray  # −(goods·ln π + bads·ln(1 − π)) per row
    loss: float  # negative log-likelihood, without the penalty
    score: np.ndarray  # X'residual over the columns
    information: np.ndarray  # X' diag(curvature) X over the columns
    change: float = 0.0  # the loss less the loss at the point this one was stepped to from, to its own rounding

    def cost(self, l2: float) -> float:
        """The loss with the ridge penalty on every coefficient but the intercept."""
        return self.loss + 0.5 * l2 * float(self.beta[1:] @ self.beta[1:])


@dataclass(frozen=True, eq=False)
class _Widened:
    """A point's score and information over more columns than its model's (for score tests)."""

    point: _Point
    columns: tuple[int, ...]
    score: np.ndarray
    information: np.ndarray
