"""Fit the logistic model of the good:bad odds on weighted rows or on a pattern table.

The model is ``ln(odds good:bad) = b0 + x·b``, so ``P(good) = 1 / (1 + exp(-(b0 + x·b)))``. Each
row carries a weighted count of goods and one of bads. A row of individual data carries its
weight in one of the two; a row of a pattern table carries the sums over the applications that
share its pattern. Both give the same log-likelihood, so both give the same estimates.

The fitter checks the two conditions under which no finite, unique maximum-likelihood estimate
exists — linearly dependent characteristics and separation of goods from bads — and names the
characteristics involved instead of returning numbers that mean nothing.
"""

from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import linalg, special

from scorecard.errors import FitError, ScorecardWarning, describe_rows

__all__ = [
    "INTERCEPT_NAME",
    "SOLVERS",
    "FitResult",
    "fit_logistic",
    "gradient",
    "information_matrix",
    "log_likelihood",
]

INTERCEPT_NAME = "(intercept)"
SOLVERS = ("newton", "gradient", "lbfgs")

# Newton converges quadratically, so 100 steps is generous; plain gradient descent converges
# linearly, at a rate set by the condition number, and needs thousands.
_DEFAULT_MAX_ITERATIONS = {"newton": 100, "gradient": 100_000, "lbfgs": 10_000}
# Step-halving gives up after this many halvings: 2**-52 of a Newton step is below rounding.
_MAX_HALVINGS = 52
# A separating direction puts rows at least 1 onto their side (in max-abs-scaled units); it may
# put others this far onto the wrong side, the feasibility slack of the linear-programming solver.
_SEPARATION_SLACK = 1e-6
# A column whose weighted standard deviation is below this share of its largest value is constant
# but for rounding in the mean.
_CONSTANT_SPREAD = 1e-10
# A fitted probability within this of 0 or 1 on a row with only goods or only bads is taken as a
# sign of separation, to be confirmed or refuted by linear programming.
_FIRM_PROBABILITY = 1e-10
# Columns whose Gram matrix has an eigenvalue ratio above this are full rank beyond doubt.
_CLEARLY_FULL_RANK = 1e-10
# Null-space directions give a column a share of at least this much when it truly takes part.
_NULL_SPACE_SHARE = 1e-8


@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class FitResult:
    """Estimates of a logistic fit of the log-odds of good:bad, with their standard errors.

    Attributes
    ----------
    names : tuple of str
        ``"(intercept)"`` first when the model has one, then the characteristics in order.
    coefficients, std_errors, z_values, p_values : numpy.ndarray
        One entry per name, read-only. ``z_values`` are Wald statistics ``coefficient / std_error``
        and ``p_values`` their two-sided tail probabilities under the standard normal distribution.
    covariance : numpy.ndarray
        Inverse of the information matrix at the estimate (penalised when ``l2 > 0``), read-only.
    log_likelihood : float
        ``Σ goods·ln p + bads·ln(1 − p)`` at the estimate, without the penalty.
    deviance : float
        ``−2 × log_likelihood``. This is the individual-level deviance, so it is the same on the
        rows and on their pattern table; it is not the grouped deviance against a saturated
        pattern model that some packages report for grouped data.
    aic, bic : float
        ``deviance + 2k`` and ``deviance + k·ln(n_observations)``, with ``k`` the number of
        coefficients (a nominal count: with ``l2 > 0`` the effective number is smaller).
    n_observations : float
        Total weight, goods plus bads.
    iterations : int
        Steps the solver took.
    converged : bool
        Whether the stopping rule of :func:`fit_logistic` was met.
    cost_trace : tuple of float
        Cost (penalised negative log-likelihood per unit weight) at the start and after each step.
    solver : str
        ``"newton"``, ``"gradient"`` or ``"lbfgs"``.
    l2 : float
        The ridge penalty the fit used.
    """

    names: tuple[str, ...]
    coefficients: np.ndarray
    std_errors: np.ndarray
    z_values: np.ndarray
    p_values: np.ndarray
    covariance: np.ndarray
    log_likelihood: float
    deviance: float
    aic: float
    bic: float
    n_observations: float
    iterations: int
    converged: bool
    cost_trace: tuple[float, ...]
    solver: str
    l2: float

    def __post_init__(self):
        for field in ("coefficients", "std_errors", "z_values", "p_values", "covariance"):
            array = np.array(getattr(self, field), dtype=float)
            array.setflags(write=False)
            object.__setattr__(self, field, array)

    def coefficient(self, name: str) -> float:
        """Return the coefficient of one name.

        Raises
        ------
        KeyError
            If ``name`` is not among :attr:`names`; the message lists the names there are.
        """
        if name not in self.names:
            raise KeyError(f"no coefficient named {name!r}; the fit has {', '.join(map(repr, self.names))}")
        return float(self.coefficients[self.names.index(name)])

    def to_frame(self) -> pd.DataFrame:
        """Return the estimates as a table: name, coefficient, std_error, z, p_value."""
        return pd.DataFrame(
            {
                "name": list(self.names),
                "coefficient": self.coefficients,
                "std_error": self.std_errors,
                "z": self.z_values,
                "p_value": self.p_values,
            }
        )


