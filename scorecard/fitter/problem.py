"""The problem and its cost: the log-likelihood of good:bad odds on weighted rows, its gradient and curvature.

Inner functions work on the cost: the penalised negative log-likelihood per unit weight, which is
of order one whatever the total weight. Standardisation (columns centred and scaled by their
weighted mean and standard deviation) changes the coordinates the solvers work in, not the
problem; it is called standardisation here, never scaling, which is the points scaling's word.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass

import numpy as np
from scipy import linalg, special
from scipy.linalg import blas


# Rows of the design worked on at a time where a pass makes a temporary of the design's size (a Gram
# matrix, the spread of the columns): 32,768 rows of 17 columns are 4.5 MB, which the cache holds.
CHUNK_ROWS = 32_768


# A column whose weighted standard deviation is below this share of its largest value is constant
# but for rounding in the mean.
_CONSTANT_SPREAD = 1e-10


def log_likelihood(beta, design, goods, bads, *, l2: float = 0.0, intercept: bool = True) -> float:
    """Return ``Σ goods·ln p + bads·ln(1 − p)``, less ``l2·Σ b_j²/2`` when ``l2 > 0``.

    Parameters
    ----------
    beta : array_like, shape (k,)
        Coefficients, one per column of ``design``.
    design : array_like, shape (n_rows, k)
        Characteristics, with the intercept column of ones first when the model has one.
    goods, bads : array_like, shape (n_rows,)
        Weighted counts of goods and of bads per row.
    l2 : float
        Ridge penalty on every coefficient but the first when ``intercept`` is true.
    intercept : bool
        Whether the first column of ``design`` is the intercept, which the penalty leaves out.

    Returns
    -------
    float
        The (penalised) log-likelihood. Inputs are trusted; :func:`fit_logistic` validates.

    Notes
    -----
    ``ln p = −ln(1 + e^{−η})`` and ``ln(1 − p) = −ln(1 + e^{η})`` are evaluated with
    ``numpy.logaddexp(0, ·)``, which neither overflows nor loses the small terms.
    """
    problem = make_problem(design, goods, bads, l2=l2, intercept=intercept)
    return -cost(problem, np.asarray(beta, dtype=float)) * problem.total_weight


def gradient(beta, design, goods, bads, *, l2: float = 0.0, intercept: bool = True) -> np.ndarray:
    """Return the score, the gradient of :func:`log_likelihood` with respect to ``beta``.

    Parameters
    ----------
    beta, design, goods, bads, l2, intercept
        As for :func:`log_likelihood`.

    Returns
    -------
    numpy.ndarray, shape (k,)
        ``X'(goods·(1 − p) − bads·p) − l2·b`` (the intercept not penalised).

    Notes
    -----
    ``1 − p`` is computed as ``expit(−η)``, not by subtraction, so residuals of rows fitted close
    to 0 or 1 keep their precision (McCullagh and Nelder, 1989, section 4.4, from memory).
    """
    problem = make_problem(design, goods, bads, l2=l2, intercept=intercept)
    return -cost_gradient(problem, np.asarray(beta, dtype=float)) * problem.total_weight


def information_matrix(beta, design, goods, bads, *, l2: float = 0.0, intercept: bool = True) -> np.ndarray:
    """Return the information matrix, minus the Hessian of :func:`log_likelihood`.

    Parameters
    ----------
    beta, design, goods, bads, l2, intercept
        As for :func:`log_likelihood`.

    Returns
    -------
    numpy.ndarray, shape (k, k)
        ``X' diag((goods + bads)·p·(1 − p)) X + l2·diag(0, 1, …, 1)``.

    Notes
    -----
    For the logit link the observed and expected information are equal, so Newton's method and
    Fisher scoring (IRLS) take the same steps (McCullagh and Nelder, 1989, section 4.4, from memory).
    """
    problem = make_problem(design, goods, bads, l2=l2, intercept=intercept)
    return cost_hessian(problem, np.asarray(beta, dtype=float)) * problem.total_weight


@dataclass(frozen=True, eq=False)
class Parts:
    """A design too large to hold, made a part of the rows at a time: ``make(rows)`` gives the rows in a slice.

    Every sum over rows (the cost, its gradient and curvature, the column moments) is added up
    part by part, so memory stays at ``part_rows`` × columns; a row source that keeps the rows
    elsewhere can add up the same sums where they are.
    """

    make: Callable[[slice], np.ndarray]
    n_rows: int
    n_columns: int
    part_rows: int

    @property
    def shape(self) -> tuple[int, int]:
        return self.n_rows, self.n_columns

    def blocks(self) -> Iterator[tuple[slice, np.ndarray]]:
        for first in range(0, self.n_rows, self.part_rows):
            rows = slice(first, min(first + self.part_rows, self.n_rows))
            yield rows, self.make(rows)


@dataclass(frozen=True, eq=False)
class PartCounts:
    """Goods (or bads) per row of a table too large to hold, made a part of the rows at a time, as ``Parts``
    makes its design: ``counts[rows]`` for a slice of rows, and their total known beforehand.

    ``total`` must be the sum the array of all of them would give (``numpy.sum``): a count of rows
    of unit weight is exact in any order, which is what the row tables kept on disk hold.
    """

    part: Callable[[slice], np.ndarray]
    n_rows: int
    total: float

    def __getitem__(self, rows: slice) -> np.ndarray:
        return self.part(rows)

    def __len__(self) -> int:
        return self.n_rows

    @property
    def shape(self) -> tuple[int]:
        return (self.n_rows,)

    def sum(self) -> float:
        return self.total


def blocks(design: np.ndarray | Parts) -> Iterator[tuple[slice, np.ndarray]]:
    """The design's rows as (slice, columns) blocks: one block for a design in memory."""
    if isinstance(design, Parts):
        yield from design.blocks()
    else:
        yield slice(None), design


