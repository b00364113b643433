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
from dataclasses import dataclass

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
        One plain-language label per bin.
    bad_rate_shape : str
        How the bad rate moves along the chain as the value grows: 'falls', 'rises', 'any' (no
        order), or 'from-data' for a classing fixed in the settings (``scorecard.terms``).
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

    def to_dict(self) -> dict[str, object]:
        """Return the binning as plain values (for the model file)."""
        return {
            "kind": self.kind, "cuts": list(self.cuts), "classes": [list(g) for g in self.classes],
            "special_values": list(self.special_values), "special_bins": list(self.special_bins),
            "missing_bin": self.missing_bin, "unseen_bin": self.unseen_bin,
            "labels": list(self.labels), "bad_rate_shape": self.bad_rate_shape,
        }

    @classmethod
    def from_dict(cls, characteristic: str, data: Mapping[str, object]) -> Binning:
        """Rebuild a binning from ``to_dict`` output."""
        return cls(
            characteristic=characteristic, kind=str(data["kind"]),
            cuts=tuple(float(c) for c in data["cuts"]), classes=tuple(tuple(g) for g in data["classes"]),
            special_values=tuple(float(v) for v in data["special_values"]),
            special_bins=tuple(int(b) for b in data["special_bins"]), missing_bin=int(data["missing_bin"]),
            unseen_bin=int(data["unseen_bin"]), labels=tuple(data["labels"]), bad_rate_shape=str(data["bad_rate_shape"]),
        )


def numeric_binning(name: str, cuts: Sequence[float], *, special_values: Sequence[float] = (),
                    special_bins: Sequence[int | None] | None = None, has_missing: bool = True,
                    missing_bin: int | None = None, bad_rate_shape: str = ANY) -> Binning:
    """Return a numeric binning.

    ``special_bins`` gives, per special value, None (a bin of its own), -1 (the unseen bin: the
    value never occurred in development) or the chain bin it joins. ``missing_bin`` None gives
    missing values a bin of their own when ``has_missing``, else the unseen bin.
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
                   special_bins=tuple(special_targets), missing_bin=missing, unseen_bin=0, labels=tuple(labels),
                   bad_rate_shape=bad_rate_shape)


def categorical_binning(name: str, classes: Sequence[Sequence[str]], *, has_missing: bool = True,
                        missing_bin: int | None = None, rare_class: int | None = None, bad_rate_shape: str = ANY) -> Binning:
    """Return a categorical binning; missing gets its own bin unless given one (-1: the unseen bin)."""
    labels = [class_label(levels) for levels in classes]
    if rare_class is not None:
        labels[rare_class] = f"{RARE_LABEL} ({len(classes[rare_class])})"
    missing = _missing_bin(labels, has_missing, missing_bin)
    unseen = rare_class if rare_class is not None else 0
    return Binning(name, CATEGORICAL, classes=tuple(tuple(str(v) for v in levels) for levels in classes),
                   missing_bin=missing, unseen_bin=unseen, labels=tuple(labels), bad_rate_shape=bad_rate_shape)


def _missing_bin(labels: list[str], has_missing: bool, missing_bin: int | None) -> int:
    """Append a missing bin to ``labels`` when it needs one; return the missing bin (-1: the unseen bin)."""
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


def class_label(levels: Sequence[str]) -> str:
    """Return a class's label: its levels joined by commas."""
    return ", ".join(str(level) for level in levels)


def format_number(value: float) -> str:
    """Format a cut point or code compactly and exactly enough to read back: 1500, 0.25, 1.5e+06."""
    if float(value).is_integer() and abs(value) < 1e15:
        return str(int(value))
    return f"{value:.10g}"
