"""Fine and coarse classing of characteristics, analyst overrides, and coding rows to bins.

A ``Binning`` says which bin every possible value of a characteristic falls in. Numeric
characteristics are cut into intervals ``[c_i, c_{i+1})``; categorical ones are grouped by level.
Missing values and each declared special value get bins of their own (or join a group). Bins are
numbered: the ordered chain of intervals or groups first, then special-value bins, then the
missing bin.

Fine classing proposes many small bins (weighted quantiles, or one bin per level). Coarse
classing groups adjacent fine bins into the partition with the largest information value that
keeps WoE monotone and every group large enough: an exact dynamic programme over the ordered
fine bins (W. D. Fisher, "On grouping for maximum homogeneity", JASA 53, 1958, with constraints
added), not a greedy merge.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np
import pandas as pd

from .errors import ClassingError
from .evidence import EMPTY_CELL, information_value, woe_values
from .ledger import value_text

NUMERIC, CATEGORICAL = "numeric", "categorical"
MISSING_LABEL = "missing"
RARE_LABEL = "rare levels"


@dataclass(frozen=True)
class Binning:
    """Where every value of one characteristic goes.

    Attributes
    ----------
    characteristic, kind : str
    cuts : tuple of float
        Numeric: ascending cut points; interval i is ``[cuts[i-1], cuts[i])``, open at both ends.
    groups : tuple of tuple of str
        Categorical: the levels of each group, in chain order.
    special_values : tuple of float
        Numeric codes with a meaning of their own.
    special_bins : tuple of int
        The bin of each special value (its own bin, or a chain bin it joined); -1 sends it to the
        fallback bin (the value never occurred at build time).
    missing_bin : int
        The bin of missing values; -1 sends them to the fallback bin.
    fallback_bin : int
        The bin of values never seen at build time (unseen levels; missing or a special value when
        the development sample had none).
    labels : tuple of str
        One plain-language label per bin.
    trend : str
        'ascending', 'descending' or 'none': the WoE order across the chain.
    """

    characteristic: str
    kind: str
    cuts: tuple[float, ...] = ()
    groups: tuple[tuple[str, ...], ...] = ()
    special_values: tuple[float, ...] = ()
    special_bins: tuple[int, ...] = ()
    missing_bin: int = -1
    fallback_bin: int = 0
    labels: tuple[str, ...] = ()
    trend: str = "none"

    @property
    def n_bins(self) -> int:
        """Number of bins."""
        return len(self.labels)

    @property
    def n_chain(self) -> int:
        """Number of ordered bins (intervals or level groups), before special and missing bins."""
        return len(self.cuts) + 1 if self.kind == NUMERIC else len(self.groups)

    @property
    def levels(self) -> tuple[str, ...]:
        """Every categorical level the binning knows."""
        return tuple(level for group in self.groups for level in group)

    def to_dict(self) -> dict[str, object]:
        """Return the binning as plain values (for the model file)."""
        return {
            "kind": self.kind, "cuts": list(self.cuts), "groups": [list(g) for g in self.groups],
            "special_values": list(self.special_values), "special_bins": list(self.special_bins),
            "missing_bin": self.missing_bin, "fallback_bin": self.fallback_bin,
            "labels": list(self.labels), "trend": self.trend,
        }

    @classmethod
    def from_dict(cls, characteristic: str, data: Mapping[str, object]) -> Binning:
        """Rebuild a binning from ``to_dict`` output."""
        return cls(
            characteristic=characteristic, kind=str(data["kind"]),
            cuts=tuple(float(c) for c in data["cuts"]), groups=tuple(tuple(g) for g in data["groups"]),
            special_values=tuple(float(v) for v in data["special_values"]),
            special_bins=tuple(int(b) for b in data["special_bins"]), missing_bin=int(data["missing_bin"]),
            fallback_bin=int(data["fallback_bin"]), labels=tuple(data["labels"]), trend=str(data["trend"]),
        )


@dataclass(frozen=True)
class CoarseClassing:
    """The result of coarse classing: the binning, how fine bins map to it, and what was done."""

    binning: Binning
    fine_to_coarse: np.ndarray  # coarse bin of each fine bin
    iv: float
    notes: tuple[str, ...]


# --------------------------------------------------------------------------------------------
# Coding rows (vectorised; the only row work in this module)


def code_rows(values: pd.Series | np.ndarray, binning: Binning, *, unseen_code: int | None = None) -> np.ndarray:
    """Return the bin of every row as small unsigned integers.

    Parameters
    ----------
    values : pandas.Series or numpy.ndarray
        The characteristic's column.
    binning : Binning
    unseen_code : int, optional
        Code given to values the binning has never seen (default: ``binning.fallback_bin``).

    Returns
    -------
    numpy.ndarray
        uint8 codes (uint16 when there are more than 255 bins).

    Notes
    -----
    Numeric: ``searchsorted(cuts, x, side='right')`` puts x in ``[cuts[i-1], cuts[i])``, the same
    intervals as ``pandas.cut(x, [-inf, *cuts, inf], right=False)``.
    """
    unseen = binning.fallback_bin if unseen_code is None else unseen_code
    dtype = np.uint8 if max(binning.n_bins, unseen + 1) <= 255 else np.uint16
    missing = unseen if binning.missing_bin < 0 else binning.missing_bin
    if binning.kind == NUMERIC:
        x = _as_float(values)
        codes = np.searchsorted(np.asarray(binning.cuts, dtype=float), x, side="right").astype(dtype)
        for value, target in zip(binning.special_values, binning.special_bins):
            codes[x == value] = unseen if target < 0 else target
        codes[np.isnan(x)] = missing
        return codes
    level_codes, uniques = factorize_levels(values)
    known = {level: bin_ for bin_, group in enumerate(binning.groups) for level in group}
    lookup = np.array([known.get(level, unseen) for level in uniques] + [missing], dtype=dtype)
    return lookup[level_codes]  # the missing sentinel -1 picks the last entry


def unseen_levels(values: pd.Series | np.ndarray, binning: Binning) -> dict[str, int]:
    """Return the levels of a categorical column that the binning does not know, with row counts."""
    if binning.kind != CATEGORICAL:
        return {}
    level_codes, uniques = factorize_levels(values)
    known = set(binning.levels)
    counts = np.bincount(level_codes[level_codes >= 0], minlength=len(uniques))
    return {level: int(n) for level, n in zip(uniques, counts) if level not in known and n > 0}


def factorize_levels(values: pd.Series | np.ndarray) -> tuple[np.ndarray, list[str]]:
    """Return (codes, levels as text): -1 marks a missing value; 1 and 1.0 are both the level '1'."""
    codes, uniques = pd.factorize(pd.Series(values) if not isinstance(values, pd.Series) else values, use_na_sentinel=True)
    return codes, [value_text(u) for u in uniques]


def _as_float(values: pd.Series | np.ndarray) -> np.ndarray:
    if isinstance(values, pd.Series):
        return values.to_numpy(dtype=float, na_value=np.nan)
    return np.asarray(values, dtype=float)


# --------------------------------------------------------------------------------------------
# Fine classing


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
        x = _as_float(values)
        present = [bool(np.any(x == v)) for v in special_values]
        ordinary = ~np.isnan(x) & ~np.isin(x, special_values)
        cuts = quantile_cuts(x[ordinary], weights[ordinary], max_bins=max_bins)
        return numeric_binning(name, cuts, special_values=special_values,
                               special_bins=[None if p else -1 for p in present], has_missing=bool(np.isnan(x).any()))
    level_codes, uniques = factorize_levels(values)
    totals = np.bincount(level_codes[level_codes >= 0], weights=weights[level_codes >= 0], minlength=len(uniques))
    share = totals / max(totals.sum(), np.finfo(float).tiny)
    order = np.argsort(-totals, kind="stable")
    common = tuple((uniques[i],) for i in order if share[i] >= rare_level_share)
    rare = tuple(uniques[i] for i in order if share[i] < rare_level_share)
    groups = common + ((rare,) if rare else ())
    return categorical_binning(name, groups, has_missing=bool((level_codes < 0).any()),
                               rare_group=len(common) if rare else None)


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


def numeric_binning(name: str, cuts: Sequence[float], *, special_values: Sequence[float] = (),
                    special_bins: Sequence[int | None] | None = None, has_missing: bool = True,
                    missing_bin: int | None = None, trend: str = "none") -> Binning:
    """Return a numeric binning.

    ``special_bins`` gives, per special value, None (a bin of its own), -1 (the fallback bin: the
    value never occurred in development) or the chain bin it joins. ``missing_bin`` None gives
    missing values a bin of their own when ``has_missing``, else the fallback bin.
    """
    labels = interval_labels(cuts)
    targets = list(special_bins) if special_bins is not None else [None] * len(special_values)
    special_targets = []
    for value, target in zip(special_values, targets):
        if target is None:
            labels.append(f"special {format_number(value)}")
            target = len(labels) - 1
        special_targets.append(int(target))
    missing = _missing_bin(labels, has_missing, missing_bin)
    return Binning(name, NUMERIC, cuts=tuple(float(c) for c in cuts), special_values=tuple(float(v) for v in special_values),
                   special_bins=tuple(special_targets), missing_bin=missing, fallback_bin=0, labels=tuple(labels),
                   trend=trend)


def categorical_binning(name: str, groups: Sequence[Sequence[str]], *, has_missing: bool = True,
                        missing_bin: int | None = None, rare_group: int | None = None, trend: str = "none") -> Binning:
    """Return a categorical binning; missing gets its own bin unless given one (-1: the fallback)."""
    labels = [group_label(group) for group in groups]
    if rare_group is not None:
        labels[rare_group] = f"{RARE_LABEL} ({len(groups[rare_group])})"
    missing = _missing_bin(labels, has_missing, missing_bin)
    fallback = rare_group if rare_group is not None else 0
    return Binning(name, CATEGORICAL, groups=tuple(tuple(str(v) for v in g) for g in groups),
                   missing_bin=missing, fallback_bin=fallback, labels=tuple(labels), trend=trend)


def _missing_bin(labels: list[str], has_missing: bool, missing_bin: int | None) -> int:
    """Append a missing bin to ``labels`` when it needs one; return the missing bin (-1: fallback)."""
    if missing_bin is not None:
        return int(missing_bin)
    if not has_missing:
        return -1
    labels.append(MISSING_LABEL)
    return len(labels) - 1


def interval_labels(cuts: Sequence[float]) -> list[str]:
    """Return 'under c1', 'c1 to under c2', ..., 'ck and over' (or 'all values' with no cut)."""
    if not cuts:
        return ["all values"]
    text = [format_number(c) for c in cuts]
    middle = [f"{a} to under {b}" for a, b in zip(text, text[1:])]
    return [f"under {text[0]}", *middle, f"{text[-1]} and over"]


def group_label(levels: Sequence[str]) -> str:
    """Return a group's label: its levels joined by commas."""
    return ", ".join(str(level) for level in levels)