def fit_logistic(
    features,
    goods,
    bads,
    *,
    names=None,
    intercept: bool = True,
    solver: str = "newton",
    l2: float = 0.0,
    max_iterations: int | None = None,
    tolerance: float = 1e-10,
    gradient_tolerance: float = 1e-11,
    standardise: bool = True,
    start=None,
    guard: bool = True,
) -> FitResult:
    """Fit the log-odds of good:bad by maximum likelihood on weighted rows or a pattern table.

    Parameters
    ----------
    features : array_like, shape (n_rows, p)
        One column per characteristic (for a scorecard, its WoE codes). A DataFrame's column
        names are used when ``names`` is not given.
    goods, bads : array_like, shape (n_rows,)
        Non-negative weighted counts of goods and of bads on each row.
    names : sequence of str, optional
        Names of the ``p`` characteristics; ``"x1"`` … ``"xp"`` by default.
    intercept : bool
        Add an intercept, named ``"(intercept)"`` and listed first.
    solver : {"newton", "gradient", "lbfgs"}
        Newton–Raphson with step-halving; batch gradient descent with a backtracking line search;
        or scipy's L-BFGS-B with the analytic gradient. All three reach the same optimum.
    l2 : float
        Ridge penalty ``l2 · Σ b_j² / 2`` on every coefficient but the intercept, subtracted from
        the log-likelihood (not from its mean, so its pull weakens as the total weight grows).
    max_iterations : int, optional
        Most steps to take: 100 for Newton, 100 000 for gradient descent and 10 000 for L-BFGS-B
        by default.
    tolerance : float
        The fit has converged when the last step lowered the cost (the penalised negative
        log-likelihood per unit weight) by at most this much, and
    gradient_tolerance : float
        the largest element of the gradient of the cost with respect to the coefficients of the
        standardised characteristics is at most this.
    standardise : bool
        Gradient descent and L-BFGS-B work on characteristics centred and scaled by their weighted
        mean and standard deviation (scaled only, without an intercept), and map the coefficients
        back. Without it they work on the raw scale and need far more steps when the scales
        differ. Newton's steps do not depend on the scale; it always works on the standardised
        characteristics, which only keeps its linear algebra well conditioned.
    start : array_like, optional
        Coefficients to start from, in the order of the result's names (for example the estimates
        of a neighbouring model). By default the intercept-only estimate ``ln(goods / bads)``.
    guard : bool
        Check for linearly dependent characteristics and for separation first (the default).
        The stepwise search turns the checks off for its many trial fits, whose estimates it only
        ranks; the model it ends with is fitted again with them on.

    Returns
    -------
    FitResult
        Estimates in the original units, their standard errors, fit statistics and the cost trace.

    Raises
    ------
    FitError
        If the shapes disagree, a characteristic has NaN or infinite values, goods or bads are
        negative or not finite, there are no goods or no bads, an option is out of range, the
        characteristics are linearly dependent, or goods and bads are separated (the last two only
        when ``l2 == 0``; with a penalty the estimate exists and is unique).

    Warns
    -----
    ScorecardWarning
        If the solver stops at ``max_iterations`` before the stopping rule is met.

    Notes
    -----
    The log-likelihood is ``Σ_i goods_i·ln p_i + bads_i·ln(1 − p_i)`` with
    ``p_i = 1 / (1 + exp(−η_i))``; a pattern table and the rows it was built from give the same sum.
    Newton's step solves ``I(b)·δ = U(b)`` with the score ``U = X'(goods − (goods + bads)·p)``
    and the information ``I = X' diag((goods + bads)·p(1 − p)) X``; halving the step while the
    log-likelihood does not improve makes the cost fall at every step (McCullagh and Nelder,
    *Generalized Linear Models*, 2nd ed., 1989, section 4.4, from memory). Standard errors are the
    square roots of the diagonal of ``I⁻¹`` at the estimate, for every solver. The cost trace
    starts from the cost at ``start`` and subtracts each step's decrease,
    computed from the change in each row's linear predictor so that it stays exact where the
    cost itself no longer resolves it.

    With ``l2 > 0`` the covariance is the inverse of the penalised information
    ``I + l2·diag(0, 1, …, 1)``: the curvature of the penalised log-likelihood, i.e. the normal
    approximation to the posterior under independent normal priors of variance ``1/l2`` on the
    coefficients. The z and p values then describe that approximation, not a test of the
    shrunken estimate; le Cessie and van Houwelingen (*Ridge estimators in logistic regression*,
    Applied Statistics 41, 1992, 191–201, from memory) give the sandwich alternative.

    Gradient descent starts from the step ``4 / λmax(X'WX)``, with ``W`` the row weights: the
    logistic curvature ``p(1 − p)`` never exceeds 1/4, so this step never increases the cost
    (Böhning and Lindsay, *Monotonicity of quadratic-approximation algorithms*, Annals of the
    Institute of Statistical Mathematics 40, 1988, 641–663, from memory). Longer steps are tried
    and halved until they meet the Armijo condition (Nocedal and Wright, *Numerical
    Optimization*, 2nd ed., 2006, section 3.1).

    Separation is found by linear programming over the distinct patterns (Konis, *Linear
    programming algorithms for detecting separated data in binary logistic regression models*,
    DPhil thesis, University of Oxford, 2007); its definition and the proof that the estimate is
    then infinite are Albert and Anderson (*On the existence of maximum likelihood estimates in
    logistic regression models*, Biometrika 71, 1984, 1–10). The descent solvers run that check
    before they start. Newton's method runs it only when its own estimate cannot prove overlap: at
    a converged estimate whose residuals keep their signs (every row with only goods fitted
    below 1 − 1e-10, every row with only bads above 1e-10), no separating direction can exist, so
    the common case costs no linear program.
    """
    features, names = _checked_features(features, names)
    goods, bads = _checked_counts(goods, bads, features.shape[0])
    max_iterations = _checked_options(solver, l2, max_iterations, tolerance, gradient_tolerance)
    max_iterations = _DEFAULT_MAX_ITERATIONS[solver] if max_iterations is None else max_iterations
    if not intercept and not names:
        raise FitError("there is nothing to fit: no characteristics and no intercept. Pass intercept=True or some features.")
    all_names = ((INTERCEPT_NAME,) if intercept else ()) + names
    start = None if start is None else _checked_start(start, all_names)
    problem = _problem(_design(features, intercept), goods, bads, l2=l2, intercept=intercept)
    checks = guard and l2 == 0  # with a penalty the estimate exists and is unique whatever the data
    if checks:
        _raise_if_dependent(problem, all_names)
    if checks and solver != "newton":
        # Descent methods would crawl along a separating direction until max_iterations.
        _raise_if_separated(_patterns(problem), all_names, intercept=intercept)
    rule = _StoppingRule(max_iterations, tolerance, gradient_tolerance, _identity_scaling(problem))
    result = _fit(problem, all_names, rule, solver=solver, l2=float(l2), start=start, standardise=standardise,
                  checks=checks)
    if not result.converged:
        warnings.warn(_not_converged_message(result), ScorecardWarning, stacklevel=2)
    return result


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
    problem = _problem(design, goods, bads, l2=l2, intercept=intercept)
    return -_cost(problem, np.asarray(beta, dtype=float)) * problem.total_weight


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
    problem = _problem(design, goods, bads, l2=l2, intercept=intercept)
    return -_cost_gradient(problem, np.asarray(beta, dtype=float)) * problem.total_weight


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
    problem = _problem(design, goods, bads, l2=l2, intercept=intercept)
    return _cost_hessian(problem, np.asarray(beta, dtype=float)) * problem.total_weight


