"""Binnings: where every value of a characteristic goes, and the plain-language label of each bin.

A ``Binning`` says which bin every possible value of a characteristic falls in. Numeric
characteristics are cut into intervals ``[c_i, c_{i+1})``; categorical ones are classed by level.
Missing values and each declared special value get bins of their own (or join a class). Bins are
numbered: the ordered chain of intervals or classes first, then special-value bins, then the
missing bin. Values never seen at build time go to the unseen bin. Rows are put in their bins by
``scorecard.rows.code_rows``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace

from ..terms import ANY, CATEGORICAL, NUMERIC

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
    classes : tuple of tuple of str
        Categorical: the levels of each class, in chain order.
    special_values : tuple of float
        Numeric codes with a meaning of their own.
    special_bins : tuple of int
        The bin of each special value (its own bin, or a chain bin it joined); -1 sends it to the
        unseen bin (the value never occurred at build time).
    missing_bin : int
        The bin of missing values; -1 sends them to the unseen bin.
    unseen_bin : int
        The bin of values never seen at build time (unseen levels; missing or a special value when
        the development sample had none).
    labels : tuple of str
        One plain-language label per bin (``bin_labels``): a bin that holds missing values or a
        special value says so ('under 9 or missing'), and whole numbers read as such ('2 to 4').
    bad_rate_shape : str
        How the bad rate moves along the chain as the value grows: 'falls', 'rises', 'any' (no
        order), or 'from-data' for a classing fixed in the settings (``scorecard.terms``).
    special_meanings : tuple of str
        What each special value means, from the settings ('no delinquency on record'); '' when not given.
    whole_numbers : bool
        Numeric: every development value is a whole number (counts, months), so the intervals read
        '0', '2 to 4', '5 and over'.
    lowest : float or None
        Numeric: the smallest ordinary development value, which starts the first interval's label.
    """

    characteristic: str
    kind: str
    cuts: tuple[float, ...] = ()
    classes: tuple[tuple[str, ...], ...] = ()
    special_values: tuple[float, ...] = ()
    special_bins: tuple[int, ...] = ()
    missing_bin: int = -1
    unseen_bin: int = 0
    labels: tuple[str, ...] = ()
    bad_rate_shape: str = ANY
    special_meanings: tuple[str, ...] = ()
    whole_numbers: bool = False
    lowest: float | None = None

    @property
    def n_bins(self) -> int:
        """Number of bins."""
        return len(self.labels)

    @property
    def n_chain(self) -> int:
        """Number of ordered bins (intervals or classes of levels), before special and missing bins."""
        return len(self.cuts) + 1 if self.kind == NUMERIC else len(self.classes)

    @property
    def levels(self) -> tuple[str, ...]:
        """Every categorical level the binning knows."""
        return tuple(level for levels in self.classes for level in levels)

    def meaning(self, value: float) -> str:
        """What a special value means ('' when the settings do not say)."""
        meanings = dict(zip(self.special_values, self.special_meanings))
        return meanings.get(float(value), "")

    def to_dict(self) -> dict[str, object]:
        """Return the binning as plain values (for the model file)."""
        return {
            "kind": self.kind, "cuts": list(self.cuts), "classes": [list(g) for g in self.classes],
            "special_values": list(self.special_values), "special_bins": list(self.special_bins),
            "missing_bin": self.missing_bin, "unseen_bin": self.unseen_bin,
            "labels": list(self.labels), "bad_rate_shape": self.bad_rate_shape,
            "special_meanings": list(self.special_meanings), "whole_numbers": self.whole_numbers, "lowest": self.lowest,
        }

    @classmethod
    def from_dict(cls, characteristic: str, data: Mapping[str, object]) -> Binning:
        """Rebuild a binning from ``to_dict`` output (a model file of an earlier version lacks the last three keys)."""
        return cls(
            characteristic=characteristic, kind=str(data["kind"]),
            cuts=tuple(float(c) for c in data["cuts"]), classes=tuple(tuple(g) for g in data["classes"]),
            special_values=tuple(float(v) for v in data["special_values"]),
            special_bins=tuple(int(b) for b in data["special_bins"]), missing_bin=int(data["missing_bin"]),
            unseen_bin=int(data["unseen_bin"]), labels=tuple(data["labels"]), bad_rate_shape=str(data["bad_rate_shape"]),
            special_meanings=tuple(str(m) for m in data.get("special_meanings", ())),
            whole_numbers=bool(data.get("whole_numbers", False)),
            lowest=None if data.get("lowest") is None else float(data["lowest"]),
        )


