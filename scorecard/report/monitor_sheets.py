"""The monitoring workbook: a monitoring run's figures for a reviewer, development and new side by side.

The workbook holds what the monitoring report shows, as numbers a reviewer can sort, filter and
trace. It is made from score histograms, bin counts and the checks computed from them; it never
sees a ledger row.

Sheets, in order: Overview, Stability, Discrimination, Calibration, Quarters (only when the ledger
has the model's date column), Cautions (``sheet_names``).

Live formulas, so that a reviewer can trace each stability index from its shares:

- Stability: each score band's and each characteristic bin's PSI contribution is
  ``(new share − development share) · LN(new share / development share)`` over the share cells
  beside it, and each PSI is the SUM of its contributions. The shares are the tool's, after 0.5
  was added to both counts of a bin empty in one of the two samples (marked in the row).

Every other figure is a value the tool computed. Every text goes through ``text_cell``, so a
category level such as ``=1+1`` stays text.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import PatternFill
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from .. import __version__
from ..intake import Fingerprint
from ..modelfile import SavedModel
from ..monitor import MEANING, WHAT_TO_DO, CheckStatus, MonitorResult, PeriodMonitor, driving_checks, monitoring_limits, status_rules
from . import CAUTION
from .page_kit import NOT_COMPUTED, reference_wording
from .sheet_kit import (
    FIRST_ROW, HEADER_ROW, NOTE_ROW, RATE, SMALL_P_VALUE, STATISTIC, WEIGHTED_COUNT, Formula, Placed, bar_chart,
    count_number_format, fit_widths, freeze_header, impact_formulas, save_workbook, sheet_heading, text_cell,
    text_sections, write_frame, write_pairs,
)

OVERVIEW, STABILITY, DISCRIMINATION, CALIBRATION, FAIRNESS, QUARTERS, CAUTIONS = (
    "Overview", "Stability", "Discrimination", "Calibration", "Fairness", "Quarters", "Cautions")
WHOLE_LEDGER = "whole ledger"
POINTS = "0.00"
STATUS_WIDTH = 12  # the Status column of Overview; the long values of the pairs below it run on to the right


# Pale fills of our own for the status words, in the order ok, watch, act.
STATUS_FILLS = {"ok": PatternFill("solid", fgColor="DCEBDD"), "watch": PatternFill("solid", fgColor="F5E2C0"),
                "act": PatternFill("solid", fgColor="F1D0CB")}


CHARACTERISTIC_COLUMNS = ["Characteristic", "PSI", "Status", "Mean points (development)", "Mean points (new)",
                          "Points shift", "Missing share (development)", "Missing share (new)", "Rows with unseen levels"]
NO_OUTCOMES = ("Not computed: no row of the ledger has a known outcome (good or bad), and this check compares scores "
               "with outcomes. Only stability was checked.")


def sheet_names(result: MonitorResult) -> tuple[str, ...]:
    """Return the sheets of a run's workbook, in order (Quarters only when the ledger is dated)."""
    return (OVERVIEW, STABILITY, DISCRIMINATION, CALIBRATION, *((FAIRNESS,) if result.impacts else ()),
            *((QUARTERS,) if result.quarters else ()), CAUTIONS)


