"""Tests of scorecard.report.html: the build report's structure, its figures, its escaping, that it
is self-contained, that it is written atomically, and (slow) that a real browser prints it."""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import time
import warnings

import numpy as np
import pandas as pd
import pytest

import scorecard
from scorecard import Settings
from scorecard.build import build_scorecard
from scorecard.report import CAUTION
from scorecard.report.build_page import CUTOFF_ROWS, SECTIONS, render_report, write_report
from scorecard.report.page_kit import template_text
from scorecard.validation import validate_build

import pages  # tests/pages.py: reading the reports

SCRIPT_LEVEL = "<script>alert(1)</script>"
FORMULA_LEVEL = '=1+2&"x"'
TITLE = "Loans <small> & large"
# Rendering reads only histograms and count tables; a generous ceiling that still catches a
# report that went back to the rows (a budget of our own, no source).
RENDER_SECONDS = 2.0
# A browser's PDF of this report is tens of kilobytes; an empty or failed print is far smaller.
MIN_PDF_BYTES = 20_000
BROWSER_SECONDS = 120
EXTERNAL = re.compile(r"https?:|src=\"//|@import|url\(", re.IGNORECASE)
STATUS_WORDS = {"ok", "watch", "act"}


def invented_ledger(n_rows: int = 4000, seed: int = 7) -> pd.DataFrame:
    """An invented ledger over two years: more income, more age and some purposes mean fewer bads.

    Two purposes are named to attack the page: a script tag, and a spreadsheet formula with an
    ampersand and quotes. A reference number per row is left out by intake, with a note.
    """
    rng = np.random.default_rng(seed)
    income = rng.lognormal(7.5, 0.5, n_rows)
    age = rng.integers(18, 75, n_rows)
    purposes = np.array(["car", "home", SCRIPT_LEVEL, FORMULA_LEVEL, "travel"], dtype=object)
    effect = np.array([0.3, 0.7, -0.5, -0.1, -0.7])
    chosen = rng.choice(len(purposes), n_rows, p=[0.3, 0.25, 0.15, 0.15, 0.15])
    log_odds_good = 1.3 + 0.9 * (np.log(income) - 7.5) / 0.5 + 0.02 * (age - 40) + effect[chosen]
    good = rng.random(n_rows) < 1 / (1 + np.exp(-log_odds_good))
    dates = np.datetime64("2023-01-01") + rng.integers(0, 730, n_rows).astype("timedelta64[D]")
    return pd.DataFrame({
        "reference": np.arange(100_000, 100_000 + n_rows), "applied": dates, "income": np.round(income, 2), "age": age, "purpose": purposes[chosen],
        "status": np.where(good, "good", "bad"),
    })


def invented_settings(**changes) -> Settings:
    settings = Settings().replace(
        outcome={"column": "status", "bad": ("bad",), "good": ("good",)},
        ledger={"date_column": "applied"}, samples={"out_of_time_from": "2024-07-01"},
        report={"title": TITLE, "lender": "Invented Mutual"},
    )
    return settings.replace(**changes) if changes else settings


@pytest.fixture(scope="module")
def built():
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # classing notes are warnings too; the report lists them
        build = build_scorecard(invented_ledger(), invented_settings())
    return build, validate_build(build)


@pytest.fixture(scope="module")
def page(built):
    build, validation = built
    return render_report(build, validation, generated_by="pytest")




# --------------------------------------------------------------------------------------------
# Structure and figures


def test_every_section_has_its_id_and_is_in_the_contents(page):
    for section_id, title in SECTIONS:
        assert f'<section id="{section_id}">' in page
        assert f'<a href="#{section_id}">{title}</a>' in page


def test_headline_figures_equal_the_validation(built, page):
    _, validation = built
    rows = {row[0]: row for row in pages.Page(page).table("sample", "goods", "bads", "bad rate", "AUC")}
    assert set(rows) == set(validation.samples) == {"development", "hold-out", "out-of-time"}
    for name, checks in validation.samples.items():
        area = checks.auc
        assert rows[name][4:9] == [f"{area.auc:.4f}", f"{area.lower:.4f} to {area.upper:.4f}", f"{area.gini:.4f}",
                                   f"{area.gini_lower:.4f} to {area.gini_upper:.4f}", f"{checks.ks.statistic:.4f}"]
        assert rows[name][1:3] == [f"{checks.goods:,.0f}", f"{checks.bads:,.0f}"]


def test_the_points_table_lists_every_bin_with_its_points(built, page):
    build, _ = built
    rows, current = [], ""
    for characteristic, label, points in pages.Page(page).table("characteristic", "bin", "points"):
        current = characteristic or current
        rows.append((current, label, points))
    expected = [(row.characteristic, row.bin, f"{row.points:.0f}") for row in build.scorecard.table.to_frame().itertuples()]
    assert rows == expected


