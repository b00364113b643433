"""The guards: the two conditions under which no finite, unique maximum-likelihood estimate exists.

Linearly dependent characteristics and separation of goods from bads. Each is found, and the
characteristics involved are named, instead of returning numbers that mean nothing.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special

from ..errors import FitError
from .problem import Parts, Problem, SingularInformation, blocks, gram, solve_symmetric, weighted_gram


# A separating direction puts rows at least 1 onto their side (in max-abs-scaled units); it may
# put others this far onto the wrong side, the feasibility slack of the linear-programming solver.
_SEPARATION_SLACK = 1e-6


# A fitted probability within this of 0 or 1 on a row with only goods or only bads is taken as a
# sign of separation, to be confirmed or refuted by linear programming.
_FIRM_PROBABILITY = 1e-10


# Columns whose Gram matrix has an eigenvalue ratio above this are full rank beyond doubt.
CLEARLY_FULL_RANK = 1e-10


# Null-space directions give a column a share of at least this much when it truly takes part.
_NULL_SPACE_SHARE = 1e-8


# --------------------------------------------------------------------------------------------
# The pattern table both checks work on: distinct rows of the design, with goods and bads summed.


@dataclass(frozen=True, eq=False)
class Patterns:
    design: np.ndarray  # distinct rows of the design among rows that carry weight
    goods: np.ndarray
    bads: np.ndarray
    n_rows: np.ndarray  # rows of the input behind each pattern


def patterns(problem: Problem) -> Patterns:
    """The distinct rows of the design that carry weight, block by block, then merged across blocks."""
    found = []
    for rows, design in blocks(problem.design):
        carries_weight = problem.weights(rows) > 0
        distinct, inverse = _distinct_rows(design[carries_weight])
        found.append(Patterns(
            design=distinct,
            goods=np.bincount(inverse, weights=problem.goods[rows][carries_weight], minlength=distinct.shape[0]),
            bads=np.bincount(inverse, weights=problem.bads[rows][carries_weight], minlength=distinct.shape[0]),
            n_rows=np.bincount(inverse, minlength=distinct.shape[0]),
        ))
    if len(found) == 1:
        return found[0]
    distinct, inverse = _distinct_rows(np.concatenate([p.design for p in found]))

    def added(field: str) -> np.ndarray:
        return np.bincount(inverse, weights=np.concatenate([getattr(p, field) for p in found]), minlength=distinct.shape[0])

    return Patterns(distinct, added("goods"), added("bads"), added("n_rows").astype(np.int64))


def _distinct_rows(design: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct rows, and for each row the index of its own, by one integer key per row if it fits."""
    codes, sizes = [], []
    for column in design.T:  # a loop over the few columns; each is coded in one vectorised call
        values, code = np.unique(column, return_inverse=True)
        codes.append(code.ravel())
        sizes.append(values.size)
    if np.sum(np.log2(np.maximum(sizes, 1))) < 62:
        _, first, inverse = np.unique(np.ravel_multi_index(codes, sizes), return_index=True, return_inverse=True)
        return design[first], inverse.ravel()
    # Keys would overflow: the rows are mostly distinct anyway, and the slower sort does.
    patterns, inverse = np.unique(design, axis=0, return_inverse=True)
    return patterns, inverse.ravel()


# --------------------------------------------------------------------------------------------
# Linear dependence of the characteristics.