def numeric_binning(name: str, cuts: Sequence[float], *, special_values: Sequence[float] = (),
                    special_bins: Sequence[int | None] | None = None, has_missing: bool = True,
                    missing_bin: int | None = None, bad_rate_shape: str = ANY, special_meanings: Sequence[str] = (),
                    whole_numbers: bool = False, lowest: float | None = None) -> Binning:
    """Return a numeric binning.

    ``special_bins`` gives, per special value, None (a bin of its own), -1 (the unseen bin: the
    value never occurred in development) or the chain bin it joins. ``missing_bin`` None gives
    missing values a bin of their own when ``has_missing``, else the unseen bin.
    """
    n_chain = len(cuts) + 1
    targets = list(special_bins) if special_bins is not None else [None] * len(special_values)
    special_targets, n_bins = [], n_chain
    for target in targets:
        if target is None:
            target, n_bins = n_bins, n_bins + 1
        special_targets.append(int(target))
    missing = _missing_bin(n_bins, has_missing, missing_bin)
    binning = Binning(name, NUMERIC, cuts=tuple(float(c) for c in cuts), special_values=tuple(float(v) for v in special_values),
                      special_bins=tuple(special_targets), missing_bin=missing, unseen_bin=0, bad_rate_shape=bad_rate_shape,
                      special_meanings=_meanings(special_meanings, len(special_values)), whole_numbers=bool(whole_numbers),
                      lowest=None if lowest is None else float(lowest))
    return relabelled(binning)


def categorical_binning(name: str, classes: Sequence[Sequence[str]], *, has_missing: bool = True,
                        missing_bin: int | None = None, rare_class: int | None = None, bad_rate_shape: str = ANY) -> Binning:
    """Return a categorical binning; missing gets its own bin unless given one (-1: the unseen bin)."""
    missing = _missing_bin(len(classes), has_missing, missing_bin)
    unseen = rare_class if rare_class is not None else 0
    binning = Binning(name, CATEGORICAL, classes=tuple(tuple(str(v) for v in levels) for levels in classes),
                      missing_bin=missing, unseen_bin=unseen, bad_rate_shape=bad_rate_shape)
    chain = [class_label(levels) for levels in binning.classes]
    if rare_class is not None:
        chain[rare_class] = f"{RARE_LABEL} ({len(classes[rare_class])})"
    return relabelled(binning, chain=chain)


def relabelled(binning: Binning, *, chain: Sequence[str] | None = None) -> Binning:
    """Return the binning with its labels made from its structure (``bin_labels``)."""
    return replace(binning, labels=bin_labels(binning, chain=chain))


