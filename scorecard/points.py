"""Scaling log-odds to points, and the points table.

Conventions of the trade (DESIGN.md):

- factor = PDO / ln 2; offset = base score − factor × ln(base odds);
  score = offset + factor × ln(odds good:bad), so scores rise with creditworthiness.
- Points of a bin = round(factor × (β_j × WoE_bin + β_0 / k) + offset / k) for k characteristics.
- Probability of default of a score = 1 / (1 + odds(score)).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .errors import ScorecardError
from .terms import frozen


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
        from scipy import special  # on first use: the score command finds its probabilities without it

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
        """The lowest possible score (rounded to the table's decimals, as scores are)."""
        return round(float(sum(c.points.min() for c in self.characteristics)), self.decimals)

    @property
    def max_score(self) -> float:
        """The highest possible score (rounded to the table's decimals, as scores are)."""
        return round(float(sum(c.points.max() for c in self.characteristics)), self.decimals)

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
        bin_woe = frozen(woe[name])
        exact = scale.factor * (beta * bin_woe + intercept / k) + scale.offset / k
        characteristics.append(CharacteristicPoints(
            name=name, labels=tuple(labels[name]), woe=bin_woe, coefficient=float(beta),
            exact_points=frozen(exact), points=frozen(round_half_away(exact, decimals)),
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