def raise_if_dependent(problem: Problem, names: tuple[str, ...]) -> None:
    """Raise FitError naming the columns that take part in an exact linear dependence."""
    def carries_weight(rows: slice) -> np.ndarray:
        return problem.weights(rows) > 0

    products = weighted_gram(problem, lambda rows: carries_weight(rows).astype(float))
    if _clearly_full_rank_gram(products):
        return  # the common case, from one pass over the rows and a p×p eigen-decomposition
    if isinstance(problem.design, Parts):
        norms, null_space = _null_space_of_gram(products, problem.design.shape)
        first = next(design[carries_weight(rows)][0] for rows, design in blocks(problem.design) if carries_weight(rows).any())
    else:
        design = problem.design[carries_weight(slice(None))]
        norms, null_space, first = np.linalg.norm(design, axis=0), _null_space(design), design[0]
    if null_space.shape[0] == 0:
        return
    share = np.sum(null_space**2, axis=0)
    involved = np.flatnonzero(share > _NULL_SPACE_SHARE)
    raise FitError(_dependence_message(norms, first, null_space, involved, names, problem.intercept))


def _null_space(design: np.ndarray) -> np.ndarray:
    """Orthonormal rows spanning {v : design·v = 0}, found by SVD of the unit-norm columns."""
    norms = np.linalg.norm(design, axis=0)
    unit = design / np.where(norms > 0, norms, 1.0)
    if _clearly_full_rank(unit):
        return np.zeros((0, design.shape[1]))
    # Zero rows added up to a square matrix change no null space but give every column a singular value.
    if unit.shape[0] < unit.shape[1]:
        unit = np.vstack([unit, np.zeros((unit.shape[1] - unit.shape[0], unit.shape[1]))])
    _, singular, right = np.linalg.svd(unit, full_matrices=False)
    # The rank tolerance of numpy.linalg.matrix_rank.
    threshold = singular.max(initial=0.0) * max(unit.shape) * np.finfo(float).eps
    return right[singular <= threshold]


def _null_space_of_gram(gram: np.ndarray, shape: tuple[int, int]) -> tuple[np.ndarray, np.ndarray]:
    """Column norms and the null space of a design known by its Gram matrix X'X (a design made in parts).

    The eigenvectors of the unit-norm columns' Gram matrix are the right singular vectors of those
    columns, its eigenvalues their squared singular values: the same null space as ``_null_space``,
    with the same rank tolerance, squared.
    """
    norms = np.sqrt(np.clip(np.diag(gram), 0.0, None))
    safe = np.where(norms > 0, norms, 1.0)
    eigenvalues, vectors = np.linalg.eigh(gram / np.outer(safe, safe))
    if shape[1] == 0 or eigenvalues[0] > CLEARLY_FULL_RANK * eigenvalues[-1]:
        return norms, np.zeros((0, shape[1]))
    threshold = (np.sqrt(max(eigenvalues[-1], 0.0)) * max(shape) * np.finfo(float).eps) ** 2
    return norms, vectors[:, eigenvalues <= threshold].T


def _clearly_full_rank(unit: np.ndarray) -> bool:
    """Whether the unit-norm columns are far from any dependence, judged from their small Gram matrix."""
    if unit.shape[0] < unit.shape[1] or unit.shape[1] == 0:
        return False
    return _clearly_full_rank_gram(unit.T @ unit)


def _clearly_full_rank_gram(gram: np.ndarray) -> bool:
    """Whether the columns whose Gram matrix X'X this is are far from any dependence.

    The Gram matrix costs one pass over the rows and a p×p eigen-decomposition, against an SVD of
    the whole design; scaled to unit diagonal (unit-norm columns), its smallest eigenvalue is the
    squared smallest singular value. Only when that is not clearly away from zero does the exact
    SVD decide.
    """
    norms = np.sqrt(np.clip(np.diag(gram), 0.0, None))
    if gram.shape[0] == 0 or not np.all(norms > 0):
        return False
    eigenvalues = np.linalg.eigvalsh(gram / np.outer(norms, norms))
    # a singular value ratio above 1e-5 (eigenvalue ratio 1e-10) is far above the SVD's rank tolerance
    return bool(eigenvalues[0] > CLEARLY_FULL_RANK * eigenvalues[-1])


