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
    x, df = _arrays(x, df)
    return _on_support(special.chdtrc, (df, x), inside=(x > 0) & np.isfinite(x), beyond=x <= 0, at=x)


def binomial_pmf(k, n, p):
    """P(K = k) for K binomial(n, p) (``scipy.stats.binom.pmf``): 0 off the whole numbers 0 … n."""
    k, n, p = _arrays(k, n, p)
    inside = (k >= 0) & (k <= n) & (np.floor(k) == k)
    return _on_support(_ufuncs._binom_pmf, (k, n, p), inside=inside, beyond=np.zeros(k.shape, bool), at=k, clip=True)


def binomial_cdf(k, n, p):
    """P(K <= k) for K binomial(n, p) (``scipy.stats.binom.cdf``)."""
    k, n, p = _arrays(k, n, p)
    return _on_support(_ufuncs._binom_cdf, (np.floor(k), n, p), inside=(k >= 0) & (k < n), beyond=k >= n, at=k, clip=True)


def binomial_sf(k, n, p):
    """P(K > k) for K binomial(n, p) (``scipy.stats.binom.sf``)."""
    k, n, p = _arrays(k, n, p)
    return _on_support(_ufuncs._binom_sf, (np.floor(k), n, p), inside=(k >= 0) & (k < n), beyond=k < 0, at=k, clip=True)


def beta_cdf(x, a, b):
    """P(X <= x) for X beta(a, b) (``scipy.stats.beta.cdf``)."""
    x, a, b = _arrays(x, a, b)
    return _on_support(special.betainc, (a, b, x), inside=(x > 0) & (x < 1), beyond=x >= 1, at=x)


def beta_ppf(q, a, b):
    """The q-quantile of beta(a, b) (``scipy.stats.beta.ppf``), for 0 <= q <= 1."""
    q, a, b = _arrays(q, a, b)
    return _on_support(_ufuncs._beta_ppf, (q, a, b), inside=(q > 0) & (q < 1), beyond=q >= 1, at=q)


def _arrays(*values) -> list[np.ndarray]:
    return np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in values))


def _on_support(ufunc, arguments, *, inside: np.ndarray, beyond: np.ndarray, at: np.ndarray, clip: bool = False):
    """The ufunc where the point is inside the support; 1 where it is past the end the function reaches 1 at,
    0 elsewhere, and NaN at a NaN point: how scipy.stats' generic methods handle the edges."""
    values = np.where(beyond, 1.0, 0.0)
    found = ufunc(*(argument[inside] for argument in arguments))
    values[inside] = np.clip(found, 0, 1) if clip else found
    return _scalar(np.where(np.isnan(at), np.nan, values))


def _scalar(values: np.ndarray):
    """A 0-d result as a numpy scalar, as scipy.stats returns it."""
    return values[()] if values.ndim == 0 else values