def format_number(value: float) -> str:
    """Format a cut point or code compactly and exactly enough to read back: 1500, 0.25, 1.5e+06."""
    if float(value).is_integer() and abs(value) < 1e15:
        return str(int(value))
    return f"{value:.10g}"


# --------------------------------------------------------------------------------------------
# Coarse classing: the constrained optimal grouping


@dataclass(frozen=True)
class GroupingLimits:
    """Constraints of coarse classing, in counts (weighted rows for share, raw rows for goods/bads)."""

    min_rows: float = 0.0
    min_goods: int = 0
    min_bads: int = 0
    max_groups: int = 8


def optimal_grouping(goods: np.ndarray, bads: np.ndarray, *, total_goods: float, total_bads: float,
                     n_goods: np.ndarray | None = None, n_bads: np.ndarray | None = None,
                     limits: GroupingLimits = GroupingLimits(), trend: str = "ascending") -> tuple[int, ...]:
    """Group an ordered sequence of bins into the contiguous groups with the largest IV.

    Parameters
    ----------
    goods, bads : numpy.ndarray
        Weighted goods and bads of each ordered fine bin.
    total_goods, total_bads : float
        Totals of the whole characteristic (shares are taken of these).
    n_goods, n_bads : numpy.ndarray, optional
        Raw counts for the minimum-count limits (default: the weighted counts).
    limits : GroupingLimits
    trend : {'ascending', 'descending', 'none'}
        Required strict order of the groups' WoE along the sequence.

    Returns
    -------
    tuple of int
        The start index of each group (the first is 0). A single group ``(0,)`` when no
        partition meets the limits.

    Notes
    -----
    IV is a sum over groups, so the best partition of bins ``[0, k)`` whose last group is
    ``[j, k)`` extends the best partition of ``[0, j)`` whose last group ``[i, j)`` has a WoE on
    the right side of ``[j, k)``'s. Tracking the last group makes the monotone constraint exact:
    O(G n^3) for n bins and at most G groups (Fisher 1958, with constraints added).
    """
    n = len(goods)
    n_goods = goods if n_goods is None else n_goods
    n_bads = bads if n_bads is None else n_bads
    woe, iv, feasible = _segment_tables(goods, bads, n_goods, n_bads, total_goods, total_bads, limits)
    # best[g, i, j]: largest IV of bins [0, j) in g+1 groups whose last group is [i, j)
    best = np.full((limits.max_groups, n + 1, n + 1), -np.inf)
    best[0, 0, :] = np.where(feasible[0, :], iv[0, :], -np.inf)
    for g in range(1, limits.max_groups):
        for j in range(1, n):
            previous = best[g - 1, :, j]  # over i: last group [i, j)
            if not np.isfinite(previous).any():
                continue
            allowed = _order_allowed(woe[:, j][:, None], woe[j, :][None, :], trend)
            candidates = np.where(allowed, previous[:, None], -np.inf)
            value = candidates.max(axis=0) + iv[j, :]
            best[g, j, :] = np.where(feasible[j, :], value, -np.inf)
    finals = best[:, :, n]
    if not np.isfinite(finals).any():
        return (0,)
    g, i = np.unravel_index(np.argmax(finals), finals.shape)
    return _backtrack(best, woe, iv, int(g), int(i), n, trend)


