"""A saved scorecard as ordered rules: what every export writes, each in its own language.

Each characteristic becomes a list of rules tried in order; the first that holds gives the
points. The order is the one ``scorecard.rows.code_rows`` follows, so every export puts a value
in the bin our own scorer puts it in:

1. missing: the missing bin (or the unseen bin when development had no missing value);
2. numeric: each special value, to its own bin, the chain bin it joined, or the unseen bin;
3. numeric: the intervals ``[c[i-1], c[i])`` in ascending order (a value on a cut goes up);
   categorical: the levels of each class;
4. categorical: anything else, a level never seen at build time, to the unseen bin.

Points are kept as whole units of the model's last decimal (``units``): sums of integers are
exact in every language, and the score is the units divided once by ``10**decimals``, as
``scorecard.rows.score_codes`` computes it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ModelFileError, SettingsError
from ..modelfile import SavedModel
from ..points import Scaling
from ..terms import NUMERIC, caution

MISSING, SPECIAL, INTERVAL, LEVELS, OTHERWISE = "missing", "special", "interval", "levels", "otherwise"

# Above this many reachable scores the probability is computed by its formula instead of being
# listed score by score (a table keeps scorewright's own doubles exactly; 10,000 rows of it is
# about 300 kB of SQL). With whole points a scorecard has a few hundred reachable scores.
PD_TABLE_LIMIT = 10_000


@dataclass(frozen=True)
class Rule:
    """One rule of a characteristic: when it holds, the value is in ``bin`` and gets ``units``.

    ``value`` is the special value; ``lower`` and ``upper`` bound an interval (None: unbounded);
    ``levels`` are the levels of a class.
    """

    kind: str
    bin: int
    units: int
    value: float | None = None
    lower: float | None = None
    upper: float | None = None
    levels: tuple[str, ...] = ()


@dataclass(frozen=True)
class CharacteristicRules:
    """A characteristic's rules in the order they are tried, and what a reason needs."""

    name: str
    kind: str
    reason_code: str
    reason_label: str
    rules: tuple[Rule, ...]
    best_units: int  # the most points the characteristic can give; points lost are measured from it


@dataclass(frozen=True)
class ExportModel:
    """Everything an export writes: rules, scaling, decimals, reasons and the model's fingerprint.

    Attributes
    ----------
    title : str
        The settings' title.
    characteristics : tuple of CharacteristicRules
        In the points table's order (ties between reasons go to the earlier one).
    scaling : Scaling
    decimals : int
        Decimals of the points; a score is ``units / unit``.
    fingerprint : str
        The model file's checksum (SHA-256 of its content).
    tool_version : str
        The scorewright version that wrote the model file.
    reason_count : int
        Reasons per application (the settings' ``reasons.count``, at most one per characteristic).
    id_column : str
        The settings' id column ('' when there is none).
    """

    title: str
    characteristics: tuple[CharacteristicRules, ...]
    scaling: Scaling
    decimals: int
    fingerprint: str
    tool_version: str
    reason_count: int
    id_column: str

    @property
    def unit(self) -> int:
        """Units in one point: 10 ** decimals."""
        return 10**self.decimals

    def score_of_units(self, units: int) -> float | int:
        """Return the score of a sum of units, as the exports and ``score_codes`` compute it."""
        return units if self.decimals == 0 else units / self.unit

    def statement(self) -> tuple[str, str, str]:
        """Return what every exported file states: where it came from, its scaling, and the caution."""
        scale = self.scaling
        return (
            f"Scorecard exported by scorewright {self.tool_version} from a model file with checksum (SHA-256) "
            f"{self.fingerprint}.",
            f"Scaling: {plain_number(scale.base_score)} points at odds {plain_number(scale.base_odds)}:1, "
            f"{plain_number(scale.pdo)} points to double the odds (factor {number_text(scale.factor)}, offset "
            f"{number_text(scale.offset)}); points with {self.decimals} decimals.",
            caution("This scorecard"),
        )

    def pd_table(self) -> tuple[tuple[int, float], ...] | None:
        """Return (units, probability of default) of every reachable score; None when there are too many.

        The probabilities are scorewright's own (``Scaling.pd_of_score``), so an export that
        looks them up returns the very doubles ``scorewright score`` writes.
        """
        units = reachable_units(self)
        if units is None:
            return None
        pds = self.scaling.pd_of_score(np.array([self.score_of_units(int(u)) for u in units], dtype=float))
        return tuple((int(u), float(p)) for u, p in zip(units, pds))


