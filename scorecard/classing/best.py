"""The best classing: the partition of the fine bins with the largest information value under a bad-rate shape.

Coarse classing joins adjacent fine bins into the classes with the largest information value
that keep the bad rate to its shape (falling or rising as the value grows, or one of the two
single-bend shapes: falling then rising, rising then falling) and every class large enough: an
exact dynamic programme over the ordered fine bins, not a greedy merge
(W. D. Fisher, "On grouping for maximum homogeneity", JASA 53, 1958, with constraints added; a
bend is one more state of the programme, the leg of the shape the last class is on). Missing and
special-value bins stand alone, or join the class nearest in WoE when they are too small.

Maximising IV always prefers more classes, so neighbouring classes may end up with bad rates that
differ by no more than chance. Such neighbours are then merged, one pair at a time, the least
different first, while a likelihood-ratio test between the two says their bad rates do not differ
significantly (``classing.merge_p``); merging neighbours keeps the shape and every limit.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..evidence import information_value, woe_values
from ..terms import (
    ANY, CATEGORICAL, EMPTY_CELL, FALLS, FALLS_THEN_RISES, FROM_DATA, NUMERIC, ONE_WAY_SHAPES, RISES, RISES_THEN_FALLS,
    SINGLE_BEND_SHAPES, shape_words,
)
from .bins import MISSING_LABEL, RARE_LABEL, Binning, categorical_binning, numeric_binning, relabelled, special_label


@dataclass(frozen=True)
class Merging:
    """What merging neighbouring classes that do not differ significantly did to one classing.

    ``iv_before`` is the IV the classing would have had with no neighbours merged; the class
    counts are of the chain (missing and special bins not counted).
    """

    classes_before: int
    classes_after: int
    iv_before: float
    iv_after: float
    merge_p: float


@dataclass(frozen=True)
class CoarseClassing:
    """The result of coarse classing: the binning, how fine bins map to it, and what was done."""

    binning: Binning
    fine_to_coarse: np.ndarray  # coarse bin of each fine bin
    iv: float
    notes: tuple[str, ...]
    merging: Merging | None = None  # None when no neighbours were merged


@dataclass(frozen=True)
class ClassLimits:
    """Constraints of coarse classing, in counts (weighted rows for share, raw rows for goods/bads)."""

    min_rows: float = 0.0
    min_goods: int = 0
    min_bads: int = 0
    max_classes: int = 8


# Each shape is a run of legs along the chain; on a leg the WoE moves one way from class to class:
# +1 rises, -1 falls, 0 either way. A bad rate that falls as the value grows is a WoE that rises.
_LEGS = {FALLS: (1,), RISES: (-1,), ANY: (0,), FALLS_THEN_RISES: (1, -1), RISES_THEN_FALLS: (-1, 1)}


def best_classing(goods: np.ndarray, bads: np.ndarray, *, total_goods: float, total_bads: float,
                     n_goods: np.ndarray | None = None, n_bads: np.ndarray | None = None,
                     limits: ClassLimits = ClassLimits(), shape: str = FALLS) -> tuple[int, ...]:
    """Join an ordered sequence of bins into the contiguous classes with the largest IV.

    Parameters
    ----------
    goods, bads : numpy.ndarray
        Weighted goods and bads of each ordered fine bin.
    total_goods, total_bads : float
        Totals of the whole characteristic (shares are taken of these).
    n_goods, n_bads : numpy.ndarray, optional
        Raw counts for the minimum-count limits (default: the weighted counts).
    limits : ClassLimits
    shape : {'falls', 'rises', 'falls-then-rises', 'rises-then-falls', 'any'}
        How the bad rate must move from class to class along the sequence: 'falls' asks for a
        strictly rising WoE, 'rises' for a strictly falling one; 'falls-then-rises' for a WoE that
        strictly rises and then strictly falls (one bend, anywhere, or none), 'rises-then-falls'
        the other way round; 'any' for no order.

    Returns
    -------
    tuple of int
        The start index of each class (the first is 0). A single class ``(0,)`` when no
        partition meets the limits.

    Notes
    -----
    IV is a sum over classes, so the best partition of bins ``[0, k)`` whose last class is
    ``[j, k)`` extends the best partition of ``[0, j)`` whose last class ``[i, j)`` has a WoE on
    the right side of ``[j, k)``'s. Tracking the last class makes the order constraint exact:
    O(G n^3) for n bins and at most G classes (Fisher 1958, with constraints added). A single-bend
    shape adds the leg of the shape the last class is on: a step either stays on its leg or turns
    onto the next, and must move the way the leg it lands on moves; so the bend's position is
    chosen by the programme too, exactly, at twice the cost.
    """
    n = len(goods)
    n_goods = goods if n_goods is None else n_goods
    n_bads = bads if n_bads is None else n_bads
    woe, iv, feasible = _segment_tables(goods, bads, n_goods, n_bads, total_goods, total_bads, limits)
    legs = _LEGS[shape]
    # best[l, g, i, j]: largest IV of bins [0, j) in g+1 classes whose last class is [i, j), on leg l
    best = np.full((len(legs), limits.max_classes, n + 1, n + 1), -np.inf)
    # came_from[l, g, i, j]: leg × (n + 1) + start of the class before [i, j) on that best partition
    came_from = np.zeros(best.shape, dtype=np.int64)
    best[0, 0, 0, :] = np.where(feasible[0, :], iv[0, :], -np.inf)
    for g in range(1, limits.max_classes):
        for j in range(1, n):
            for leg, direction in enumerate(legs):
                sources = [leg - 1, leg] if leg else [leg]  # stay on this leg, or turn onto it
                previous = best[sources, g - 1, :, j]  # over (source leg, i): last class [i, j)
                if not np.isfinite(previous).any():
                    continue
                allowed = _step_allowed(woe[:, j][:, None], woe[j, :][None, :], direction)  # over (i, k)
                candidates = np.where(allowed[None, :, :], previous[:, :, None], -np.inf).reshape(-1, n + 1)
                pick = np.argmax(candidates, axis=0)
                value = candidates[pick, np.arange(n + 1)] + iv[j, :]
                best[leg, g, j, :] = np.where(feasible[j, :], value, -np.inf)
                came_from[leg, g, j, :] = np.asarray(sources)[pick // (n + 1)] * (n + 1) + pick % (n + 1)
    finals = best[:, :, :, n]
    if not np.isfinite(finals).any():
        return (0,)
    leg, g, i = np.unravel_index(np.argmax(finals), finals.shape)
    return _backtrack(came_from, int(leg), int(g), int(i), n)


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


def _step_allowed(before: np.ndarray, after: np.ndarray, direction: int) -> np.ndarray:
    # a bad rate that falls is a WoE that rises
    with np.errstate(invalid="ignore"):
        if direction > 0:
            return before < after
        if direction < 0:
            return before > after
    return np.isfinite(before) & np.isfinite(after)


def _backtrack(came_from, leg, g, start, n) -> tuple[int, ...]:
    starts, end = [start], n
    while g > 0:
        leg, previous = divmod(int(came_from[leg, g, start, end]), n + 1)
        starts.append(previous)
        g, start, end = g - 1, previous, start
    return tuple(reversed(starts))


def keeps_shape(woe: np.ndarray, shape: str) -> bool:
    """Whether WoE along the chain moves as a bad-rate shape asks, strictly from class to class.

    'from-data' is kept by any shape the tool could propose (one way, or one bend); a single-bend
    shape is also kept by a chain that never turns (the bend at one end).
    """
    if shape == FROM_DATA:
        return any(keeps_shape(woe, option) for option in SINGLE_BEND_SHAPES)
    legs = _LEGS[shape]
    if legs == (0,):
        return True
    steps = np.sign(np.diff(np.asarray(woe, float)))
    first_leg = int(np.argmax(steps != legs[0])) if (steps != legs[0]).any() else len(steps)
    rest = steps[first_leg:]
    return len(rest) == 0 or (len(legs) == 2 and bool((rest == legs[1]).all()))


def coarse_classing(fine: Binning, goods: np.ndarray, bads: np.ndarray, *, n_goods: np.ndarray | None = None,
                    n_bads: np.ndarray | None = None, min_class_share: float = 0.05, min_goods: int = 10,
                    min_bads: int = 10, max_classes: int = 8, min_special_share: float = 0.01,
                    bad_rate_shape: str = FROM_DATA, bend_min_gain: float = 0.1, merge_p: float = 0.05) -> CoarseClassing:
    """Join a fine binning's bins into the classes with the largest information value that keep the bad rate's shape.

    Parameters
    ----------
    fine : Binning
        The fine classing.
    goods, bads : numpy.ndarray
        Weighted goods and bads of each fine bin (development sample).
    n_goods, n_bads : numpy.ndarray, optional
        Raw counts, for the minimum-count limits (default: the weighted counts).
    min_class_share, min_goods, min_bads, max_classes : limits of each class of the chain
    min_special_share : float
        Missing and special bins smaller than this share, or with fewer goods or bads than the
        limits, are merged into the class of the chain with the nearest WoE.
    bad_rate_shape : {'from-data', 'falls', 'rises', 'falls-then-rises', 'rises-then-falls', 'any'}
        How the bad rate may move as the value grows; numeric characteristics only (categorical
        levels are ordered by WoE, so their classes are monotone by construction). 'from-data'
        takes whichever of 'falls' and 'rises' gives the larger IV, unless the better single-bend
        shape's IV is more than ``bend_min_gain`` above it.
    bend_min_gain : float
        The share by which a single bend's IV must exceed the best one-way IV for 'from-data' to
        take it (0.1: more than 10% more IV; a rule of thumb of ours, no source).
    merge_p : float
        Neighbouring classes whose likelihood-ratio test p-value is at or above this are merged
        (``merge_alike_neighbours``; 0: none are), before the shapes are compared.

    Returns
    -------
    CoarseClassing
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    n_goods = goods if n_goods is None else np.asarray(n_goods, float)
    n_bads = bads if n_bads is None else np.asarray(n_bads, float)
    total_goods, total_bads = goods.sum(), bads.sum()
    limits = ClassLimits(min_class_share * (total_goods + total_bads), min_goods, min_bads, max_classes)
    chain = _chain_order(fine, goods, bads, total_goods, total_bads)
    chain_goods, chain_bads = goods[chain], bads[chain]
    kwargs = dict(total_goods=total_goods, total_bads=total_bads, n_goods=n_goods[chain], n_bads=n_bads[chain], limits=limits)
    shapes = [FALLS] if fine.kind == CATEGORICAL else (
        [*ONE_WAY_SHAPES, *SINGLE_BEND_SHAPES] if bad_rate_shape == FROM_DATA else [bad_rate_shape])
    options = {shape: best_classing(chain_goods, chain_bads, shape=shape, **kwargs) for shape in shapes}
    merged = {shape: merge_alike_neighbours(starts, n_goods[chain], n_bads[chain], merge_p=merge_p)
              for shape, starts in options.items()}
    ivs = {shape: _partition_iv(starts, chain_goods, chain_bads, total_goods, total_bads) for shape, starts in merged.items()}
    shape, notes = _chosen_shape(ivs, bend_min_gain, fine.characteristic)
    if len(merged[shape]) < 2 <= len(chain):
        notes.append(f"{fine.characteristic!r}: no classing of its {len(chain)} fine bins meets the limits; it has a single class.")
    own = (goods, bads, n_goods, n_bads, min_special_share, min_goods, min_bads)
    result = _finished(fine, chain, merged[shape], ANY if fine.kind == CATEGORICAL else shape, own, notes)
    if len(merged[shape]) == len(options[shape]):
        return result
    before = _finished(fine, chain, options[shape], result.binning.bad_rate_shape, own, [])
    merging = Merging(len(options[shape]), len(merged[shape]), before.iv, result.iv, merge_p)
    note = (f"{fine.characteristic!r}: {_count(merging.classes_before - merging.classes_after, 'pair')} of neighbouring classes "
            f"did not differ significantly in bad rate (likelihood-ratio test, p-value at or above merge_p = {merge_p:g}) "
            f"and were merged: {merging.classes_before} classes became {merging.classes_after}; IV {merging.iv_before:.4f} "
            f"before, {merging.iv_after:.4f} after.")
    return replace(result, notes=(*result.notes, note), merging=merging)


