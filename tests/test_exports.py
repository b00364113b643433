"""Tests of scorecard/exports: the rules every export writes, and the three files as text.

The files are run in the programs they are written for in tests/test_exports_engines.py. Here:
the rules put every value in the bin our scorer puts it in (against a slow, obvious oracle that
tries the rules one by one), the PMML file is valid against the PMML 4.4 XML Schema, each file
states the model's checksum, scaling and caution, and each refuses a model file whose checksum fails.

The schema is ``pmml.xsd`` from the pmml-model jar (JPMML-Model, BSD-3-Clause) that the
jpmml_evaluator wheel ships: JPMML's copy of the PMML 4.4 schema (target namespace
http://www.dmg.org/PMML-4_4), not the Data Mining Group's own file, which no PyPI package ships.
It adds optional ``x-`` extension names of JPMML's own; a test checks we write none of them.
"""

from __future__ import annotations

import ast
import itertools
import json
import math
import re
import subprocess
import sys
import zipfile
from dataclasses import replace
from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from lxml import etree

from scorecard.cli import main
from scorecard.exports import PD_TABLE_LIMIT, export_model, pmml_text, python_text, sql_text
from scorecard.exports import rules as rules_module
from scorecard.exports.rules import INTERVAL, LEVELS, MISSING, OTHERWISE, SPECIAL, reachable_units
from scorecard.modelfile import load_model
from scorecard.rows import code_rows
from scorecard.terms import NUMERIC

from exported import AWKWARD_COLUMN, AWKWARD_LEVELS, edge_frame

ROOT = Path(__file__).resolve().parent.parent
DEMO_MODEL = ROOT / "tests" / "reference" / "demo-model-format-1.json"  # the demo's model file, as an earlier tool wrote it
NAMESPACE = {"p": "http://www.dmg.org/PMML-4_4"}


@pytest.fixture(scope="module")
def demo():
    return export_model(load_model(DEMO_MODEL))


@pytest.fixture(scope="module")
def awkward(awkward_model_file):
    return export_model(load_model(awkward_model_file))


@pytest.fixture(scope="module")
def schema():
    jar = next(p for p in resources.files("jpmml_evaluator.dependencies").iterdir()
               if re.fullmatch(r"pmml-model-[\d.]+\.jar", p.name))
    with zipfile.ZipFile(jar) as archive:
        return etree.XMLSchema(etree.fromstring(archive.read("pmml.xsd")))


def _first_rule(c, value):
    """The slow, obvious oracle: try the rules one by one, as every export does."""
    for rule in c.rules:
        missing = value is None or (isinstance(value, float) and math.isnan(value))
        if rule.kind == MISSING and missing:
            return rule
        if missing:
            continue
        if rule.kind == SPECIAL and value == rule.value:
            return rule
        if rule.kind == INTERVAL and value < rule.upper:
            return rule
        if rule.kind == LEVELS and value in rule.levels:
            return rule
        if rule.kind == OTHERWISE:
            return rule
    raise AssertionError(f"no rule holds for {value!r}")


# --------------------------------------------------------------------------------------------
# the rules


@pytest.mark.parametrize("which", ["demo", "awkward"])
def test_the_first_rule_that_holds_is_the_bin_our_scorer_codes(which, request):
    model = request.getfixturevalue(which)
    saved = load_model(DEMO_MODEL if which == "demo" else request.getfixturevalue("awkward_model_file"))
    edges = edge_frame(model)
    for c, binning in zip(model.characteristics, saved.scorecard.binnings):
        coded = code_rows(edges[c.name], binning)
        by_rules = [_first_rule(c, None if pd.isna(v) else v).bin for v in edges[c.name]]
        assert by_rules == coded.tolist(), c.name


def test_the_awkward_model_has_every_route(awkward):
    kinds = {rule.kind for c in awkward.characteristics for rule in c.rules}
    assert kinds == {MISSING, SPECIAL, INTERVAL, LEVELS, OTHERWISE}
    region = next(c for c in awkward.characteristics if c.name == "region")
    assert sorted(level for rule in region.rules for level in rule.levels) == sorted(AWKWARD_LEVELS)
    enquiry = next(c for c in awkward.characteristics if c.name == "months_since_last_enquiry")
    special = next(rule for rule in enquiry.rules if rule.kind == SPECIAL)
    assert special.bin == 0  # 999 joins the first class (specials = [1] in the settings)
    age = next(c for c in awkward.characteristics if c.name == "applicant_age")
    assert age.rules[0].kind == MISSING and age.rules[0].bin == 0  # no missing in development: the unseen bin
    assert awkward.decimals == 1 and awkward.reason_count == 3 and AWKWARD_COLUMN in [c.name for c in awkward.characteristics]


