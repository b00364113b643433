"""The reviewer's Excel workbook: every figure of a build, with the key ones as live formulas.

The workbook is made from the build's count tables, score histograms and the checks computed
from them; it never sees a ledger row, so its size and the time to write it do not grow with
the ledger.

Sheets, in order: Overview, Points, Classing, Fit, Selection, Discrimination, Calibration,
Stability, Cut-offs, Applicant, Settings, Cautions (``SHEET_NAMES``).

Live formulas, so that a reviewer can trace the scorecard from the counts:

- Classing: each bin's bad rate per sample, share of goods, share of bads, WoE and IV
  contribution are formulas over the count cells; totals and the IV are SUM formulas. WoE adds
  the named cell ``EmptyCellAdd`` (0.5) to both counts of a bin with no goods or no bads, and
  divides by the unadjusted totals, as ``scorecard.evidence.woe_values`` does.
- Points: factor = PDO / LN(2) and offset = base − factor · LN(base odds) in named cells; each
  bin's points = ROUND(factor · (β · WoE + β0 / k) + offset / k, decimals), with the WoE taken
  from its cell on Classing.
- Applicant: a drop-down of bins per characteristic, the points found with INDEX/MATCH on
  Points, the score as a SUM and PD = 1 / (1 + EXP((score − offset) / factor)).

Every other figure is a value the tool computed. Every text goes through ``text_cell``, which
stores it as a string, so a label such as ``=1+1`` or ``-5`` is never read as a formula.
"""

from __future__ import annotations

import json
import os
from collections.abc import Sequence
from dataclasses import fields
from pathlib import Path

import pandas as pd
from openpyxl import Workbook
from openpyxl.chart import BarChart, ScatterChart
from openpyxl.utils import get_column_letter
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.datavalidation import DataValidation
from openpyxl.worksheet.worksheet import Worksheet

from ..settings import settings_reference
from ..terms import DEVELOPMENT_NAME, SAMPLE_NAMES
from ..validation import review_flags
from . import CAUTION, REJECT_CAUTION
from .page_kit import NOT_COMPUTED, classed_by, degrees_of_freedom_rule, reference_wording
from .sheet_kit import (
    AUC, CAPTION_ROW, COUNT, FIRST_ROW, Formula, HEADER_ROW, INPUT_FILL, P_VALUE, Placed, RATE, SAMPLE_COLOURS,
    SMALL_P_VALUE, STATISTIC, WOE, as_points, bar_chart, cell_address, count_number_format, fit_widths,
    formula_cell, freeze_header, header_cells, impact_formulas, print_across, range_address, save_workbook,
    scatter_chart, sheet_heading, text_cell, text_sections, value_cell, write_frame, write_pairs,
)

OVERVIEW, POINTS, CLASSING, FIT, SELECTION = "Overview", "Points", "Classing", "Fit", "Selection"
DISCRIMINATION, CALIBRATION, STABILITY, CUTOFFS = "Discrimination", "Calibration", "Stability", "Cut-offs"
FAIRNESS, APPLICANT, SETTINGS, CAUTIONS = "Fairness", "Applicant", "Settings", "Cautions"
SHEET_NAMES = (OVERVIEW, POINTS, CLASSING, FIT, SELECTION, DISCRIMINATION, CALIBRATION, STABILITY, CUTOFFS,
               FAIRNESS, APPLICANT, SETTINGS, CAUTIONS)


SHEET_PURPOSES = {
    OVERVIEW: "the ledger's fingerprint, the samples, headline figures per sample, and this list",
    POINTS: "the points table staff apply; points are formulas from the coefficients, WoE and scaling cells",
    CLASSING: "every characteristic's bins with counts per sample, shares, WoE, IV contributions and IV (formulas)",
    FIT: "coefficients with standard errors, z and p-values; log-likelihood, AIC, BIC; the cost per iteration",
    SELECTION: "the log of every selection decision, the correlations of the WoE columns, and VIFs",
    DISCRIMINATION: "per sample AUC with interval, Gini and KS; gains table; ROC points; charts",
    CALIBRATION: "per sample and score band observed against predicted bad rates with tests; summary tests",
    STABILITY: "score PSI per band against development; PSI and points shift of each model characteristic",
    CUTOFFS: "approvals, declines and bad rates at every candidate cut-off, per sample",
    FAIRNESS: "per protected attribute, each level's approvals at the cut-off and the adverse impact ratio (formulas); "
              "each model characteristic's Cramér's V against each protected attribute",
    APPLICANT: "pick an applicant's bins and see the points, the score and the PD (formulas)",
    SETTINGS: "the settings used, one key per row, with their meaning",
    CAUTIONS: "what this workbook does not replace, the limits of its figures, and this build's notes",
}


EMPTY_CELL_NAME = "EmptyCellAdd"

# the sheet that holds the evidence of each flag (by the report section that shows it)
FLAG_SHEETS = {"characteristics": CLASSING, "fit": FIT, "discrimination": DISCRIMINATION, "calibration": CALIBRATION,
               "stability": STABILITY, "data": CAUTIONS, "selection": SELECTION, "fairness": FAIRNESS}


def write_workbook(build, validation, path: str | os.PathLike[str], *, model_checksum: str = "") -> Path:
    """Write the reviewer's workbook of a build to ``path``.

    The book is saved under a temporary name in the same folder and then renamed into place, so
    a failed run leaves no half-written file.

    Parameters
    ----------
    build : scorecard.build.Build
    validation : scorecard.validation.Validation
        The checks of the same build (``validate_build(build)``).
    path : path-like
        The ``.xlsx`` file to write; its folder is made if needed.
    model_checksum : str
        The checksum of the model file of the same build, shown on the overview sheet.

    Returns
    -------
    pathlib.Path
        ``path``.
    """
    return save_workbook(workbook(build, validation, model_checksum=model_checksum), path)