def _dependence_message(norms, first, null_space, involved, names, intercept) -> str:
    """Name the dependent columns; ``norms`` are the columns' norms, ``first`` the first row that carries weight."""
    characteristics = [j for j in involved if not (intercept and j == 0)]
    where = "on every row that carries weight"
    todo = (
        "Drop one of them; for indicator columns of the bins of one characteristic, leave one bin out "
        "as the reference."
    )
    if len(characteristics) == 1:
        name = names[characteristics[0]]
        if norms[characteristics[0]] == 0:
            return f"characteristic {name!r} is 0 {where}, so it has no coefficient to estimate. Drop it."
        return (
            f"characteristic {name!r} is constant ({float(first[characteristics[0]])!r}) {where}, so its effect cannot be told "
            f"apart from the intercept. Drop it."
        )
    combination = ""
    if null_space.shape[0] == 1:
        combination = f" ({_combination(null_space[0], norms, names, intercept)})"
    with_intercept = " together with the intercept" if intercept and 0 in involved else ""
    return (
        f"characteristics {quoted(names[j] for j in characteristics)} are linearly dependent"
        f"{with_intercept}: a combination of them is exact {where}{combination}, so their "
        f"coefficients cannot be told apart. {todo}"
    )


def _combination(vector, norms, names, intercept) -> str:
    """Write a null-space vector in the units of the columns (of these norms), e.g. "'a' - 0.5·'b' = 0"."""
    weights = vector / np.where(norms > 0, norms, 1.0)
    weights = weights / np.abs(weights).max()
    shown = [j for j in np.flatnonzero(np.abs(weights) > _NULL_SPACE_SHARE) if not (intercept and j == 0)]
    weights = weights * np.sign(weights[shown[0]])  # the first term shown is positive
    terms = [f"{'-' if weights[j] < 0 else '+'} {_times(abs(weights[j]))}{names[j]!r}" for j in shown]
    constant = -weights[0] if intercept else 0.0
    return f"{' '.join(terms).removeprefix('+ ')} = {constant:.4g}"


def _times(factor: float) -> str:
    return "" if f"{factor:.4g}" == "1" else f"{factor:.4g}·"


def quoted(names) -> str:
    names = [repr(name) for name in names]
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} and {names[-1]}"


# --------------------------------------------------------------------------------------------
# Separation of goods from bads.


def overlap_proved(problem: Problem, beta: np.ndarray) -> bool:
    """Whether the fitted residuals prove that goods and bads overlap, so none can be separated.

    At the maximum the residuals ``r_i = goods_i·(1 − p_i) − bads_i·p_i`` satisfy ``X'r = 0`` and
    are positive on rows with only goods and negative on rows with only bads; by Stiemke's theorem
    of the alternative no separating direction can then exist (Albert and Anderson, 1984, from
    memory). The computed residuals leave a small gradient ``e = X'r``; moving them by
    ``c = ΛX(X'ΛX)⁻¹e`` with ``Λ_i = |r_i|`` removes it, and keeps every sign when
    ``|x_i·(X'ΛX)⁻¹e| < 1`` on the one-sided rows. Half of that bound is asked for.
    """
    n_columns = len(beta)
    matrix, right = np.zeros((n_columns, n_columns)), np.zeros(n_columns)
    for design, goods, bads in _carried(problem):
        eta = design @ beta
        residual = goods * special.expit(-eta) - bads * special.expit(eta)
        one_sided = (goods == 0) | (bads == 0)
        if np.any(np.abs(residual[one_sided]) < _FIRM_PROBABILITY * (goods + bads)[one_sided]):
            return False
        spread = np.where(one_sided, np.abs(residual), (goods + bads) * special.expit(eta) * special.expit(-eta))
        matrix += gram(design, spread)
        right += design.T @ residual
    try:
        direction = solve_symmetric(matrix, right, problem, beta)
    except SingularInformation:
        return False
    return all(np.max(np.abs((design @ direction)[(goods == 0) | (bads == 0)]), initial=0.0) < 0.5
               for design, goods, bads in _carried(problem))