def test_reachable_scores_are_every_sum_of_one_bin_per_characteristic(awkward, demo):
    for model in (demo, awkward):
        small = model.characteristics[:4]
        brute = sorted({sum(p) for p in itertools.product(*({r.units for r in c.rules} for c in small))})
        trimmed = replace(model, characteristics=small)
        assert reachable_units(trimmed).tolist() == brute


def test_probabilities_are_scorewrights_own(demo):
    table = demo.pd_table()
    units = np.array([u for u, _ in table])
    assert [p for _, p in table] == demo.scaling.pd_of_score(units.astype(float)).tolist()
    saved = load_model(DEMO_MODEL).scorecard.table
    assert (units[0], units[-1]) == (saved.min_score, saved.max_score)


def test_too_many_reachable_scores_leave_the_probability_to_its_formula(awkward, monkeypatch):
    assert awkward.pd_table() is not None
    monkeypatch.setattr(rules_module, "PD_TABLE_LIMIT", 10)
    assert awkward.pd_table() is None
    assert "EXP(" in sql_text(awkward, id_column="id") and "pd_of_score" not in sql_text(awkward, id_column="id")
    tree = ast.parse(python_text(awkward))
    imported = [alias.name for node in ast.walk(tree) if isinstance(node, ast.ImportFrom) for alias in node.names]
    assert imported == ["exp"] and [n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)] == ["math"]
    assert PD_TABLE_LIMIT == 10_000


# --------------------------------------------------------------------------------------------
# PMML


@pytest.mark.parametrize("which", ["demo", "awkward"])
def test_pmml_is_valid_against_the_pmml_4_4_schema(which, request, schema):
    document = etree.fromstring(pmml_text(request.getfixturevalue(which)).encode("utf-8"))
    assert schema.validate(document), schema.error_log
    names = {name for element in document.iter() for name in element.attrib} | {
        etree.QName(element).localname for element in document.iter() if isinstance(element.tag, str)}
    assert not [name for name in names if name.startswith("x-")]  # none of JPMML's own extension names


def test_the_schema_rejects_a_broken_scorecard(demo, schema):
    # so that the validation above can fail: a reason method the standard does not name, an
    # attribute with no predicate
    text = pmml_text(demo)
    for broken in (text.replace('reasonCodeAlgorithm="pointsBelow"', 'reasonCodeAlgorithm="pointsUnder"'),
                   text.replace("<True/>", "", 1)):
        assert not schema.validate(etree.fromstring(broken.encode("utf-8")))


def test_pmml_baselines_rank_losses_as_our_scorer_does(awkward):
    document = etree.fromstring(pmml_text(awkward).encode("utf-8"))
    characteristics = document.findall(".//p:Characteristic", NAMESPACE)
    assert len(characteristics) == len(awkward.characteristics)
    k, unit = len(characteristics), 0.1  # the awkward model's points have 1 decimal
    for position, (element, c) in enumerate(zip(characteristics, awkward.characteristics)):
        best = max(float(a.get("partialScore")) for a in element.findall("p:Attribute", NAMESPACE))
        # between half a unit and 1/2k of a unit below the best, less for the later characteristics
        part = float(element.get("baselineScore")) - best
        assert part == pytest.approx(-unit / 2 + (k - 1 - position) / (2 * k) * unit, abs=1e-9)
        assert -unit / 2 - 1e-9 <= part < 0
        assert element.get("reasonCode") == c.reason_code


def test_pmml_keeps_awkward_levels_exactly(awkward):
    document = etree.fromstring(pmml_text(awkward).encode("utf-8"))
    region = next(e for e in document.findall(".//p:Characteristic", NAMESPACE) if e.get("name") == "region points")
    held = [e.get("value") for e in region.iter(f"{{{NAMESPACE['p']}}}SimplePredicate") if e.get("operator") == "equal"]
    assert held == ["back\\slash\\"]  # a backslash has no escape in an array: matched on its own
    listed = [item for e in region.iter(f"{{{NAMESPACE['p']}}}Array") for item in _array_items(e.text)]
    assert sorted(listed + held) == sorted(AWKWARD_LEVELS)


def _array_items(text: str) -> list[str]:
    """Read a PMML string array as the standard describes it: items apart by white space, "quoted" when
    they hold any, with \\" for a quote (an independent reading, written here for the test)."""
    return [item[1:-1].replace('\\"', '"') if item.startswith('"') else item
            for item in re.findall(r'"(?:[^"\\]|\\")*"|\S+', text)]


def test_pmml_refuses_two_characteristics_with_one_reason_code(demo):
    first, second, *rest = demo.characteristics
    shared = replace(demo, characteristics=(first, replace(second, reason_code=first.reason_code), *rest))
    with pytest.raises(ValueError, match=f"share the reason code '{first.reason_code}'"):
        pmml_text(shared)


