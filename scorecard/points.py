"""Scaling log-odds to points, the points table, scoring rows, and reasons.

Conventions of the trade (DESIGN.md):

- factor = PDO / ln 2; offset = base score − factor × ln(base odds);
  score = offset + factor × ln(odds good:bad), so scores rise with creditworthiness.
- Points of a bin = round(factor × (β_j × WoE_bin + β_0 / k) + offset / k) for k characteristics.
- Probability of default of a score = 1 / (1 + odds(score)).

Scoring is a look-up and a sum: one ``take`` per characteristic, no loop over rows.
"""

from __future__ import annotations

import concurrent.futures
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import special

from .classing import Binning, code_rows, unseen_levels
from .errors import LedgerError, ScorecardError


@dataclass(frozen=True)
class Scaling:
    """How log-odds of good:bad become points.

    Attributes
    ----------
    base_score, base_odds, pdo : float
        ``base_score`` points at odds ``base_odds``:1; the odds double every ``pdo`` points.
    factor, offset : float
        score = offset + factor × ln(odds).
    """

    base_score: float
    base_odds: float
    pdo: float
    factor: float
    offset: float

    def score_of_log_odds(self, log_odds: np.ndarray | float) -> np.ndarray | float:
        """Return the (unrounded) score of log-odds of good:bad."""
        return self.offset + self.factor * np.asarray(log_odds)

    def log_odds_of_score(self, score: np.ndarray | float) -> np.ndarray | float:
        """Return the log-odds of good:bad a score stands for."""
        return (np.asarray(score, dtype=float) - self.offset) / self.factor

    def pd_of_score(self, score: np.ndarray | float) -> np.ndarray | float:
        """Return the probability of default of a score: 1 / (1 + odds(score))."""
        return special.expit(-self.log_odds_of_score(score))

    def to_dict(self) -> dict[str, float]:
        """Return the scaling as plain values (for the model file)."""
        return {"base_score": self.base_score, "base_odds": self.base_odds, "pdo": self.pdo,
                "factor": self.factor, "offset": self.offset}


def scaling(*, base_score: float = 600.0, base_odds: float = 50.0, pdo: float = 20.0) -> Scaling:
    """Return the scaling that puts ``base_score`` at ``base_odds``:1 with ``pdo`` points to double the odds.

    Parameters
    ----------
    base_score : float
    base_odds : float
        Odds good:bad at the base score; must be positive.
    pdo : float
        Points to double the odds; must not be zero.

    Returns
    -------
    Scaling

    Raises
    ------
    ScorecardError
        ``base_odds`` is not positive or ``pdo`` is zero.

    Notes
    -----
    factor = PDO / ln 2 and offset = base score − factor × ln(base odds). With 600 points at
    50:1 and 20 PDO, factor = 28.8539 and offset = 487.1229 (N. Siddiqi, Credit Risk
    Scorecards, Wiley 2006, chapter on scaling — from memory).
    """
    if not base_odds > 0:
        raise ScorecardError(f"scaling.base_odds = {base_odds}: the odds at the base score must be a positive number.")
    if pdo == 0:
        raise ScorecardError("scaling.pdo = 0: the points to double the odds must not be zero.")
    factor = pdo / math.log(2.0)
    offset = base_score - factor * math.log(base_odds)
    return Scaling(float(base_score), float(base_odds), float(pdo), factor, offset)


@dataclass(frozen=True)
class CharacteristicPoints:
    """The points of one characteristic's bins.

    Attributes
    ----------
    name : str
    labels : tuple of str
        Bin labels.
    woe : numpy.ndarray
        Development WoE of each bin.
    coefficient : float
        β_j of the characteristic's WoE.
    exact_points : numpy.ndarray
        factor × (β_j × WoE + β_0 / k) + offset / k, before rounding.
    points : numpy.ndarray
        ``exact_points`` rounded to the table's decimals.
    reason_code, reason_label : str
        The stable code and plain-language text given when this characteristic costs points.
    """

    name: str
    labels: tuple[str, ...]
    woe: np.ndarray
    coefficient: float
    exact_points: np.ndarray
    points: np.ndarray
    reason_code: str
    reason_label: str

    @property
    def best(self) -> float:
        """The most points this characteristic can give."""
        return float(self.points.max())


