"""The checks' distribution functions equal scipy.stats' to the bit, inside the support and at its edges.

Source: scipy.stats (the reference library the checks were written against); scipy.stats is imported
here, in the test only, never by the tool.
"""

import subprocess
import sys

import numpy as np
import pytest
from scipy import stats

from scorecard.checks import distributions as d

RNG = np.random.default_rng(20261203)


def same_bits(ours, theirs) -> bool:
    ours, theirs = np.asarray(ours), np.asarray(theirs)
    return ours.shape == theirs.shape and ours.dtype == theirs.dtype and \
        bool(np.all((ours == theirs) | (np.isnan(ours) & np.isnan(theirs))))


def binomial_grid():
    """Counts, sizes and probabilities as the calibration bands have them, with the support's edges and beyond."""
    n = RNG.integers(1, 5000, 400).astype(float)
    p = RNG.uniform(1e-4, 0.6, 400)
    k = np.floor(RNG.uniform(-0.2, 1.2, 400) * n)
    edges_n = np.array([1, 1, 1, 10, 10, 10, 10, 10, 10, 250, 250], float)
    edges_k = np.array([-1, 0, 1, -1, 0, 9, 10, 11, 3.5, 249, 250], float)
    edges_p = np.array([0.5, 0.5, 0.5, 0.02, 0.02, 0.02, 0.02, 0.02, 0.3, 0.99, 0.01])
    return np.r_[k, edges_k], np.r_[n, edges_n], np.r_[p, edges_p]


@pytest.mark.parametrize(("ours", "theirs"), [
    (d.binomial_pmf, stats.binom.pmf), (d.binomial_cdf, stats.binom.cdf), (d.binomial_sf, stats.binom.sf),
])
def test_binomial_functions_are_scipy_stats_own(ours, theirs):
    k, n, p = binomial_grid()
    assert same_bits(ours(k, n, p), theirs(k, n, p))
    assert same_bits(ours(k[7], n[7], p[7]), theirs(k[7], n[7], p[7]))  # scalars stay scalars


def test_beta_functions_are_scipy_stats_own():
    a, b = RNG.uniform(0.5, 3000, 300), RNG.uniform(0.5, 3000, 300)
    x = np.r_[RNG.uniform(0, 1, 300), 0.0, 1.0, -0.1, 1.1]
    a, b = np.r_[a, 1.5, 2.5, 3.5, 4.5], np.r_[b, 7.5, 0.5, 2.5, 9.5]
    assert same_bits(d.beta_cdf(x, a, b), stats.beta.cdf(x, a, b))
    q = np.r_[RNG.uniform(0, 1, 300), 0.0, 1.0, 0.025, 0.975]
    assert same_bits(d.beta_ppf(q, a, b), stats.beta.ppf(q, a, b))
    assert same_bits(d.beta_ppf(0.025, 3.5, 120.5), stats.beta.ppf(0.025, 3.5, 120.5))


def test_normal_and_chi_square_tails_are_scipy_stats_own():
    z = np.r_[RNG.normal(0, 4, 500), 0.0, -np.inf, np.inf, np.nan, 40.0, -40.0]
    assert same_bits(d.normal_sf(z), stats.norm.sf(z))
    assert same_bits(d.normal_sf(1.96), stats.norm.sf(1.96))
    x = np.r_[RNG.exponential(10, 500), 0.0, -1.0, np.inf, np.nan]
    df = np.r_[RNG.integers(1, 30, 500), 3, 3, 3, 3].astype(float)
    assert same_bits(d.chi_square_sf(x, df), stats.chi2.sf(x, df))
    assert same_bits(d.chi_square_sf(12.4, 8), stats.chi2.sf(12.4, 8))


def test_a_build_with_reports_never_imports_scipy_stats():
    """The point of the module: the checks run without paying for scipy.stats' import."""
    code = ("import sys, numpy as np\n"
            "from scorecard.checks import calibration as c\n"
            "scores = np.arange(300.0, 700.0, 10.0); pd = 1 / (1 + np.exp((scores - 450) / 40))\n"
            "goods = np.full(scores.size, 200.0); bads = np.round(goods * pd / (1 - pd))\n"
            "table = c.calibration_table(scores, goods, bads, pd); c.hosmer_lemeshow(table)\n"
            "c.calibration_in_the_large(scores, goods, bads, pd); c.calibration_line(scores, goods, bads, pd)\n"
            "print(table.binomial_p_excess.size > 1, 'scipy.stats' in sys.modules)\n")
    found = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert found.stdout.split() == ["True", "False"]