def workbook(build, validation, *, model_checksum: str = "") -> Workbook:
    """Return the reviewer's workbook of a build, in memory.

    Parameters
    ----------
    build : scorecard.build.Build
    validation : scorecard.validation.Validation

    Returns
    -------
    openpyxl.Workbook
        The sheets of ``SHEET_NAMES``, in that order.
    """
    book = Workbook()
    book.remove(book.active)
    sheets = {name: book.create_sheet(name) for name in SHEET_NAMES}
    counts_format = count_number_format(build.histograms.values())
    woe_cells, names = _classing_sheet(sheets[CLASSING], build, counts_format)
    points_ranges, scaling_names = _points_sheet(sheets[POINTS], build, woe_cells)
    names.update(scaling_names)
    _overview_sheet(sheets[OVERVIEW], build, validation, counts_format, model_checksum)
    _fit_sheet(sheets[FIT], build)
    _selection_sheet(sheets[SELECTION], build)
    _discrimination_sheet(sheets[DISCRIMINATION], validation, counts_format, build.challenger)
    _calibration_sheet(sheets[CALIBRATION], validation, counts_format)
    _stability_sheet(sheets[STABILITY], build, validation, counts_format)
    _cutoffs_sheet(sheets[CUTOFFS], validation, counts_format)
    _fairness_sheet(sheets[FAIRNESS], build, validation, counts_format)
    _applicant_sheet(sheets[APPLICANT], build, points_ranges)
    _settings_sheet(sheets[SETTINGS], build.settings)
    _cautions_sheet(sheets[CAUTIONS], build, validation)
    for name, address in names.items():
        book.defined_names[name] = DefinedName(name, attr_text=address)
    return book


# --------------------------------------------------------------------------------------------
# Classing: counts are values, everything derived from them a formula


def _classing_sheet(sheet: Worksheet, build, counts_format: str) -> tuple[dict[tuple[str, int], str], dict[str, str]]:
    """Write every characteristic's bins.

    Returns the address of each (characteristic, bin position)'s WoE cell, and of the named
    empty-cell addition.
    """
    samples = _samples(build)
    sheet_heading(sheet, "Classing", "Counts per sample are the tool's; shares, WoE, IV and bad rates are "
                                     "formulas over them. WoE and IV are on the development sample.")
    text_cell(sheet, CAPTION_ROW, 1, "Empty-cell addition", bold=True)
    value_cell(sheet, CAPTION_ROW, 2, 0.5)
    text_cell(sheet, CAPTION_ROW, 3, "added to both counts of a bin with no goods or no bads before its WoE is taken "
                                     f"(named cell {EMPTY_CELL_NAME}); the totals are not changed")
    headers = ["Characteristic", "Bin", "In model", *_sample_headers(samples[:1]), "Share of goods", "Share of bads",
               "WoE", "IV contribution", "Note", *_sample_headers(samples[1:])]
    columns = header_cells(sheet, HEADER_ROW, 1, headers)
    in_model = build.scorecard.table.names
    woe_cells = {}
    row = FIRST_ROW
    for char in _classing_order(build):
        block = _ClassingBlock(sheet, columns, samples, row, char, char.name in in_model, counts_format)
        woe_cells.update({(char.name, i): cell_address(CLASSING, r, columns["WoE"]) for i, r in enumerate(block.rows)})
        row = block.total_row + 2
    freeze_header(sheet, columns=2)
    fit_widths(sheet, from_row=HEADER_ROW)
    sheet.column_dimensions["C"].width = 10
    return woe_cells, {EMPTY_CELL_NAME: cell_address(CLASSING, CAPTION_ROW, 2)}


class _ClassingBlock:
    """One characteristic's rows on Classing: a row per bin, then a total row."""

    def __init__(self, sheet, columns, samples, row, char, in_model, counts_format):
        self.sheet, self.columns, self.samples = sheet, columns, samples
        n_bins = len(char.binning.labels)
        self.rows = list(range(row, row + n_bins))
        self.total_row = row + n_bins
        for i, label in enumerate(char.binning.labels):
            self._bin_row(self.rows[i], char, i, label, in_model, counts_format)
        self._total_row(char, in_model, counts_format)

    def _bin_row(self, row, char, i, label, in_model, counts_format):
        sheet, col = self.sheet, self.columns
        text_cell(sheet, row, col["Characteristic"], char.name)
        text_cell(sheet, row, col["Bin"], label)
        text_cell(sheet, row, col["In model"], "yes" if in_model else "")
        for index, sample in self.samples:
            goods, bads = f"Goods ({sample})", f"Bads ({sample})"
            value_cell(sheet, row, col[goods], char.counts.goods(index)[i], number_format=counts_format)
            value_cell(sheet, row, col[bads], char.counts.bads(index)[i], number_format=counts_format)
            formula_cell(sheet, row, col[f"Bad rate ({sample})"], self._bad_rate(row, goods, bads), number_format=RATE)
        g, b, t = self._ref(row, "Goods (development)"), self._ref(row, "Bads (development)"), self.total_row
        total_g, total_b = self._ref(t, "Goods (development)", fixed=True), self._ref(t, "Bads (development)", fixed=True)
        add = f"IF(OR({g}<=0,{b}<=0),{EMPTY_CELL_NAME},0)"
        formula_cell(sheet, row, col["Share of goods"], f"{g}/{total_g}", number_format=RATE)
        formula_cell(sheet, row, col["Share of bads"], f"{b}/{total_b}", number_format=RATE)
        formula_cell(sheet, row, col["WoE"], f"LN((({g}+{add})/{total_g})/(({b}+{add})/{total_b}))", number_format=WOE)
        share_g, share_b, woe = self._ref(row, "Share of goods"), self._ref(row, "Share of bads"), self._ref(row, "WoE")
        formula_cell(sheet, row, col["IV contribution"], f"({share_g}-{share_b})*{woe}", number_format=WOE)
        text_cell(sheet, row, col["Note"], "0.5 added to both counts" if char.evidence.adjusted[i] else "")

    def _total_row(self, char, in_model, counts_format):
        sheet, col, row = self.sheet, self.columns, self.total_row
        text_cell(sheet, row, col["Characteristic"], char.name, bold=True)
        text_cell(sheet, row, col["Bin"], "all bins", bold=True)
        text_cell(sheet, row, col["In model"], "yes" if in_model else "", bold=True)
        for _, sample in self.samples:
            goods, bads = f"Goods ({sample})", f"Bads ({sample})"
            formula_cell(sheet, row, col[goods], self._sum(goods), number_format=counts_format, bold=True)
            formula_cell(sheet, row, col[bads], self._sum(bads), number_format=counts_format, bold=True)
            formula_cell(sheet, row, col[f"Bad rate ({sample})"], self._bad_rate(row, goods, bads),
                         number_format=RATE, bold=True)
        formula_cell(sheet, row, col["Share of goods"], self._sum("Share of goods"), number_format=RATE, bold=True)
        formula_cell(sheet, row, col["Share of bads"], self._sum("Share of bads"), number_format=RATE, bold=True)
        text_cell(sheet, row, col["WoE"], "IV", bold=True)
        formula_cell(sheet, row, col["IV contribution"], self._sum("IV contribution"), number_format=WOE, bold=True)
        flag = "; above the leakage threshold: check it is known when the application is made" if char.evidence.leakage_flag else ""
        text_cell(sheet, row, col["Note"], f"IV {char.evidence.strength}{flag}", bold=True)

    def _ref(self, row, header, *, fixed=False):
        letter = get_column_letter(self.columns[header])
        return f"{letter}${row}" if fixed else f"{letter}{row}"

    def _sum(self, header):
        return f"SUM({self._ref(self.rows[0], header)}:{self._ref(self.rows[-1], header)})"

    def _bad_rate(self, row, goods, bads):
        g, b = self._ref(row, goods), self._ref(row, bads)
        return f'IF({g}+{b}>0,{b}/({g}+{b}),"")'