def monitor_workbook(result: MonitorResult, saved: SavedModel, *, model_path: str | os.PathLike[str] = "model.json",
                     ledger_fingerprint: Fingerprint | None = None) -> Workbook:
    """Return the monitoring workbook of a run, in memory.

    Parameters
    ----------
    result : MonitorResult
        The checks of the new ledger against the development baseline (``monitor_ledger``).
    saved : SavedModel
        The model that was monitored.
    model_path : path-like
        The model file as the user named it.
    ledger_fingerprint : Fingerprint, optional
        Rows and SHA-256 of the monitored ledger.

    Returns
    -------
    openpyxl.Workbook
        The sheets of ``sheet_names(result)``, in that order.
    """
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in sheet_names(result)}
    counts = count_number_format((result.baseline, result.overall.histogram))
    _overview_sheet(sheets[OVERVIEW], result, saved, model_path, ledger_fingerprint)
    _stability_sheet(sheets[STABILITY], result, counts)
    _discrimination_sheet(sheets[DISCRIMINATION], result, counts)
    _calibration_sheet(sheets[CALIBRATION], result, counts)
    if result.impacts:
        _fairness_sheet(sheets[FAIRNESS], result, saved, counts)
    if result.quarters:
        _quarters_sheet(sheets[QUARTERS], result, counts)
    _cautions_sheet(sheets[CAUTIONS], result)
    return book


def write_monitor_workbook(result: MonitorResult, saved: SavedModel, path: str | os.PathLike[str], *,
                           model_path: str | os.PathLike[str] = "model.json",
                           ledger_fingerprint: Fingerprint | None = None) -> Path:
    """Write the monitoring workbook to ``path`` atomically and return the path.

    Parameters
    ----------
    result, saved, model_path, ledger_fingerprint
        As for ``monitor_workbook``.
    path : path-like
        The ``.xlsx`` file to write, e.g. ``q3/monitor.xlsx``; its folder is made if needed.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    OSError
        The folder cannot be made or written to; any earlier file at ``path`` is left as it was.
    """
    book = monitor_workbook(result, saved, model_path=model_path, ledger_fingerprint=ledger_fingerprint)
    return save_workbook(book, path)


def _overview_sheet(sheet: Worksheet, result: MonitorResult, saved: SavedModel, model_path,
                    ledger_fingerprint: Fingerprint | None) -> None:
    overall = result.overall
    built = saved.document.get("ledger", {})
    sheet_heading(sheet, "Monitoring overview",
                  f"Overall status: {result.status}. {MEANING[result.status]} {result.source} against the development "
                  f"sample of {built.get('source', 'the build')}.")
    driving = driving_checks(overall)
    raised = [s for s in driving if s.status != "ok"]
    ordered = raised + [s for s in overall.statuses if s not in raised]
    frame = pd.DataFrame(
        [{"Check": s.check, "Status": s.status, "Sets the status": "yes" if s in raised else "",
          "Figure": s.figure, "Value": s.value, "Watch at": s.watch, "Act at": s.act, "Thresholds": s.thresholds,
          "Source": s.source, "Detail": s.detail} for s in ordered],
        columns=["Check", "Status", "Sets the status", "Figure", "Value", "Watch at", "Act at", "Thresholds",
                 "Source", "Detail"])
    placed = write_frame(sheet, frame, caption="Every check of the whole ledger, those that set the status first")
    _check_formats(placed, ordered)
    _fill_statuses(sheet, placed.columns["Status"], placed.first_row, placed.last_row)
    run_row = placed.last_row + 2
    row = write_pairs(sheet, _overview_pairs(result), row=run_row, caption="The run")
    sheet.cell(row=run_row + 1, column=2).fill = STATUS_FILLS[result.status]  # the pairs open with the overall status
    write_pairs(sheet, _provenance_pairs(result, saved, model_path, ledger_fingerprint), row=row + 1,
                caption="Reproducibility")
    freeze_header(sheet)
    fit_widths(sheet, maximum=70)
    sheet.column_dimensions[get_column_letter(placed.columns["Status"])].width = STATUS_WIDTH


def _overview_pairs(result: MonitorResult) -> list[tuple[str, object]]:
    overall = result.overall
    pairs = [("Overall status", result.status), ("What to do", WHAT_TO_DO[result.status]),
             ("Applications", overall.rows), ("Goods", overall.goods), ("Bads", overall.bads),
             ("Indeterminate", overall.indeterminate), ("No outcome yet", overall.unknown)]
    if overall.outcomes is None:
        pairs.append(("Stability only", "no row has a known outcome, so discrimination and calibration were not "
                                        "checked; they compare scores with outcomes"))
    pairs += [(f"Status of {q.period}", q.status) for q in result.quarters]
    return pairs


