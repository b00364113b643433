"""The few distribution functions the checks need, from scipy.special's ufuncs, as scipy.stats gives them.

Importing scipy.stats takes about half a second, most of a small build's checks. Every function
here calls the same ufunc that the named scipy.stats method calls, with the same handling of the
edges of the support, so the values are scipy.stats' own to the bit (tests/test_checks_distributions.py
compares them on grids and edges). Each takes the parameters a valid distribution has (whole
``n >= 0``, ``0 <= p <= 1``, positive ``a`` and ``b``); the checks never pass others.
"""

from __future__ import annotations

import numpy as np
from scipy import special
from scipy.special import _ufuncs  # binomial and beta-quantile ufuncs scipy.stats itself calls (not re-exported)

__all__ = ["beta_cdf", "beta_ppf", "binomial_cdf", "binomial_pmf", "binomial_sf", "chi_square_sf", "normal_sf"]


def normal_sf(x):
    """P(Z > x) for a standard normal Z (``scipy.stats.norm.sf``)."""
    x = np.asarray(x, dtype=float)
    return _scalar(np.where(np.isnan(x), np.nan, special.ndtr(-x)))


def chi_square_sf(x, df):
    """P(X > x) for X chi-square with ``df`` degrees of freedom (``scipy.stats.chi2.sf``)."""
    x, df = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(df, dtype=float))
    inside = (x > 0) & np.isfinite(x)
    values = np.where(x <= 0, 1.0, 0.0)
    values[inside] = special.chdtrc(df[inside], x[inside])
    return _scalar(np.where(np.isnan(x), np.nan, values))


def binomial_pmf(k, n, p):
    """P(K = k) for K binomial(n, p) (``scipy.stats.binom.pmf``): 0 off the whole numbers 0 … n."""
    k, n, p = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (k, n, p)))
    inside = (k >= 0) & (k <= n) & (np.floor(k) == k)
    values = np.zeros(k.shape)
    values[inside] = np.clip(_ufuncs._binom_pmf(k[inside], n[inside], p[inside]), 0, 1)
    return _scalar(np.where(np.isnan(k), np.nan, values))


def binomial_cdf(k, n, p):
    """P(K <= k) for K binomial(n, p) (``scipy.stats.binom.cdf``)."""
    k, n, p = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (k, n, p)))
    inside = (k >= 0) & (k < n)
    values = np.where(k >= n, 1.0, 0.0)
    values[inside] = np.clip(_ufuncs._binom_cdf(np.floor(k[inside]), n[inside], p[inside]), 0, 1)
    return _scalar(np.where(np.isnan(k), np.nan, values))


def binomial_sf(k, n, p):
    """P(K > k) for K binomial(n, p) (``scipy.stats.binom.sf``)."""
    k, n, p = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (k, n, p)))
    inside = (k >= 0) & (k < n)
    values = np.where(k < 0, 1.0, 0.0)
    values[inside] = np.clip(_ufuncs._binom_sf(np.floor(k[inside]), n[inside], p[inside]), 0, 1)
    return _scalar(np.where(np.isnan(k), np.nan, values))


def beta_cdf(x, a, b):
    """P(X <= x) for X beta(a, b) (``scipy.stats.beta.cdf``)."""
    x, a, b = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (x, a, b)))
    inside = (x > 0) & (x < 1)
    values = np.where(x >= 1, 1.0, 0.0)
    values[inside] = special.betainc(a[inside], b[inside], x[inside])
    return _scalar(values)


def beta_ppf(q, a, b):
    """The q-quantile of beta(a, b) (``scipy.stats.beta.ppf``), for 0 <= q <= 1."""
    q, a, b = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (q, a, b)))
    inside = (q > 0) & (q < 1)
    values = np.where(q >= 1, 1.0, 0.0)
    values[inside] = _ufuncs._beta_ppf(q[inside], a[inside], b[inside])
    return _scalar(values)


def _scalar(values: np.ndarray):
    """A 0-d result as a numpy scalar, as scipy.stats returns it."""
    return values[()] if values.ndim == 0 else values