def _classing_order(build):
    """Model characteristics in model order, then the others by IV, highest first."""
    names = build.scorecard.table.names
    others = sorted((c for c in build.characteristics if c.name not in names), key=lambda c: -c.evidence.iv)
    return [build.characteristic(name) for name in names] + others


def _samples(build) -> list[tuple[int, str]]:
    """(index, name) of the samples the build has rows in, development first."""
    return [(index, name) for index, name in enumerate(SAMPLE_NAMES) if name in build.histograms]


def _sample_headers(samples) -> list[str]:
    return [f"{what} ({name})" for _, name in samples for what in ("Goods", "Bads", "Bad rate")]


# --------------------------------------------------------------------------------------------
# Points: the scaling in named cells, each bin's points a formula


def _points_sheet(sheet: Worksheet, build, woe_cells) -> tuple[dict[str, tuple[int, int]], dict[str, str]]:
    """Write the points table.

    Returns each characteristic's first and last row on the sheet, and the address of each
    named cell of the scaling block.
    """
    table = build.scorecard.table
    points_format = "0" if table.decimals == 0 else "0." + "0" * table.decimals
    sheet_heading(sheet, "Points", "The points staff apply: an applicant's score is the sum of the points of "
                                   "their bins. WoE is the development sample's, taken from Classing.")
    names = _scaling_block(sheet, table, column=11)
    headers = ["Characteristic", "Bin", "Coefficient", "WoE (development)", "Unrounded points", "Points",
               "Reason code", "Reason text"]
    col = header_cells(sheet, HEADER_ROW, 1, headers)
    text_cell(sheet, CAPTION_ROW, 1, "Points table", bold=True)
    ranges, row = {}, FIRST_ROW
    for char in table.characteristics:
        ranges[char.name] = (row, row + len(char.labels) - 1)
        for i, label in enumerate(char.labels):
            woe = woe_cells[(char.name, i)]
            beta = f"C{row}"
            exact = f"ScaleFactor*({beta}*{woe}+ModelIntercept/ModelSize)+ScaleOffset/ModelSize"
            text_cell(sheet, row, col["Characteristic"], char.name)
            text_cell(sheet, row, col["Bin"], label)
            value_cell(sheet, row, col["Coefficient"], char.coefficient, number_format=STATISTIC)
            formula_cell(sheet, row, col["WoE (development)"], woe, number_format=WOE)
            formula_cell(sheet, row, col["Unrounded points"], exact, number_format="0.000")
            formula_cell(sheet, row, col["Points"], f"ROUND({exact},PointsDecimals)", number_format=points_format,
                         bold=True)
            text_cell(sheet, row, col["Reason code"], char.reason_code)
            text_cell(sheet, row, col["Reason text"], char.reason_label)
            row += 1
    freeze_header(sheet, columns=2)
    fit_widths(sheet, from_row=HEADER_ROW)
    return ranges, names


def _scaling_block(sheet: Worksheet, table, *, column: int) -> dict[str, str]:
    """Write the cells the points formulas use by name; return each name's address."""
    scale = table.scaling
    text_cell(sheet, CAPTION_ROW, column, "Scaling and model (named cells)", bold=True)
    header_cells(sheet, HEADER_ROW, column, ["Quantity", "Value", "Name", "How it is found"])
    rows = (
        ("Base score", scale.base_score, "ScaleBaseScore", "settings: scaling.base_score"),
        ("Base odds good:bad", scale.base_odds, "ScaleBaseOdds", "settings: scaling.base_odds"),
        ("Points to double the odds (PDO)", scale.pdo, "ScalePDO", "settings: scaling.pdo"),
        ("Factor", Formula("ScalePDO/LN(2)"), "ScaleFactor", "PDO / ln 2"),
        ("Offset", Formula("ScaleBaseScore-ScaleFactor*LN(ScaleBaseOdds)"), "ScaleOffset",
         "base score − factor × ln(base odds)"),
        ("Intercept β0", table.intercept, "ModelIntercept", "the logistic fit (development)"),
        ("Characteristics in the model k", len(table.characteristics), "ModelSize",
         "β0 and the offset are shared out over k"),
        ("Decimals of points", table.decimals, "PointsDecimals", "settings: scaling.decimals"),
    )
    names = {}
    for row, (label, value, name, how) in enumerate(rows, start=FIRST_ROW):
        text_cell(sheet, row, column, label)
        exact = isinstance(value, Formula) or name == "ModelIntercept"
        value_cell(sheet, row, column + 1, value, number_format="0.000000" if exact else None)
        text_cell(sheet, row, column + 2, name)
        text_cell(sheet, row, column + 3, how)
        names[name] = cell_address(POINTS, row, column + 1)
    text_cell(sheet, FIRST_ROW + len(rows) + 1, column,
              "Points = ROUND(factor × (β × WoE + β0 / k) + offset / k, decimals); PD of a score = "
              "1 / (1 + EXP((score − offset) / factor)).")
    return names


# --------------------------------------------------------------------------------------------
# Applicant: a worked score