def _provenance_pairs(result: MonitorResult, saved: SavedModel, model_path, ledger_fingerprint) -> list:
    document = saved.document
    built = document.get("ledger", {})
    built_print = built.get("fingerprint", {})
    pairs = [("Model file", str(model_path)), ("Model checksum (SHA-256 of its content)", document.get("checksum", "")),
             ("Model built by scorewright", document.get("tool_version", "")),
             ("Model built from", f"{built.get('source', '')} ({built_print.get('rows', '')} rows)"),
             ("SHA-256 of that ledger", built_print.get("sha256", "")), ("Monitored ledger", result.source)]
    if ledger_fingerprint is not None:
        pairs += [("Its rows", ledger_fingerprint.n_rows),
                  (f"SHA-256 of its {ledger_fingerprint.of}", ledger_fingerprint.sha256)]
    pairs.append(("Made by scorewright", __version__))
    return pairs


def _check_formats(placed: Placed, statuses: Sequence[CheckStatus]) -> None:
    """PSIs with four decimals, p-values (some far below 0.0001) in scientific notation."""
    headers = [header for header in ("Value", "Watch at", "Act at") if header in placed.columns]
    for row, status in enumerate(statuses, start=placed.first_row):
        number_format = STATISTIC if status.direction == "above" else SMALL_P_VALUE
        for header in headers:
            placed.sheet.cell(row=row, column=placed.columns[header]).number_format = number_format


def _fill_statuses(sheet: Worksheet, column: int, first_row: int, last_row: int) -> None:
    for row in range(first_row, last_row + 1):
        cell = sheet.cell(row=row, column=column)
        if cell.value in STATUS_FILLS:
            cell.fill = STATUS_FILLS[cell.value]


def _stability_sheet(sheet: Worksheet, result: MonitorResult, counts: str) -> None:
    overall = result.overall
    checks = result.checks
    by_check = {s.check: s for s in overall.statuses}
    sheet_heading(sheet, "Stability", f"Development sample against the new ledger ({result.source}), every application "
                                      f"whatever its outcome. PSI status: ok below {checks.psi_watch:g}, watch from "
                                      f"{checks.psi_watch:g}, act from {checks.psi_act:g}. Contributions and PSIs are "
                                      f"formulas over the share cells.")
    score = overall.score_stability
    bands = _psi_block(sheet, [("", score)], column=1, label="Scores", counts=counts,
                       caption=f"Score bands (score PSI {score.value:.4f}: {score.status})")
    characteristics = overall.characteristics
    table_column = max(bands.columns.values()) + 2
    bins_column = table_column + len(CHARACTERISTIC_COLUMNS) + 1
    bins = _psi_block(sheet, [(c.characteristic, c.psi) for c in characteristics], column=bins_column, label="Bin",
                      counts=counts, caption="Each model characteristic's bins")
    frame = pd.DataFrame([{
        "Characteristic": c.characteristic,
        "PSI": Formula(f"SUM({bins.letter('PSI contribution')}{first}:{bins.letter('PSI contribution')}{last})"),
        "Status": by_check[f"stability of {c.characteristic}"].status,
        "Mean points (development)": c.shift.expected_mean, "Mean points (new)": c.shift.actual_mean,
        "Points shift": c.shift.shift, "Missing share (development)": c.missing_share_development,
        "Missing share (new)": c.missing_share_other,
        "Rows with unseen levels": sum(overall.unseen.get(c.characteristic, {}).values()),
    } for c, (first, last) in zip(characteristics, bins.blocks)], columns=CHARACTERISTIC_COLUMNS, dtype=object)
    table = write_frame(sheet, frame, column=table_column,
                        caption="Model characteristics: PSI (SUM of its bins' contributions) and points shift",
                        formats={"PSI": STATISTIC, "Mean points (development)": POINTS, "Mean points (new)": POINTS,
                                 "Points shift": POINTS, "Missing share (development)": RATE,
                                 "Missing share (new)": RATE, "Rows with unseen levels": counts})
    _fill_statuses(sheet, table.columns["Status"], table.first_row, table.last_row)
    unseen = pd.DataFrame([(name, level, n) for name, levels in overall.unseen.items() for level, n in levels.items()],
                          columns=["Characteristic", "Level never seen at build time", "Rows"])
    write_frame(sheet, unseen, column=max(bins.columns.values()) + 2, formats={"Rows": counts},
                caption="Levels never seen at build time" + ("" if len(unseen) else ": none"))
    chart = bar_chart("Share of applications per score band", "score band", "share of applications",
                      bands.reference("Scores", bands.first_row, bands.last_row - 1),
                      [("development", bands.reference("Share (development)", bands.first_row, bands.last_row - 1)),
                       ("new", bands.reference("Share (new)", bands.first_row, bands.last_row - 1))])
    sheet.add_chart(chart, f"A{bands.last_row + 3}")
    freeze_header(sheet)
    fit_widths(sheet)