# ---------------------------------------------------------------------------------------------
# The problem and its cost. Inner functions work on the cost: the penalised negative
# log-likelihood per unit weight, which is of order one whatever the total weight.


@dataclass(frozen=True, eq=False)
class _Problem:
    design: np.ndarray
    goods: np.ndarray
    bads: np.ndarray
    ridge: np.ndarray  # penalty per coefficient: 0 for the intercept, l2 for the others
    intercept: bool

    @property
    def weights(self) -> np.ndarray:
        return self.goods + self.bads

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


def _problem(design, goods, bads, *, l2: float, intercept: bool) -> _Problem:
    design = np.asarray(design, dtype=float)
    ridge = np.full(design.shape[1], float(l2))
    if intercept and ridge.size:
        ridge[0] = 0.0
    goods, bads = (np.asarray(counts, dtype=float) for counts in (goods, bads))
    return _Problem(design, goods, bads, ridge, intercept)


def _cost(problem: _Problem, beta: np.ndarray) -> float:
    eta = problem.design @ beta
    loss = problem.goods @ np.logaddexp(0.0, -eta) + problem.bads @ np.logaddexp(0.0, eta)
    return float((loss + 0.5 * problem.ridge @ beta**2) / problem.total_weight)


def _cost_change(problem: _Problem, beta: np.ndarray, candidate: np.ndarray) -> float:
    """cost(candidate) − cost(beta), accurate to the rounding of the change itself."""
    eta = problem.design @ beta
    shift = problem.design @ (candidate - beta)
    loss = problem.goods @ _softplus_change(-eta, -shift) + problem.bads @ _softplus_change(eta, shift)
    penalty = 0.5 * problem.ridge @ ((candidate - beta) * (candidate + beta))
    return float((loss + penalty) / problem.total_weight)


def _softplus_change(eta: np.ndarray, shift: np.ndarray) -> np.ndarray:
    """ln(1 + e^(η+δ)) − ln(1 + e^η), as ln(1 + expit(η)·(e^δ − 1)) where δ is small."""
    # The identity keeps full relative precision for small δ; for large δ the plain difference
    # loses nothing, and clipping keeps e^δ from overflowing on the rows it is not used for.
    change = np.log1p(special.expit(eta) * np.expm1(np.clip(shift, -1.0, 1.0)))
    large = np.abs(shift) > 1
    if large.any():
        change[large] = np.logaddexp(0.0, eta[large] + shift[large]) - np.logaddexp(0.0, eta[large])
    return change


def _cost_gradient(problem: _Problem, beta: np.ndarray) -> np.ndarray:
    eta = problem.design @ beta
    residual = problem.goods * special.expit(-eta) - problem.bads * special.expit(eta)
    return (problem.ridge * beta - problem.design.T @ residual) / problem.total_weight


def _cost_hessian(problem: _Problem, beta: np.ndarray) -> np.ndarray:
    eta = problem.design @ beta
    curvature = problem.weights * special.expit(eta) * special.expit(-eta)
    hessian = (problem.design * curvature[:, None]).T @ problem.design + np.diag(problem.ridge)
    return hessian / problem.total_weight


def _design(features: np.ndarray, intercept: bool) -> np.ndarray:
    if not intercept:
        return features.copy()
    return np.column_stack([np.ones(features.shape[0]), features])


# ---------------------------------------------------------------------------------------------
# Standardisation: characteristics x̃_j = (x_j − centre_j) / scale_j, coefficients mapped back.