def _applicant_sheet(sheet: Worksheet, build, points_ranges) -> None:
    """Write a bin picker per model characteristic, the looked-up points, the score and the PD."""
    table = build.scorecard.table
    points_format = "0" if table.decimals == 0 else "0." + "0" * table.decimals
    sheet_heading(sheet, "Applicant", "Pick the applicant's bin of each characteristic in column B (a drop-down); "
                                      "the points come from the Points sheet.")
    col = header_cells(sheet, HEADER_ROW, 1, ["Characteristic", "Bin of the applicant", "Points"])
    points_column = 6  # 'Points' on the Points sheet
    row = FIRST_ROW
    for char in table.characteristics:
        first, last = points_ranges[char.name]
        labels = range_address(POINTS, first, last, 2)
        text_cell(sheet, row, col["Characteristic"], char.name)
        chosen = text_cell(sheet, row, col["Bin of the applicant"], char.labels[0])
        chosen.fill = INPUT_FILL
        picker = DataValidation(type="list", formula1=labels, allow_blank=False, showErrorMessage=True,
                                errorTitle="Not a bin", error=f"Pick one of the bins of {char.name} listed on Points.")
        sheet.add_data_validation(picker)
        picker.add(chosen.coordinate)
        lookup = f"INDEX({range_address(POINTS, first, last, points_column)},MATCH(B{row},{labels},0))"
        formula_cell(sheet, row, col["Points"], lookup, number_format=points_format)
        row += 1
    last_points = row - 1
    text_cell(sheet, row, 1, "Score", bold=True)
    formula_cell(sheet, row, col["Points"], f"SUM(C{FIRST_ROW}:C{last_points})", number_format=points_format, bold=True)
    text_cell(sheet, row + 1, 1, "PD (probability of default)", bold=True)
    formula_cell(sheet, row + 1, col["Points"], f"1/(1+EXP((C{row}-ScaleOffset)/ScaleFactor))", number_format="0.00%",
                 bold=True)
    text_cell(sheet, row + 1, 4, "1 / (1 + EXP((score − offset) / factor)), with offset and factor from Points")
    freeze_header(sheet)
    fit_widths(sheet, from_row=HEADER_ROW)


# --------------------------------------------------------------------------------------------
# Overview


def _overview_sheet(sheet: Worksheet, build, validation, counts_format: str, model_checksum: str = "") -> None:
    settings = build.settings
    title = settings.report.title + (f" — {settings.report.lender}" if settings.report.lender else "")
    sheet_heading(sheet, title, f"The reviewer's workbook of the scorecard built from {build.source}. "
                                "Every figure says which sample it is on.")
    fingerprint = build.fingerprint
    pairs = [("Ledger", build.source), ("Rows", fingerprint.n_rows), ("SHA-256", fingerprint.sha256),
             ("Fingerprint of", fingerprint.of)]
    if model_checksum:  # the set's proof of belonging together: model.json records the same checksum
        pairs.append(("Model file checksum", model_checksum))
    row = write_pairs(sheet, pairs, row=CAPTION_ROW + 1, caption="Ledger", formats={"Rows": COUNT})
    samples = build.samples.reset_index(names="sample")
    samples.columns = [str(name).capitalize() for name in samples.columns]
    placed = write_frame(sheet, samples, row=row + 2, caption="Samples",
                         formats={**dict.fromkeys(("Rows", "Good", "Bad", "Indeterminate", "Unknown"), counts_format),
                                  "Bad rate": RATE})
    headline = _headline_frame(build, validation)
    placed = write_frame(sheet, headline, row=placed.last_row + 3, caption="Headline figures per sample",
                         formats={"Goods": counts_format, "Bads": counts_format, "Bad rate": RATE, "AUC": AUC,
                                  "AUC lower": AUC, "AUC upper": AUC, "Gini": AUC, "KS": AUC, "Brier score": STATISTIC,
                                  "Hosmer–Lemeshow p-value": P_VALUE, "Score PSI against development": STATISTIC})
    row = _model_pairs(sheet, build, placed.last_row + 2)
    flags = review_flags(build, validation)
    found = pd.DataFrame([{"Flag": flag.kind, "What was found": flag.text, "Sheet": FLAG_SHEETS[flag.section]}
                          for flag in flags], columns=["Flag", "What was found", "Sheet"])
    placed = write_frame(sheet, found, row=row + 2, caption="For the reviewer: every flag this build raised"
                                                           + ("" if flags else ": none"))
    contents = pd.DataFrame({"Sheet": list(SHEET_PURPOSES), "What it holds": list(SHEET_PURPOSES.values())})
    write_frame(sheet, contents, row=max(placed.last_row, placed.header_row) + 3, caption="What each sheet holds")
    sheet.freeze_panes = "A3"
    print_across(sheet)
    fit_widths(sheet, from_row=CAPTION_ROW, maximum=70)


def _headline_frame(build, validation) -> pd.DataFrame:
    rows = []
    for sample in build.histograms:
        checks = validation.samples.get(sample)
        stability = validation.score_stability.get(sample)
        rows.append({
            "Sample": sample,
            "Goods": checks.goods if checks else None, "Bads": checks.bads if checks else None,
            "Bad rate": checks.bad_rate if checks else None,
            "AUC": checks.auc.auc if checks else None, "AUC lower": checks.auc.lower if checks else None,
            "AUC upper": checks.auc.upper if checks else None, "Gini": checks.auc.gini if checks else None,
            "KS": checks.ks.statistic if checks else None, "Brier score": checks.brier if checks else None,
            "Hosmer–Lemeshow p-value": checks.hosmer_lemeshow.p_value if checks and checks.hosmer_lemeshow else None,
            "Score PSI against development": stability.value if stability else None,
            "PSI status": stability.status if stability else "",
            "Not computed": "; ".join([*((f"{NOT_COMPUTED}: {validation.not_computed[sample]}",)
                                         if sample in validation.not_computed else ()),
                                       *(checks.notes if checks else ())]),
        })
    return pd.DataFrame(rows)


def _model_pairs(sheet: Worksheet, build, row: int) -> int:
    table = build.scorecard.table
    scale = table.scaling
    pairs = [
        ("Characteristics in the model", len(table.characteristics)),
        ("Which", ", ".join(table.names)),
        ("Base score", scale.base_score), ("Base odds good:bad", scale.base_odds), ("Points to double the odds", scale.pdo),
        ("Lowest possible score", table.min_score), ("Highest possible score", table.max_score),
        ("Intercept β0 (development)", table.intercept),
        ("Fit converged", "yes" if build.selection.fit.converged else "no — see Fit"),
    ]
    return write_pairs(sheet, pairs, row=row, caption="The model", formats={"Intercept β0 (development)": STATISTIC})


# --------------------------------------------------------------------------------------------
# Fit and selection


def _fit_sheet(sheet: Worksheet, build) -> None:
    fit = build.selection.fit
    sheet_heading(sheet, "Fit", "The logistic fit of the log-odds of good:bad on the WoE of the chosen "
                                "characteristics, on the development sample.")
    coefficients = pd.DataFrame({"Name": fit.names, "Coefficient": fit.coefficients, "Std error": fit.std_errors,
                                 "z": fit.z_values, "p-value": fit.p_values})
    placed = write_frame(sheet, coefficients, caption="Coefficients",
                         formats={"Coefficient": STATISTIC, "Std error": STATISTIC, "z": "0.00", "p-value": SMALL_P_VALUE})
    statistics = pd.DataFrame({"Quantity": ["Log-likelihood", "Deviance", "AIC", "BIC", "Observations (weight)",
                                            "Iterations", "Converged", "Solver", "Ridge penalty (l2)"],
                               "Value": [fit.log_likelihood, fit.deviance, fit.aic, fit.bic, fit.n_observations,
                                         fit.iterations, "yes" if fit.converged else "no", fit.solver, fit.l2]})
    statistics_at = placed.columns["p-value"] + 2
    write_frame(sheet, statistics, column=statistics_at, caption="Fit statistics", formats={"Value": "#,##0.0000"})
    trace = pd.DataFrame({"Iteration": range(len(fit.cost_trace)), "Cost": fit.cost_trace})
    write_frame(sheet, trace, column=statistics_at + 3, caption="Cost per iteration (penalised negative "
                "log-likelihood per unit weight)", formats={"Cost": "0.0000000000"})
    freeze_header(sheet)
    fit_widths(sheet)