@dataclass(frozen=True, eq=False)
class Problem:
    design: np.ndarray | Parts
    goods: np.ndarray | PartCounts
    bads: np.ndarray | PartCounts
    ridge: np.ndarray  # penalty per coefficient: 0 for the intercept, l2 for the others
    intercept: bool

    def weights(self, rows: slice = slice(None)) -> np.ndarray:
        """Goods plus bads of some rows (of one block: the sum of every row's would be made anew at each call)."""
        return self.goods[rows] + self.bads[rows]

    @property
    def total_weight(self) -> float:
        return float(self.goods.sum() + self.bads.sum())

    @property
    def intercept_only(self) -> np.ndarray:
        """The intercept-only estimate, ln(total goods / total bads), when there is an intercept."""
        beta = np.zeros(self.design.shape[1])
        if self.intercept:
            beta[0] = np.log(self.goods.sum()) - np.log(self.bads.sum())
        return beta


def make_problem(design, goods, bads, *, l2: float, intercept: bool) -> Problem:
    design = design if isinstance(design, Parts) else np.asarray(design, dtype=float)
    ridge = np.full(design.shape[1], float(l2))
    if intercept and ridge.size:
        ridge[0] = 0.0
    goods, bads = (counts if isinstance(counts, PartCounts) else np.asarray(counts, dtype=float) for counts in (goods, bads))
    return Problem(design, goods, bads, ridge, intercept)


def cost(problem: Problem, beta: np.ndarray) -> float:
    loss = 0.0
    for rows, design in blocks(problem.design):
        eta = design @ beta
        loss += problem.goods[rows] @ np.logaddexp(0.0, -eta) + problem.bads[rows] @ np.logaddexp(0.0, eta)
    return float((loss + 0.5 * problem.ridge @ beta**2) / problem.total_weight)


def cost_change(problem: Problem, beta: np.ndarray, candidate: np.ndarray) -> float:
    """cost(candidate) − cost(beta), accurate to the rounding of the change itself."""
    loss = 0.0
    for rows, design in blocks(problem.design):
        eta = design @ beta
        shift = design @ (candidate - beta)
        loss += problem.goods[rows] @ softplus_change(-eta, -shift) + problem.bads[rows] @ softplus_change(eta, shift)
    penalty = 0.5 * problem.ridge @ ((candidate - beta) * (candidate + beta))
    return float((loss + penalty) / problem.total_weight)