@dataclass(frozen=True, eq=False)
class _Scaling:
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


def _scaling(problem: _Problem) -> _Scaling:
    """Weighted mean and standard deviation per column (root mean square without an intercept).

    With a penalty the variance gains 4·l2 / total weight: the penalty's curvature measured in the
    units of the logistic curvature's bound 1/4, so no standardised coefficient is far stiffer
    than the others.
    """
    weights = problem.weights / problem.total_weight
    centre = weights @ problem.design if problem.intercept else np.zeros(problem.design.shape[1])
    spread = np.sqrt(weights @ (problem.design - centre) ** 2 + 4 * problem.ridge / problem.total_weight)
    # A constant column (up to rounding) has nothing to scale; it only gets here with l2 > 0.
    size = np.max(np.abs(problem.design), axis=0)
    scale = np.where(spread > _CONSTANT_SPREAD * size, spread, 1.0)
    if problem.intercept:
        centre[0], scale[0] = 0.0, 1.0
    return _Scaling(centre, scale, problem.intercept)


def _identity_scaling(problem: _Problem) -> _Scaling:
    columns = problem.design.shape[1]
    return _Scaling(np.zeros(columns), np.ones(columns), problem.intercept)


def _rescaled(problem: _Problem, scaling: _Scaling) -> _Problem:
    """The same cost as a function of the standardised coefficients θ, with b = T·θ."""
    design = (problem.design - scaling.centre) / scaling.scale
    # The penalty stays on the original coefficients: b_j = θ_j / scale_j.
    ridge = problem.ridge / scaling.scale**2
    return _Problem(design, problem.goods, problem.bads, ridge, problem.intercept)


# ---------------------------------------------------------------------------------------------
# Solvers. Each returns a _Path with the estimate in the coordinates it worked in.
#
# Steps are judged by _cost_change, which evaluates cost(new) − cost(old) to the rounding of the
# change rather than of the cost: near the optimum a step lowers the cost by far less than one
# rounding unit of the cost itself, and comparing two costs would then accept or refuse it at random.


def _fit(problem: _Problem, names: tuple[str, ...], rule: _StoppingRule, *, solver: str, l2: float, start,
         standardise: bool, checks: bool) -> FitResult:
    """Run the solver in standardised (or, for descents without standardise, raw) coordinates."""
    scaling = _scaling(problem)
    standard = _rescaled(problem, scaling)
    # Newton's steps do not depend on the scale, but centred columns keep its linear algebra well
    # conditioned, so it always works on the standardised problem.
    on_standard = standardise or solver == "newton"
    start = problem.intercept_only if start is None else start
    if on_standard:
        working, working_start = standard, scaling.to_standard(start)
    else:
        working, working_start, rule = problem, start, dataclasses.replace(rule, scaling=scaling)
    try:
        path = _SOLVE[solver](working, rule, working_start)
        theta = path.coefficients if on_standard else scaling.to_standard(path.coefficients)
        result = _result(standard, scaling, theta, path, names, solver=solver, l2=l2)
    except _SingularInformation as singular:
        if checks:
            _raise_if_separated(_patterns(problem), names, intercept=problem.intercept)
        raise FitError(_numerically_singular_message(singular, names, intercept=problem.intercept)) from None
    if checks and solver == "newton" and not (path.converged and _overlap_proved(standard, theta)):
        _raise_if_separated(_patterns(problem), names, intercept=problem.intercept)
    return result


@dataclass(frozen=True, eq=False)
class _StoppingRule:
    max_iterations: int
    tolerance: float
    gradient_tolerance: float
    scaling: _Scaling  # from the solver's coordinates to the standardised ones the gradient is judged in

    def met(self, decrease: float, working_gradient: np.ndarray) -> bool:
        """Whether the cost fell by at most tolerance and the standardised gradient is small."""
        standard = self.scaling.gradient_to_standard(working_gradient)
        return decrease <= self.tolerance and np.max(np.abs(standard)) <= self.gradient_tolerance


@dataclass(frozen=True, eq=False)
class _Path:
    coefficients: np.ndarray  # in the coordinates the solver worked in
    iterations: int
    converged: bool
    cost_trace: tuple[float, ...]


def _newton(problem: _Problem, rule: _StoppingRule, start: np.ndarray) -> _Path:
    """Newton–Raphson with step-halving."""
    beta = start
    trace, decrease = [_cost(problem, beta)], np.inf
    cost_gradient = _cost_gradient(problem, beta)
    while not rule.met(decrease, cost_gradient) and len(trace) <= rule.max_iterations:
        step = -_solve_symmetric(_cost_hessian(problem, beta), cost_gradient, problem, beta)
        accepted = _halved_step(problem, beta, step)
        if accepted is None:
            # No fraction of the step lowers the cost: only the gradient can still tell.
            decrease = 0.0
            break
        beta, decrease = accepted[0], -accepted[1]
        cost_gradient = _cost_gradient(problem, beta)
        trace.append(trace[-1] - decrease)
    return _Path(beta, len(trace) - 1, rule.met(decrease, cost_gradient), tuple(trace))


def _halved_step(problem: _Problem, beta: np.ndarray, step: np.ndarray):
    """The first of step, step/2, step/4, … that does not raise the cost, with the change in cost."""
    for halvings in range(_MAX_HALVINGS):
        candidate = beta + step * 0.5**halvings
        change = _cost_change(problem, beta, candidate)
        if change <= 0:
            return candidate, change
    return None