@dataclass(frozen=True)
class _PsiBlock(Placed):
    """A placed PSI table, with the first and last sheet row of each block of bins."""

    blocks: tuple[tuple[int, int], ...] = ()


def _psi_block(sheet: Worksheet, tables, *, column: int, label: str, counts: str, caption: str):
    """Write the bins of one or more PSIs: counts and shares as values, contributions as formulas.

    ``tables`` is a sequence of (characteristic name or "", PsiResult). With one unnamed table (the
    score) a total row carries the PSI as the SUM of the contributions.
    """
    named = any(name for name, _ in tables)
    headers = (["Characteristic"] if named else []) + [label, "Count (development)", "Count (new)",
                                                       "Share (development)", "Share (new)", "PSI contribution",
                                                       "Empty-cell addition"]
    letters = {header: get_column_letter(column + i) for i, header in enumerate(headers)}
    rows, blocks, row = [], [], HEADER_ROW + 1
    for name, result in tables:
        first = row
        for bin_label, expected, actual, e_share, a_share, adjusted in zip(
                result.labels, result.expected_counts, result.actual_counts, result.expected_share,
                result.actual_share, result.adjusted):
            e, a = f"{letters['Share (development)']}{row}", f"{letters['Share (new)']}{row}"
            rows.append({"Characteristic": name, label: bin_label, "Count (development)": expected,
                         "Count (new)": actual, "Share (development)": e_share, "Share (new)": a_share,
                         # a bin empty in both samples adds nothing, as in scorecard.checks.psi
                         "PSI contribution": Formula(f"IF(OR({e}<=0,{a}<=0),0,({a}-{e})*LN({a}/{e}))"),
                         "Empty-cell addition": "0.5 added to both counts" if adjusted else ""})
            row += 1
        blocks.append((first, row - 1))
    if not named:
        first, last = blocks[0]

        def total(header):
            return Formula(f"SUM({letters[header]}{first}:{letters[header]}{last})")

        rows.append({label: "all", **{h: total(h) for h in ("Count (development)", "Count (new)", "Share (development)",
                                                            "Share (new)", "PSI contribution")},
                     "Empty-cell addition": ""})
    # object columns keep each Formula as such; a text column would turn it into a plain string
    frame = pd.DataFrame(rows, dtype=object)[headers]
    placed = write_frame(sheet, frame, column=column, caption=caption,
                         formats={"Count (development)": counts, "Count (new)": counts, "Share (development)": RATE,
                                  "Share (new)": RATE, "PSI contribution": STATISTIC})
    return _PsiBlock(placed.sheet, placed.header_row, placed.first_row, placed.last_row, placed.columns, tuple(blocks))