def export_model(saved: SavedModel, *, reasons: int | None = None) -> ExportModel:
    """Return the rules of a loaded model file.

    Parameters
    ----------
    saved : SavedModel
        A model file read (and its checksum verified) by ``scorecard.modelfile.load_model``.
    reasons : int, optional
        Reasons per application (default: the model's ``reasons.count``).

    Raises
    ------
    ModelFileError
        The model's points are not all finite numbers.
    SettingsError
        ``reasons`` is negative.
    """
    count = saved.settings.reasons.count if reasons is None else reasons
    if count < 0:
        raise SettingsError(f"--reasons {count}: give 0 or more reasons.")
    table = saved.scorecard.table
    unit = 10**table.decimals
    characteristics = []
    for points, binning in zip(table.characteristics, saved.scorecard.binnings):
        if not np.isfinite(points.points).all():
            raise ModelFileError(f"characteristic {points.name!r}: the model file holds points that are not numbers. "
                                 "Build the model again.")
        units = [int(round(float(p) * unit)) for p in points.points]
        characteristics.append(CharacteristicRules(
            name=points.name, kind=binning.kind, reason_code=points.reason_code, reason_label=points.reason_label,
            rules=tuple(_rules(binning, units)), best_units=max(units),
        ))
    return ExportModel(
        title=saved.settings.report.title, characteristics=tuple(characteristics), scaling=table.scaling,
        decimals=table.decimals, fingerprint=str(saved.document.get("checksum", "")),
        tool_version=str(saved.document.get("tool_version", "")), reason_count=min(count, len(characteristics)),
        id_column=saved.scorecard.id_column,
    )


def reachable_units(model: ExportModel) -> np.ndarray | None:
    """Return every sum of units some application can get (one bin per characteristic), ascending.

    None when the range of sums is wider than ``PD_TABLE_LIMIT`` times ten or more than
    ``PD_TABLE_LIMIT`` sums are reachable.
    """
    steps = [sorted({rule.units for rule in c.rules}) for c in model.characteristics]
    low = sum(s[0] for s in steps)
    span = sum(s[-1] - s[0] for s in steps)
    if span + 1 > 10 * PD_TABLE_LIMIT:
        return None
    reachable = np.zeros(span + 1, dtype=bool)
    reachable[0] = True
    for s in steps:
        shifted = np.zeros_like(reachable)
        for step in s:
            shifted[step - s[0]:] |= reachable[:span + 1 - (step - s[0])]
        reachable = shifted
    found = np.flatnonzero(reachable)
    return None if len(found) > PD_TABLE_LIMIT else found + low


def number_text(value: float) -> str:
    """Return the shortest text that reads back as the same double (``repr``); refuse inf and NaN."""
    value = float(value)
    if not math.isfinite(value):
        raise ModelFileError(f"the model holds {value!r}, which no export can write as a number. Build the model again.")
    return repr(value)


def plain_number(value: float) -> str:
    """Return a number as a person writes it: 600 rather than 600.0, else every digit (``repr``)."""
    value = float(value)
    return str(int(value)) if value.is_integer() and abs(value) < 1e15 else number_text(value)


def _rules(binning, units: list[int]) -> list[Rule]:
    unseen = binning.unseen_bin
    missing = unseen if binning.missing_bin < 0 else binning.missing_bin
    rules = [Rule(MISSING, missing, units[missing])]
    if binning.kind == NUMERIC:
        for value, target in zip(binning.special_values, binning.special_bins):
            target = unseen if target < 0 else target
            rules.append(Rule(SPECIAL, target, units[target], value=float(value)))
        edges = [None, *(float(c) for c in binning.cuts), None]
        for index in range(len(edges) - 1):
            kind = OTHERWISE if index == len(edges) - 2 else INTERVAL
            rules.append(Rule(kind, index, units[index], lower=edges[index], upper=edges[index + 1]))
        return rules
    for index, levels in enumerate(binning.classes):
        rules.append(Rule(LEVELS, index, units[index], levels=tuple(str(v) for v in levels)))
    rules.append(Rule(OTHERWISE, unseen, units[unseen]))
    return rules