def _gradient_descent(problem: _Problem, rule: _StoppingRule, start: np.ndarray) -> _Path:
    """Batch gradient descent from the step 1/L, trying doubled steps under Armijo's rule."""
    hessian_bound = (problem.design * problem.weights[:, None]).T @ problem.design / 4
    lipschitz = (linalg.eigvalsh(hessian_bound)[-1] + problem.ridge.max()) / problem.total_weight
    safe_step = 1.0 / lipschitz
    theta, step = start, safe_step
    trace, decrease = [_cost(problem, theta)], np.inf
    cost_gradient = _cost_gradient(problem, theta)
    while not rule.met(decrease, cost_gradient) and len(trace) <= rule.max_iterations:
        theta, change, step = _armijo_step(problem, theta, cost_gradient, 2 * step, safe_step)
        decrease = -change
        cost_gradient = _cost_gradient(problem, theta)
        trace.append(trace[-1] + change)
    return _Path(theta, len(trace) - 1, rule.met(decrease, cost_gradient), tuple(trace))


def _armijo_step(problem: _Problem, theta: np.ndarray, cost_gradient: np.ndarray, step: float, safe_step: float):
    """Halve a trial step until it lowers the cost by half its first-order promise (or is safe)."""
    promise = cost_gradient @ cost_gradient
    while True:
        candidate = theta - step * cost_gradient
        change = _cost_change(problem, theta, candidate)
        if step <= safe_step or change <= -0.5 * step * promise:
            return candidate, change, step
        step = max(step / 2, safe_step)


def _lbfgs(problem: _Problem, rule: _StoppingRule, start: np.ndarray) -> _Path:
    """scipy's L-BFGS-B with the analytic gradient, restarted from where its line search stalls.

    Each run minimises the change in cost from its own starting point, which near the optimum is
    known far more precisely than the cost; a run that stalls on rounding is restarted from there.
    """
    from scipy import optimize  # imported here: only this solver and the separation check need it

    theta, trace, iterations, decrease = start, [_cost(problem, start)], 0, np.inf
    while iterations < rule.max_iterations:
        reference, reference_cost = theta, trace[-1]
        result = optimize.minimize(
            _change_and_gradient,
            reference,
            args=(problem, reference),
            jac=True,
            method="L-BFGS-B",
            callback=lambda intermediate_result: trace.append(reference_cost + float(intermediate_result.fun)),
            # ftol 0: stop on the gradient alone, then judge by the common rule.
            options={"maxiter": rule.max_iterations - iterations, "gtol": rule.gradient_tolerance, "ftol": 0.0},
        )
        theta, iterations = result.x, iterations + int(result.nit)
        decrease = trace[-2] - trace[-1] if len(trace) > 1 else np.inf
        if result.nit == 0 or rule.met(decrease, _cost_gradient(problem, theta)):
            break
    return _Path(theta, iterations, rule.met(decrease, _cost_gradient(problem, theta)), tuple(trace))


def _change_and_gradient(point: np.ndarray, problem: _Problem, reference: np.ndarray):
    return _cost_change(problem, reference, point), _cost_gradient(problem, point)


_SOLVE = {"newton": _newton, "gradient": _gradient_descent, "lbfgs": _lbfgs}


def _solve_symmetric(matrix: np.ndarray, right: np.ndarray, problem: _Problem, beta: np.ndarray):
    """Solve with a Cholesky factor of the Jacobi-scaled matrix; name the columns if it is singular."""
    diagonal = np.sqrt(np.clip(np.diag(matrix), np.finfo(float).tiny, None))
    scaled = matrix / np.outer(diagonal, diagonal)
    try:
        factor = linalg.cho_factor(scaled)
    except linalg.LinAlgError:
        raise _SingularInformation(scaled, problem, beta) from None
    row_scale = diagonal[:, None] if right.ndim == 2 else diagonal
    return linalg.cho_solve(factor, right / row_scale) / row_scale


class _SingularInformation(Exception):
    """The information matrix cannot be factored at these coefficients; fit_logistic names the columns."""

    def __init__(self, information: np.ndarray, problem: _Problem, beta: np.ndarray):
        super().__init__("singular information matrix")
        self.information, self.problem, self.beta = information, problem, beta


# ---------------------------------------------------------------------------------------------
# The result.


def _result(standard: _Problem, scaling: _Scaling, theta: np.ndarray, path: _Path, names: tuple[str, ...],
            *, solver: str, l2: float) -> FitResult:
    """Estimates and covariance carried from the standardised coordinates θ to the original b = T·θ."""
    transform = scaling.matrix()
    information = _cost_hessian(standard, theta) * standard.total_weight
    covariance = transform @ _solve_symmetric(information, np.eye(theta.size), standard, theta) @ transform.T
    covariance = (covariance + covariance.T) / 2
    beta = scaling.to_original(theta)
    std_errors = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    z_values = np.divide(beta, std_errors, out=np.full_like(beta, np.nan), where=std_errors > 0)
    unpenalised = _Problem(standard.design, standard.goods, standard.bads, np.zeros(theta.size), standard.intercept)
    fitted_log_likelihood = -_cost(unpenalised, theta) * standard.total_weight
    deviance = -2.0 * fitted_log_likelihood
    return FitResult(
        names=names,
        coefficients=beta,
        std_errors=std_errors,
        z_values=z_values,
        p_values=2.0 * special.ndtr(-np.abs(z_values)),
        covariance=covariance,
        log_likelihood=fitted_log_likelihood,
        deviance=deviance,
        aic=deviance + 2 * beta.size,
        bic=deviance + beta.size * np.log(standard.total_weight),
        n_observations=standard.total_weight,
        iterations=path.iterations,
        converged=path.converged,
        cost_trace=path.cost_trace,
        solver=solver,
        l2=l2,
    )


