"""Fine classing: many small candidate bins, from weighted quantiles of numbers or one bin per level."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
import pandas as pd

from ..rows.coding import as_float, factorize_levels
from ..terms import NUMERIC
from .bins import Binning, categorical_binning, numeric_binning


def fine_classing(values: pd.Series | np.ndarray, weights: np.ndarray, *, name: str, kind: str,
                  special_values: Sequence[float] = (), max_bins: int = 20,
                  rare_level_share: float = 0.01) -> Binning:
    """Propose fine bins: weighted quantiles for numbers, one bin per level for categories.

    Parameters
    ----------
    values : pandas.Series or numpy.ndarray
        The characteristic's column (development rows, or a sample of them).
    weights : numpy.ndarray
        Case weight of each row.
    name, kind : str
        Characteristic name and 'numeric' or 'categorical'.
    special_values : sequence of float
        Numeric codes that get bins of their own.
    max_bins : int
        Most ordinary bins of a numeric characteristic.
    rare_level_share : float
        Levels with a smaller weighted share are pooled into one bin for rare levels.

    Returns
    -------
    Binning
        Missing and each special value present get bins of their own.
    """
    if kind == NUMERIC:
        x = as_float(values)
        present = [bool(np.any(x == v)) for v in special_values]
        ordinary = ~np.isnan(x) & ~np.isin(x, special_values)
        cuts = quantile_cuts(x[ordinary], weights[ordinary], max_bins=max_bins)
        return numeric_binning(name, cuts, special_values=special_values,
                               special_bins=[None if p else -1 for p in present], has_missing=bool(np.isnan(x).any()))
    level_codes, uniques = factorize_levels(values)
    totals = np.bincount(level_codes[level_codes >= 0], weights=weights[level_codes >= 0], minlength=len(uniques))
    share = totals / max(totals.sum(), np.finfo(float).tiny)
    # largest first, then by text: the order of the rows must not decide the order of the levels
    order = sorted(range(len(uniques)), key=lambda i: (-totals[i], uniques[i]))
    common = tuple((uniques[i],) for i in order if share[i] >= rare_level_share)
    rare = tuple(uniques[i] for i in order if share[i] < rare_level_share)
    classes = common + ((rare,) if rare else ())
    return categorical_binning(name, classes, has_missing=bool((level_codes < 0).any()),
                               rare_class=len(common) if rare else None)


def quantile_cuts(x: np.ndarray, weights: np.ndarray, *, max_bins: int) -> tuple[float, ...]:
    """Return up to ``max_bins - 1`` cut points at weighted quantiles, each a round number.

    Each cut separates two neighbouring distinct values and is the roundest number between them,
    so no bin is empty on these data and the table is easy to read (1500 rather than 1523.37).
    """
    if len(x) == 0:
        return ()
    distinct, inverse = np.unique(x, return_inverse=True)
    if len(distinct) < 2:
        return ()
    mass = np.bincount(inverse, weights=weights, minlength=len(distinct))
    cumulative = np.cumsum(mass) / mass.sum()
    targets = np.arange(1, max_bins) / max_bins
    below = np.unique(np.searchsorted(cumulative, targets - 1e-12, side="left"))
    below = below[below < len(distinct) - 1]
    return tuple(roundest_between(distinct[i], distinct[i + 1]) for i in below)


def roundest_between(low: float, high: float) -> float:
    """Return the number with the fewest significant digits in ``(low, high]``."""
    span = high - low
    for digits in range(int(math.floor(math.log10(abs(high)))) if high != 0 else 0, -13, -1):
        step = 10.0**digits
        candidate = math.ceil(low / step + 1e-9) * step
        if candidate <= low:
            candidate += step
        if candidate <= high and span > 0:
            value = float(np.round(candidate, max(0, -digits)))
            if low < value <= high:
                return value
    return float(high)