def _selection_sheet(sheet: Worksheet, build) -> None:
    selection = build.selection
    sheet_heading(sheet, "Selection", "Every decision of the characteristic selection, in order, on the development "
                                      "sample; correlations are weighted Pearson correlations of the WoE columns.")
    log = selection.to_frame()
    log.columns = ["Step", "Characteristic", "Action", "Reason", "Value"]
    placed = write_frame(sheet, log, caption="Decision log", formats={"Value": SMALL_P_VALUE})
    correlations = selection.correlations.reset_index(names="Characteristic")
    column = placed.columns["Value"] + 2
    matrix = write_frame(sheet, correlations, column=column, caption="Correlations of the WoE columns",
                         formats={str(name): "0.000" for name in selection.correlations.columns})
    vif = pd.DataFrame({"Characteristic": list(selection.vif), "VIF": list(selection.vif.values())})
    placed = write_frame(sheet, vif, column=max(matrix.columns.values()) + 2, caption="Variance inflation (model)",
                         formats={"VIF": "0.000"})
    log = pd.DataFrame([{"Characteristic": c.name, "Classing": classed_by(c).split(" (")[0], "IV": c.evidence.iv,
                         "IV of the tool's proposal": c.proposal_iv,
                         "Change in IV": c.evidence.iv - c.proposal_iv if c.proposal_iv is not None else None,
                         "The analyst's note": build.settings.characteristic(c.name).note}
                        for c in _classing_order(build)])
    write_frame(sheet, log, column=max(placed.columns.values()) + 2,
                caption="Who classed each characteristic: the tool's proposal, changed by the analyst, or written by the analyst",
                formats={"IV": WOE, "IV of the tool's proposal": WOE, "Change in IV": WOE})
    freeze_header(sheet)
    fit_widths(sheet, maximum=90)


# --------------------------------------------------------------------------------------------
# Discrimination, calibration, stability, cut-offs


CHALLENGER_COLUMNS = ["Sample", "Scorecard AUC", "Scorecard std error", "Challenger AUC", "Challenger std error",
                      "Difference", "Std error of the difference", "z", "p-value"]


def _discrimination_sheet(sheet: Worksheet, validation, counts_format: str, challenger=None) -> None:
    sheet_heading(sheet, "Discrimination", "AUC (DeLong interval), Gini and KS per sample; score bands fixed on the "
                                           "development sample, riskiest first.")
    summary = pd.DataFrame([{
        "Sample": name, "Goods": s.goods, "Bads": s.bads, "AUC": s.auc.auc, "AUC std error": s.auc.std_error,
        "AUC lower": s.auc.lower, "AUC upper": s.auc.upper, "Level": s.auc.level, "Gini": s.auc.gini,
        "Gini lower": s.auc.gini_lower, "Gini upper": s.auc.gini_upper, "KS": s.ks.statistic, "KS at score": s.ks.score,
    } for name, s in validation.samples.items()])
    placed = write_frame(sheet, summary, caption="Per sample",
                         formats={"Goods": counts_format, "Bads": counts_format, "Level": "0%",
                                  **dict.fromkeys(("AUC", "AUC std error", "AUC lower", "AUC upper", "Gini",
                                                   "Gini lower", "Gini upper", "KS"), AUC)})
    gains = write_frame(sheet, _gains_frame(validation), column=placed.columns["KS at score"] + 2,
                        caption="Gains table", formats=_band_formats(counts_format))
    roc_frame = pd.concat([s.roc.to_frame().assign(sample=name) for name, s in validation.samples.items()])
    roc_frame = roc_frame[["sample", "cutoff", "goods_declined", "bads_declined"]]
    roc_frame.columns = ["Sample", "Decline at or below", "Goods declined", "Bads declined"]
    roc = write_frame(sheet, roc_frame, column=max(gains.columns.values()) + 2, caption="ROC points",
                      formats={"Goods declined": RATE, "Bads declined": RATE})
    chance = write_frame(sheet, pd.DataFrame({"x": [0.0, 1.0], "y": [0.0, 1.0]}), column=max(roc.columns.values()) + 2,
                         caption="Chance line")
    if challenger is not None:
        _challenger_table(sheet, challenger, column=max(chance.columns.values()) + 2)
    anchor_row = placed.last_row + 3
    sheet.add_chart(_roc_chart(roc, chance, roc_frame["Sample"].tolist()), f"A{anchor_row}")
    sheet.add_chart(_distribution_chart(gains, validation), f"A{anchor_row + 20}")
    freeze_header(sheet)
    fit_widths(sheet)


def _challenger_table(sheet: Worksheet, challenger, *, column: int) -> None:
    """The scorecard against the challenger per sample; difference, z and p as live formulas over the AUCs and the
    paired standard error (DeLong's, with the covariance of the two scores on the same rows)."""
    letter = {name: get_column_letter(column + i) for i, name in enumerate(CHALLENGER_COLUMNS)}
    rows = []
    for offset, (name, c) in enumerate(challenger.comparisons.items()):
        row = HEADER_ROW + 1 + offset
        cell = {key: f"{letter[key]}{row}" for key in letter}
        rows.append({"Sample": name, "Scorecard AUC": c.scorecard.auc, "Scorecard std error": c.scorecard.std_error,
                     "Challenger AUC": c.challenger.auc, "Challenger std error": c.challenger.std_error,
                     "Difference": Formula(f"{cell['Challenger AUC']}-{cell['Scorecard AUC']}"),
                     "Std error of the difference": c.paired.std_error,
                     "z": Formula(f"{cell['Difference']}/{cell['Std error of the difference']}"),
                     "p-value": Formula(f"2*(1-NORMSDIST(ABS({cell['z']})))")})
    frame = pd.DataFrame(rows, columns=CHALLENGER_COLUMNS, dtype=object)
    write_frame(sheet, frame, column=column, caption="Against the challenger (fine bins, every candidate; DeLong paired)",
                formats={"z": "0.00", "p-value": SMALL_P_VALUE,
                         **dict.fromkeys(CHALLENGER_COLUMNS[1:7], AUC)})