DISCRIMINATION_COLUMNS = [
    "Period", "Goods", "Bads", "Baseline sample", "AUC (baseline)", "Standard error (baseline)", "AUC (new)",
    "Standard error (new)", "z", "p-value (fall)", "Status", "AUC lower (new)", "AUC upper (new)", "Gini (baseline)",
    "Gini (new)", "KS (baseline)", "KS (new)",
]


def _discrimination_sheet(sheet: Worksheet, result: MonitorResult, counts: str) -> None:
    """Each period's AUC against the baseline's, with the test as live formulas over the cells beside it."""
    baseline = result.baseline_auc
    checks = result.checks
    sheet_heading(sheet, "Discrimination", "The new ledger's AUC against the build's on its most honest sample "
                                           "(out-of-time, else hold-out, else development), whole ledger and each "
                                           "quarter. z and p are formulas: z = (new − baseline) / SQRT(se new² + se "
                                           "baseline²), DeLong's standard error of each; p = NORMSDIST(z), one-sided.")
    letter = {name: get_column_letter(i + 1) for i, name in enumerate(DISCRIMINATION_COLUMNS)}
    rows, statuses = [], []
    for period in _periods(result):
        outcomes = period.outcomes
        if outcomes is None or baseline is None:
            continue
        row = FIRST_ROW + len(rows)
        area, fall = outcomes.auc, period.auc_fall
        status = _status_of(period, "discrimination")
        cell = {name: f"{letter[name]}{row}" for name in letter}
        z = Formula(f"({cell['AUC (new)']}-{cell['AUC (baseline)']})/SQRT({cell['Standard error (new)']}^2"
                    f"+{cell['Standard error (baseline)']}^2)")
        p = Formula(f"NORMSDIST({cell['z']})")
        verdict = Formula(f'IF({cell["p-value (fall)"]}<{checks.p_act!r},"act",IF({cell["p-value (fall)"]}<'
                          f'{checks.p_watch!r},"watch","ok"))')
        rows.append({
            "Period": _period_name(period), "Goods": period.goods, "Bads": period.bads, "Baseline sample": baseline.sample,
            "AUC (baseline)": baseline.auc, "Standard error (baseline)": baseline.std_error, "AUC (new)": area.auc,
            "Standard error (new)": area.std_error, "z": z if fall else None, "p-value (fall)": p if fall else None,
            "Status": verdict if fall else "not computed", "AUC lower (new)": area.lower, "AUC upper (new)": area.upper,
            "Gini (baseline)": baseline.gini, "Gini (new)": area.gini, "KS (baseline)": baseline.ks,
            "KS (new)": outcomes.ks.statistic,
        })
        statuses.append(status.status if status else "")
    frame = pd.DataFrame(rows, columns=DISCRIMINATION_COLUMNS, dtype=object)  # object: keeps each Formula one
    placed = write_frame(sheet, frame, caption="Baseline against new",
                         formats={"Goods": counts, "Bads": counts, "p-value (fall)": SMALL_P_VALUE, "z": "0.00",
                                  **dict.fromkeys(DISCRIMINATION_COLUMNS[4:8] + DISCRIMINATION_COLUMNS[11:], STATISTIC)})
    for row, status in enumerate(statuses, start=placed.first_row):  # the status the tool found, for the fill
        fill = STATUS_FILLS.get(status)
        if fill is not None:
            sheet.cell(row=row, column=placed.columns["Status"]).fill = fill
    if not rows:
        text_cell(sheet, FIRST_ROW, 1, _not_computed(result, "discrimination") if baseline is not None else
                  "Not computed: no sample of the build had goods and bads, so there is no AUC to compare with.")
    freeze_header(sheet, columns=1)
    fit_widths(sheet)