def _not_converged_message(result: FitResult) -> str:
    todo = (
        "Raise max_iterations; if that does not help, look for characteristics that nearly "
        "separate goods from bads."
        if result.solver == "newton"
        else "Raise max_iterations, or use solver='newton'."
    )
    return (
        f"the {result.solver} solver stopped after {result.iterations} iterations before the change "
        f"in cost and the gradient were within tolerance, so the estimates may be inaccurate. {todo}"
    )


# ---------------------------------------------------------------------------------------------
# Validation at entry.


def _checked_features(features, names) -> tuple[np.ndarray, tuple[str, ...]]:
    if names is None and isinstance(features, pd.DataFrame):
        names = [str(column) for column in features.columns]
    try:
        array = np.array(features, dtype=float)
    except (TypeError, ValueError) as error:
        raise FitError(f"features cannot be read as numbers ({error}). Code every characteristic as numbers first.") from None
    if array.ndim != 2:
        raise FitError(
            f"features must be a 2-D array, one row per application or pattern and one column per "
            f"characteristic; got shape {array.shape}. Reshape it, e.g. x.reshape(-1, 1) for one column."
        )
    names = tuple(f"x{j + 1}" for j in range(array.shape[1])) if names is None else tuple(map(str, names))
    _check_names(names, array.shape[1])
    bad_rows, bad_columns = np.nonzero(~np.isfinite(array))
    if bad_rows.size:
        column = bad_columns[np.argmin(bad_columns)]
        rows = np.flatnonzero(~np.isfinite(array[:, column]))
        raise FitError(
            f"characteristic {names[column]!r}, {describe_rows(rows + 1)} (counted from 1): value "
            f"{float(array[rows[0], column])!r} is not a finite number. Code missing and special values as "
            f"bins of their own before fitting."
        )
    return array, names


def _checked_start(start, names: tuple[str, ...]) -> np.ndarray:
    array = np.array(start, dtype=float)
    if array.shape != (len(names),) or not np.all(np.isfinite(array)):
        raise FitError(
            f"start = {start!r}: give {len(names)} finite numbers, one per coefficient in the order "
            f"{', '.join(map(repr, names))}."
        )
    return array


def _check_names(names: tuple[str, ...], n_columns: int) -> None:
    if len(names) != n_columns:
        raise FitError(f"names has {len(names)} entries but features has {n_columns} columns; give one name per column.")
    repeated = sorted({name for name in names if names.count(name) > 1})
    if repeated:
        raise FitError(f"names {', '.join(map(repr, repeated))} appear more than once; give each characteristic its own name.")
    if INTERCEPT_NAME in names:
        raise FitError(f"the name {INTERCEPT_NAME!r} is kept for the intercept; rename that characteristic.")


def _checked_counts(goods, bads, n_rows: int) -> tuple[np.ndarray, np.ndarray]:
    checked = []
    for label, counts in (("goods", goods), ("bads", bads)):
        array = np.asarray(counts, dtype=float)
        if array.shape != (n_rows,):
            raise FitError(
                f"{label} has shape {array.shape} but features has {n_rows} rows; give one count "
                f"of goods and one of bads per row."
            )
        rows = np.flatnonzero(~(np.isfinite(array) & (array >= 0)))
        if rows.size:
            raise FitError(
                f"{label}, {describe_rows(rows + 1)} (counted from 1): value {float(array[rows[0]])!r} is "
                f"not a finite, non-negative count. Weights of goods and bads must be >= 0."
            )
        if not array.sum() > 0:
            raise FitError(
                f"the {label} have total weight {float(array.sum())!r}: a logistic fit needs both goods and "
                f"bads. Check the outcome mapping and the sample the rows come from."
            )
        checked.append(array)
    return checked[0], checked[1]


def _checked_options(solver, l2, max_iterations, tolerance, gradient_tolerance) -> int | None:
    if solver not in SOLVERS:
        raise FitError(f"solver {solver!r} is not known; choose one of {', '.join(map(repr, SOLVERS))}.")
    if not (np.isfinite(l2) and l2 >= 0):
        raise FitError(f"l2 = {l2!r}: the ridge penalty must be a finite number >= 0.")
    if max_iterations is not None and not (int(max_iterations) == max_iterations and max_iterations >= 1):
        raise FitError(f"max_iterations = {max_iterations!r}: give a whole number >= 1.")
    for label, value in (("tolerance", tolerance), ("gradient_tolerance", gradient_tolerance)):
        if not (np.isfinite(value) and value > 0):
            raise FitError(f"{label} = {value!r}: give a small positive number such as 1e-10.")
    return None if max_iterations is None else int(max_iterations)


# ---------------------------------------------------------------------------------------------
# The pattern table both checks work on: distinct rows of the design, with goods and bads summed.


@dataclass(frozen=True, eq=False)
class _Patterns:
    design: np.ndarray  # distinct rows of the design among rows that carry weight
    goods: np.ndarray
    bads: np.ndarray
    n_rows: np.ndarray  # rows of the input behind each pattern


