"""Fixtures shared by several test modules."""

from __future__ import annotations

import io

import pytest

from scorecard.cli import main


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """The demo's whole flow at 8000 rows, run once per session: (folder, what it printed)."""
    folder = tmp_path_factory.mktemp("demo")
    out, err = io.StringIO(), io.StringIO()
    assert main(["demo", "--rows", "8000", "--out", str(folder), "--force"], stdout=out, stderr=err) == 0, err.getvalue()
    return folder, out.getvalue()


@pytest.fixture(scope="session")
def awkward_model_file(tmp_path_factory):
    """A saved model with decimals, awkward levels and names, special and unseen routes (tests/exported.py)."""
    from exported import awkward_model

    return awkward_model(tmp_path_factory.mktemp("awkward") / "model.json")