def _calibration_sheet(sheet: Worksheet, result: MonitorResult, counts: str) -> None:
    sheet_heading(sheet, "Calibration", "Observed against predicted bads, whole ledger and each quarter, per score band "
                                        "fixed on development. The status comes from the smallest Holm-adjusted "
                                        "p-value of the family: in the large, Hosmer–Lemeshow and every band.")
    summary_rows = [_calibration_summary(period) for period in _periods(result) if period.outcomes is not None]
    band_rows = [row for period in _periods(result) if period.outcomes is not None for row in _calibration_bands(period, result.band_names)]
    summary_columns = ["Period", "Observed bad rate", "Predicted bad rate", "Observed bads", "Expected bads",
                       "z (in the large)", "p (in the large)", "Holm-adjusted p (in the large)", "Hosmer–Lemeshow",
                       "Degrees of freedom", "p (Hosmer–Lemeshow)", "Holm-adjusted p (Hosmer–Lemeshow)", "Brier score",
                       "Smallest Holm-adjusted p", "Status"]
    p_columns = [c for c in summary_columns if c.startswith(("p (", "Holm", "Smallest"))]
    summary = write_frame(sheet, pd.DataFrame(summary_rows, columns=summary_columns), caption="Per period",
                          formats={"Observed bad rate": RATE, "Predicted bad rate": RATE, "Observed bads": counts,
                                   "Expected bads": WEIGHTED_COUNT, "z (in the large)": "0.00",
                                   "Hosmer–Lemeshow": "0.00", "Brier score": STATISTIC,
                                   **dict.fromkeys(p_columns, SMALL_P_VALUE)})
    _fill_statuses(sheet, summary.columns["Status"], summary.first_row, summary.last_row)
    band_columns = ["Period", "Scores", "Count", "Bads", "Observed bad rate", "Mean PD", "Expected bads",
                    "Jeffreys lower", "Jeffreys upper", "Jeffreys p (more bads)", "Binomial p (two-sided)",
                    "Binomial p (more bads)", "Holm-adjusted p"]
    bands = write_frame(sheet, pd.DataFrame(band_rows, columns=band_columns), column=max(summary.columns.values()) + 2,
                        caption="Per score band (Jeffreys interval of the bad rate)",
                        formats={"Count": counts, "Bads": counts, "Expected bads": WEIGHTED_COUNT,
                                 **dict.fromkeys(("Observed bad rate", "Mean PD", "Jeffreys lower", "Jeffreys upper"), RATE),
                                 **dict.fromkeys(band_columns[9:], SMALL_P_VALUE)})
    if not summary_rows:
        text_cell(sheet, FIRST_ROW, 1, _not_computed(result, "calibration"))
    else:
        n_bands = sum(1 for row in band_rows if row["Period"] == WHOLE_LEDGER)
        last = bands.first_row + n_bands - 1
        chart = bar_chart("Observed and predicted bad rate per score band, whole ledger", "score band", "bad rate",
                          bands.reference("Scores", bands.first_row, last),
                          [("observed", bands.reference("Observed bad rate", bands.first_row, last)),
                           ("predicted (mean PD)", bands.reference("Mean PD", bands.first_row, last))])
        sheet.add_chart(chart, f"A{summary.last_row + 3}")
    freeze_header(sheet, columns=1)
    fit_widths(sheet)


def _calibration_summary(period: PeriodMonitor) -> dict[str, object]:
    """One period's whole-ledger calibration tests, before and after Holm's adjustment."""
    outcomes = period.outcomes
    tests = {test.test: test for test in period.calibration_tests}
    large, hl = outcomes.in_the_large, outcomes.hosmer_lemeshow
    hl_test = tests.get("Hosmer-Lemeshow")
    return {
        "Period": _period_name(period), "Observed bad rate": large.observed_rate,
        "Predicted bad rate": large.expected_rate, "Observed bads": large.observed_bads,
        "Expected bads": large.expected_bads, "z (in the large)": large.z,
        "p (in the large)": tests["calibration in the large"].p_value,
        "Holm-adjusted p (in the large)": tests["calibration in the large"].adjusted_p_value,
        "Hosmer–Lemeshow": hl.statistic if hl else NOT_COMPUTED, "Degrees of freedom": hl.df if hl else None,
        "p (Hosmer–Lemeshow)": hl_test.p_value if hl_test else None,
        "Holm-adjusted p (Hosmer–Lemeshow)": hl_test.adjusted_p_value if hl_test else None, "Brier score": outcomes.brier,
        "Smallest Holm-adjusted p": min(t.adjusted_p_value for t in period.calibration_tests),
        "Status": _status_of(period, "calibration").status,
    }