def _gains_frame(validation) -> pd.DataFrame:
    labels = validation.band_names
    parts = []
    for name, s in validation.samples.items():
        frame = s.gains.to_frame()
        frame.insert(0, "sample", name)
        frame.insert(2, "scores", [labels[band] for band in frame["band"]])
        frame["share_goods"] = frame["goods"] / frame["goods"].sum()
        frame["share_bads"] = frame["bads"] / frame["bads"].sum()
        parts.append(frame)
    gains = pd.concat(parts, ignore_index=True)
    gains.columns = ["Sample", "Band", "Scores", "Lowest score", "Highest score", "Count", "Goods", "Bads", "Bad rate",
                     "Cumulative share of all", "Cumulative share of goods", "Cumulative share of bads", "Lift",
                     "Share of goods", "Share of bads"]
    return gains


def _band_formats(counts_format: str) -> dict[str, str]:
    rates = ("Bad rate", "Cumulative share of all", "Cumulative share of goods", "Cumulative share of bads",
             "Share of goods", "Share of bads", "Observed bad rate", "Mean PD", "Jeffreys lower", "Jeffreys upper")
    return {**dict.fromkeys(("Count", "Goods", "Bads", "Expected bads"), counts_format), **dict.fromkeys(rates, RATE),
            "Lift": "0.00", **dict.fromkeys(("Binomial p (two-sided), unadjusted", "Binomial p (more bads), unadjusted",
                                             "Jeffreys p", "Holm-adjusted p (two-sided, the sample's family)"), P_VALUE)}


def _sample_rows(placed: Placed, samples: Sequence[str], sample: str) -> tuple[int, int]:
    """First and last sheet row of one sample in a table with a 'Sample' column."""
    positions = [i for i, name in enumerate(samples) if name == sample]
    return placed.first_row + positions[0], placed.first_row + positions[-1]


def _roc_chart(roc: Placed, chance: Placed, samples: list[str]) -> ScatterChart:
    series = []
    for sample in dict.fromkeys(samples):
        first, last = _sample_rows(roc, samples, sample)
        series.append((sample, roc.reference("Goods declined", first, last), roc.reference("Bads declined", first, last)))
    series.append(("chance", chance.reference("x"), chance.reference("y")))
    chart = scatter_chart("ROC: share of bads against share of goods declined", "share of goods declined",
                          "share of bads declined", series)
    for drawn, colour in zip(chart.series, (*SAMPLE_COLOURS[:len(series) - 1], "9A9A9A")):
        drawn.graphicalProperties.line.solidFill = colour
    chart.x_axis.scaling.min = chart.y_axis.scaling.min = 0
    chart.x_axis.scaling.max = chart.y_axis.scaling.max = 1
    return chart


def _distribution_chart(gains: Placed, validation) -> BarChart:
    samples = [name for name, s in validation.samples.items() for _ in range(len(s.gains.band))]
    first, last = _sample_rows(gains, samples, DEVELOPMENT_NAME)
    return bar_chart("Score distribution by outcome (development)", "score band", "share of the outcome's rows",
                     gains.reference("Scores", first, last),
                     [("goods", gains.reference("Share of goods", first, last)),
                      ("bads", gains.reference("Share of bads", first, last))])


def _calibration_sheet(sheet: Worksheet, validation, counts_format: str) -> None:
    sheet_heading(sheet, "Calibration", "Observed against predicted bad rates per score band and sample (bands "
                                        "fixed on development); the PD of a score comes from the scaling.")
    summary = write_frame(sheet, _calibration_summary(validation), caption="Per sample",
                          formats={"Observed bad rate": RATE, "Expected bad rate": RATE, "Brier score": STATISTIC,
                                   **dict.fromkeys(("Hosmer–Lemeshow", "Calibration z", "Intercept", "Slope",
                                                    "Intercept std error", "Slope std error"), STATISTIC),
                                   **dict.fromkeys(("Hosmer–Lemeshow p-value", "p (two-sided)", "p (more bads)",
                                                    "Smallest Holm-adjusted p", "p (intercept = 0)", "p (slope = 1)"),
                                                   P_VALUE)})
    labels = validation.band_names
    parts = []
    for name, s in validation.samples.items():
        frame = s.calibration.to_frame()
        frame.insert(0, "sample", name)
        frame.insert(2, "scores", [labels[band] for band in frame["band"]])
        adjusted = {test.test: test.adjusted_p_value for test in s.calibration_tests}
        frame["holm"] = [adjusted[f"band {labels[band]}"] for band in frame["band"]]
        parts.append(frame)
    bands_frame = pd.concat(parts, ignore_index=True)
    bands_frame.columns = ["Sample", "Band", "Scores", "Lowest score", "Highest score", "Count", "Goods", "Bads",
                           "Observed bad rate", "Mean PD", "Expected bads", "Binomial p (two-sided), unadjusted",
                           "Binomial p (more bads), unadjusted", "Jeffreys p", "Jeffreys lower", "Jeffreys upper",
                           "Holm-adjusted p (two-sided, the sample's family)"]
    bands = write_frame(sheet, bands_frame, column=max(summary.columns.values()) + 2,
                        caption="Per score band (Jeffreys interval of the bad rate)", formats=_band_formats(counts_format))
    top = max([0.0, *bands_frame["Observed bad rate"].dropna(), *bands_frame["Mean PD"].dropna()])
    line = write_frame(sheet, pd.DataFrame({"x": [0.0, top], "y": [0.0, top]}), column=max(bands.columns.values()) + 2,
                       caption="Perfect calibration")
    samples = bands_frame["Sample"].tolist()
    series = []
    for sample in dict.fromkeys(samples):
        first, last = _sample_rows(bands, samples, sample)
        series.append((sample, bands.reference("Mean PD", first, last), bands.reference("Observed bad rate", first, last)))
    series.append(("observed = predicted", line.reference("x"), line.reference("y")))
    chart = scatter_chart("Observed against predicted bad rate per score band", "predicted (mean PD)",
                          "observed bad rate", series)
    for drawn, colour in zip(chart.series[:-1], SAMPLE_COLOURS):
        as_points(drawn, colour)
    sheet.add_chart(chart, f"A{summary.last_row + 3}")
    freeze_header(sheet)
    fit_widths(sheet)