def test_hosmer_lemeshow_and_psi_figures_appear_as_computed(built, page):
    build, validation = built
    text = " ".join(pages.Page(page).text)
    for checks in validation.samples.values():
        test = checks.hosmer_lemeshow
        # the degrees of freedom say why: bands − 2 in sample, every band elsewhere (Hosmer and Lemeshow 1980)
        rule = ("bands − 2: the model was fitted on this sample" if checks.sample == "development"
                else "bands: the model was not fitted on this sample")
        assert test.df == test.n_bands - (2 if checks.sample == "development" else 0)
        assert f"df {test.df} ({test.n_bands} {rule}), p-value " in text
        assert f"{test.statistic:,.2f}" in text
    for name, result in validation.score_stability.items():
        assert [name, f"{result.value:.4f}", result.status] in pages.Page(page).table("sample", "score PSI", "status")


def test_every_note_of_the_build_is_listed(built, page):
    build, _ = built
    text = pages.Page(page).text
    assert build.notes
    assert all(note in text for note in build.notes)  # each note is one list item


def test_the_classing_rules_and_every_merging_with_its_iv_before_and_after_are_shown(built, page):
    build, _ = built
    report = pages.Page(page)
    section = report.section("characteristics")
    assert "likelihood-ratio test" in section and "p-value at or above 0.05 (classing.merge_p)" in section
    merged = [c for c in build.characteristics if c.merging is not None]
    assert len(merged) == 3  # counted on this invented ledger: every proposal had alike neighbours
    shown = report.table("characteristic", "classes before", "classes after", "IV before", "IV after")
    assert sorted(shown) == sorted(
        [c.name, str(c.merging.classes_before), str(c.merging.classes_after), f"{c.merging.iv_before:.4f}",
         f"{c.merging.iv_after:.4f}"] for c in merged)
    assert all(f"{c.merging.iv_after:.4f}" == f"{c.evidence.iv:.4f}" for c in merged)  # the IV the report shows


def test_the_cutoff_rows_shown_are_rows_of_the_holdout_table(built, page):
    _, validation = built
    table = validation.samples["hold-out"].cutoffs
    shown = pages.Page(page).table("approve at or above", "approval rate", "bad rate among approved")
    assert 3 <= len(shown) <= CUTOFF_ROWS + 1  # the KS cut-off may come on top of the round scores
    for cells in shown:
        # Approving from a score approves from the first cut-off at or above it.
        row = int(np.searchsorted(table.cutoffs, float(cells[0]), side="left"))
        assert cells[1:3] == [f"{100 * table.approval_rate[row]:.1f}%", f"{100 * table.approved_bad_rate[row]:.2f}%"]
    ks_score = validation.samples["hold-out"].ks.score
    marked = re.search(r'<tr class="marked"><td class="number">([^<]+)</td>', page)
    assert float(marked.group(1)) == table.cutoffs[np.searchsorted(table.cutoffs, ks_score, side="right")]


def test_the_caution_is_at_the_top_in_its_section_and_at_the_bottom(page):
    text = pages.Page(page).text
    assert sum(CAUTION in chunk for chunk in text) == 3


def test_every_chart_and_figure_says_which_sample_it_is_on(page):
    captions = re.findall(r"<figcaption>(.*?)</figcaption>", page, flags=re.DOTALL)
    assert len(captions) > 10
    assert all("sample" in caption for caption in captions)
    titles = re.findall(r'<svg [^>]*aria-label="([^"]*)"', page)
    assert len(titles) == len(captions)
    assert all("sample" in title for title in titles)


def test_stability_statuses_are_our_three_words(page):
    statuses = set(re.findall(r'<span class="status (\w+)">(\w+)</span>', page))
    assert statuses and all(css == word and word in STATUS_WORDS for css, word in statuses)
    assert {"ok", "watch", "act"} <= {word for _, word in statuses}  # all three are explained in the text
    assert "0.10" in page and "0.25" in page and "common practice" in page


def test_non_model_characteristics_are_folded_away_and_model_ones_come_first(built, page):
    build, _ = built
    model = build.scorecard.table.names
    others = [c.name for c in build.characteristics if c.name not in model]
    overview = pages.Page(page).table("characteristic", "in the model", "IV")
    assert [row[0] for row in overview[:len(model)]] == list(model)
    assert page.count('<details class="characteristic"') == len(others)


def test_the_settings_are_shown_as_toml_with_the_tool_version(built, page):
    build, _ = built
    text = "".join(pages.Page(page).text)
    assert scorecard.settings.settings_to_toml(build.settings) in text
    assert scorecard.__version__ in text and build.fingerprint.sha256 in text
    assert "scorewright build settings.toml" in text and "pytest" in text