def _finished(fine: Binning, chain: np.ndarray, starts: Sequence[int], shape: str, own, notes: list[str]) -> CoarseClassing:
    """The classing of a chain partition: missing and special bins placed, the unseen bin chosen, the IV."""
    goods, bads, n_goods, n_bads, min_special_share, min_goods, min_bads = own
    total_goods, total_bads = goods.sum(), bads.sum()
    notes = list(notes)
    fine_to_coarse = np.empty(fine.n_bins, dtype=np.int64)
    fine_to_coarse[chain] = np.searchsorted(np.asarray(starts), np.arange(len(chain)), side="right") - 1
    binning = _place_own_bins(fine, _coarse_binning(fine, chain, starts, shape), fine_to_coarse, goods, bads, n_goods,
                              n_bads, total_goods, total_bads, min_special_share, min_goods, min_bads, notes)
    notes += _pooled_note(fine, binning, fine_to_coarse)
    coarse_goods = np.bincount(fine_to_coarse, weights=goods, minlength=binning.n_bins)
    coarse_bads = np.bincount(fine_to_coarse, weights=bads, minlength=binning.n_bins)
    binning = replace(binning, unseen_bin=worst_bin(coarse_goods, coarse_bads))
    fine_to_coarse.setflags(write=False)
    return CoarseClassing(binning, fine_to_coarse, information_value(coarse_goods, coarse_bads), tuple(notes))


