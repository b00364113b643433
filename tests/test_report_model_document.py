"""model-document.html: written by every build, under model-risk headings, with a change log against --previous."""

import io
import re

import pytest

import pages  # tests/pages.py: reading the reports
from ledgers import monitor_frame
from scorecard.cli import main
from scorecard.report.model_document import SECTIONS

HEADINGS = [name for _, name in SECTIONS]


def _run(*argv):
    out, err = io.StringIO(), io.StringIO()
    code = main([str(a) for a in argv], stdout=out, stderr=err)
    return code, out.getvalue(), err.getvalue()


@pytest.fixture(scope="module")
def documents(tmp_path_factory):
    folder = tmp_path_factory.mktemp("document")
    frame = monitor_frame(3_000, 17)
    frame["applicant"] = range(len(frame))
    frame.to_csv(folder / "ledger.csv", index=False)
    settings = folder / "scorecard.toml"
    code, _, err = _run("init", folder / "ledger.csv", "--target", "outcome", "--bad", "bad", "--id", "applicant",
                        "--date", "date", "--out-of-time-from", "2024-03-01", "--out", settings, "--quiet")
    assert code == 0, err
    code, _, err = _run("build", settings, "--out", folder / "first", "--quiet")
    assert code == 0, err
    code, _, err = _run("set", settings, "characteristics.enquiries.use=never",
                        "report.purpose=Approve or decline personal loans up to 20,000.", "--quiet")
    assert code == 0, err
    code, _, err = _run("build", settings, "--out", folder / "second", "--previous", folder / "first" / "model.json",
                        "--quiet")
    assert code == 0, err
    texts = [(folder / run / "model-document.html").read_text(encoding="utf-8") for run in ("first", "second")]
    return [(text, pages.Page(text)) for text in texts]


def test_every_heading_of_the_guidance_is_there_and_the_page_is_self_contained(documents):
    html, first = documents[0]
    headings = [" ".join(pages.Page(h).text).split(" ", 1)[1].strip() for h in re.findall(r"<h2>.*?</h2>", html)]
    assert headings == HEADINGS
    assert "<script" not in html and not re.search(r"(src|href)=\"(https?:)?//", html)
    assert "SR 11-7" in "".join(first.text)
    # the caution every deliverable carries, said of this document
    text = " ".join(first.text)
    assert "This document supports, and does not replace, the lender's own credit policy" in text
    assert "This report supports" not in text


def test_what_only_the_lender_can_write_is_a_marked_placeholder_until_the_settings_give_it(documents):
    (_, first), (_, second) = documents
    assert "set purpose under [report]" in first.section("purpose")
    assert "Approve or decline personal loans up to 20,000." in second.section("purpose")
    assert "set approval under [report]" in second.section("approval")


def test_the_change_log_sets_the_previous_model_beside_this_one(documents):
    (_, first), (_, second) = documents
    assert "--previous" in first.section("changes")
    changes = second.section("changes")
    assert "Removed: enquiries." in changes and "Added: none." in changes
    rows = second.table("sample", "AUC before", "AUC now", "change", "KS before", "KS now")
    assert [row[0] for row in rows] == ["development", "hold-out", "out-of-time"]
    assert all(float(row[3]) == pytest.approx(float(row[2]) - float(row[1]), abs=1.5e-4) for row in rows)


def test_method_says_who_classed_each_characteristic(documents):
    first = documents[0][1]
    rows = first.table("characteristic", "classed by", "IV", "IV of the tool's proposal", "outcome")
    assert {row[0] for row in rows} == {"income", "enquiries", "housing"}
    assert all(row[1] == "proposed by the tool" for row in rows)