def softplus_change(eta: np.ndarray, shift: np.ndarray) -> np.ndarray:
    """ln(1 + e^(η+δ)) − ln(1 + e^η), as ln(1 + expit(η)·(e^δ − 1)) where δ is small."""
    # The identity keeps full relative precision for small δ; for large δ the plain difference
    # loses nothing, and clipping keeps e^δ from overflowing on the rows it is not used for.
    change = np.log1p(special.expit(eta) * np.expm1(np.clip(shift, -1.0, 1.0)))
    large = np.abs(shift) > 1
    if large.any():
        change[large] = np.logaddexp(0.0, eta[large] + shift[large]) - np.logaddexp(0.0, eta[large])
    return change


def cost_gradient(problem: Problem, beta: np.ndarray) -> np.ndarray:
    score = np.zeros(len(beta))
    for rows, design in blocks(problem.design):
        eta = design @ beta
        score += design.T @ (problem.goods[rows] * special.expit(-eta) - problem.bads[rows] * special.expit(eta))
    return (problem.ridge * beta - score) / problem.total_weight


def cost_hessian(problem: Problem, beta: np.ndarray) -> np.ndarray:
    return cost_gradient_and_hessian(problem, beta)[1]


def cost_gradient_and_hessian(problem: Problem, beta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The gradient and the curvature of the cost at ``beta``, from one evaluation of the fitted probabilities."""
    score = np.zeros(len(beta))
    information = np.zeros((len(beta), len(beta)))
    for rows, design in blocks(problem.design):
        eta = design @ beta
        good, bad = special.expit(eta), special.expit(-eta)
        score += design.T @ (problem.goods[rows] * bad - problem.bads[rows] * good)
        information += gram(design, problem.weights(rows) * good * bad)
    return (problem.ridge * beta - score) / problem.total_weight, (information + np.diag(problem.ridge)) / problem.total_weight


def weighted_gram(problem: Problem, weights: Callable[[slice], np.ndarray]) -> np.ndarray:
    """X' diag(weights) X, added up block by block (``weights(rows)``: the weights of a block's rows)."""
    n_columns = problem.design.shape[1]
    total = np.zeros((n_columns, n_columns))
    for rows, design in blocks(problem.design):
        total += gram(design, weights(rows))
    return total


def gram(design: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """X' diag(weights) X for non-negative weights, as the sum over chunks of rows of (√w·X)'(√w·X).

    A symmetric rank-k update (BLAS syrk) makes one triangle, half the products of a general
    matrix product; each chunk of scaled rows is small enough to stay in the processor's cache
    between being written and being read, and its memory is reused for the next.
    """
    root = np.sqrt(weights)
    upper = np.zeros((design.shape[1], design.shape[1]), order="F")
    for rows, chunk in row_chunks(design):
        scaled = np.multiply(chunk, root[rows, None], order="F")
        upper = blas.dsyrk(1.0, scaled, beta=1.0, c=upper, trans=1, overwrite_c=1)
    return np.triu(upper) + np.triu(upper, 1).T


def row_chunks(design: np.ndarray) -> Iterator[tuple[slice, np.ndarray]]:
    """The rows of an in-memory design in chunks of ``CHUNK_ROWS``, for work whose temporaries should stay small."""
    for first in range(0, design.shape[0], CHUNK_ROWS):
        rows = slice(first, first + CHUNK_ROWS)
        yield rows, design[rows]


def design_matrix(features: np.ndarray, intercept: bool) -> np.ndarray:
    """The features with a first column of ones when there is an intercept, stored column by column."""
    design = np.empty((features.shape[0], features.shape[1] + intercept), order="F")
    if intercept:
        design[:, 0] = 1.0
    design[:, int(intercept):] = features
    return design


# --------------------------------------------------------------------------------------------
# Standardisation: characteristics x̃_j = (x_j − centre_j) / scale_j, coefficients mapped back.


@dataclass(frozen=True, eq=False)
class Standardisation:
    centre: np.ndarray  # per design column; 0 for the intercept
    scale: np.ndarray  # per design column; 1 for the intercept
    intercept: bool

    def to_original(self, theta: np.ndarray) -> np.ndarray:
        beta = theta / self.scale
        if self.intercept:
            beta[0] = theta[0] - beta[1:] @ self.centre[1:]
        return beta

    def to_standard(self, beta: np.ndarray) -> np.ndarray:
        theta = beta * self.scale
        if self.intercept:
            theta[0] = beta[0] + beta[1:] @ self.centre[1:]
        return theta

    def matrix(self) -> np.ndarray:
        """T with b = T·θ, to carry a covariance of θ over to b."""
        transform = np.diag(1.0 / self.scale)
        if self.intercept:
            transform[0, 1:] = -self.centre[1:] / self.scale[1:]
        return transform

    def gradient_to_standard(self, gradient_original: np.ndarray) -> np.ndarray:
        """T'·g: the gradient with respect to θ from the gradient with respect to b."""
        standard = gradient_original / self.scale
        if self.intercept:
            standard[1:] -= gradient_original[0] * self.centre[1:] / self.scale[1:]
        return standard