def bin_labels(binning: Binning, *, chain: Sequence[str] | None = None) -> tuple[str, ...]:
    """Label every bin for people: the chain's intervals or classes, then the own bins of special values and missing.

    A chain bin that special values or missing values joined names them: 'under 9 or no
    delinquency on record or missing'. A special value reads as its meaning from the settings,
    never as a bare code. ``chain`` gives the chain's labels instead of the intervals or classes.
    """
    n_chain = binning.n_chain
    if chain is None:
        chain = (interval_labels(binning.cuts, whole_numbers=binning.whole_numbers, lowest=binning.lowest)
                 if binning.kind == NUMERIC else [class_label(levels) for levels in binning.classes])
    joined: list[list[str]] = [[] for _ in range(n_chain)]
    own: dict[int, str] = {}
    meanings = _meanings(binning.special_meanings, len(binning.special_values))
    for value, meaning, target in zip(binning.special_values, meanings, binning.special_bins):
        text = special_label(value, meaning)
        if 0 <= target < n_chain:
            joined[target].append(text)
        elif target >= n_chain:
            own[target] = text
    if 0 <= binning.missing_bin < n_chain:
        joined[binning.missing_bin].append(MISSING_LABEL)
    elif binning.missing_bin >= n_chain:
        own[binning.missing_bin] = MISSING_LABEL
    labels = [" or ".join([label, *extra]) for label, extra in zip(chain, joined)]
    return tuple(labels + [own[b] for b in sorted(own)])


def special_label(value: float, meaning: str = "") -> str:
    """How a special value reads: its meaning, or its code with a word that the meaning is not given."""
    return meaning or f"code {format_number(value)} (meaning not given)"


def _meanings(meanings: Sequence[str], n: int) -> tuple[str, ...]:
    return tuple(str(m) for m in meanings) + ("",) * (n - len(meanings))


def _missing_bin(n_bins: int, has_missing: bool, missing_bin: int | None) -> int:
    """The bin of missing values: as given, a bin of its own after the others (``n_bins``), or -1 (the unseen bin)."""
    if missing_bin is not None:
        return int(missing_bin)
    return n_bins if has_missing else -1


def interval_labels(cuts: Sequence[float], *, whole_numbers: bool = False, lowest: float | None = None) -> list[str]:
    """Return the intervals' labels: 'under c1', 'c1 to under c2', ..., 'ck and over' (or 'all values' with no cut).

    Whole numbers with whole cut points read as whole numbers: '0', '1', '2 to 4', '5 and over'
    (the first starting at ``lowest``, the smallest development value; without it, '0 or less').
    """
    if not cuts:
        return ["all values"]
    if whole_numbers and all(float(c).is_integer() for c in cuts):
        ends = [int(c) for c in cuts]
        first_end = ends[0] - 1
        start = int(lowest) if lowest is not None and float(lowest).is_integer() and lowest <= first_end else None
        first = _whole_span(start, first_end) if start is not None else f"{first_end} or less"
        middle = [_whole_span(a, b - 1) for a, b in zip(ends, ends[1:])]
        return [first, *middle, f"{ends[-1]} and over"]
    text = [format_number(c) for c in cuts]
    middle = [f"{a} to under {b}" for a, b in zip(text, text[1:])]
    return [f"under {text[0]}", *middle, f"{text[-1]} and over"]


def _whole_span(first: int, last: int) -> str:
    return str(first) if first == last else f"{first} to {last}"


# A label carries at most this many levels, each cut to LEVEL_CHARACTERS: a class of thousands of
# levels, or a level of a megabyte, must not be copied whole into every report (the model file
# keeps every level; scoring needs them)
LABEL_LEVELS, LEVEL_CHARACTERS = 12, 60


def class_label(levels: Sequence[str]) -> str:
    """Return a class's label: its levels joined by commas (the first ``LABEL_LEVELS``, then how many more)."""
    shown = [_cut(str(level)) for level in levels[:LABEL_LEVELS]]
    more = len(levels) - len(shown)
    return ", ".join(shown) + (f" and {more:,} more" if more > 0 else "")


def _cut(text: str) -> str:
    return text if len(text) <= LEVEL_CHARACTERS else text[:LEVEL_CHARACTERS - 1] + "…"


def format_number(value: float) -> str:
    """Format a cut point or code compactly and exactly enough to read back: 1500, 0.25, 1.5e+06."""
    if float(value).is_integer() and abs(value) < 1e15:
        return str(int(value))
    return f"{value:.10g}"