def _calibration_summary(validation) -> pd.DataFrame:
    rows = []
    for name, s in validation.samples.items():
        hl, large, line = s.hosmer_lemeshow, s.in_the_large, s.calibration_line
        rows.append({
            "Sample": name, "Hosmer–Lemeshow": hl.statistic if hl else NOT_COMPUTED,
            "Degrees of freedom": hl.df if hl else None,
            "Degrees of freedom, why": (degrees_of_freedom_rule(hl) if hl
                                        else s.not_computed.get("Hosmer–Lemeshow test", "")),
            "Hosmer–Lemeshow p-value": hl.p_value if hl else None, "Observed bad rate": large.observed_rate,
            "Expected bad rate": large.expected_rate, "Calibration z": large.z, "p (two-sided)": large.p_two_sided,
            "p (more bads)": large.p_excess,
            "Smallest Holm-adjusted p": min(test.adjusted_p_value for test in s.calibration_tests),
            "Intercept": line.intercept if line else NOT_COMPUTED, "Slope": line.slope if line else NOT_COMPUTED,
            "Intercept std error": line.intercept_std_error if line else None,
            "Slope std error": line.slope_std_error if line else None,
            "p (intercept = 0)": line.intercept_p_value if line else None,
            "p (slope = 1)": line.slope_p_value if line else None, "Brier score": s.brier,
        })
    for name, why in validation.not_computed.items():
        rows.append({"Sample": name, "Hosmer–Lemeshow": NOT_COMPUTED, "Degrees of freedom, why": why})
    return pd.DataFrame(rows)


def _stability_sheet(sheet: Worksheet, build, validation, counts_format: str) -> None:
    checks = build.settings.checks
    sheet_heading(sheet, "Stability", f"Each other sample against development. Status: ok below {checks.psi_watch:g}, "
                                      f"watch from {checks.psi_watch:g}, act from {checks.psi_act:g} (PSI).")
    summary_frame = pd.DataFrame(
        [{"Sample": name, "Score PSI": result.value, "Status": result.status,
          "Bands with 0.5 added": ", ".join(result.adjusted_labels)} for name, result in validation.score_stability.items()],
        columns=["Sample", "Score PSI", "Status", "Bands with 0.5 added"])
    summary = write_frame(sheet, summary_frame, caption="Score PSI", formats={"Score PSI": STATISTIC})
    bands_frame = pd.concat([result.to_frame().assign(sample=name) for name, result in validation.score_stability.items()]
                            or [pd.DataFrame(columns=["bin", "expected_count", "actual_count", "expected_share",
                                                      "actual_share", "contribution", "adjusted", "sample"])])
    bands_frame = bands_frame[["sample", "bin", "expected_count", "actual_count", "expected_share", "actual_share",
                               "contribution", "adjusted"]]
    bands_frame["adjusted"] = ["0.5 added" if flag else "" for flag in bands_frame["adjusted"]]
    bands_frame.columns = ["Sample", "Scores", "Count (development)", "Count (sample)", "Share (development)",
                           "Share (sample)", "PSI contribution", "Empty-cell addition"]
    bands = write_frame(sheet, bands_frame, column=max(summary.columns.values()) + 2, caption="Score PSI per band",
                        formats={"Count (development)": counts_format, "Count (sample)": counts_format,
                                 "Share (development)": RATE, "Share (sample)": RATE, "PSI contribution": STATISTIC})
    write_frame(sheet, _characteristic_stability_frame(validation), column=max(bands.columns.values()) + 2,
                caption="Model characteristics: PSI over their bins and points shift",
                formats={"PSI": STATISTIC, "Mean points (development)": "0.00", "Mean points (sample)": "0.00",
                         "Points shift": "0.00", "Missing share (development)": RATE, "Missing share (sample)": RATE})
    if not validation.score_stability:
        text_cell(sheet, FIRST_ROW, 1, "no other sample than development: nothing to compare")
    freeze_header(sheet)
    fit_widths(sheet)


def _characteristic_stability_frame(validation) -> pd.DataFrame:
    rows = [{
        "Sample": name, "Characteristic": c.characteristic, "PSI": c.psi.value, "Status": c.psi.status,
        "Mean points (development)": c.shift.expected_mean, "Mean points (sample)": c.shift.actual_mean,
        "Points shift": c.shift.shift, "Missing share (development)": c.missing_share_development,
        "Missing share (sample)": c.missing_share_other,
    } for name, items in validation.characteristic_stability.items() for c in items]
    return pd.DataFrame(rows, columns=["Sample", "Characteristic", "PSI", "Status", "Mean points (development)",
                                       "Mean points (sample)", "Points shift", "Missing share (development)",
                                       "Missing share (sample)"])


def _cutoffs_sheet(sheet: Worksheet, validation, counts_format: str) -> None:
    sheet_heading(sheet, "Cut-offs", "Applications scoring at or above a cut-off are approved; per sample, every "
                                     "candidate cut-off.")
    frame = pd.concat([s.cutoffs.to_frame().assign(sample=name) for name, s in validation.samples.items()])
    frame = frame[["sample", "cutoff", "approval_rate", "approved_bad_rate", "goods_approved", "goods_declined",
                   "bads_approved", "bads_declined", "bads_declined_share"]]
    frame.columns = ["Sample", "Cut-off", "Approval rate", "Bad rate of the approved", "Goods approved",
                     "Goods declined", "Bads approved", "Bads declined", "Share of bads declined"]
    write_frame(sheet, frame, caption="Candidate cut-offs",
                formats={"Approval rate": RATE, "Bad rate of the approved": RATE, "Share of bads declined": RATE,
                         **dict.fromkeys(("Goods approved", "Goods declined", "Bads approved", "Bads declined"),
                                         counts_format)})
    freeze_header(sheet)
    fit_widths(sheet)


IMPACT_COLUMNS = ["Attribute", "Level", "Applications", "Approved", "Approval rate", "Rate if it may be the reference",
                  "Ratio to the reference", "Under the guide", "Goods approved", "Bads approved", "Bad rate among approved"]


