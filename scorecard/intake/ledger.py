"""The checked ledger: what intake hands to the stages, and the fingerprint that identifies it."""

from __future__ import annotations

import hashlib
import os
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..terms import OUTCOME_NAMES, SAMPLE_NAMES

PART_ROWS = 1_000_000  # rows counted at a time


@dataclass(frozen=True)
class Characteristic:
    """A column used as a characteristic: its name, kind, declared special values, and how its values read.

    Attributes
    ----------
    special_values, special_meanings : tuples
        The special codes the settings declare and what each means ('' when not said).
    whole_numbers : bool
        Numeric: every ordinary value (neither missing nor special) is a whole number.
    lowest : float or None
        Numeric: the smallest ordinary value.
    """

    name: str
    kind: str
    special_values: tuple[float, ...] = ()
    special_meanings: tuple[str, ...] = ()
    whole_numbers: bool = False
    lowest: float | None = None


@dataclass(frozen=True, eq=False)
class AttributeLevels:
    """The levels of one protected attribute: each row's level (-1: not recorded) and the levels' names."""

    codes: np.ndarray
    levels: tuple[str, ...]


@dataclass(frozen=True)
class Fingerprint:
    """What identifies a ledger: its row count and a SHA-256 of its content."""

    n_rows: int
    sha256: str
    of: str  # "file bytes" or "frame values"

    def to_dict(self) -> dict[str, object]:
        """Return the fingerprint as plain values (for the model file)."""
        return {"rows": self.n_rows, "sha256": self.sha256, "of": self.of}


@dataclass(frozen=True)
class RejectedRows:
    """The rejected applications of a ledger: never booked, so without an outcome; set apart from the samples.

    Attributes
    ----------
    frame : pandas.DataFrame
        Their characteristic columns.
    weight : numpy.ndarray
        Case weight of each.
    in_time : numpy.ndarray
        Whether each was made before ``samples.out_of_time_from`` (all, without one): only these
        enter reject inference, as the development sample is in time.
    rows : numpy.ndarray
        Their 0-based rows in the ledger as read.
    """

    frame: pd.DataFrame
    weight: np.ndarray
    in_time: np.ndarray
    rows: np.ndarray

    @property
    def n_rows(self) -> int:
        """Number of rejected applications."""
        return len(self.weight)


@dataclass(frozen=True)
class Ledger:
    """A checked ledger: characteristic columns, outcome, weights and samples, aligned by row.

    Attributes
    ----------
    source : str
        The file name, or "DataFrame".
    frame : pandas.DataFrame
        The characteristic columns only (ids, dates, outcome and weights are held apart).
    characteristics : tuple of Characteristic
        The characteristics, in ledger order.
    outcome : numpy.ndarray or None
        int8 per row: 0 good, 1 bad, 2 indeterminate, 3 unknown (no outcome recorded); None when
        a SQL engine keeps the rows (so do ``weight``, ``sample``, ``dates`` and ``ids``).
    weight : numpy.ndarray or None
        float64 case weight per row.
    sample : numpy.ndarray or None
        int8 per row: 0 development, 1 hold-out, 2 out-of-time.
    dates : numpy.ndarray or None
        datetime64[D] per row when the ledger has a date column.
    ids : numpy.ndarray or None
        The id column's values, for output files only.
    notes : tuple of str
        What intake left out or repaired, and why (the reports list them).
    fingerprint : Fingerprint
    left_out : mapping of str to str
        Columns that are not characteristics, and why.
    subsamples : mapping of str to numpy.ndarray
        Ascending row numbers of the seeded sub-samples of a large development sample
        ('classing', 'selection'; ``scorecard.intake.samples.draw_subsamples``).
    rejects : RejectedRows or None
        The rejected applications, set apart from every other field (those hold the booked
        applications only), when the settings name them and the ledger has some.
    summary : pandas.DataFrame or None
        The sample summary, when the rows are not held here (see ``sample_summary``).
    """

    source: str
    frame: pd.DataFrame
    characteristics: tuple[Characteristic, ...]
    outcome: np.ndarray
    weight: np.ndarray
    sample: np.ndarray
    dates: np.ndarray | None
    ids: np.ndarray | None
    notes: tuple[str, ...]
    fingerprint: Fingerprint
    left_out: Mapping[str, str] = field(default_factory=dict)
    protected: Mapping[str, AttributeLevels] = field(default_factory=dict)  # per protected attribute, each row's level
    subsamples: Mapping[str, np.ndarray] = field(default_factory=dict)
    rejects: RejectedRows | None = None
    summary: pd.DataFrame | None = None

    @property
    def n_rows(self) -> int:
        """Number of rows (booked applications when rejected ones are set apart)."""
        return len(self.outcome) if self.outcome is not None else self.fingerprint.n_rows

    def characteristic(self, name: str) -> Characteristic:
        """Return the characteristic called ``name``."""
        return next(c for c in self.characteristics if c.name == name)

    def sample_summary(self) -> pd.DataFrame:
        """Return rows, goods, bads, indeterminates and unknowns (weighted) per sample."""
        if self.summary is not None:
            return self.summary
        return summary_frame(*sample_counts(self.sample, self.outcome, self.weight))


def sample_counts(sample: np.ndarray, outcome: np.ndarray, weight: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Weighted rows per (sample, outcome), and rows per sample.

    Rows are counted a million at a time (no temporary of 8 bytes a row); weights are added row
    after row in row order, unless every row weighs 1, when the weighted rows are the counts.
    """
    n_samples, n_outcomes = len(SAMPLE_NAMES), len(OUTCOME_NAMES)

    def cells(rows: slice) -> np.ndarray:
        return sample[rows].astype(np.int64) * n_outcomes + outcome[rows]

    counts = np.zeros(n_samples * n_outcomes, dtype=np.int64)
    for first in range(0, len(sample), PART_ROWS):
        counts += np.bincount(cells(slice(first, first + PART_ROWS)), minlength=len(counts))
    if weight.strides == (0,) and float(weight[:1].sum()) == 1.0:
        weighted = counts.astype(float)
    else:
        weighted = np.bincount(cells(slice(None)), weights=weight, minlength=len(counts))
    return weighted.reshape(n_samples, n_outcomes), counts.reshape(n_samples, n_outcomes).sum(axis=1)


def summary_frame(weighted: np.ndarray, rows: np.ndarray) -> pd.DataFrame:
    """The sample summary from its counts: weighted rows per (sample, outcome), and rows per sample."""
    frame = pd.DataFrame(weighted, index=list(SAMPLE_NAMES), columns=list(OUTCOME_NAMES))
    frame.insert(0, "rows", np.asarray(rows, dtype=np.int64))
    frame["bad rate"] = frame["bad"] / (frame["good"] + frame["bad"]).where(lambda s: s > 0)
    return frame


def fingerprint_of(source: str | os.PathLike[str] | pd.DataFrame, n_rows: int) -> Fingerprint:
    """Return a ledger's fingerprint: row count and SHA-256 of the file's bytes or the frame's values."""
    digest = hashlib.sha256()
    if isinstance(source, pd.DataFrame):
        digest.update(pd.util.hash_pandas_object(source, index=False).to_numpy().tobytes())
        digest.update("\x1f".join(map(str, source.columns)).encode())
        return Fingerprint(n_rows, digest.hexdigest(), "frame values")
    with open(source, "rb") as stream:
        for block in iter(lambda: stream.read(1 << 22), b""):
            digest.update(block)
    return Fingerprint(n_rows, digest.hexdigest(), "file bytes")