@dataclass(frozen=True)
class PointsTable:
    """The scorecard: points per bin of every characteristic in the model.

    A row's score is the sum of the points of its bins; its probability of default comes from
    the score through the scaling.
    """

    scaling: Scaling
    intercept: float
    characteristics: tuple[CharacteristicPoints, ...]
    decimals: int

    @property
    def names(self) -> tuple[str, ...]:
        """Characteristics in the table, in order."""
        return tuple(c.name for c in self.characteristics)

    @property
    def min_score(self) -> float:
        """The lowest possible score."""
        return float(sum(c.points.min() for c in self.characteristics))

    @property
    def max_score(self) -> float:
        """The highest possible score."""
        return float(sum(c.points.max() for c in self.characteristics))

    def get(self, name: str) -> CharacteristicPoints:
        """Return one characteristic's points."""
        return next(c for c in self.characteristics if c.name == name)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per bin: characteristic, bin, WoE, coefficient, points."""
        rows = [
            {"characteristic": c.name, "bin": label, "woe": woe, "coefficient": c.coefficient,
             "exact_points": exact, "points": points, "reason_code": c.reason_code}
            for c in self.characteristics
            for label, woe, exact, points in zip(c.labels, c.woe, c.exact_points, c.points)
        ]
        return pd.DataFrame(rows)


def points_table(coefficients: Mapping[str, float], intercept: float, woe: Mapping[str, Sequence[float]],
                 labels: Mapping[str, Sequence[str]], scale: Scaling, *, decimals: int = 0,
                 reason_codes: Mapping[str, str] | None = None,
                 reason_labels: Mapping[str, str] | None = None) -> PointsTable:
    """Return the points of every bin of the model's characteristics.

    Parameters
    ----------
    coefficients : mapping of str to float
        β_j per characteristic, in the table's order.
    intercept : float
        β_0.
    woe, labels : mappings of str to sequences
        Development WoE and label of each bin, per characteristic.
    scale : Scaling
    decimals : int
        Decimals kept in each bin's points (0: whole points).
    reason_codes, reason_labels : mappings, optional
        Per characteristic; defaults ``R01``, ``R02``, ... and text made from the name.

    Returns
    -------
    PointsTable

    Notes
    -----
    points = factor × (β_j × WoE + β_0 / k) + offset / k: spreading the intercept and offset
    evenly makes the unrounded points of a row sum to its scaled log-odds.

    Example
    -------
    >>> t = points_table({"age": 1.0}, 0.0, {"age": [-0.5, 0.5]}, {"age": ["young", "old"]}, scaling())
    >>> t.get("age").points.tolist()
    [473.0, 502.0]
    """
    k = len(coefficients)
    reason_codes = reason_codes or {}
    reason_labels = reason_labels or {}
    characteristics = []
    for position, (name, beta) in enumerate(coefficients.items(), start=1):
        bin_woe = _frozen(woe[name])
        exact = scale.factor * (beta * bin_woe + intercept / k) + scale.offset / k
        characteristics.append(CharacteristicPoints(
            name=name, labels=tuple(labels[name]), woe=bin_woe, coefficient=float(beta),
            exact_points=_frozen(exact), points=_frozen(round_half_away(exact, decimals)),
            reason_code=reason_codes.get(name) or f"R{position:02d}",
            reason_label=reason_labels.get(name) or default_reason_label(name),
        ))
    return PointsTable(scale, float(intercept), tuple(characteristics), int(decimals))


def round_half_away(values: np.ndarray, decimals: int = 0) -> np.ndarray:
    """Round halves away from zero (2.5 → 3, −2.5 → −3), as spreadsheets' ROUND does.

    numpy rounds halves to even; the workbook recomputes points with ROUND, so the two must agree.
    """
    scale = 10.0**decimals
    return np.sign(values) * np.floor(np.abs(values) * scale + 0.5) / scale


def default_reason_label(name: str) -> str:
    """Make a reason text from a column name: 'time_at_address' → 'Time at address'."""
    words = re.sub(r"(?<=[a-z0-9])(?=[A-Z])", " ", name).replace("_", " ").replace(".", " ").split()
    text = " ".join(words).lower() or name
    return text[0].upper() + text[1:]


def score_codes(codes: np.ndarray, table: PointsTable) -> np.ndarray:
    """Return every row's score: the sum of the points of its bins.

    Parameters
    ----------
    codes : numpy.ndarray
        Rows × characteristics bin codes, columns in the table's order.
    table : PointsTable

    Returns
    -------
    numpy.ndarray
        int64 scores when points are whole, else float64.
    """
    dtype = np.int64 if table.decimals == 0 else np.float64
    scores = np.zeros(codes.shape[0], dtype=dtype)
    for column, char in enumerate(table.characteristics):
        scores += np.take(char.points.astype(dtype), codes[:, column])
    return scores


def reasons(codes: np.ndarray, table: PointsTable, *, count: int = 4) -> np.ndarray:
    """Return, per row, the positions of the characteristics that cost it the most points.

    A characteristic's cost is the points of its best bin minus the points the row got. The
    ``count`` costliest are the row's reasons, largest first (ties in table order); a
    characteristic that cost nothing is not a reason (-1).

    Returns
    -------
    numpy.ndarray
        Rows × count positions into ``table.characteristics``; -1 where there is no reason.
    """
    n_rows, k = codes.shape
    count = min(count, k)
    if count == 0:
        return np.zeros((n_rows, 0), dtype=np.int64)
    # points lost in whole units of the table's last decimal, so that one integer key per cell
    # sorts by loss (largest first) and, within a loss, by position: ties stay in table order
    unit = 10.0**table.decimals
    key = np.empty((n_rows, k), dtype=np.int64)
    for column, char in enumerate(table.characteristics):
        lost = np.rint((char.best - char.points) * unit).astype(np.int64)
        key[:, column] = -lost[codes[:, column]] * k + column
    top = np.argpartition(key, count - 1, axis=1)[:, :count] if count < k else np.arange(k)[None, :].repeat(n_rows, 0)
    order = np.take_along_axis(top, np.argsort(np.take_along_axis(key, top, axis=1), axis=1), axis=1)
    lost_most = -(np.take_along_axis(key, order, axis=1) - order) // k
    return np.where(lost_most > 0, order, -1)


def _frozen(values) -> np.ndarray:
    array = np.array(values, dtype=float)
    array.setflags(write=False)
    return array


# --------------------------------------------------------------------------------------------
# Score histograms: what every check is computed from


@dataclass(frozen=True)
class ScoreHistogram:
    """Weighted goods, bads and other rows at each distinct score of one sample.

    Scores of a points scorecard come from a finite set, so every discrimination, calibration
    and stability figure is computed exactly from this table.
    """

    sample: str
    scores: np.ndarray
    goods: np.ndarray
    bads: np.ndarray
    others: np.ndarray  # indeterminate and unknown outcomes: counted for stability only

    @property
    def everyone(self) -> np.ndarray:
        """Weighted rows of any outcome at each score."""
        return self.goods + self.bads + self.others

    def to_dict(self) -> dict[str, list[float]]:
        """Return the histogram as plain lists (for the model file)."""
        return {"scores": self.scores.tolist(), "goods": self.goods.tolist(), "bads": self.bads.tolist(),
                "others": self.others.tolist()}

    @classmethod
    def from_dict(cls, sample: str, data: Mapping[str, Sequence[float]]) -> ScoreHistogram:
        """Rebuild a histogram from ``to_dict`` output."""
        return cls(sample, *(_frozen(data[key]) for key in ("scores", "goods", "bads", "others")))


def score_histogram(scores: np.ndarray, is_good: np.ndarray, is_bad: np.ndarray, weight: np.ndarray, *,
                    sample: str) -> ScoreHistogram:
    """Return the histogram of the given rows' scores, split by outcome.

    Parameters
    ----------
    scores : numpy.ndarray
        Score of each row.
    is_good, is_bad : numpy.ndarray
        Boolean outcome of each row (neither: indeterminate or unknown).
    weight : numpy.ndarray
        Case weight of each row.
    sample : str
        The sample's name.
    """
    distinct, inverse = np.unique(scores, return_inverse=True)
    size = len(distinct)
    goods = np.bincount(inverse, weights=weight * is_good, minlength=size)
    bads = np.bincount(inverse, weights=weight * is_bad, minlength=size)
    others = np.bincount(inverse, weights=weight * ~(is_good | is_bad), minlength=size)
    return ScoreHistogram(sample, _frozen(distinct), _frozen(goods), _frozen(bads), _frozen(others))


def merge_histograms(histograms: Sequence[ScoreHistogram]) -> ScoreHistogram:
    """Return the histogram of several batches of one sample together."""
    if len(histograms) == 1:
        return histograms[0]
    distinct, inverse = np.unique(np.concatenate([h.scores for h in histograms]), return_inverse=True)

    def added(field: str) -> np.ndarray:
        return _frozen(np.bincount(inverse, weights=np.concatenate([getattr(h, field) for h in histograms]), minlength=len(distinct)))

    return ScoreHistogram(histograms[0].sample, _frozen(distinct), added("goods"), added("bads"), added("others"))


# --------------------------------------------------------------------------------------------
# The scorecard as an object that scores a DataFrame


@dataclass(frozen=True)
class Scorecard:
    """A fitted, scaled scorecard: the binnings of its characteristics and their points.

    ``scorecard.score(frame)`` codes each row's characteristics to bins, looks up the points,
    sums them, and returns score, probability of default and reasons.
    """

    table: PointsTable
    binnings: tuple[Binning, ...]  # aligned with table.characteristics
    id_column: str = ""

    def codes(self, frame: pd.DataFrame, *, source: str = "ledger") -> np.ndarray:
        """Return the bin codes of the model's characteristics for every row.

        Raises
        ------
        LedgerError
            A characteristic of the model is not a column of ``frame``.
        """
        missing = [b.characteristic for b in self.binnings if b.characteristic not in frame.columns]
        if missing:
            raise LedgerError(
                f"{source}: column{'s' if len(missing) > 1 else ''} {', '.join(map(repr, missing))} "
                f"of the scorecard {'are' if len(missing) > 1 else 'is'} not in the ledger. "
                "Every characteristic in the model is needed to score; add the column(s) with the same names."
            )
        codes = np.empty((len(frame), len(self.binnings)), dtype=np.uint16, order="F")
        if len(self.binnings):
            # one column per characteristic, stored column after column; coded on two threads, since
            # numpy and pyarrow release the interpreter lock while they search
            with concurrent.futures.ThreadPoolExecutor(max_workers=2) as pool:
                for column, coded in enumerate(pool.map(lambda b: code_rows(frame[b.characteristic], b), self.binnings)):
                    codes[:, column] = coded
        return codes

    def unseen(self, frame: pd.DataFrame) -> dict[str, dict[str, int]]:
        """Return, per categorical characteristic, the levels the scorecard never saw, with row counts."""
        found = {b.characteristic: unseen_levels(frame[b.characteristic], b) for b in self.binnings}
        return {name: levels for name, levels in found.items() if levels}

    def score(self, frame: pd.DataFrame, *, reason_count: int = 0, source: str = "DataFrame") -> pd.DataFrame:
        """Score every row of ``frame``.

        Parameters
        ----------
        frame : pandas.DataFrame
            Holds at least the model's characteristics (same column names as at build time).
        reason_count : int
            Reasons per row (0: none).
        source : str
            Name of the data, for messages.

        Returns
        -------
        pandas.DataFrame
            ``score`` and ``pd`` per row, then ``reason_1`` … with codes and ``reason_1_text`` …
            with their text, aligned with ``frame``'s index.
        """
        codes = self.codes(frame, source=source)
        scores = score_codes(codes, self.table)
        result = pd.DataFrame({"score": scores, "pd": self.table.scaling.pd_of_score(scores)}, index=frame.index)
        if reason_count:
            positions = reasons(codes, self.table, count=reason_count)
            codes_text = np.array([c.reason_code for c in self.table.characteristics] + [""], dtype=object)
            labels_text = np.array([c.reason_label for c in self.table.characteristics] + [""], dtype=object)
            for rank in range(positions.shape[1]):
                result[f"reason_{rank + 1}"] = codes_text[positions[:, rank]]  # -1 picks the blank
                result[f"reason_{rank + 1}_text"] = labels_text[positions[:, rank]]
        return result