def standardisation_of(problem: Problem) -> Standardisation:
    """Weighted mean and standard deviation per column (root mean square without an intercept).

    With a penalty the variance gains 4·l2 / total weight: the penalty's curvature measured in the
    units of the logistic curvature's bound 1/4, so no standardised coefficient is far stiffer
    than the others.
    """
    def weights(rows: slice) -> np.ndarray:
        return problem.weights(rows) / problem.total_weight

    n_columns = problem.design.shape[1]
    centre = np.zeros(n_columns)
    if problem.intercept:
        for rows, design in blocks(problem.design):
            centre += weights(rows) @ design
    variance, size = np.zeros(n_columns), np.zeros(n_columns)
    for rows, design in blocks(problem.design):
        block_weights = weights(rows)
        for chunk_rows, chunk in row_chunks(design):
            variance += block_weights[chunk_rows] @ (chunk - centre) ** 2
            size = np.maximum(size, np.max(np.abs(chunk), axis=0, initial=0.0))
    spread = np.sqrt(variance + 4 * problem.ridge / problem.total_weight)
    # A constant column (up to rounding) has nothing to scale; it only gets here with l2 > 0.
    scale = np.where(spread > _CONSTANT_SPREAD * size, spread, 1.0)
    if problem.intercept:
        centre[0], scale[0] = 0.0, 1.0
    return Standardisation(centre, scale, problem.intercept)


def no_standardisation(problem: Problem) -> Standardisation:
    columns = problem.design.shape[1]
    return Standardisation(np.zeros(columns), np.ones(columns), problem.intercept)


def standardised(problem: Problem, standardisation: Standardisation, *, in_place: bool = False) -> Problem:
    """The same cost as a function of the standardised coefficients θ, with b = T·θ.

    ``in_place``: the design in memory is overwritten (the same arithmetic, no copy); the problem
    passed in then has the standardised design too, and must not be used as it was.
    """
    centre, scale = standardisation.centre, standardisation.scale
    if isinstance(problem.design, Parts):
        inner = problem.design
        design = Parts(lambda rows: (inner.make(rows) - centre) / scale, inner.n_rows, inner.n_columns, inner.part_rows)
    else:
        design = problem.design if in_place else np.empty_like(problem.design, order="F")
        np.subtract(problem.design, centre, out=design)
        design /= scale  # in place: one copy of the design at most, not two
    # The penalty stays on the original coefficients: b_j = θ_j / scale_j.
    ridge = problem.ridge / standardisation.scale**2
    return Problem(design, problem.goods, problem.bads, ridge, problem.intercept)


# --------------------------------------------------------------------------------------------
# Linear algebra of the information matrix.


def solve_symmetric(matrix: np.ndarray, right: np.ndarray, problem: Problem, beta: np.ndarray):
    """Solve with a Cholesky factor of the Jacobi-scaled matrix; name the columns if it is singular."""
    diagonal = np.sqrt(np.clip(np.diag(matrix), np.finfo(float).tiny, None))
    scaled = matrix / np.outer(diagonal, diagonal)
    try:
        factor = linalg.cho_factor(scaled)
    except linalg.LinAlgError:
        raise SingularInformation(scaled, problem, beta) from None
    row_scale = diagonal[:, None] if right.ndim == 2 else diagonal
    return linalg.cho_solve(factor, right / row_scale) / row_scale


class SingularInformation(Exception):
    """The information matrix cannot be factored at these coefficients; fit_logistic names the columns."""

    def __init__(self, information: np.ndarray, problem: Problem, beta: np.ndarray):
        super().__init__("singular information matrix")
        self.information, self.problem, self.beta = information, problem, beta