def _calibration_bands(period: PeriodMonitor, names) -> list[dict[str, object]]:
    """One period's score bands, named by the scores each can hold, with each band's test of the family."""
    frame = period.outcomes.calibration.to_frame()
    tests = {test.test: test for test in period.calibration_tests}
    return [{
        "Period": _period_name(period), "Scores": names[band.band],
        "Count": band.count, "Bads": band.bads, "Observed bad rate": band.observed_rate, "Mean PD": band.mean_pd,
        "Expected bads": band.expected_bads, "Jeffreys lower": band.jeffreys_lower,
        "Jeffreys upper": band.jeffreys_upper, "Jeffreys p (more bads)": band.jeffreys_p,
        "Binomial p (two-sided)": band.binomial_p_two_sided, "Binomial p (more bads)": band.binomial_p_excess,
        "Holm-adjusted p": tests[f"band {names[band.band]}"].adjusted_p_value,
    } for band in frame.itertuples(index=False)]


FAIRNESS_COLUMNS = ["Attribute", "Period", "Level", "Applications", "Approved", "Approval rate",
                    "Rate if it may be the reference", "Ratio to the reference", "Under the guide"]


def _fairness_sheet(sheet: Worksheet, result: MonitorResult, saved: SavedModel, counts: str) -> None:
    """Each protected attribute's levels at the build's cut-off, whole ledger and each quarter; rates and ratios live."""
    guide = saved.settings.fairness.impact_ratio
    sheet_heading(sheet, "Fairness", f"Approvals at the build's cut-off {result.cutoff:g}, whole ledger and each quarter. "
                                     f"Approval rate and the ratio to the reference level are formulas; under {guide:g} "
                                     "is marked (the four-fifths rule of thumb: a guide, not a verdict). "
                                     + reference_wording(saved.settings.fairness.reference_share))
    letter = {name: get_column_letter(i + 1) for i, name in enumerate(FAIRNESS_COLUMNS)}
    rows, row = [], FIRST_ROW
    for attribute, periods in result.impacts.items():
        for period, impact in periods.items():
            first, last = row, row + len(impact.levels) - 1
            for level, applications, approved in zip(impact.levels, impact.applications, impact.approved):
                cell = {name: f"{letter[name]}{row}" for name in letter}
                rows.append({"Attribute": attribute, "Period": WHOLE_LEDGER if period == "all" else period, "Level": level,
                             "Applications": applications, "Approved": approved,
                             **impact_formulas(cell, letter, first, last, saved.settings.fairness.reference_share, guide)})
                row += 1
    write_frame(sheet, pd.DataFrame(rows, columns=FAIRNESS_COLUMNS, dtype=object), caption="Adverse impact at the cut-off",
                formats={"Applications": counts, "Approved": counts, "Approval rate": RATE,
                         "Rate if it may be the reference": RATE, "Ratio to the reference": "0.000"})
    freeze_header(sheet, columns=3)
    fit_widths(sheet)


