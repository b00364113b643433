"""The analyst's classing from the settings file, completed from the counts, and checked against the limits.

A classing written in the settings (cut points or classes of levels, where missing and special values
go, where unseen levels go) is used as given. It is first counted with a bin of its own for every
special value and for missing values (``binning_from_settings``); ``without_empty_bins`` then drops
those no development good or bad fell in, and ``code_mapping`` carries the counts over, so that a
ledger read in batches needs no second look at its rows. A broken limit is a note, never silent.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

import numpy as np

from ..errors import ClassingError
from ..evidence import woe_values
from ..rows import UNSEEN_LABEL, BinCounts
from ..settings import ProposalSettings
from ..terms import ANY, CATEGORICAL, NUMERIC, shape_words
from .best import keeps_shape, worst_bin
from .bins import Binning, categorical_binning, numeric_binning


def binning_from_settings(name: str, kind: str, *, cuts: Sequence[float] | None = None,
                          classes: Sequence[Sequence[str]] | None = None, special_values: Sequence[float] = (),
                          specials: Sequence[str | int] = (), missing: str | int = "own",
                          present_specials: Sequence[float] | None = None, has_missing: bool = True,
                          bad_rate_shape: str = ANY, special_meanings: Sequence[str] = (), whole_numbers: bool = False,
                          lowest: float | None = None) -> Binning:
    """Build the binning an analyst fixed in the settings file (cut points or classes of levels).

    Parameters
    ----------
    name, kind : str
    cuts : sequence of float, optional
        Numeric cut points, ascending.
    classes : sequence of sequence of str, optional
        Categorical classes of levels.
    special_values, specials : sequences
        Special values and, per value, 'own' or the 1-based number of the class it joins.
    missing : 'own' or int
        Where missing values go.
    present_specials : sequence of float, optional
        The special values present in the development sample; an absent one gets no bin of its own.
    has_missing : bool
        Whether the development sample has missing values; without any, 'own' gives no bin.
    bad_rate_shape : str
        The bad-rate shape recorded with the binning.
    special_meanings, whole_numbers, lowest
        How the values read, for the labels (``scorecard.classing.Binning``).

    Raises
    ------
    ClassingError
        A class number is out of range, or the wrong kind of override is given.
    """
    if kind == NUMERIC and cuts is None:
        raise ClassingError(f"characteristic {name!r} is numeric: fix its classing with cuts, not classes.")
    if kind == CATEGORICAL and classes is None:
        raise ClassingError(f"characteristic {name!r} is categorical: fix its classing with classes, not cuts.")
    n_chain = len(cuts) + 1 if kind == NUMERIC else len(classes)

    def target(value: str | int, what: str) -> int | None:
        if value in ("own", "worst"):
            return None
        if not 1 <= int(value) <= n_chain:
            raise ClassingError(
                f"characteristics.{name}.{what} = {value}: there are only {n_chain} classes. Use a number from 1 to {n_chain} or 'own'."
            )
        return int(value) - 1

    present = set(special_values if present_specials is None else present_specials)
    wanted = list(specials) if specials else ["own"] * len(special_values)
    special_targets = [target(w, "specials") for w in wanted]
    # an 'own' bin for a value the development sample never had would be empty: use the unseen bin
    special_targets = [t if (t is not None or v in present) else -1 for v, t in zip(special_values, special_targets)]
    missing_target = target(missing, "missing")
    if kind == NUMERIC:
        return numeric_binning(name, cuts, special_values=special_values, special_bins=special_targets,
                               has_missing=has_missing, missing_bin=missing_target, bad_rate_shape=bad_rate_shape,
                               special_meanings=special_meanings, whole_numbers=whole_numbers, lowest=lowest)
    return categorical_binning(name, classes, has_missing=has_missing, missing_bin=missing_target, bad_rate_shape=bad_rate_shape)


def resolve_unseen(binning: Binning, goods: np.ndarray, bads: np.ndarray, unseen: str | int = "worst") -> Binning:
    """Return the binning with its unseen bin set: the worst bin, or the class the settings name."""
    if isinstance(unseen, int):
        if not 1 <= unseen <= binning.n_chain:
            raise ClassingError(
                f"characteristics.{binning.characteristic}.unseen = {unseen}: there are only {binning.n_chain} classes."
            )
        return replace(binning, unseen_bin=unseen - 1)
    return replace(binning, unseen_bin=worst_bin(goods, bads))


def classing_settings_values(binning: Binning) -> dict[str, object]:
    """Return the settings-file keys that fix this binning (cuts or classes, missing, specials)."""
    values: dict[str, object] = {}
    if binning.kind == NUMERIC:
        values["cuts"] = tuple(binning.cuts)
    else:
        values["classes"] = tuple(tuple(g) for g in binning.classes)
    n_chain = binning.n_chain
    if 0 <= binning.missing_bin < n_chain:
        values["missing"] = binning.missing_bin + 1
    if any(0 <= b < n_chain for b in binning.special_bins):
        values["specials"] = tuple(b + 1 if 0 <= b < n_chain else "own" for b in binning.special_bins)
    return values


def proposal_of(binning: Binning, notes: Sequence[str] = ()) -> ProposalSettings:
    """Return the record of a classing the tool proposed: its settings keys, the shape it was found with, its notes."""
    return ProposalSettings(**classing_settings_values(binning), bad_rate_shape=binning.bad_rate_shape, notes=tuple(notes))


def check_constraints(binning: Binning, goods: np.ndarray, bads: np.ndarray, *, n_goods: np.ndarray | None = None,
                      n_bads: np.ndarray | None = None, min_class_share: float, min_goods: int, min_bads: int,
                      max_classes: int, bad_rate_shape: str) -> list[str]:
    """Return a sentence for every classing constraint the binning breaks (empty when none)."""
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    n_goods = goods if n_goods is None else n_goods
    n_bads = bads if n_bads is None else n_bads
    name, n_chain = binning.characteristic, binning.n_chain
    total = goods.sum() + bads.sum()
    problems = []
    if n_chain > max_classes:
        problems.append(f"{name!r} has {n_chain} classes, more than max_classes = {max_classes}")
    for i in range(n_chain):
        rows = goods[i] + bads[i]
        if rows < min_class_share * total - 1e-9:
            problems.append(f"{name!r} class {i + 1} ({binning.labels[i]}) holds {rows / total:.1%} of rows, under min_class_share = {min_class_share:.0%}")
        if n_goods[i] < min_goods or n_bads[i] < min_bads:
            problems.append(f"{name!r} class {i + 1} ({binning.labels[i]}) has {n_goods[i]:.0f} goods and {n_bads[i]:.0f} bads, under the minimum {min_goods} and {min_bads}")
    if binning.kind == NUMERIC and bad_rate_shape != ANY and n_chain > 1:
        woe = woe_values(goods[:n_chain], bads[:n_chain], goods.sum(), bads.sum())
        if not keeps_shape(woe, bad_rate_shape):
            problems.append(f"{name!r}: bad_rate_shape = {bad_rate_shape!r} asks that {shape_words(bad_rate_shape)}, but "
                            f"across its classes it does not (WoE {', '.join(f'{w:.3f}' for w in woe)})")
    return problems


def without_empty_bins(binning: Binning, counts: BinCounts) -> Binning:
    """Drop own bins of special values and of missing values that no development good or bad fell in."""
    rows = counts.n_goods() + counts.n_bads()
    n_chain = binning.n_chain
    present = [v for v, b in zip(binning.special_values, binning.special_bins) if b >= n_chain and rows[b] > 0]
    has_missing = binning.missing_bin >= n_chain and rows[binning.missing_bin] > 0
    spec_missing = binning.missing_bin + 1 if 0 <= binning.missing_bin < n_chain else "own"
    specials = ["own" if b >= n_chain or b < 0 else b + 1 for b in binning.special_bins]
    return binning_from_settings(
        binning.characteristic, binning.kind, cuts=binning.cuts if binning.kind == NUMERIC else None,
        classes=binning.classes if binning.kind != NUMERIC else None, special_values=binning.special_values,
        specials=specials, missing=spec_missing, present_specials=present,
        has_missing=has_missing or binning.missing_bin < n_chain, bad_rate_shape=binning.bad_rate_shape,
        special_meanings=binning.special_meanings, whole_numbers=binning.whole_numbers, lowest=binning.lowest,
    )


def development_counts(counts: BinCounts, provisional: Binning, final: Binning):
    """Development goods and bads of the final bins, leaving out values nothing is known about yet."""
    mapping = code_mapping(provisional, final, unseen=final.n_bins)
    merged = counts.regroup(mapping, (*final.labels, UNSEEN_LABEL))
    return merged.goods()[: final.n_bins], merged.bads()[: final.n_bins]


def code_mapping(provisional: Binning, final: Binning, *, unseen: int | None = None) -> np.ndarray:
    """Where each provisional bin (and the unseen-value bin after them) goes among the final bins."""
    unseen = final.unseen_bin if unseen is None else unseen
    mapping = np.full(provisional.n_bins + 1, unseen, dtype=np.int64)
    mapping[: provisional.n_chain] = np.arange(provisional.n_chain)
    for value, old in zip(provisional.special_values, provisional.special_bins):
        if old >= provisional.n_chain:
            new = final.special_bins[final.special_values.index(value)]
            mapping[old] = new if new >= 0 else unseen
    if provisional.missing_bin >= provisional.n_chain:
        mapping[provisional.missing_bin] = final.missing_bin if final.missing_bin >= 0 else unseen
    return mapping
