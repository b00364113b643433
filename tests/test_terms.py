"""Tests of scorecard/terms.py: the shared words, and that each is defined there and nowhere else."""

from __future__ import annotations

import ast
from pathlib import Path

import numpy as np

from scorecard import terms
from scorecard.terms import frozen, most_honest, value_text

PACKAGE = Path(terms.__file__).parent


def test_the_most_honest_sample_comes_first():
    assert most_honest(["development", "hold-out", "out-of-time"]) == "out-of-time"
    assert most_honest({"development", "hold-out"}) == "hold-out"
    assert most_honest(["development"]) == "development"
    assert most_honest([]) == ""


def test_a_value_has_one_text_whether_read_as_number_or_text():
    assert [value_text(v) for v in (1, 1.0, np.int64(1), np.float64(1.0), "1")] == ["1"] * 5
    assert [value_text(True), value_text(np.bool_(False)), value_text(1.5), value_text("bad")] == ["true", "false", "1.5", "bad"]


def test_frozen_arrays_are_read_only_copies():
    source = [1, 2, 3]
    array = frozen(source)
    assert array.dtype == float and not array.flags.writeable
    flags = frozen(np.array([True, False]))
    assert flags.dtype == bool and not flags.flags.writeable


def test_every_shared_term_is_defined_once():
    shared = {name for name in vars(terms) if name.isupper()}
    elsewhere = []
    for path in PACKAGE.rglob("*.py"):
        if path.name == "terms.py":
            continue
        for node in ast.parse(path.read_text(encoding="utf-8")).body:
            targets = node.targets if isinstance(node, ast.Assign) else [node.target] if isinstance(node, ast.AnnAssign) else []
            for target in targets:
                names = [e.id for e in target.elts] if isinstance(target, ast.Tuple) else [getattr(target, "id", "")]
                elsewhere += [f"{path.relative_to(PACKAGE)}: {name}" for name in names if name in shared]
    assert not elsewhere, elsewhere
