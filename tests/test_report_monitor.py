"""Tests of scorecard/report/monitor_html.py and monitor_workbook.py: the monitoring deliverables.

A small seeded model is built on an invented ledger (income, enquiries and housing drive the
outcome), then checked on a drifted ledger of two quarters: in 2025Q1 incomes moved up (act on
income and on the score), in 2025Q2 bads doubled (act on calibration). Some applicants of the
drifted ledger give housing levels never seen at build time, one named ``<b>x</b>`` to attack the
page and one ``=1+1`` to attack the workbook. The same applications without outcomes, and
without dates, give the other shapes of report.
"""

from __future__ import annotations

import io
import math
import os
import re
import shutil
import subprocess
import warnings

import openpyxl
import pandas as pd
import pytest

from scorecard.build import build_scorecard
from scorecard.cli import main
from scorecard.commands import monitoring_settings
from scorecard.intake import fingerprint_of, prepare_ledger
from scorecard.modelfile import load_model, model_document, save_model
from scorecard.monitor import STATUSES, WHAT_TO_DO, driving_checks, monitor_ledger
from scorecard.report import CAUTION
from scorecard.report.monitor_page import figure_text, render_monitor, write_monitor
from scorecard.report.monitor_sheets import monitor_workbook, sheet_names, write_monitor_workbook
from scorecard.settings import Settings

import ledgers  # tests/ledgers.py: the invented process these tests monitor
import pages  # tests/pages.py: reading the reports
import spreadsheet  # tests/spreadsheet.py: the LibreOffice recalculation

N_DEVELOPMENT = 8_000
N_QUARTER = 2_500
HOSTILE_LEVEL = "<b>x</b>"
FORMULA_LEVEL = "=1+1"
EXTERNAL = re.compile(r"https?:|src=\"//|@import|url\(", re.IGNORECASE)
BROWSER_SECONDS = 120
MIN_PDF_BYTES = 20_000  # a browser's PDF of this page is tens of kilobytes; a failed print is far smaller
# LibreOffice writes 15 significant digits; LN and a sum of ten terms agree far better than this.
RECALC_RTOL = 1e-9
RECALC_ATOL = 1e-12  # a contribution of exactly 0 has no relative scale
NORMAL_RTOL = 1e-7  # two implementations of the normal distribution function agree to about this


def _drifted() -> pd.DataFrame:
    first = ledgers.monitor_frame(N_QUARTER, 3, shift=0.5, start="2025-01-01")
    second = ledgers.monitor_frame(N_QUARTER, 4, bad_factor=2.0, start="2025-04-01")
    frame = pd.concat([first, second], ignore_index=True)
    frame.loc[:6, "housing"] = HOSTILE_LEVEL
    frame.loc[7:9, "housing"] = FORMULA_LEVEL
    return frame


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("monitor-report")


@pytest.fixture(scope="module")
def saved(folder):
    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)},
                                  ledger={"date_column": "date"}, report={"title": "Invented <loans>"})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # classing notes; not under test here
        build = build_scorecard(ledgers.monitor_frame(N_DEVELOPMENT, 1, days=360), settings)
    path = save_model(model_document(build), folder / "model.json")
    return load_model(path), path


