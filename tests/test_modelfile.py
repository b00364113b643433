"""Tests of scorecard/modelfile.py: save, load, verify."""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from scorecard.build import build_scorecard
from scorecard.errors import ModelFileError
from scorecard.modelfile import FORMAT_VERSION, checksum, load_model, model_document, save_model
from scorecard.settings import Settings


@pytest.fixture(scope="module")
def built():
    rng = np.random.default_rng(12)
    n = 3000
    frame = pd.DataFrame({
        "income": rng.lognormal(8, 0.5, n).round(),
        "housing": rng.choice(["own", "rent", "family"], n),
        "enquiries": rng.poisson(1.5, n),
    })
    log_odds = 2.0 + 0.8 * (np.log(frame.income) - 8) - 0.4 * frame.enquiries + np.where(frame.housing == "own", 0.6, 0)
    frame["outcome"] = np.where(rng.random(n) < 1 / (1 + np.exp(-log_odds)), "good", "bad")
    settings = Settings().replace(outcome={"column": "outcome", "bad": ("bad",), "good": ("good",)})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return frame, build_scorecard(frame, settings)


def test_saved_model_scores_exactly_like_the_build(built, tmp_path):
    frame, build = built
    path = save_model(model_document(build), tmp_path / "model.json")
    saved = load_model(path)
    pd.testing.assert_frame_equal(saved.scorecard.score(frame, reason_count=3), build.scorecard.score(frame, reason_count=3))
    assert saved.settings.outcome.bad == ("bad",)
    assert saved.baseline["development"].goods.sum() == build.histograms["development"].goods.sum()
    assert [p.name for p in tmp_path.iterdir()] == ["model.json"]  # no temporary file left behind


def test_model_file_holds_what_the_reviewer_needs(built, tmp_path):
    _, build = built
    document = json.loads(save_model(model_document(build), tmp_path / "m.json").read_text())
    assert document["format"] == "scorewright-model" and document["format_version"] == FORMAT_VERSION
    assert set(document["scaling"]) == {"base_score", "base_odds", "pdo", "factor", "offset"}
    char = document["characteristics"][0]
    assert {"name", "kind", "coefficient", "std_error", "bins"} <= set(char)
    assert {"woe", "points", "counts"} <= set(char["bins"][0])
    assert set(document["performance"]) == {"development", "hold-out"}
    assert {"auc", "auc_std_error", "gini", "ks"} == set(document["performance"]["hold-out"])  # monitoring tests against it
    assert document["ledger"]["fingerprint"]["rows"] == 3000
    assert len(document["checksum"]) == 64


def test_edited_model_file_is_refused(built, tmp_path):
    _, build = built
    path = save_model(model_document(build), tmp_path / "model.json")
    document = json.loads(path.read_text())
    document["characteristics"][0]["bins"][0]["points"] += 10
    path.write_text(json.dumps(document))
    with pytest.raises(ModelFileError, match="checksum does not match"):
        load_model(path)


def test_corrupt_model_file_is_refused(built, tmp_path):
    _, build = built
    path = save_model(model_document(build), tmp_path / "model.json")
    path.write_text(path.read_text()[:500])
    with pytest.raises(ModelFileError, match="not a valid model file"):
        load_model(path)


def test_newer_format_is_refused(built, tmp_path):
    _, build = built
    document = model_document(build)
    document["format_version"] = FORMAT_VERSION + 1
    path = save_model(document, tmp_path / "model.json")
    with pytest.raises(ModelFileError, match=f"format version {FORMAT_VERSION + 1} is newer"):
        load_model(path)


@pytest.mark.parametrize(("text", "match"), [('{"a": 1}', "not a scorewright model file"), ("[1, 2]", "not a scorewright model file")])
def test_other_json_is_refused(tmp_path, text, match):
    path = tmp_path / "other.json"
    path.write_text(text)
    with pytest.raises(ModelFileError, match=match):
        load_model(path)


def test_missing_model_file(tmp_path):
    with pytest.raises(ModelFileError, match="model file not found"):
        load_model(tmp_path / "nowhere.json")


def test_checksum_ignores_key_order():
    assert checksum({"a": 1, "b": [1.5, None]}) == checksum({"b": [1.5, None], "a": 1})


# --------------------------------------------------------------------------------------------
# Older model files


FORMAT_1 = Path(__file__).parent / "reference" / "demo-model-format-1.json"
# tests/reference/demo-model-format-1.json: the model file 'scorewright demo --rows 8000' wrote with
# format 1 (scorewright 0.1.0 before the classing words were renamed: groups, trend, fallback_bin)


def test_a_model_file_of_format_1_still_loads_with_the_present_names():
    saved = load_model(FORMAT_1)
    assert saved.document["format_version"] == 1 and FORMAT_VERSION == 2
    classing = saved.settings.classing
    assert (classing.bad_rate_shape, classing.max_classes, classing.min_class_share) == ("from-data", 8, 0.05)
    old = {c["name"]: c["binning"] for c in saved.document["characteristics"]}
    words = {"auto": "from-data", "ascending": "falls", "descending": "rises", "none": "any"}
    for binning in saved.scorecard.binnings:
        was = old[binning.characteristic]
        assert binning.bad_rate_shape == words[was["trend"]]
        assert binning.unseen_bin == was["fallback_bin"]
        assert binning.classes == tuple(tuple(levels) for levels in was["groups"])
    channel = next(b for b in saved.scorecard.binnings if b.characteristic == "channel")
    scored = saved.scorecard.score(pd.DataFrame({b.characteristic: [None] for b in saved.scorecard.binnings})
                                   .assign(channel=["a channel never seen"]), reason_count=1)
    assert len(scored) == 1 and channel.kind == "categorical"


def test_a_new_model_file_writes_format_2_with_the_present_names(built, tmp_path):
    _, build = built
    document = json.loads(save_model(model_document(build), tmp_path / "model.json").read_text(encoding="utf-8"))
    assert document["format_version"] == 2
    binning = document["characteristics"][0]["binning"]
    assert {"classes", "bad_rate_shape", "unseen_bin"} <= set(binning)
    assert not {"groups", "trend", "fallback_bin"} & set(binning)
    assert "bad_rate_shape" in document["settings"]["classing"] and "max_classes" in document["settings"]["classing"]