def _fairness_sheet(sheet: Worksheet, build, validation, counts_format: str) -> None:
    """Each protected attribute's levels at the cut-off, the rates and ratios as formulas; the proxies beside them."""
    fairness = validation.fairness
    guide = build.settings.fairness.impact_ratio
    if fairness is None:
        sheet_heading(sheet, "Fairness", "No protected attribute is declared in the settings (use = \"protected\"), "
                                         "so no proxy or adverse-impact check was made.")
        write_frame(sheet, pd.DataFrame(columns=IMPACT_COLUMNS), caption="Adverse impact at the cut-off")
        text_cell(sheet, FIRST_ROW, 1, "none: no protected attribute declared")
        freeze_header(sheet)
        fit_widths(sheet)
        return
    sheet_heading(sheet, "Fairness", f"Approvals at the cut-off {fairness.cutoff:g} ({fairness.cutoff_source}), "
                                     f"{fairness.sample} sample. Approval rate, ratio to the reference level and the "
                                     f"bad rate are formulas; a ratio under {guide:g} is marked (the four-fifths rule of "
                                     "thumb: common practice, no source; a guide, not a verdict). "
                                     + reference_wording(build.settings.fairness.reference_share))
    letter = {name: get_column_letter(i + 1) for i, name in enumerate(IMPACT_COLUMNS)}
    rows, row = [], FIRST_ROW
    for attribute, impact in fairness.impacts.items():
        first, last = row, row + len(impact.levels) - 1
        for level, applications, approved, goods, bads in zip(impact.levels, impact.applications, impact.approved,
                                                              impact.goods_approved, impact.bads_approved):
            cell = {name: f"{letter[name]}{row}" for name in letter}
            rows.append({
                "Attribute": attribute, "Level": level, "Applications": applications, "Approved": approved,
                **impact_formulas(cell, letter, first, last, build.settings.fairness.reference_share, guide),
                "Goods approved": goods, "Bads approved": bads,
                "Bad rate among approved": Formula(f'IF({cell["Goods approved"]}+{cell["Bads approved"]}>0,'
                                                   f'{cell["Bads approved"]}/({cell["Goods approved"]}+{cell["Bads approved"]}),"")'),
            })
            row += 1
    frame = pd.DataFrame(rows, columns=IMPACT_COLUMNS, dtype=object)
    placed = write_frame(sheet, frame, caption="Adverse impact at the cut-off",
                         formats={"Applications": counts_format, "Approved": counts_format, "Approval rate": RATE,
                                  "Rate if it may be the reference": RATE, "Ratio to the reference": "0.000",
                                  "Goods approved": counts_format,
                                  "Bads approved": counts_format, "Bad rate among approved": RATE})
    proxies = pd.DataFrame([{"Model characteristic": p.characteristic, "Protected attribute": p.attribute,
                             "Cramér's V": p.cramers_v, "Flag": "proxy" if p.flagged else ""} for p in fairness.proxies],
                           columns=["Model characteristic", "Protected attribute", "Cramér's V", "Flag"])
    write_frame(sheet, proxies, column=max(placed.columns.values()) + 2,
                caption=f"Proxies: Cramér's V on the development sample, flagged above "
                        f"{build.settings.fairness.proxy_cramers_v:g}", formats={"Cramér's V": "0.000"})
    freeze_header(sheet, columns=2)
    fit_widths(sheet)


# --------------------------------------------------------------------------------------------
# Settings and cautions


def _settings_sheet(sheet: Worksheet, settings) -> None:
    sheet_heading(sheet, "Settings", "The settings this build used, one key per row; the characteristics' "
                                     "classing is written out, so the build can be repeated from them.")
    write_frame(sheet, _settings_frame(settings), caption="Settings used")
    freeze_header(sheet)
    fit_widths(sheet, maximum=80)


def _settings_frame(settings) -> pd.DataFrame:
    reference = {key: (default, meaning) for key, default, meaning in settings_reference()}
    rows = []
    for key, (default, meaning) in reference.items():
        if key.startswith("characteristics.NAME."):
            continue
        section, name = key.split(".", 1)
        rows.append((key, _setting_text(getattr(getattr(settings, section), name)), default, meaning))
    for name, spec in settings.characteristics.items():
        for key, value in _keys(spec, "characteristics.NAME"):
            default, meaning = reference[key]
            rows.append((key.replace(".NAME.", f".{name}.", 1), _setting_text(value), default, meaning))
    return pd.DataFrame(rows, columns=["Key", "Value", "Default", "Meaning"])


def _keys(spec, prefix: str):
    """(reference key, value) of every key a characteristic's settings hold, its proposal's keys one by one."""
    for spec_field in fields(spec):
        value = getattr(spec, spec_field.name)
        if value is None:
            continue
        if spec_field.name == "proposal":
            yield from _keys(value, f"{prefix}.proposal")
        else:
            yield f"{prefix}.{spec_field.name}", value


def _setting_text(value) -> str:
    """A settings value as the reference table shows defaults: 20 not 20.0, "text" quoted, [lists]."""
    if isinstance(value, (tuple, list)):
        return "[" + ", ".join(_setting_text(item) for item in value) + "]"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return json.dumps(value, ensure_ascii=False, default=str)  # TOML and JSON agree on these forms


LIMITS = (
    "The development sample is the one the model was fitted on: its figures flatter the model. Judge it on the "
    "hold-out and out-of-time samples.",
    "WoE, points and score bands are fixed on the development sample; every other sample is cut the same way.",
    "A bin with no goods or no bads had 0.5 added to both its counts so that its WoE stays finite (Classing, "
    "column 'Note').",
    "The p-values assume outcomes independent of one another. Each band's binomial p-values are shown unadjusted "
    "and, beside them, Holm-adjusted over the sample's family of calibration tests (in the large, Hosmer–Lemeshow, "
    "every band), as monitoring judges them.",
    "The PSI statuses ok, watch and act use thresholds of common practice, not a statistical test.",
    "The spreadsheet's ROUND rounds halves away from zero, the tool halves to even: a bin whose unrounded points end "
    "in exactly .5 would differ by one point ('Unrounded points' on Points shows it).",
    "The Applicant sheet's look-up ignores the difference between upper and lower case and treats * ? ~ in a bin "
    "label as wildcards; the scorecard itself does neither.",
)


def _cautions_sheet(sheet: Worksheet, build, validation) -> None:
    sheet_heading(sheet, "Cautions", "What this workbook does not replace, the limits of its figures, and the notes "
                                     "of this build.")
    inference = [] if build.rejects is None else [("Reject inference", [
        f"The scorecard was fitted with the rejected applications' outcomes inferred by {build.rejects.inferred.method} "
        f"(in-time rejects' inferred bad rate {build.rejects.inferred.bad_rate:.2%}); the report's section on reject "
        "inference sets it beside the accepted-only scorecard.", REJECT_CAUTION])]
    text_sections(sheet, [("Caution", [CAUTION]), *inference, ("Limits of these figures", LIMITS),
                          ("Notes of this build", _build_notes(build, validation))], first_row=CAPTION_ROW + 1)


def _build_notes(build, validation) -> list[str]:
    notes = [*build.notes, *(note for s in validation.samples.values() for note in s.notes)]
    if not build.selection.fit.converged:
        notes.append("The logistic fit did not meet its stopping rule; see Fit.")
    return notes or ["none"]