def _carried(problem: Problem):
    """Yield the design, goods and bads of the rows that carry weight, block by block."""
    for rows, design in blocks(problem.design):
        carries_weight = problem.weights(rows) > 0
        if carries_weight.all():  # a pattern table's rows always do: no copy
            yield design, problem.goods[rows], problem.bads[rows]
        else:
            yield design[carries_weight], problem.goods[rows][carries_weight], problem.bads[rows][carries_weight]


def raise_if_separated(patterns: Patterns, names: tuple[str, ...], *, intercept: bool) -> None:
    """Raise FitError naming a smallest set of characteristics that separates goods from bads."""
    if not _separated(patterns, np.arange(patterns.design.shape[1])):
        return
    columns = _fewest_separating_columns(patterns, intercept)
    determined = _determined_patterns(patterns, columns)
    characteristics = [names[j] for j in columns if not (intercept and j == 0)]
    raise FitError(_separation_message(characteristics, patterns, determined))


def _separated(patterns: Patterns, columns: np.ndarray) -> bool:
    """Whether the columns separate goods from bads: a quick screen, then the exact check."""
    return _may_separate(patterns, columns) and _determined_patterns(patterns, columns) is not None


def _may_separate(patterns: Patterns, columns: np.ndarray) -> bool:
    """Screen with a linear program in the coefficients only: max Σ s_i·x_i·d over -1 <= d <= 1.

    The maximum is 0 unless goods and bads are separated; the screen keeps the common case cheap,
    and :func:`_determined_patterns`, whose program grows with the patterns, confirms a positive one.
    """
    unit, side = _unit_design(patterns, columns)
    one_sided = side != 0
    if not one_sided.any():
        return False
    signed = unit[one_sided] * side[one_sided, None]
    mixed = unit[~one_sided]
    from scipy import optimize

    solution = optimize.linprog(
        -signed.sum(axis=0),
        A_ub=-signed,
        b_ub=np.zeros(signed.shape[0]),
        A_eq=mixed if mixed.size else None,
        b_eq=np.zeros(mixed.shape[0]) if mixed.size else None,
        bounds=(-1.0, 1.0),
        method="highs",
    )
    return solution.status == 0 and (signed @ solution.x).max() > _SEPARATION_SLACK