def _quarters_sheet(sheet: Worksheet, result: MonitorResult, counts: str) -> None:
    sheet_heading(sheet, "Quarters", "Each calendar quarter of the ledger on its own against the development sample; "
                                     "every check's status and figure per quarter.")
    rows = []
    for q in result.quarters:
        large = q.outcomes.in_the_large if q.outcomes is not None else None
        rows.append({"Quarter": q.period, "Applications": q.rows, "Goods": q.goods, "Bads": q.bads,
                     "Indeterminate": q.indeterminate, "No outcome yet": q.unknown,
                     "Observed bad rate": large.observed_rate if large else None,
                     "Predicted bad rate": large.expected_rate if large else None,
                     "Score PSI": q.score_stability.value,
                     "AUC": q.outcomes.auc.auc if q.outcomes is not None else None, "Status": q.status})
    summary = write_frame(sheet, pd.DataFrame(rows), caption="Per quarter",
                          formats={**dict.fromkeys(("Applications", "Goods", "Bads", "Indeterminate", "No outcome yet"),
                                                   counts),
                                   "Observed bad rate": RATE, "Predicted bad rate": RATE, "Score PSI": STATISTIC,
                                   "AUC": STATISTIC})
    _fill_statuses(sheet, summary.columns["Status"], summary.first_row, summary.last_row)
    statuses = [(period, s) for period in _periods(result) for s in period.statuses]
    long = pd.DataFrame([{"Period": _period_name(period), "Check": s.check, "Status": s.status, "Figure": s.figure,
                          "Value": s.value, "Thresholds": s.thresholds, "Detail": s.detail} for period, s in statuses],
                        columns=["Period", "Check", "Status", "Figure", "Value", "Thresholds", "Detail"])
    checks = write_frame(sheet, long, column=max(summary.columns.values()) + 2,
                         caption="Every check, whole ledger and each quarter")
    _check_formats(checks, [s for _, s in statuses])
    _fill_statuses(sheet, checks.columns["Status"], checks.first_row, checks.last_row)
    psi = bar_chart("Score PSI by quarter", "quarter", "PSI against development", summary.reference("Quarter"),
                    [("score PSI", summary.reference("Score PSI"))])
    sheet.add_chart(psi, f"A{summary.last_row + 3}")
    if all(q.outcomes is not None for q in result.quarters):
        rates = bar_chart("Observed and predicted bad rate by quarter", "quarter", "bad rate",
                          summary.reference("Quarter"),
                          [("observed", summary.reference("Observed bad rate")),
                           ("predicted", summary.reference("Predicted bad rate"))])
        sheet.add_chart(rates, f"A{summary.last_row + 22}")
    freeze_header(sheet, columns=1)
    fit_widths(sheet, maximum=70)


def _cautions_sheet(sheet: Worksheet, result: MonitorResult) -> None:
    sheet_heading(sheet, "Cautions", "What this workbook does not replace, how the statuses are set, what to do about "
                                     "each, the limits of these checks, and the notes of this run.")
    rules = [f"{check}: {figure}; watch {watch}, act {act}. {how}" for check, figure, watch, act, how
             in status_rules(result.checks)]
    todo = [f"{word}: {text}" for word, text in WHAT_TO_DO.items()]
    text_sections(sheet, [("Caution", [CAUTION]), ("How statuses are set", rules), ("What to do", todo),
                          ("Limits of these checks", monitoring_limits(result)),
                          ("Notes of this run", list(result.notes) or ["none"])], first_row=NOTE_ROW + 2)


def _not_computed(result: MonitorResult, check: str) -> str:
    """Why a check has no figures: the whole ledger's reason, or that no row has a known outcome."""
    why = result.overall.not_computed.get(check)
    return f"Not computed: {why}." if why else NO_OUTCOMES


def _periods(result: MonitorResult) -> list[PeriodMonitor]:
    return [result.overall, *result.quarters]


def _period_name(period: PeriodMonitor) -> str:
    return WHOLE_LEDGER if period.period == "all" else period.period


def _status_of(period: PeriodMonitor, check: str) -> CheckStatus | None:
    return next((s for s in period.statuses if s.check == check), None)