def _segment_tables(goods, bads, n_goods, n_bads, total_goods, total_bads, limits):
    """WoE, IV and feasibility of every segment [i, j) of the ordered bins."""
    def spans(values):
        prefix = np.concatenate([[0.0], np.cumsum(values, dtype=float)])
        return prefix[None, :] - prefix[:, None]  # [i, j] = sum over [i, j)

    g, b = spans(goods), spans(bads)
    raw_g, raw_b = spans(n_goods), spans(n_bads)
    upper = np.triu(np.ones_like(g, dtype=bool), k=1)
    adjust = np.where((g <= 0) | (b <= 0), EMPTY_CELL, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        share_g = (g + adjust) / total_goods
        share_b = (b + adjust) / total_bads
        woe = np.where(upper, np.log(share_g / share_b), np.nan)
        iv = np.where(upper, (g / total_goods - b / total_bads) * woe, -np.inf)
    feasible = upper & (g + b >= limits.min_rows - 1e-9) & (raw_g >= limits.min_goods) & (raw_b >= limits.min_bads)
    return woe, iv, feasible


def _order_allowed(before: np.ndarray, after: np.ndarray, trend: str) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        if trend == "ascending":
            return before < after
        if trend == "descending":
            return before > after
    return np.isfinite(before) & np.isfinite(after)


def _backtrack(best, woe, iv, g, i, n, trend) -> tuple[int, ...]:
    starts, j, k = [i], i, n
    while g > 0:
        target = best[g, j, k] - iv[j, k]
        previous = best[g - 1, :, j]
        allowed = _order_allowed(woe[:, j], np.full(len(previous), woe[j, k]), trend)
        candidates = np.where(allowed, previous, -np.inf)
        i = int(np.argmin(np.abs(candidates - target)))
        starts.append(i)
        g, j, k = g - 1, i, j
    return tuple(reversed(starts))


def coarse_classing(fine: Binning, goods: np.ndarray, bads: np.ndarray, *, n_goods: np.ndarray | None = None,
                    n_bads: np.ndarray | None = None, min_group_share: float = 0.05, min_goods: int = 10,
                    min_bads: int = 10, max_groups: int = 8, min_special_share: float = 0.01,
                    trend: str = "auto") -> CoarseClassing:
    """Group a fine binning's bins into the monotone partition with the largest information value.

    Parameters
    ----------
    fine : Binning
        The fine classing.
    goods, bads : numpy.ndarray
        Weighted goods and bads of each fine bin (development sample).
    n_goods, n_bads : numpy.ndarray, optional
        Raw counts, for the minimum-count limits (default: the weighted counts).
    min_group_share, min_goods, min_bads, max_groups : limits of each chain group
    min_special_share : float
        Missing and special bins smaller than this share, or with fewer goods or bads than the
        limits, are merged into the chain group with the nearest WoE.
    trend : {'auto', 'ascending', 'descending', 'none'}
        Numeric characteristics only; categorical levels are ordered by WoE, so their groups are
        monotone by construction. 'auto' takes the direction with the larger IV.

    Returns
    -------
    CoarseClassing
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    n_goods = goods if n_goods is None else np.asarray(n_goods, float)
    n_bads = bads if n_bads is None else np.asarray(n_bads, float)
    total_goods, total_bads = goods.sum(), bads.sum()
    limits = GroupingLimits(min_group_share * (total_goods + total_bads), min_goods, min_bads, max_groups)
    chain = _chain_order(fine, goods, bads, total_goods, total_bads)
    chain_goods, chain_bads = goods[chain], bads[chain]
    kwargs = dict(total_goods=total_goods, total_bads=total_bads, n_goods=n_goods[chain], n_bads=n_bads[chain], limits=limits)
    directions = ["ascending"] if fine.kind == CATEGORICAL else (["ascending", "descending"] if trend == "auto" else [trend])
    options = [(optimal_grouping(chain_goods, chain_bads, trend=d, **kwargs), d) for d in directions]
    starts, direction = max(options, key=lambda o: _partition_iv(o[0], chain_goods, chain_bads, total_goods, total_bads))
    if fine.kind == CATEGORICAL:
        direction = "none"
    notes = [] if len(starts) > 1 or len(chain) < 2 else [
        f"{fine.characteristic!r}: no grouping of its {len(chain)} fine bins meets the limits; it has a single group."
    ]
    fine_to_coarse = np.empty(fine.n_bins, dtype=np.int64)
    group_of_chain = np.searchsorted(np.asarray(starts), np.arange(len(chain)), side="right") - 1
    fine_to_coarse[chain] = group_of_chain
    binning = _coarse_binning(fine, chain, starts, direction)
    own = _place_own_bins(fine, binning, fine_to_coarse, goods, bads, n_goods, n_bads, total_goods, total_bads,
                          min_special_share, min_goods, min_bads, notes)
    binning = own
    coarse_goods = np.bincount(fine_to_coarse, weights=goods, minlength=binning.n_bins)
    coarse_bads = np.bincount(fine_to_coarse, weights=bads, minlength=binning.n_bins)
    binning = replace(binning, fallback_bin=worst_bin(coarse_goods, coarse_bads))
    iv = information_value(coarse_goods, coarse_bads)
    fine_to_coarse.setflags(write=False)
    return CoarseClassing(binning, fine_to_coarse, iv, tuple(notes))


def _chain_order(fine: Binning, goods, bads, total_goods, total_bads) -> np.ndarray:
    """Fine bins of the chain in order: by value, or (categorical) by WoE ascending."""
    chain = np.arange(fine.n_chain)
    if fine.kind == CATEGORICAL and len(chain) > 1:
        woe = woe_values(goods[chain], bads[chain], total_goods, total_bads)
        chain = chain[np.argsort(woe, kind="stable")]
    return chain


def _partition_iv(starts, goods, bads, total_goods, total_bads) -> float:
    group = np.searchsorted(np.asarray(starts), np.arange(len(goods)), side="right") - 1
    g = np.bincount(group, weights=goods)
    b = np.bincount(group, weights=bads)
    return information_value(g, b, total_goods=total_goods, total_bads=total_bads)


def _coarse_binning(fine: Binning, chain: np.ndarray, starts: Sequence[int], trend: str) -> Binning:
    ends = [*starts[1:], len(chain)]
    if fine.kind == NUMERIC:
        cuts = tuple(fine.cuts[start - 1] for start in starts[1:])
        return numeric_binning(fine.characteristic, cuts, has_missing=False, trend=trend)
    groups = [tuple(level for fine_bin in chain[s:e] for level in fine.groups[fine_bin]) for s, e in zip(starts, ends)]
    return categorical_binning(fine.characteristic, groups, has_missing=False, trend=trend)


def _place_own_bins(fine, coarse, fine_to_coarse, goods, bads, n_goods, n_bads, total_goods, total_bads,
                    min_share, min_goods, min_bads, notes) -> Binning:
    """Keep missing and special bins on their own, or merge small ones into the nearest-WoE group.

    Of the groups a small bin could join, the nearest in WoE that keeps the chain's WoE order is
    taken; only when none keeps it is the nearest taken anyway, and the note says so.
    """
    total = total_goods + total_bads
    n_chain = coarse.n_chain
    chain_goods = np.bincount(fine_to_coarse[: fine.n_chain], weights=goods[: fine.n_chain], minlength=n_chain)
    chain_bads = np.bincount(fine_to_coarse[: fine.n_chain], weights=bads[: fine.n_chain], minlength=n_chain)
    labels = list(coarse.labels)
    own = [(f"special {format_number(v)}", b) for v, b in zip(fine.special_values, fine.special_bins) if b >= 0]
    if fine.missing_bin >= 0:
        own.append((MISSING_LABEL, fine.missing_bin))
    targets = {-1: -1}
    for label, fine_bin in own:
        stands = (goods[fine_bin] + bads[fine_bin] >= min_share * total - 1e-9
                  and n_goods[fine_bin] >= min_goods and n_bads[fine_bin] >= min_bads)
        if stands:
            labels.append(label)
            targets[fine_bin] = len(labels) - 1
        else:
            target, keeps_order = _nearest_group(chain_goods, chain_bads, goods[fine_bin], bads[fine_bin],
                                                 total_goods, total_bads, coarse.trend)
            chain_goods[target] += goods[fine_bin]
            chain_bads[target] += bads[fine_bin]
            targets[fine_bin] = target
            notes.append(
                f"{fine.characteristic!r}: the {label} bin ({_rows(goods[fine_bin] + bads[fine_bin])} of the development "
                f"sample, {_count(n_bads[fine_bin], 'bad')}) is too small to stand alone; it joins group {target + 1} "
                f"({coarse.labels[target]}), whose WoE is nearest"
                + ("." if keeps_order else f"; no group could take it without breaking the {coarse.trend} WoE order.")
            )
        fine_to_coarse[fine_bin] = targets[fine_bin]
    special_bins = tuple(targets[b] for b in fine.special_bins)
    missing_bin = targets[fine.missing_bin]
    return replace(coarse, labels=tuple(labels), special_values=fine.special_values,
                   special_bins=special_bins, missing_bin=missing_bin)


def _nearest_group(chain_goods, chain_bads, goods, bads, total_goods, total_bads, trend) -> tuple[int, bool]:
    """Return the group nearest in WoE whose joining keeps the chain's order, and whether one did."""
    chain_woe = woe_values(chain_goods, chain_bads, total_goods, total_bads)
    own_woe = woe_values(np.array([goods]), np.array([bads]), total_goods, total_bads)[0]
    order = np.argsort(np.abs(chain_woe - own_woe), kind="stable")
    for group in order:
        woe = woe_values(chain_goods + goods * (np.arange(len(chain_goods)) == group),
                         chain_bads + bads * (np.arange(len(chain_bads)) == group), total_goods, total_bads)
        steps = np.diff(woe)
        if trend == "none" or (trend == "ascending" and (steps > 0).all()) or (trend == "descending" and (steps < 0).all()):
            return int(group), True
    return int(order[0]), False


def worst_bin(goods: np.ndarray, bads: np.ndarray) -> int:
    """Return the bin with the lowest WoE among bins that hold rows (the conservative fallback)."""
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    woe = woe_values(goods, bads, goods.sum(), bads.sum())
    woe = np.where(goods + bads > 0, woe, np.inf)
    return int(np.argmin(woe))


# --------------------------------------------------------------------------------------------
# Overrides from the settings file


def binning_from_settings(name: str, kind: str, *, cuts: Sequence[float] | None = None,
                          groups: Sequence[Sequence[str]] | None = None, special_values: Sequence[float] = (),
                          specials: Sequence[str | int] = (), missing: str | int = "own",
                          present_specials: Sequence[float] | None = None, has_missing: bool = True,
                          trend: str = "none") -> Binning:
    """Build the binning an analyst fixed in the settings file (cut points or level groups).

    Parameters
    ----------
    name, kind : str
    cuts : sequence of float, optional
        Numeric cut points, ascending.
    groups : sequence of sequence of str, optional
        Categorical groups of levels.
    special_values, specials : sequences
        Special values and, per value, 'own' or the 1-based number of the group it joins.
    missing : 'own' or int
        Where missing values go.
    present_specials : sequence of float, optional
        The special values present in the development sample; an absent one gets no bin of its own.
    has_missing : bool
        Whether the development sample has missing values; without any, 'own' gives no bin.
    trend : str
        The trend recorded with the binning.

    Raises
    ------
    ClassingError
        A group number is out of range, or the wrong kind of override is given.
    """
    if kind == NUMERIC and cuts is None:
        raise ClassingError(f"characteristic {name!r} is numeric: fix its classing with cuts, not groups.")
    if kind == CATEGORICAL and groups is None:
        raise ClassingError(f"characteristic {name!r} is categorical: fix its classing with groups, not cuts.")
    n_chain = len(cuts) + 1 if kind == NUMERIC else len(groups)

    def target(value: str | int, what: str) -> int | None:
        if value in ("own", "worst"):
            return None
        if not 1 <= int(value) <= n_chain:
            raise ClassingError(
                f"characteristics.{name}.{what} = {value}: there are only {n_chain} groups. Use a number from 1 to {n_chain} or 'own'."
            )
        return int(value) - 1

    present = set(special_values if present_specials is None else present_specials)
    wanted = list(specials) if specials else ["own"] * len(special_values)
    special_targets = [target(w, "specials") for w in wanted]
    # an 'own' bin for a value the development sample never had would be empty: use the fallback
    special_targets = [t if (t is not None or v in present) else -1 for v, t in zip(special_values, special_targets)]
    missing_target = target(missing, "missing")
    if kind == NUMERIC:
        return numeric_binning(name, cuts, special_values=special_values, special_bins=special_targets,
                               has_missing=has_missing, missing_bin=missing_target, trend=trend)
    return categorical_binning(name, groups, has_missing=has_missing, missing_bin=missing_target, trend=trend)


def resolve_fallback(binning: Binning, goods: np.ndarray, bads: np.ndarray, unseen: str | int = "worst") -> Binning:
    """Return the binning with its fallback bin set: the worst bin, or the group the settings name."""
    if isinstance(unseen, int):
        if not 1 <= unseen <= binning.n_chain:
            raise ClassingError(
                f"characteristics.{binning.characteristic}.unseen = {unseen}: there are only {binning.n_chain} groups."
            )
        return replace(binning, fallback_bin=unseen - 1)
    return replace(binning, fallback_bin=worst_bin(goods, bads))


def classing_settings_values(binning: Binning) -> dict[str, object]:
    """Return the settings-file keys that fix this binning (cuts or groups, missing, specials)."""
    values: dict[str, object] = {}
    if binning.kind == NUMERIC:
        values["cuts"] = tuple(binning.cuts)
    else:
        values["groups"] = tuple(tuple(g) for g in binning.groups)
    n_chain = binning.n_chain
    if 0 <= binning.missing_bin < n_chain:
        values["missing"] = binning.missing_bin + 1
    if any(0 <= b < n_chain for b in binning.special_bins):
        values["specials"] = tuple(b + 1 if 0 <= b < n_chain else "own" for b in binning.special_bins)
    return values


def check_constraints(binning: Binning, goods: np.ndarray, bads: np.ndarray, *, n_goods: np.ndarray | None = None,
                      n_bads: np.ndarray | None = None, min_group_share: float, min_goods: int, min_bads: int,
                      max_groups: int, trend: str) -> list[str]:
    """Return a sentence for every classing constraint the binning breaks (empty when none)."""
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    n_goods = goods if n_goods is None else n_goods
    n_bads = bads if n_bads is None else n_bads
    name, n_chain = binning.characteristic, binning.n_chain
    total = goods.sum() + bads.sum()
    problems = []
    if n_chain > max_groups:
        problems.append(f"{name!r} has {n_chain} groups, more than max_groups = {max_groups}")
    for i in range(n_chain):
        rows = goods[i] + bads[i]
        if rows < min_group_share * total - 1e-9:
            problems.append(f"{name!r} group {i + 1} ({binning.labels[i]}) holds {rows / total:.1%} of rows, under min_group_share = {min_group_share:.0%}")
        if n_goods[i] < min_goods or n_bads[i] < min_bads:
            problems.append(f"{name!r} group {i + 1} ({binning.labels[i]}) has {n_goods[i]:.0f} goods and {n_bads[i]:.0f} bads, under the minimum {min_goods} and {min_bads}")
    if binning.kind == NUMERIC and trend != "none" and n_chain > 1:
        woe = woe_values(goods[:n_chain], bads[:n_chain], goods.sum(), bads.sum())
        steps = np.diff(woe)
        ascending, descending = bool((steps > 0).all()), bool((steps < 0).all())
        if not {"ascending": ascending, "descending": descending}.get(trend, ascending or descending):
            wanted = trend if trend != "auto" else "monotone"
            problems.append(f"{name!r}: WoE is not {wanted} across its groups ({', '.join(f'{w:.3f}' for w in woe)})")
    return problems


def _rows(count: float) -> str:
    return _count(count, "row")


def _count(count: float, noun: str) -> str:
    return f"1 {noun}" if round(count) == 1 else f"{count:,.0f} {noun}s"