def _unit_design(patterns: Patterns, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Columns scaled to largest absolute value 1, and the side of each pattern (+1, -1 or 0)."""
    design = patterns.design[:, columns]
    scale = np.max(np.abs(design), axis=0)
    side = (patterns.bads == 0).astype(float) - (patterns.goods == 0)
    return design / np.where(scale > 0, scale, 1.0), side


def _determined_patterns(patterns: Patterns, columns: np.ndarray) -> np.ndarray | None:
    """Mark every pattern some separating direction puts strictly on its side; None if none does.

    With ``s_i = +1`` on patterns with only goods and ``-1`` on those with only bads, solves
    max Σ t_i subject to ``0 <= t_i <= s_i·x_i·d``, ``t_i <= 1`` and ``x_i·d = 0`` on patterns
    with both. The directions d form a convex cone, so one direction reaches ``t_i = 1`` on every
    pattern any direction can separate, and ``t_i = 0`` on the rest; goods and bads are separated
    when the maximum is positive (Konis, 2007, chapter 3, from memory).
    """
    unit, side = _unit_design(patterns, columns)
    one_sided = side != 0
    if not one_sided.any():
        return None
    signed = unit[one_sided] * side[one_sided, None]
    mixed = unit[~one_sided]
    n_sided, n_columns = signed.shape
    from scipy import optimize, sparse

    solution = optimize.linprog(
        np.concatenate([np.zeros(n_columns), -np.ones(n_sided)]),
        A_ub=sparse.hstack([sparse.csr_array(-signed), sparse.eye_array(n_sided)], format="csr"),
        b_ub=np.zeros(n_sided),
        A_eq=sparse.hstack([sparse.csr_array(mixed), sparse.csr_array((mixed.shape[0], n_sided))], format="csr")
        if mixed.size
        else None,
        b_eq=np.zeros(mixed.shape[0]) if mixed.size else None,
        bounds=[(None, None)] * n_columns + [(0.0, 1.0)] * n_sided,
        method="highs",
    )
    if solution.status != 0 or -solution.fun < 0.5:
        return None
    direction = solution.x[:n_columns]
    margins = signed @ direction
    # Re-check the solver's answer in our own arithmetic, so its feasibility slack cannot fake one.
    off_side = margins.min() < -_SEPARATION_SLACK or np.abs(mixed @ direction).max(initial=0.0) > _SEPARATION_SLACK
    if off_side:
        return None
    determined = np.zeros(side.size, dtype=bool)
    determined[one_sided] = margins > 0.5
    return determined


def _fewest_separating_columns(patterns: Patterns, intercept: bool) -> np.ndarray:
    """Drop characteristics one at a time while the rest still separate (the intercept stays)."""
    columns = list(range(patterns.design.shape[1]))
    for column in list(columns):
        if intercept and column == 0:
            continue
        fewer = np.array([j for j in columns if j != column], dtype=int)
        if fewer.size and _separated(patterns, fewer):
            columns.remove(column)
    return np.array(columns, dtype=int)


def _separation_message(characteristics: list[str], patterns: Patterns, determined: np.ndarray) -> str:
    n_rows = int(patterns.n_rows.sum())
    n_determined = int(patterns.n_rows[determined].sum())
    weight = float(patterns.goods[determined].sum() + patterns.bads[determined].sum())
    how = "completely" if determined.all() else "quasi-completely"
    if len(characteristics) == 1:
        subject = f"characteristic {characteristics[0]!r} separates"
        rule = "a single cut on it"
        todo = "Class its bins more coarsely or drop it."
    else:
        subject = f"characteristics {quoted(characteristics)} together separate"
        rule = "a weighted sum of them, cut at one value,"
        todo = "Class their bins more coarsely or drop one of them."
    if determined.all():
        where = f"{rule} puts every good on one side and every bad on the other (all {n_rows} rows that carry weight)"
    else:
        where = (
            f"on {n_determined} of the {n_rows} rows that carry weight (weight {weight:.6g}) {rule} tells "
            f"goods from bads without error, e.g. a bin with only goods or only bads"
        )
    return (
        f"{subject} goods from bads {how}: {where}, so the coefficients grow without bound and "
        f"no maximum-likelihood estimate exists. {todo}"
    )


def numerically_singular_message(singular: SingularInformation, names: tuple[str, ...], *, intercept: bool) -> str:
    """Name the columns of the direction in which the (Jacobi-scaled) information is flattest."""
    _, vectors = np.linalg.eigh(singular.information)
    flattest = np.abs(vectors[:, 0]) / np.abs(vectors[:, 0]).max()
    involved = [names[j] for j in np.flatnonzero(flattest > 0.1) if not (intercept and j == 0)]
    n_extreme = 0
    for rows, design in blocks(singular.problem.design):
        eta = design @ singular.beta
        n_extreme += int(np.sum((singular.problem.weights(rows) > 0) & (special.expit(eta) * special.expit(-eta) < 1e-10)))
    which = f"; the characteristics most involved are {quoted(involved)}" if involved else ""
    separation = (
        f", or they nearly separate goods from bads: {n_extreme} rows that carry weight have fitted "
        f"probabilities within 1e-10 of 0 or 1"
        if n_extreme
        else ""
    )
    return (
        f"the information matrix is numerically singular, so the coefficients cannot be told apart"
        f"{which}. They are nearly linearly dependent{separation}. Drop or merge characteristics, "
        f"class bins more coarsely, or fit with a small l2 penalty."
    )