def merge_alike_neighbours(starts: Sequence[int], n_goods: np.ndarray, n_bads: np.ndarray, *,
                           merge_p: float) -> tuple[int, ...]:
    """Merge neighbouring classes whose bad rates do not differ significantly, the least different first.

    Parameters
    ----------
    starts : sequence of int
        The start of each class along the ordered bins (as ``best_classing`` returns them).
    n_goods, n_bads : numpy.ndarray
        Goods and bads of each ordered bin, as rows (the test's sample size).
    merge_p : float
        While the largest p-value of ``neighbour_p_values`` is at or above this, that pair is
        merged and the tests are made again; 0 merges nothing.

    Returns
    -------
    tuple of int
        The starts of the classes left: every pair of neighbours among them differs
        significantly (p-value below ``merge_p``).

    Notes
    -----
    A merged class's WoE lies between its two parts' WoEs, so a chain that moved one way, or bent
    once, still does; classes only grow, so every size limit still holds.
    """
    starts = list(starts)
    while merge_p > 0 and len(starts) > 1:
        p_values = neighbour_p_values(_class_sums(starts, n_goods), _class_sums(starts, n_bads))
        alike = int(np.argmax(p_values))
        if p_values[alike] < merge_p:
            break
        del starts[alike + 1]
    return tuple(starts)