def _patterns(problem: _Problem) -> _Patterns:
    carries_weight = problem.weights > 0
    design, inverse = _distinct_rows(problem.design[carries_weight])
    return _Patterns(
        design=design,
        goods=np.bincount(inverse, weights=problem.goods[carries_weight], minlength=design.shape[0]),
        bads=np.bincount(inverse, weights=problem.bads[carries_weight], minlength=design.shape[0]),
        n_rows=np.bincount(inverse, minlength=design.shape[0]),
    )


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


# ---------------------------------------------------------------------------------------------
# Linear dependence of the characteristics.


def _raise_if_dependent(problem: _Problem, names: tuple[str, ...]) -> None:
    """Raise FitError naming the columns that take part in an exact linear dependence."""
    design = problem.design[problem.weights > 0]
    null_space = _null_space(design)
    if null_space.shape[0] == 0:
        return
    share = np.sum(null_space**2, axis=0)
    involved = np.flatnonzero(share > _NULL_SPACE_SHARE)
    raise FitError(_dependence_message(design, null_space, involved, names, problem.intercept))


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


def _clearly_full_rank(unit: np.ndarray) -> bool:
    """Whether the unit-norm columns are far from any dependence, judged from their small Gram matrix.

    The Gram matrix costs one pass over the rows and a p×p eigen-decomposition, against an SVD of
    the whole design; its smallest eigenvalue is the squared smallest singular value. Only when
    that is not clearly away from zero does the exact SVD decide.
    """
    if unit.shape[0] < unit.shape[1] or unit.shape[1] == 0:
        return False
    eigenvalues = np.linalg.eigvalsh(unit.T @ unit)
    # a singular value ratio above 1e-5 (eigenvalue ratio 1e-10) is far above the SVD's rank tolerance
    return bool(eigenvalues[0] > _CLEARLY_FULL_RANK * eigenvalues[-1])


def _dependence_message(design, null_space, involved, names, intercept) -> str:
    characteristics = [j for j in involved if not (intercept and j == 0)]
    where = "on every row that carries weight"
    todo = (
        "Drop one of them; for indicator columns of the bins of one characteristic, leave one bin out "
        "as the reference."
    )
    if len(characteristics) == 1:
        column = design[:, characteristics[0]]
        name = names[characteristics[0]]
        if np.all(column == 0):
            return f"characteristic {name!r} is 0 {where}, so it has no coefficient to estimate. Drop it."
        return (
            f"characteristic {name!r} is constant ({float(column[0])!r}) {where}, so its effect cannot be told "
            f"apart from the intercept. Drop it."
        )
    combination = ""
    if null_space.shape[0] == 1:
        combination = f" ({_combination(null_space[0], design, names, intercept)})"
    with_intercept = " together with the intercept" if intercept and 0 in involved else ""
    return (
        f"characteristics {_quoted(names[j] for j in characteristics)} are linearly dependent"
        f"{with_intercept}: a combination of them is exact {where}{combination}, so their "
        f"coefficients cannot be told apart. {todo}"
    )


def _combination(vector, design, names, intercept) -> str:
    """Write a null-space vector in the units of the columns, e.g. "'a' - 0.5·'b' = 0"."""
    norms = np.linalg.norm(design, axis=0)
    weights = vector / np.where(norms > 0, norms, 1.0)
    weights = weights / np.abs(weights).max()
    shown = [j for j in np.flatnonzero(np.abs(weights) > _NULL_SPACE_SHARE) if not (intercept and j == 0)]
    weights = weights * np.sign(weights[shown[0]])  # the first term shown is positive
    terms = [f"{'-' if weights[j] < 0 else '+'} {_times(abs(weights[j]))}{names[j]!r}" for j in shown]
    constant = -weights[0] if intercept else 0.0
    return f"{' '.join(terms).removeprefix('+ ')} = {constant:.4g}"


def _times(factor: float) -> str:
    return "" if f"{factor:.4g}" == "1" else f"{factor:.4g}·"


def _quoted(names) -> str:
    names = [repr(name) for name in names]
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} and {names[-1]}"


# ---------------------------------------------------------------------------------------------
# Separation of goods from bads.


def _overlap_proved(problem: _Problem, beta: np.ndarray) -> bool:
    """Whether the fitted residuals prove that goods and bads overlap, so none can be separated.

    At the maximum the residuals ``r_i = goods_i·(1 − p_i) − bads_i·p_i`` satisfy ``X'r = 0`` and
    are positive on rows with only goods and negative on rows with only bads; by Stiemke's theorem
    of the alternative no separating direction can then exist (Albert and Anderson, 1984, from
    memory). The computed residuals leave a small gradient ``e = X'r``; moving them by
    ``c = ΛX(X'ΛX)⁻¹e`` with ``Λ_i = |r_i|`` removes it, and keeps every sign when
    ``|x_i·(X'ΛX)⁻¹e| < 1`` on the one-sided rows. Half of that bound is asked for.
    """
    carries_weight = problem.weights > 0
    design, goods, bads = problem.design[carries_weight], problem.goods[carries_weight], problem.bads[carries_weight]
    eta = design @ beta
    residual = goods * special.expit(-eta) - bads * special.expit(eta)
    one_sided = (goods == 0) | (bads == 0)
    if np.any(np.abs(residual[one_sided]) < _FIRM_PROBABILITY * (goods + bads)[one_sided]):
        return False
    spread = np.where(one_sided, np.abs(residual), (goods + bads) * special.expit(eta) * special.expit(-eta))
    try:
        direction = _solve_symmetric((design * spread[:, None]).T @ design, design.T @ residual, problem, beta)
    except _SingularInformation:
        return False
    return bool(np.max(np.abs(design[one_sided] @ direction), initial=0.0) < 0.5)


