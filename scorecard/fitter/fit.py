"""Fit the logistic model of the good:bad odds on weighted rows or on a pattern table.

The model is ``ln(odds good:bad) = b0 + x·b``, so ``P(good) = 1 / (1 + exp(-(b0 + x·b)))``. Each
row carries a weighted count of goods and one of bads. A row of individual data carries its
weight in one of the two; a row of a pattern table carries the sums over the applications that
share its pattern. Both give the same log-likelihood, so both give the same estimates.
"""

from __future__ import annotations

import warnings

from ..errors import FitError, ScorecardWarning
from .guards import patterns, raise_if_dependent, raise_if_separated
from .inputs import checked_counts, checked_features, checked_options, checked_start
from .problem import design_matrix, make_problem, no_standardisation
from .result import INTERCEPT_NAME, FitResult
from .solvers import DEFAULT_MAX_ITERATIONS, StoppingRule, fit_problem, not_converged_message


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
    features, names = checked_features(features, names)
    goods, bads = checked_counts(goods, bads, features.shape[0])
    max_iterations = checked_options(solver, l2, max_iterations, tolerance, gradient_tolerance)
    max_iterations = DEFAULT_MAX_ITERATIONS[solver] if max_iterations is None else max_iterations
    if not intercept and not names:
        raise FitError("there is nothing to fit: no characteristics and no intercept. Pass intercept=True or some features.")
    all_names = ((INTERCEPT_NAME,) if intercept else ()) + names
    start = None if start is None else checked_start(start, all_names)
    problem = make_problem(design_matrix(features, intercept), goods, bads, l2=l2, intercept=intercept)
    checks = guard and l2 == 0  # with a penalty the estimate exists and is unique whatever the data
    if checks:
        raise_if_dependent(problem, all_names)
    if checks and solver != "newton":
        # Descent methods would crawl along a separating direction until max_iterations.
        raise_if_separated(patterns(problem), all_names, intercept=intercept)
    rule = StoppingRule(max_iterations, tolerance, gradient_tolerance, no_standardisation(problem))
    # the design is this fit's own (made from the features just above), so it is standardised in place
    result = fit_problem(problem, all_names, rule, solver=solver, l2=float(l2), start=start, standardise=standardise,
                         checks=checks, remake=lambda: make_problem(design_matrix(features, intercept), goods, bads,
                                                                    l2=l2, intercept=intercept))
    if not result.converged:
        warnings.warn(not_converged_message(result), ScorecardWarning, stacklevel=2)
    return result
