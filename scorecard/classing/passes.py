"""Classing a ledger in passes over its rows: only count tables are kept between them.

Pass 1 counts the fine bins of the characteristics the tool proposes a classing for; the best
classing follows from those counts (``scorecard.classing.best``). Pass 2 counts every
characteristic's final bins per sample; a classing fixed in the settings is completed from those
counts (``scorecard.classing.overrides``). The rows themselves are the row source's
(``scorecard.rows``): this module never loops over them.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, replace

import numpy as np

from ..errors import LedgerError, ScorecardWarning
from ..evidence import EvidenceTable, evidence_table
from ..intake import Characteristic, Ledger, rows_in_memory
from ..rows import BinCounts, InProcessRows, KeptCodes
from ..settings import CharacteristicSettings, ProposalSettings, Settings
from ..terms import BAD, DEVELOPMENT, GOOD, LEAKAGE_IV, OUTCOME_NAMES, SAMPLE_NAMES
from .best import Merging, coarse_classing
from .bins import Binning
from .fine import fine_classing
from .overrides import (
    binning_from_settings, check_constraints, code_mapping, development_counts, proposal_of, resolve_unseen,
    without_empty_bins,
)


# Who classed a characteristic: the tool (its proposal, made now or kept as the settings record it), the
# analyst changing the tool's recorded proposal, or the analyst with no proposal on record.
PROPOSED, CHANGED, WRITTEN = "proposed", "changed", "written"


@dataclass(frozen=True)
class ClassedCharacteristic:
    """One characteristic after classing: its bins, counts per sample, and development WoE.

    Attributes
    ----------
    origin : str
        Who classed it: 'proposed' (the tool's proposal, made now or kept unchanged from the
        settings' record of it), 'changed' (the analyst changed the recorded proposal) or 'written'
        (the analyst wrote the classing, with no proposal on record).
    proposal : ProposalSettings or None
        The tool's proposal, as the settings record it (None for a classing the analyst wrote).
    proposal_iv : float or None
        For a changed classing, the information value the tool's proposal has on this development
        sample: the change cost or gained ``evidence.iv − proposal_iv``.
    """

    binning: Binning
    counts: BinCounts
    evidence: EvidenceTable
    origin: str
    notes: tuple[str, ...]
    merging: Merging | None = None  # what merging neighbours that do not differ did (proposed classings only)
    proposal: ProposalSettings | None = None
    proposal_iv: float | None = None

    @property
    def name(self) -> str:
        """The characteristic's name."""
        return self.binning.characteristic

    def evidence_on(self, sample: int, *, leakage_iv: float = LEAKAGE_IV) -> EvidenceTable:
        """Return the WoE table on another sample (hold-out, out-of-time)."""
        return evidence_table(
            self.counts.goods(sample), self.counts.bads(sample), labels=self.binning.labels,
            characteristic=self.name, n_goods=self.counts.n_goods(sample), n_bads=self.counts.n_bads(sample),
            sample=SAMPLE_NAMES[sample], leakage_iv=leakage_iv,
        )


@dataclass(frozen=True)
class ClassedLedger:
    """Every characteristic classed, with the bin code of every row."""

    characteristics: tuple[ClassedCharacteristic, ...]
    codes: np.ndarray  # rows × characteristics
    notes: tuple[str, ...]

    @property
    def kept(self) -> KeptCodes:
        """The kept codes, for the row source's later passes (none when the ledger is read in batches)."""
        return KeptCodes(self.names, self.codes)

    def get(self, name: str) -> ClassedCharacteristic:
        """Return one classed characteristic by name."""
        return next(c for c in self.characteristics if c.name == name)

    @property
    def names(self) -> tuple[str, ...]:
        """Characteristic names, in ledger order."""
        return tuple(c.name for c in self.characteristics)


def _check_both_outcomes(ledger: Ledger) -> None:
    """Refuse a development sample without weighted goods or without weighted bads (WoE needs both)."""
    development = ledger.sample_summary().loc[SAMPLE_NAMES[DEVELOPMENT]]
    for name in (OUTCOME_NAMES[GOOD], OUTCOME_NAMES[BAD]):
        if not development[name] > 0:
            raise LedgerError(
                f"{ledger.source}: the development sample holds no {name} outcome with a positive weight, and a "
                f"scorecard learns from goods and bads. Check the outcome mapping under [outcome] (which values are "
                f"{name}) and the weights."
            )


def class_ledger(ledger: Ledger, settings: Settings, *, rows: InProcessRows | None = None,
                 progress: Callable[[Iterable], Iterable] = lambda items: items) -> ClassedLedger:
    """Class every characteristic in passes over the rows: the settings' fixed classing where given, else the best one.

    Parameters
    ----------
    ledger : Ledger
    settings : Settings
    rows : InProcessRows, optional
        The ledger's rows (``scorecard.intake.open_ledger``); by default the ledger's own frame,
        held in memory.
    progress : callable
        Wraps the loop over characteristics within a pass (a progress bar in a terminal).

    Returns
    -------
    ClassedLedger
        Development WoE per characteristic, the bin code of every row (when the rows are held in
        memory), and notes of every repair and broken constraint.

    Notes
    -----
    Fine cut points are taken from the development rows, or from their seeded sub-sample when
    there are more than ``classing.fine_sample_rows`` (drawn at intake from the split keys). Pass 1 (only for
    characteristics without a fixed classing) counts fine bins; the best classing follows from
    those counts. Pass 2 codes every characteristic and counts its bins, with a bin of its own for
    values the binning does not know; the settings' classing is then completed from the counts
    alone: empty missing and special-value bins go, and unseen values join the unseen bin.
    """
    rows = rows_in_memory(ledger) if rows is None else rows
    _check_both_outcomes(ledger)
    characteristics = ledger.characteristics
    proposed = [c for c in characteristics if not _is_fixed(settings, c.name)]
    fine_rows, fine_weights = rows.gather("classing", [c.name for c in proposed])
    fine = {c.name: _fine_binning(fine_rows[c.name], fine_weights, c, settings) for c in proposed}
    binnings, coarse_notes, mergings = {}, {}, {}
    if fine:
        fine_counts, _, _ = rows.count_bins(fine, keep_codes=False, progress=progress)
        for name in fine:
            binnings[name], coarse_notes[name], mergings[name] = _coarse(fine[name], fine_counts[name], settings)
    binnings.update({c.name: _provisional(c, settings) for c in characteristics if c.name not in fine})
    binnings = {c.name: binnings[c.name] for c in characteristics}
    keep_codes = rows.in_memory
    counts, codes, unseen = rows.count_bins(binnings, keep_codes=keep_codes, progress=progress)
    classed, columns, notes = [], [], []
    for char in characteristics:
        origin = PROPOSED if char.name in fine else _origin(settings.characteristic(char.name))
        result, mapping = _finish(binnings[char.name], counts[char.name], unseen.get(char.name, {}), origin, settings,
                                  notes=coarse_notes.get(char.name, ()), merging=mergings.get(char.name),
                                  fixed=char.name not in fine)
        classed.append(result)
        notes.extend(result.notes)
        if keep_codes:
            columns.append(mapping.astype(codes[char.name].dtype)[codes[char.name]])
    classed = _with_proposal_iv(classed, ledger, settings, rows, progress)
    n_rows = ledger.n_rows if keep_codes else 0
    matrix = np.column_stack(columns) if columns else np.zeros((n_rows if keep_codes else 0, 0), dtype=np.uint8)
    routine = {note for c in classed if c.origin == PROPOSED for note in c.proposal.notes}
    for note in notes:
        # what the proposal did by its own rules (a small missing bin merged) goes to the report's
        # notes only; a warning is for what the analyst should act on
        if note not in routine:
            warnings.warn(note, ScorecardWarning, stacklevel=3)
    return ClassedLedger(tuple(classed), matrix, tuple(notes))


def _origin(spec: CharacteristicSettings) -> str:
    """Who classed a characteristic the settings fix: the tool (its recorded proposal kept), or the analyst."""
    if spec.proposal is None:
        return WRITTEN
    return PROPOSED if spec.classing() == spec.proposal.classing() else CHANGED


def _with_proposal_iv(classed: list[ClassedCharacteristic], ledger: Ledger, settings: Settings, rows: InProcessRows,
                      progress) -> list[ClassedCharacteristic]:
    """Add, to each classing the analyst changed, the IV the tool's recorded proposal has on this development sample.

    The proposals are counted in one more pass over the rows, of those characteristics only.
    """
    changed = {c.name: c for c in classed if c.origin == CHANGED}
    if not changed:
        return classed
    provisional = {name: _provisional(ledger.characteristic(name), settings, classing=c.proposal)
                   for name, c in changed.items()}
    counts, _, unseen = rows.count_bins(provisional, keep_codes=False, progress=progress)
    ivs = {}
    for name, binning in provisional.items():
        proposal, _ = _finish(binning, counts[name], unseen.get(name, {}), WRITTEN, settings, fixed=True)
        ivs[name] = proposal.evidence.iv
    return [replace(c, proposal_iv=ivs[c.name]) if c.name in ivs else c for c in classed]


def _is_fixed(settings: Settings, name: str) -> bool:
    spec = settings.characteristic(name)
    return spec.cuts is not None or spec.classes is not None


def fine_binnings(ledger: Ledger, rows, settings: Settings, names: Sequence[str]) -> dict[str, Binning]:
    """The fine binning of each named characteristic, as the tool's proposal starts from (the challenger uses them)."""
    values, weights = rows.gather("classing", list(names))
    return {name: _fine_binning(values[name], weights, ledger.characteristic(name), settings) for name in names}


def _fine_binning(values, weights, char: Characteristic, settings: Settings) -> Binning:
    classing = settings.classing
    return fine_classing(values, weights, name=char.name, kind=char.kind, special_values=char.special_values,
                         max_bins=classing.max_fine_bins, rare_level_share=classing.rare_level_share,
                         special_meanings=char.special_meanings, whole_numbers=char.whole_numbers, lowest=char.lowest)


def _coarse(fine: Binning, counts: BinCounts, settings: Settings) -> tuple[Binning, tuple[str, ...], Merging | None]:
    """The best classing of a fine binning, from its development counts (the unseen bin left aside)."""
    classing = settings.classing
    spec = settings.characteristic(fine.characteristic)
    known = slice(0, fine.n_bins)
    coarse = coarse_classing(
        fine, counts.goods()[known], counts.bads()[known], n_goods=counts.n_goods()[known], n_bads=counts.n_bads()[known],
        min_class_share=classing.min_class_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
        max_classes=classing.max_classes, min_special_share=classing.min_special_share,
        bad_rate_shape=spec.bad_rate_shape or classing.bad_rate_shape, bend_min_gain=classing.bend_min_gain,
        merge_p=classing.merge_p,
    )
    binning = coarse.binning
    if spec.unseen != "worst":
        binning = resolve_unseen(binning, [], [], spec.unseen)
    return binning, coarse.notes, coarse.merging


def _provisional(char: Characteristic, settings: Settings, *, classing: ProposalSettings | None = None) -> Binning:
    """The settings' classing (or the recorded proposal's) with own bins for every special value and for missing values.

    A classing the tool proposed keeps the bad-rate shape it was found with.
    """
    spec = settings.characteristic(char.name)
    keys = classing or spec
    shape = keys.bad_rate_shape if classing is not None else spec.bad_rate_shape
    if classing is None and spec.proposal is not None and _origin(spec) == PROPOSED:
        shape = spec.proposal.bad_rate_shape or shape
    return binning_from_settings(
        char.name, char.kind, cuts=keys.cuts, classes=keys.classes, special_values=char.special_values,
        specials=keys.specials, missing=keys.missing, present_specials=char.special_values, has_missing=True,
        bad_rate_shape=shape or settings.classing.bad_rate_shape, special_meanings=char.special_meanings,
        whole_numbers=char.whole_numbers, lowest=char.lowest,
    )


def _finish(binning: Binning, counts: BinCounts, unseen: Mapping[str, int], origin: str, settings: Settings, *,
            notes: Sequence[str] = (), merging: Merging | None = None, fixed: bool):
    """Complete a binning from its counts; return the classed characteristic and the code mapping.

    A classing fixed in the settings loses the own bins nothing fell in, gets its unseen bin, and is
    checked against the limits; one the tool proposed now is used as it is. The notes of a proposal
    kept from the settings are the ones it was recorded with.
    """
    spec = settings.characteristic(binning.characteristic)
    notes = list(notes)
    if fixed:
        final = without_empty_bins(binning, counts)
        final = resolve_unseen(final, *development_counts(counts, binning, final), spec.unseen)
        if origin == PROPOSED:
            notes += spec.proposal.notes
    else:
        final = binning
    mapping = code_mapping(binning, final)
    final_counts = counts.regroup(mapping, final.labels)
    if unseen and fixed:
        shown = ", ".join(f"{level!r} ({n} rows)" for level, n in list(unseen.items())[:5])
        notes.append(
            f"{binning.characteristic!r}: levels {shown} are in no class of the settings; they go to class "
            f"{final.unseen_bin + 1} ({final.labels[final.unseen_bin]}). Add them to a class to decide yourself."
        )
    if fixed:
        classing = settings.classing
        broken = check_constraints(
            final, final_counts.goods(), final_counts.bads(), n_goods=final_counts.n_goods(), n_bads=final_counts.n_bads(),
            min_class_share=classing.min_class_share, min_goods=classing.min_goods, min_bads=classing.min_bads,
            max_classes=classing.max_classes, bad_rate_shape=spec.bad_rate_shape or classing.bad_rate_shape,
        )
        notes += [f"the classing written in the settings breaks a constraint on this development sample: {problem}. "
                  "Change its cuts or classes, or remove them for a new proposal." for problem in broken]
    proposal = spec.proposal if fixed else proposal_of(final, notes)
    return _classed(final, final_counts, origin, tuple(notes), settings, merging, proposal), mapping


def _classed(binning: Binning, counts: BinCounts, origin: str, notes, settings: Settings,
             merging: Merging | None, proposal: ProposalSettings | None) -> ClassedCharacteristic:
    evidence = evidence_table(
        counts.goods(), counts.bads(), labels=binning.labels, characteristic=binning.characteristic,
        n_goods=counts.n_goods(), n_bads=counts.n_bads(), leakage_iv=settings.selection.leakage_iv,
    )
    adjusted = [label for label, flag in zip(binning.labels, evidence.adjusted) if flag]
    notes = list(notes)
    if adjusted:
        notes.append(
            f"{binning.characteristic!r}: bins {', '.join(map(repr, adjusted))} have no goods or no bads in development; "
            "0.5 was added to both counts to keep their WoE finite. Join them to a neighbouring class to avoid this."
        )
    return ClassedCharacteristic(binning, counts, evidence, origin, tuple(notes), merging, proposal)