def _raise_if_separated(patterns: _Patterns, names: tuple[str, ...], *, intercept: bool) -> None:
    """Raise FitError naming a smallest set of characteristics that separates goods from bads."""
    if not _separated(patterns, np.arange(patterns.design.shape[1])):
        return
    columns = _fewest_separating_columns(patterns, intercept)
    determined = _determined_patterns(patterns, columns)
    characteristics = [names[j] for j in columns if not (intercept and j == 0)]
    raise FitError(_separation_message(characteristics, patterns, determined))


def _separated(patterns: _Patterns, columns: np.ndarray) -> bool:
    """Whether the columns separate goods from bads: a quick screen, then the exact check."""
    return _may_separate(patterns, columns) and _determined_patterns(patterns, columns) is not None


def _may_separate(patterns: _Patterns, columns: np.ndarray) -> bool:
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


def _unit_design(patterns: _Patterns, columns: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Columns scaled to largest absolute value 1, and the side of each pattern (+1, -1 or 0)."""
    design = patterns.design[:, columns]
    scale = np.max(np.abs(design), axis=0)
    side = (patterns.bads == 0).astype(float) - (patterns.goods == 0)
    return design / np.where(scale > 0, scale, 1.0), side


def _determined_patterns(patterns: _Patterns, columns: np.ndarray) -> np.ndarray | None:
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


def _fewest_separating_columns(patterns: _Patterns, intercept: bool) -> np.ndarray:
    """Drop characteristics one at a time while the rest still separate (the intercept stays)."""
    columns = list(range(patterns.design.shape[1]))
    for column in list(columns):
        if intercept and column == 0:
            continue
        fewer = np.array([j for j in columns if j != column], dtype=int)
        if fewer.size and _separated(patterns, fewer):
            columns.remove(column)
    return np.array(columns, dtype=int)


def _separation_message(characteristics: list[str], patterns: _Patterns, determined: np.ndarray) -> str:
    n_rows = int(patterns.n_rows.sum())
    n_determined = int(patterns.n_rows[determined].sum())
    weight = float(patterns.goods[determined].sum() + patterns.bads[determined].sum())
    how = "completely" if determined.all() else "quasi-completely"
    if len(characteristics) == 1:
        subject = f"characteristic {characteristics[0]!r} separates"
        rule = "a single cut on it"
        todo = "Group its bins more coarsely or drop it."
    else:
        subject = f"characteristics {_quoted(characteristics)} together separate"
        rule = "a weighted sum of them, cut at one value,"
        todo = "Group their bins more coarsely or drop one of them."
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


def _numerically_singular_message(singular: _SingularInformation, names: tuple[str, ...], *, intercept: bool) -> str:
    """Name the columns of the direction in which the (Jacobi-scaled) information is flattest."""
    _, vectors = np.linalg.eigh(singular.information)
    flattest = np.abs(vectors[:, 0]) / np.abs(vectors[:, 0]).max()
    involved = [names[j] for j in np.flatnonzero(flattest > 0.1) if not (intercept and j == 0)]
    eta = singular.problem.design @ singular.beta
    n_extreme = int(np.sum((singular.problem.weights > 0) & (special.expit(eta) * special.expit(-eta) < 1e-10)))
    which = f"; the characteristics most involved are {_quoted(involved)}" if involved else ""
    separation = (
        f", or they nearly separate goods from bads: {n_extreme} rows that carry weight have fitted "
        f"probabilities within 1e-10 of 0 or 1"
        if n_extreme
        else ""
    )
    return (
        f"the information matrix is numerically singular, so the coefficients cannot be told apart"
        f"{which}. They are nearly linearly dependent{separation}. Drop or merge characteristics, "
        f"group bins more coarsely, or fit with a small l2 penalty."
    )


# ---------------------------------------------------------------------------------------------
# Fitting a table too large to hold as one design matrix.

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
    limit = _DEFAULT_MAX_ITERATIONS["newton"] if max_iterations is None else max_iterations

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
        for halvings in range(_MAX_HALVINGS):
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
                f"the estimates grow without bound: goods and bads look separated by {_quoted(largest)}. "
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
    """Solve ``information · x = right`` by Cholesky on the unit-diagonal scaling; name dependent columns."""
    scale = np.sqrt(np.clip(np.diag(information), np.finfo(float).tiny, None))
    scaled = information / np.outer(scale, scale)
    try:
        factor = linalg.cho_factor(scaled)
    except linalg.LinAlgError:
        factor = None
    eigenvalues, vectors = np.linalg.eigh(scaled)
    if factor is None or eigenvalues[0] < _CLEARLY_FULL_RANK * eigenvalues[-1]:
        involved = [names[j] for j in np.flatnonzero(np.abs(vectors[:, 0]) > 0.1) if j > 0]
        raise FitError(
            f"characteristics {_quoted(involved)} are linearly dependent (or nearly), so their coefficients cannot "
            "be told apart. Leave one of them out."
        )
    right = np.asarray(right, float)
    solved = linalg.cho_solve(factor, right / (scale if right.ndim == 1 else scale[:, None]))
    return solved / (scale if solved.ndim == 1 else scale[:, None])