# --------------------------------------------------------------------------------------------
# Escaping and self-containment


def test_hostile_category_labels_show_as_text_and_the_page_has_no_script(page):
    parsed = pages.Page(page)
    text = "".join(parsed.text)
    assert SCRIPT_LEVEL in text and FORMULA_LEVEL in text
    assert TITLE in text
    assert "script" not in parsed.tags
    assert "<script" not in page.lower()
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page


def test_the_page_refers_to_nothing_outside_itself(page):
    assert not EXTERNAL.search(page)
    assert not {"link", "img", "iframe", "object", "embed", "script"} & pages.Page(page).tags


# --------------------------------------------------------------------------------------------
# Other shapes of build


def test_a_build_with_only_a_development_sample_renders(built):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        build = build_scorecard(invented_ledger(1500, seed=3),
                                invented_settings(samples={"holdout_fraction": 0.0, "out_of_time_from": ""}))
    html = render_report(build, validate_build(build))
    assert "nothing to compare it with" in html
    assert "Cut-offs on the development sample" in html
    assert "AUC, development sample" in html


def test_rendering_is_quick(built):
    build, validation = built
    start = time.perf_counter()
    render_report(build, validation)
    assert time.perf_counter() - start < RENDER_SECONDS


# --------------------------------------------------------------------------------------------
# Writing


def test_write_report_writes_the_page_and_leaves_no_temporary_file(built, tmp_path):
    build, validation = built
    path = write_report(build, validation, tmp_path / "run" / "report.html")
    assert path == tmp_path / "run" / "report.html"
    assert os.listdir(tmp_path / "run") == ["report.html"]
    assert path.read_text(encoding="utf-8") == render_report(build, validation)


def test_a_failed_write_keeps_the_old_report_and_leaves_no_temporary_file(built, tmp_path, monkeypatch):
    build, validation = built
    path = tmp_path / "report.html"
    path.write_text("the previous report", encoding="utf-8")

    def refuse(source, target):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", refuse)
    with pytest.raises(OSError, match="disk full"):
        write_report(build, validation, path)
    assert os.listdir(tmp_path) == ["report.html"]
    assert path.read_text(encoding="utf-8") == "the previous report"


# --------------------------------------------------------------------------------------------
# A real browser, offline


def _browser() -> str:
    for name in ("chromium", "chromium-browser"):
        if found := shutil.which(name):
            return found
    pytest.skip("no chromium or chromium-browser on PATH")


def _headless(browser: str, profile, *options: str, target) -> subprocess.CompletedProcess:
    command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={profile}", *options, target.as_uri()]
    return subprocess.run(command, capture_output=True, text=True, timeout=BROWSER_SECONDS)


@pytest.mark.slow
def test_chromium_prints_the_report_to_pdf_and_a_screenshot(built, tmp_path):
    browser = _browser()
    build, validation = built
    report = write_report(build, validation, tmp_path / "report.html")
    pdf = tmp_path / "r.pdf"
    done = _headless(browser, tmp_path / "profile-pdf", f"--print-to-pdf={pdf}", "--no-pdf-header-footer",
                     target=report)
    assert done.returncode == 0, done.stderr
    assert pdf.read_bytes()[:4] == b"%PDF"
    assert pdf.stat().st_size > MIN_PDF_BYTES
    screenshot = tmp_path / "r.png"
    done = _headless(browser, tmp_path / "profile-png", f"--screenshot={screenshot}", "--window-size=1200,3000",
                     target=report)
    assert done.returncode == 0, done.stderr
    assert screenshot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


@pytest.mark.slow
def test_every_chart_text_is_at_least_11_px_at_the_reports_width(page, tmp_path):
    # measured in Chromium at a window 1,280 px wide (the report's column is at most 1,100 px): a chart
    # keeps its own width in its row, so no text is drawn smaller than the charts write it
    size, text = pages.smallest_chart_text(page, tmp_path)
    assert size >= 11 - 1e-3, text


def test_charts_keep_their_width_in_a_row_and_their_legend_draws_their_marks(page):
    style = template_text("style.css")
    assert ".chart-row figure.chart-figure { flex: 0 0 auto; }" in style  # never shrunk below its own width
    calibration = page.split('id="calibration"')[1].split("</svg>")[0]
    assert "observed bad rate with interval" in calibration and "<circle" in calibration and "<polygon" in calibration


@pytest.mark.slow
def test_in_print_no_heading_is_left_alone_at_the_foot_of_a_page(page, tmp_path):
    # printed by Chromium, read back with pypdf: the last line of every page is not a heading
    assert pages.headings_at_page_foot(page, tmp_path) == []