def neighbour_p_values(goods: np.ndarray, bads: np.ndarray) -> np.ndarray:
    """Return the likelihood-ratio test p-value of each pair of neighbouring classes' bad rates.

    Parameters
    ----------
    goods, bads : numpy.ndarray
        Goods and bads of each class, in chain order.

    Returns
    -------
    numpy.ndarray
        One p-value per pair (class i against class i + 1).

    Notes
    -----
    G² = 2 Σ O ln(O / E) over the 2 × 2 table of the two classes' goods and bads, E being the
    counts expected if both had their pooled bad rate; G² is chi-square with one degree of
    freedom when the bad rates are equal (the likelihood-ratio test of independence; A. Agresti,
    Categorical Data Analysis, 2nd ed., 2002, section 3.2, from memory).
    """
    from scipy import special  # on first use: scoring loads classing for its bins, and never needs this

    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    table = np.stack([goods[:-1], bads[:-1], goods[1:], bads[1:]], axis=-1).reshape(-1, 2, 2)  # pair, class, outcome
    expected = table.sum(axis=2, keepdims=True) * table.sum(axis=1, keepdims=True) / table.sum(axis=(1, 2), keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(table > 0, table * np.log(table / expected), 0.0)  # an empty cell adds nothing
    return special.chdtrc(1, 2 * terms.sum(axis=(1, 2)))


def _class_sums(starts: Sequence[int], values: np.ndarray) -> np.ndarray:
    return np.add.reduceat(np.asarray(values, float), np.asarray(starts))


def _chosen_shape(ivs: dict[str, float], bend_min_gain: float, name: str) -> tuple[str, list[str]]:
    """The shape to keep: the one asked for, or (from-data) the better one-way shape unless a bend buys a clear gain."""
    if len(ivs) == 1:
        return next(iter(ivs)), []
    one_way = max(ONE_WAY_SHAPES, key=lambda shape: ivs[shape])  # falls first on a tie, as before bends
    bend = max(SINGLE_BEND_SHAPES, key=lambda shape: ivs[shape])
    if ivs[bend] <= ivs[one_way] * (1 + bend_min_gain):
        return one_way, []
    return bend, [
        f"{name!r}: {shape_words(bend)}; the bend gives IV {ivs[bend]:.4f} against {ivs[one_way]:.4f} one way "
        f"({shape_words(one_way)}), more than bend_min_gain = {bend_min_gain:g} above it, so from-data takes it."
    ]


def _pooled_note(fine: Binning, coarse: Binning, fine_to_coarse: np.ndarray) -> list[str]:
    """Say which rare levels fine classing pooled into one bin before the classes were chosen, and where they went."""
    pooled = [i for i, label in enumerate(fine.labels[: fine.n_chain]) if label.startswith(RARE_LABEL)]
    if not pooled:
        return []
    levels = fine.classes[pooled[0]]
    shown = ", ".join(levels[:5]) + (f" and {len(levels) - 5} more" if len(levels) > 5 else "")
    target = int(fine_to_coarse[pooled[0]])
    many = len(levels) > 1
    return [f"{fine.characteristic!r}: {len(levels)} level{'s' if many else ''} too rare to class on {'their' if many else 'its'} "
            f"own ({shown}; {'each ' if many else ''}under classing.rare_level_share of the development rows) "
            f"{'were pooled into one bin; they are' if many else 'got a bin of its own for rare levels; it is'} in class "
            f"{target + 1} ({coarse.labels[target]})."]


def _chain_order(fine: Binning, goods, bads, total_goods, total_bads) -> np.ndarray:
    """Fine bins of the chain in order: by value, or (categorical) by WoE ascending."""
    chain = np.arange(fine.n_chain)
    if fine.kind == CATEGORICAL and len(chain) > 1:
        woe = woe_values(goods[chain], bads[chain], total_goods, total_bads)
        chain = chain[np.argsort(woe, kind="stable")]
    return chain


def _partition_iv(starts, goods, bads, total_goods, total_bads) -> float:
    member = np.searchsorted(np.asarray(starts), np.arange(len(goods)), side="right") - 1
    g = np.bincount(member, weights=goods)
    b = np.bincount(member, weights=bads)
    return information_value(g, b, total_goods=total_goods, total_bads=total_bads)


def _coarse_binning(fine: Binning, chain: np.ndarray, starts: Sequence[int], shape: str) -> Binning:
    ends = [*starts[1:], len(chain)]
    if fine.kind == NUMERIC:
        cuts = tuple(fine.cuts[start - 1] for start in starts[1:])
        return numeric_binning(fine.characteristic, cuts, has_missing=False, bad_rate_shape=shape,
                               whole_numbers=fine.whole_numbers, lowest=fine.lowest)
    classes = [tuple(level for fine_bin in chain[s:e] for level in fine.classes[fine_bin]) for s, e in zip(starts, ends)]
    return categorical_binning(fine.characteristic, classes, has_missing=False, bad_rate_shape=shape)


def _place_own_bins(fine, coarse, fine_to_coarse, goods, bads, n_goods, n_bads, total_goods, total_bads,
                    min_share, min_goods, min_bads, notes) -> Binning:
    """Keep missing and special bins on their own, or merge small ones into the nearest-WoE class.

    Of the classes a small bin could join, the nearest in WoE that keeps the chain's WoE order is
    taken; only when none keeps it is the nearest taken anyway, and the note says so.
    """
    total = total_goods + total_bads
    n_chain = coarse.n_chain
    chain_goods = np.bincount(fine_to_coarse[: fine.n_chain], weights=goods[: fine.n_chain], minlength=n_chain)
    chain_bads = np.bincount(fine_to_coarse[: fine.n_chain], weights=bads[: fine.n_chain], minlength=n_chain)
    n_bins = n_chain
    meanings = fine.special_meanings or ("",) * len(fine.special_values)
    own = [(special_label(v, m), b) for v, m, b in zip(fine.special_values, meanings, fine.special_bins) if b >= 0]
    if fine.missing_bin >= 0:
        own.append((MISSING_LABEL, fine.missing_bin))
    targets = {-1: -1}
    for label, fine_bin in own:
        stands = (goods[fine_bin] + bads[fine_bin] >= min_share * total - 1e-9
                  and n_goods[fine_bin] >= min_goods and n_bads[fine_bin] >= min_bads)
        if stands:
            targets[fine_bin], n_bins = n_bins, n_bins + 1
        else:
            target, keeps_order = _nearest_class(chain_goods, chain_bads, goods[fine_bin], bads[fine_bin],
                                                 total_goods, total_bads, coarse.bad_rate_shape)
            chain_goods[target] += goods[fine_bin]
            chain_bads[target] += bads[fine_bin]
            targets[fine_bin] = target
            notes.append(
                f"{fine.characteristic!r}: the {label} bin ({_rows(goods[fine_bin] + bads[fine_bin])} of the development "
                f"sample, {_count(n_bads[fine_bin], 'bad')}) is too small to stand alone; it joins class {target + 1} "
                f"({coarse.labels[target]}), whose WoE is nearest"
                + ("." if keeps_order else f"; no class could take it and keep the shape its classing has "
                                           f"({shape_words(coarse.bad_rate_shape)}).")
            )
        fine_to_coarse[fine_bin] = targets[fine_bin]
    special_bins = tuple(targets[b] for b in fine.special_bins)
    missing_bin = targets[fine.missing_bin]
    return relabelled(replace(coarse, special_values=fine.special_values, special_meanings=fine.special_meanings,
                              special_bins=special_bins, missing_bin=missing_bin))


def _nearest_class(chain_goods, chain_bads, goods, bads, total_goods, total_bads, shape) -> tuple[int, bool]:
    """Return the class nearest in WoE whose joining keeps the chain's order, and whether one did."""
    chain_woe = woe_values(chain_goods, chain_bads, total_goods, total_bads)
    own_woe = woe_values(np.array([goods]), np.array([bads]), total_goods, total_bads)[0]
    order = np.argsort(np.abs(chain_woe - own_woe), kind="stable")
    for candidate in order:
        woe = woe_values(chain_goods + goods * (np.arange(len(chain_goods)) == candidate),
                         chain_bads + bads * (np.arange(len(chain_bads)) == candidate), total_goods, total_bads)
        if keeps_shape(woe, shape):
            return int(candidate), True
    return int(order[0]), False


def worst_bin(goods: np.ndarray, bads: np.ndarray) -> int:
    """Return the bin with the lowest WoE among bins that hold rows (where unseen values go unless the settings say otherwise)."""
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    woe = woe_values(goods, bads, goods.sum(), bads.sum())
    woe = np.where(goods + bads > 0, woe, np.inf)
    return int(np.argmin(woe))


def _rows(count: float) -> str:
    return _count(count, "row")


def _count(count: float, noun: str) -> str:
    return f"1 {noun}" if round(count) == 1 else f"{count:,.0f} {noun}s"