def _monitored(saved, frame, folder, name):
    """Monitor a frame as the command does (through a CSV file, so it has a fingerprint)."""
    path = folder / name
    frame.to_csv(path, index=False)
    model, _ = saved
    read = pd.read_csv(path)
    ledger = prepare_ledger(read, monitoring_settings(model.settings, read), source=name,
                            fingerprint=fingerprint_of(path, len(read)), require_outcome=False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        result = monitor_ledger(model, read, ledger.outcome, ledger.weight, ledger.dates, source=name)
    return result, ledger.fingerprint, path


@pytest.fixture(scope="module")
def drifted(saved, folder):
    return _monitored(saved, _drifted(), folder, "drifted.csv")


@pytest.fixture(scope="module")
def no_outcomes(saved, folder):
    return _monitored(saved, _drifted().drop(columns="outcome"), folder, "pending.csv")


@pytest.fixture(scope="module")
def undated(saved, folder):
    return _monitored(saved, _drifted().drop(columns="date"), folder, "undated.csv")


def _page(saved, monitored) -> str:
    result, fingerprint, _ = monitored
    return render_monitor(result, saved[0], model_path=saved[1], ledger_fingerprint=fingerprint, generated_by="pytest")


@pytest.fixture(scope="module")
def page(saved, drifted):
    return _page(saved, drifted)


@pytest.fixture(scope="module")
def book(saved, drifted):
    result, fingerprint, _ = drifted
    return monitor_workbook(result, saved[0], model_path=saved[1], ledger_fingerprint=fingerprint)




# --------------------------------------------------------------------------------------------
# The page leads with the status


def test_the_drifted_ledger_is_act_on_income_the_score_and_calibration(drifted):
    # the scenario the other tests rely on
    result = drifted[0]
    statuses = {s.check: s.status for s in result.overall.statuses}
    assert result.status == "act"
    assert statuses["stability of income"] == "act" and statuses["calibration"] == "act"
    assert statuses["stability of housing"] != "ok"  # levels never seen at build time
    assert [q.period for q in result.quarters] == ["2025Q1", "2025Q2"]
    assert {s.check: s.status for s in result.quarters[1].statuses}["calibration"] == "act"


def test_the_page_leads_with_the_overall_status_and_the_checks_that_set_it(drifted, page):
    result = drifted[0]
    parsed = pages.Page(page)
    assert list(parsed.sections)[0] == "status"
    status = parsed.section("status")
    assert status.startswith(f"1 Status Overall status {result.status}")
    driving = driving_checks(result.overall)
    assert driving and all(s.status != "ok" for s in driving)
    rows = parsed.table("status", "check", "figure", "threshold")
    assert [row[:4] for row in rows] == [[s.status, s.check, figure_text(s), s.thresholds] for s in driving]
    assert [STATUSES.index(row[0]) for row in rows] == sorted((STATUSES.index(row[0]) for row in rows), reverse=True)
    # and all of that comes before any detail
    first_detail = page.index('id="stability"')
    for s in driving:
        assert page.index(s.thresholds) < first_detail
    assert f"What to do ({result.status})." in status and WHAT_TO_DO[result.status] in status


def test_an_all_ok_quarter_shows_the_headline_checks_with_their_thresholds(saved, folder):
    result, fingerprint, _ = _monitored(saved, ledgers.monitor_frame(N_QUARTER, 2), folder, "calm.csv")
    assert result.status == "ok"
    parsed = pages.Page(render_monitor(result, saved[0], ledger_fingerprint=fingerprint))
    rows = parsed.table("status", "check", "figure", "threshold")
    assert [row[1] for row in rows] == ["score stability", "discrimination", "calibration"]
    assert all(row[0] == "ok" and row[3] for row in rows)
    assert WHAT_TO_DO["ok"] in parsed.section("status")


def test_status_words_are_exactly_ok_watch_and_act(page):
    badges = pages.Page(page).status_words
    assert len(badges) > 40
    for css, word in badges:
        assert word in STATUSES and css.split()[-1] == word


def test_the_page_says_how_statuses_are_set(drifted, page):
    rules = pages.Page(page).section("rules")
    checks = drifted[0].checks
    assert f"{checks.psi_watch:g} and above" in rules and f"below {checks.p_act:g}" in rules
    assert "common practice, no source (defaults 0.10 and 0.25)" in rules
    assert "5% and 1% test levels" in rules
    assert "Holm" in rules and "Scandinavian Journal of Statistics 6, 1979" in rules
    assert "DeLong" in rules
    for word in STATUSES:
        assert WHAT_TO_DO[word] in rules


# --------------------------------------------------------------------------------------------
# Detail sections


def test_stability_shows_baseline_and_new_bands_and_every_characteristic(drifted, page):
    result = drifted[0]
    parsed = pages.Page(page)
    bands = parsed.table("scores", "development", "share", "new", "share", "PSI contribution")
    score = result.overall.score_stability
    assert [row[0] for row in bands] == [*score.labels, "all"]
    assert bands[-1][-1] == f"{score.value:.4f}"
    characteristics = parsed.table("characteristic", "PSI", "status")
    assert [row[0] for row in characteristics] == [c.characteristic for c in result.overall.characteristics]
    raised = [s.check.removeprefix("stability of ") for s in result.overall.statuses
              if s.check.startswith("stability of ") and s.status != "ok"]
    assert "income" in raised and "housing" in raised
    for name in raised:  # the bins of each raised characteristic, development beside new
        assert f"{name}: PSI" in parsed.section("stability")


def test_an_unseen_level_is_named_with_its_count_and_escaped(drifted, page):
    unseen = pages.Page(page).table("characteristic", "level never seen at build time", "rows")
    assert ["housing", HOSTILE_LEVEL, "7"] in unseen and ["housing", FORMULA_LEVEL, "3"] in unseen
    assert "&lt;b&gt;x&lt;/b&gt;" in page and HOSTILE_LEVEL not in page
    assert "Invented &lt;loans&gt;" in page


def test_discrimination_and_calibration_are_shown_with_outcomes(drifted, page):
    parsed = pages.Page(page)
    outcomes = drifted[0].overall.outcomes
    baseline = drifted[0].baseline_auc
    assert baseline.sample == "hold-out"  # the build drew no out-of-time sample: its most honest is the hold-out
    # the test's baseline is named wherever the test appears: the question, the table, the card and the chart
    comparison = parsed.table("figure", "hold-out at build time", "new", "change")
    assert [row[0] for row in comparison] == ["AUC", "AUC standard error (DeLong)", "Gini", "KS"]
    assert comparison[0][1:3] == [f"{baseline.auc:.4f}", f"{outcomes.auc.auc:.4f}"]
    assert comparison[1][1:3] == [f"{baseline.std_error:.4f}", f"{outcomes.auc.std_error:.4f}"]
    section = parsed.section("discrimination")
    assert "Has the AUC fallen below the hold-out sample's at build time?" in section and "one-sided p-value" in section
    assert "development" not in section.split("The dashed diagonal")[0].replace("else development", "")
    assert f"baseline {baseline.auc:.4f}: the hold-out sample at build time" in parsed.section("status")
    assert "hold-out at build time" in page.split('id="discrimination"')[1].split("</svg>")[0]  # the ROC legend
    bands = parsed.table("scores", "applications", "bads", "observed bad rate", "predicted PD")
    assert len(bands) == len(outcomes.calibration.count)
    head = next(t[0] for t in parsed.tables if t and t[0][:2] == ["scores", "applications"])
    assert "Holm-adjusted p" in head and "binomial p (two-sided)" in head and any("Jeffreys" in h for h in head)
    assert "Hosmer–Lemeshow" in parsed.section("calibration")


def test_without_outcomes_the_page_says_stability_only_and_shows_no_calibration_figures(saved, no_outcomes):
    result = no_outcomes[0]
    assert result.overall.outcomes is None
    parsed = pages.Page(_page(saved, no_outcomes))
    status = parsed.section("status")
    assert "Stability only." in status and "discrimination and calibration were not checked" in status
    calibration = parsed.section("calibration")
    assert calibration.startswith("4 Calibration Not computed: no row of this ledger has a known outcome")
    assert "Hosmer" not in calibration and "%" not in calibration
    assert "Not computed" in parsed.section("discrimination")
    assert "calibration" not in [row[1] for row in parsed.table("status", "check", "figure", "threshold")]


def test_a_dated_ledger_has_every_check_by_quarter(drifted, page):
    result = drifted[0]
    parsed = pages.Page(page)
    by_quarter = next(t for t in parsed.tables if t and t[0][:2] == ["check", "whole ledger"])
    assert by_quarter[0] == ["check", "whole ledger", "2025Q1", "2025Q2"]
    by_check = {row[0]: row[1:] for row in by_quarter[1:]}
    for period, column in zip(result.quarters, range(1, 3)):
        for s in period.statuses:
            assert by_check[s.check][column] == f"{s.status} {figure_text(s)}"
    summary = parsed.table("quarter", "applications", "goods", "bads")
    assert [row[0] for row in summary] == ["2025Q1", "2025Q2"] and [row[-1] for row in summary] == ["act", "act"]
    assert parsed.section("quarters").count("Observed and predicted bad rate by quarter") == 1  # a chart's title


def test_an_undated_ledger_has_no_by_quarter_section(saved, undated):
    parsed = pages.Page(_page(saved, undated))
    assert "quarters" not in parsed.sections and "By quarter" not in " ".join(parsed.text)
    assert not any(t and t[0][:2] == ["check", "whole ledger"] for t in parsed.tables)
    # the sections after it move up one, in the contents list and in their headings alike
    assert parsed.section("rules").startswith("6 How statuses are set")
    assert parsed.section("reproducibility").startswith("8 Reproducibility")


def test_a_ledger_with_outcomes_but_no_bads_says_why_nothing_was_computed(saved, folder):
    frame = ledgers.monitor_frame(N_QUARTER, 12, start="2025-01-01").assign(outcome="good")
    result, fingerprint, _ = _monitored(saved, frame, folder, "all-good.csv")
    parsed = pages.Page(render_monitor(result, saved[0], model_path=saved[1], ledger_fingerprint=fingerprint))
    why = f"it has {N_QUARTER:,} goods and no bads; discrimination and calibration compare"
    assert f"Not computed: {why}" in parsed.section("discrimination")
    assert f"Not computed: {why}" in parsed.section("calibration")
    assert result.overall.not_computed["calibration"].startswith(why[:30])


def test_the_page_carries_the_caution_and_identifies_model_and_ledger(saved, drifted, page):
    parsed = pages.Page(page)
    assert CAUTION in parsed.section("cautions")
    reproducibility = parsed.section("reproducibility")
    document = saved[0].document
    assert document["checksum"] in reproducibility and document["tool_version"] in reproducibility
    assert document["ledger"]["fingerprint"]["sha256"] in reproducibility
    fingerprint = drifted[1]
    assert fingerprint.sha256 in reproducibility and f"{fingerprint.n_rows:,}" in reproducibility


def test_the_page_has_no_script_and_refers_to_nothing_outside_itself(page):
    assert "<script" not in page.lower()
    assert not EXTERNAL.search(page)
    assert not {"script", "link", "img", "iframe", "object", "embed"} & pages.Page(page).tags


def test_write_monitor_writes_the_page_and_leaves_no_temporary_file(saved, drifted, tmp_path):
    result, fingerprint, _ = drifted
    path = write_monitor(result, saved[0], tmp_path / "q" / "monitor.html", ledger_fingerprint=fingerprint)
    assert os.listdir(tmp_path / "q") == ["monitor.html"]
    assert path.read_text(encoding="utf-8") == render_monitor(result, saved[0], ledger_fingerprint=fingerprint)


# --------------------------------------------------------------------------------------------
# The workbook


def _headers(sheet, row=4) -> dict[str, int]:
    """Each header's column; of a header that several tables share, the first table's."""
    found = {}
    for cell in sheet[row]:
        if cell.value is not None:
            found.setdefault(cell.value, cell.column)
    return found


def test_the_workbook_has_its_sheets_with_frozen_bold_headers(drifted, book):
    assert tuple(book.sheetnames) == sheet_names(drifted[0]) == (
        "Overview", "Stability", "Discrimination", "Calibration", "Quarters", "Cautions")
    for sheet in book.worksheets:
        if sheet.title == "Cautions":
            assert sheet.freeze_panes == "A3"
            continue
        assert sheet.freeze_panes in ("A5", "B5"), sheet.title
        assert sheet.print_title_rows == "$1:$4"
        headers = [cell for cell in sheet[4] if cell.value is not None]
        assert headers and all(cell.font.bold for cell in headers), sheet.title


def test_the_overview_leads_with_the_status_and_the_checks_that_set_it(saved, drifted, book):
    result = drifted[0]
    sheet = book["Overview"]
    assert sheet["A2"].value.startswith(f"Overall status: {result.status}.")
    headers = _headers(sheet)
    driving = driving_checks(result.overall)
    for row, check in enumerate(driving, start=5):
        def value(header, row=row):
            return sheet.cell(row=row, column=headers[header]).value
        assert (value("Check"), value("Status"), value("Sets the status")) == (check.check, check.status, "yes")
        assert value("Value") == pytest.approx(check.value) and value("Thresholds") == check.thresholds
        assert (value("Watch at"), value("Act at")) == (check.watch, check.act)
    labels = {row[0].value: row[1].value for row in sheet.iter_rows(min_row=5, max_col=2) if row[0].value}
    assert labels["Overall status"] == result.status
    assert labels["Model checksum (SHA-256 of its content)"] == saved[0].document["checksum"]
    assert labels[f"SHA-256 of its {drifted[1].of}"] == drifted[1].sha256


def test_stability_puts_baseline_and_new_side_by_side(drifted, book):
    score = drifted[0].overall.score_stability
    sheet = book["Stability"]
    headers = _headers(sheet)
    development, new = headers["Share (development)"], headers["Share (new)"]
    assert new == development + 1 and headers["Count (new)"] == headers["Count (development)"] + 1
    rows = range(5, 5 + len(score.labels))
    assert [sheet.cell(row=row, column=development).value for row in rows] == pytest.approx(score.expected_share)
    assert [sheet.cell(row=row, column=new).value for row in rows] == pytest.approx(score.actual_share)
    assert sheet.cell(row=5, column=headers["PSI contribution"]).data_type == "f"
    assert sheet.cell(row=5 + len(score.labels), column=headers["Scores"]).value == "all"
    assert len(sheet._charts) == 1


def test_discrimination_and_calibration_sheets_hold_the_baseline_beside_new(saved, drifted, book):
    result = drifted[0]
    sheet = book["Discrimination"]
    headers = _headers(sheet)
    assert sheet.cell(row=5, column=1).value == "whole ledger"
    assert sheet.cell(row=5, column=headers["Baseline sample"]).value == "hold-out"
    assert sheet.cell(row=5, column=headers["AUC (new)"]).value == pytest.approx(result.overall.outcomes.auc.auc)
    performance = saved[0].performance["hold-out"]  # as the build saved them in the model file
    assert sheet.cell(row=5, column=headers["AUC (baseline)"]).value == performance["auc"]
    assert sheet.cell(row=5, column=headers["Standard error (baseline)"]).value == performance["auc_std_error"]
    assert sheet.cell(row=5, column=headers["Standard error (new)"]).value == result.overall.outcomes.auc.std_error
    for header in ("z", "p-value (fall)", "Status"):  # the verdict, recomputed by the spreadsheet
        assert sheet.cell(row=5, column=headers[header]).data_type == "f", header
    calibration = book["Calibration"]
    headers = _headers(calibration)
    assert {"Binomial p (two-sided)", "Jeffreys p (more bads)", "Holm-adjusted p", "Hosmer–Lemeshow",
            "Holm-adjusted p (in the large)"} <= set(headers)
    periods = [calibration.cell(row=row, column=1).value for row in range(5, 8)]
    assert periods == ["whole ledger", "2025Q1", "2025Q2"]


def test_text_that_looks_like_a_formula_stays_text(book):
    cells = [cell for sheet in book.worksheets for row in sheet.iter_rows() for cell in row if cell.value == FORMULA_LEVEL]
    assert cells and all(cell.data_type == "s" and cell.quotePrefix for cell in cells)


def test_without_outcomes_or_dates_the_workbook_says_so(saved, no_outcomes, undated):
    pending = monitor_workbook(no_outcomes[0], saved[0])
    assert pending["Discrimination"]["A5"].value.startswith("Not computed: no row of the ledger has a known outcome")
    assert pending["Calibration"]["A5"].value.startswith("Not computed")
    assert "Quarters" in pending.sheetnames
    plain = monitor_workbook(undated[0], saved[0])
    assert tuple(plain.sheetnames) == ("Overview", "Stability", "Discrimination", "Calibration", "Cautions")


def test_write_monitor_workbook_is_atomic_and_opens(saved, drifted, tmp_path):
    path = write_monitor_workbook(drifted[0], saved[0], tmp_path / "monitor.xlsx")
    assert os.listdir(tmp_path) == ["monitor.xlsx"]
    assert openpyxl.load_workbook(path).sheetnames == list(sheet_names(drifted[0]))


# --------------------------------------------------------------------------------------------
# The command


def test_the_monitor_command_writes_and_lists_both_deliverables(saved, drifted, tmp_path):
    out, err = io.StringIO(), io.StringIO()
    code = main(["monitor", str(saved[1]), str(drifted[2]), "--out", str(tmp_path / "q")], stdout=out, stderr=err)
    assert code == 0, err.getvalue()
    written = next(line for line in out.getvalue().splitlines() if line.startswith("written: "))
    assert written == "written: " + ", ".join(str(tmp_path / "q" / name)
                                              for name in ("monitor.txt", "monitor.html", "monitor.xlsx"))
    assert sorted(os.listdir(tmp_path / "q")) == ["monitor.html", "monitor.txt", "monitor.xlsx"]
    page = (tmp_path / "q" / "monitor.html").read_text(encoding="utf-8")
    assert "scorewright monitor" in page and "Overall status" in page
    assert openpyxl.load_workbook(tmp_path / "q" / "monitor.xlsx")["Overview"]["A2"].value.startswith("Overall status: act")


# --------------------------------------------------------------------------------------------
# External programs: a real browser, and LibreOffice Calc's recalculation


def _browser() -> str:
    for name in ("chromium", "chromium-browser"):
        if found := shutil.which(name):
            return found
    pytest.skip("no chromium or chromium-browser on PATH")


def _headless(browser, profile, *options, target) -> subprocess.CompletedProcess:
    command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", *options, target.as_uri()]
    return subprocess.run(command, capture_output=True, text=True, timeout=BROWSER_SECONDS)


@pytest.mark.slow
def test_chromium_prints_the_page_to_pdf_and_a_screenshot(saved, drifted, tmp_path):
    browser = _browser()
    result, fingerprint, _ = drifted
    page = write_monitor(result, saved[0], tmp_path / "monitor.html", ledger_fingerprint=fingerprint)
    pdf = tmp_path / "m.pdf"
    done = _headless(browser, tmp_path / "profile-pdf", f"--print-to-pdf={pdf}", "--no-pdf-header-footer", target=page)
    assert done.returncode == 0, done.stderr
    assert pdf.read_bytes()[:4] == b"%PDF" and pdf.stat().st_size > MIN_PDF_BYTES
    screenshot = tmp_path / "m.png"
    done = _headless(browser, tmp_path / "profile-png", f"--screenshot={screenshot}", "--window-size=1200,2400",
                     target=page)
    assert done.returncode == 0, done.stderr
    assert screenshot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.slow
def test_in_print_no_heading_is_alone_at_a_page_foot_and_chart_text_is_11_px(page, tmp_path):
    assert pages.headings_at_page_foot(page, tmp_path) == []
    size, text = pages.smallest_chart_text(page, tmp_path)
    assert size >= 11 - 1e-3, text


@pytest.mark.slow
def test_libreoffice_recalculates_every_formula_to_the_tools_value(saved, drifted, tmp_path):
    # reference: LibreOffice Calc recalculation
    result = drifted[0]
    path = write_monitor_workbook(result, saved[0], tmp_path / "monitor.xlsx")
    original = openpyxl.load_workbook(path)
    expected = _expected_stability_formulas(result, original["Stability"])
    book = openpyxl.load_workbook(spreadsheet.recalculated(path, tmp_path), data_only=True)
    recalculated = book["Stability"]
    formulas = {cell.coordinate for row in original["Stability"].iter_rows() for cell in row if cell.data_type == "f"}
    assert formulas == set(expected)
    for coordinate, want in expected.items():
        got = recalculated[coordinate].value
        where = f"Stability!{coordinate} {original['Stability'][coordinate].value}"
        assert isinstance(got, (int, float)), (where, got, want)  # an error such as '#NUM!' is text
        assert math.isclose(got, want, rel_tol=RECALC_RTOL, abs_tol=RECALC_ATOL), (where, got, want)
    # the AUC fall test of every period: z, p and the status, recomputed from the baseline and new cells
    headers = _headers(original["Discrimination"])
    periods = [result.overall, *result.quarters]
    for row, period in enumerate(periods, start=5):
        fall, status = period.auc_fall, next(s.status for s in period.statuses if s.check == "discrimination")
        got = {header: book["Discrimination"].cell(row=row, column=headers[header]).value
               for header in ("z", "p-value (fall)", "Status")}
        assert got["z"] == pytest.approx(fall.z, rel=RECALC_RTOL), period.period
        # LibreOffice's NORMSDIST is its own normal distribution function (no shared code with scipy)
        assert got["p-value (fall)"] == pytest.approx(fall.p_value, rel=NORMAL_RTOL), period.period
        assert got["Status"] == status, period.period


def _expected_stability_formulas(result, sheet) -> dict[str, float]:
    """The tool's value of every formula cell on Stability, found from its row label and header."""
    overall = result.overall
    score = overall.score_stability
    by_name = {c.characteristic: c.psi for c in overall.characteristics}
    headers = {}
    for cell in sheet[4]:
        if cell.value is not None:
            headers.setdefault(cell.value, []).append(cell.column)  # the same header in several tables
    scores, bins_start, table_start = headers["Scores"][0], headers["Bin"][0], headers["Characteristic"][0]
    expected = {}
    for offset, contribution in enumerate(score.contributions):
        expected[sheet.cell(row=5 + offset, column=scores + 5).coordinate] = float(contribution)
    total_row = 5 + len(score.labels)
    totals = (score.expected_counts.sum(), score.actual_counts.sum(), score.expected_share.sum(),
              score.actual_share.sum(), score.value)
    for offset, value in enumerate(totals, start=1):
        expected[sheet.cell(row=total_row, column=scores + offset).coordinate] = float(value)
    positions = {}
    for row in range(5, sheet.max_row + 1):
        name = sheet.cell(row=row, column=bins_start - 1).value
        if name is None:
            break
        position = positions.get(name, 0)
        positions[name] = position + 1
        expected[sheet.cell(row=row, column=bins_start + 5).coordinate] = float(by_name[name].contributions[position])
    for row in range(5, 5 + len(overall.characteristics)):
        name = sheet.cell(row=row, column=table_start).value
        expected[sheet.cell(row=row, column=table_start + 1).coordinate] = by_name[name].value
    return expected


def test_the_per_quarter_chart_names_the_characteristic_it_plots(drifted, page):
    result = drifted[0]
    moved = max(result.overall.characteristics, key=lambda c: c.psi.value).characteristic
    section = page.split('id="quarters"')[1]
    assert f"PSI of the score and of {moved} by quarter" in section
    assert "largest of the characteristics" not in section