def test_pmml_refuses_text_xml_cannot_carry(demo):
    first, *rest = demo.characteristics
    renamed = replace(demo, characteristics=(replace(first, name="bad\x01name"), *rest))
    with pytest.raises(ValueError, match=r"holds the character '\\x01'.*export as SQL or Python"):
        pmml_text(renamed)


# --------------------------------------------------------------------------------------------
# SQL and Python as text


def test_sql_is_one_query_with_no_window_function_and_no_grouping(demo):
    query = sql_text(demo, id_column="application_id")
    body = "\n".join(line for line in query.splitlines() if not line.startswith("--"))
    assert body.count(";") == 1 and body.rstrip().endswith(";")
    assert not re.search(r"\b(OVER|GROUP BY|MATERIALIZED)\b", body)
    assert re.search(r"\bMATERIALIZED\b", sql_text(demo, id_column="application_id", materialize=True))
    assert 'FROM "applications"' in body and 's.id AS "application_id"' in body


def test_sql_quotes_names_and_levels(awkward):
    query = sql_text(awkward, table='loan "book"', id_column="id")
    assert '"months at ""address"""' in query and 'FROM "loan ""book"""' in query
    assert "'O''Brien \"North\"'" in query


def test_python_file_imports_nothing_and_runs_without_site_packages(demo, tmp_path):
    text = python_text(demo)
    assert not [n for n in ast.walk(ast.parse(text)) if isinstance(n, (ast.Import, ast.ImportFrom))]
    path = tmp_path / "scorecard_file.py"
    path.write_text(text, encoding="utf-8")
    # -I -S: isolated, without site-packages: only the standard library can be found
    script = f"import runpy; score = runpy.run_path({str(path)!r})['score']; print(score({{}}))"
    result = subprocess.run([sys.executable, "-I", "-S", "-c", script], capture_output=True, text=True, check=True)
    assert result.stdout.startswith("(")


def test_python_file_reads_missing_and_levels_as_scorewright_does(awkward, tmp_path):
    path = tmp_path / "awkward.py"
    path.write_text(python_text(awkward), encoding="utf-8")
    score = _run_path(path)["score"]
    absent = score({})
    assert score({c.name: None for c in awkward.characteristics}) == absent
    assert score({c.name: float("nan") for c in awkward.characteristics if c.kind == NUMERIC}) == absent
    assert score({"months_since_last_enquiry": "nan"}) == absent  # text float() reads as NaN: missing too
    # a level is known by its text: 1, 1.0, np.int64(1) and '1' are one level; True is 'true'
    level = _run_path(path)["_level"]
    assert [level(v) for v in (1, 1.0, np.int64(1), np.float64(1.0), np.uint8(1), "1")] == ["1"] * 6
    assert [level(True), level(np.bool_(False)), level(1.5), level("x")] == ["true", "false", "1.5", "x"]
    assert len({score({"region": v}) for v in (1, 1.0, np.int64(1), "1")}) == 1
    assert score({"applicant_age": 40})[0] == score({"applicant_age": 40.0})[0] == score({"applicant_age": "40"})[0]


def _run_path(path: Path) -> dict:
    import runpy

    return runpy.run_path(str(path))


# --------------------------------------------------------------------------------------------
# what every file states, and the refusal of a damaged model file


STATES = {"pmml": "scorecard.pmml", "sql": "scorecard.sql", "python": "scorecard.py"}


@pytest.mark.parametrize("form", STATES)
def test_every_export_states_the_fingerprint_the_scaling_and_the_caution(form, tmp_path):
    out = tmp_path / STATES[form]
    code = main(["export", str(DEMO_MODEL), "--out", str(out), "--quiet"])
    assert code == 0
    text = out.read_text(encoding="utf-8")
    flat = " ".join(re.sub(r"^(--|#)\s?", "", line.strip()) for line in text.splitlines())
    checksum = json.loads(DEMO_MODEL.read_text(encoding="utf-8"))["checksum"]
    assert checksum in flat
    assert "600 points at odds 50:1, 20 points to double the odds (factor 28.85390081777927" in flat
    assert "does not replace" in flat and "must follow local regulation and licensed practice" in flat


@pytest.mark.parametrize("form", STATES)
def test_every_export_refuses_a_model_file_whose_checksum_fails(form, tmp_path, capsys):
    document = json.loads(DEMO_MODEL.read_text(encoding="utf-8"))
    document["characteristics"][0]["bins"][0]["points"] += 1  # one point more, the checksum kept
    damaged = tmp_path / "model.json"
    damaged.write_text(json.dumps(document), encoding="utf-8")
    out = tmp_path / STATES[form]
    code = main(["export", str(damaged), "--out", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "the checksum does not match the content" in err and "Traceback" not in err
    assert not out.exists() and list(tmp_path.iterdir()) == [damaged]  # nothing written, not even a temporary
