"""Tests of scorecard/commands.py: the pieces of each command's work, apart from the command line itself."""

from __future__ import annotations

import inspect
from pathlib import Path

import pandas as pd
import pytest

from scorecard import cli
from scorecard.commands import (
    check_output_folder, command_line_settings, monitoring_settings, parse_assignment, write_tables_atomically,
)
from scorecard.errors import LedgerError, SettingsError
from scorecard.options import Streams
from scorecard.settings import CharacteristicSettings, Settings


def test_every_command_of_the_table_is_a_function_of_options_and_streams():
    assert set(cli.COMMANDS) == {"init", "set", "build", "score", "monitor", "export", "demo"}
    for name in cli.COMMANDS:
        run = cli._command(name)
        assert list(inspect.signature(run).parameters) == ["options", "streams"], name
        assert inspect.signature(run).parameters["streams"].annotation in (Streams, "Streams")


@pytest.mark.parametrize("text, key, value", [
    ("samples.holdout_fraction=0.25", "samples.holdout_fraction", 0.25),
    ("characteristics.age.cuts=[25, 35, 50]", "characteristics.age.cuts", [25, 35, 50]),
    ("characteristics.age.use=never", "characteristics.age.use", "never"),  # a bare word is text
    ('report.title="Loans = money"', "report.title", "Loans = money"),
    ("checks.grades=[]", "checks.grades", []),
])
def test_an_assignment_reads_its_value_as_toml(text, key, value):
    assert parse_assignment(text) == (key, value)


@pytest.mark.parametrize("text", ["holdout_fraction=0.25", "=3", "samples.seed"])
def test_an_assignment_without_a_dotted_key_is_refused(text):
    with pytest.raises(SettingsError, match="write KEY=VALUE with a dotted key"):
        parse_assignment(text)


def test_an_output_folder_is_written_into_only_when_empty_or_forced(tmp_path):
    check_output_folder(tmp_path / "new", force=False)
    full = tmp_path / "full"
    full.mkdir()
    (full / "model.json").write_text("{}", encoding="utf-8")
    with pytest.raises(SettingsError, match="exists and is not empty. Pass --force"):
        check_output_folder(full, force=False)
    check_output_folder(full, force=True)
    with pytest.raises(SettingsError, match="exists and is not a folder"):
        check_output_folder(full / "model.json", force=True)


def test_monitoring_settings_keep_only_the_roles_the_new_ledger_has():
    settings = Settings().replace(
        ledger={"id_column": "id", "date_column": "date", "weight_column": "weight", "leave_out": ("late", "gone")},
        outcome={"column": "outcome", "bad": ("bad",)},
        samples={"holdout_fraction": 0.3, "out_of_time_from": "2025-01-01"},
        characteristics={"age": CharacteristicSettings(kind="numeric"), "gone": CharacteristicSettings(use="never")},
    )
    fitted = monitoring_settings(settings, ["id", "age", "late", "outcome"])
    assert (fitted.ledger.id_column, fitted.ledger.date_column, fitted.ledger.weight_column) == ("id", "", "")
    assert fitted.ledger.leave_out == ("late",) and fitted.outcome.column == "outcome"
    assert (fitted.samples.holdout_fraction, fitted.samples.out_of_time_from) == (0.0, "")
    assert list(fitted.characteristics) == ["age"]
    assert monitoring_settings(settings, ["age"]).outcome.column == ""  # outcomes not known yet


@pytest.mark.parametrize("suffix", [".csv", ".parquet"])
def test_tables_in_batches_become_one_file(tmp_path, suffix):
    frames = [pd.DataFrame({"row": [2, 3], "score": [601, 588], "reason_1": ["R01", ""]}),
              pd.DataFrame({"row": [4], "score": [640], "reason_1": ["R03"]})]
    path = write_tables_atomically(iter(frames), tmp_path / f"scored{suffix}")
    read = pd.read_csv(path, keep_default_na=False) if suffix == ".csv" else pd.read_parquet(path)
    pd.testing.assert_frame_equal(read, pd.concat(frames, ignore_index=True), check_dtype=False)
    assert sorted(p.name for p in tmp_path.iterdir()) == [f"scored{suffix}"]


def test_a_failure_part_way_leaves_no_scored_file(tmp_path):
    def frames():
        yield pd.DataFrame({"row": [2], "score": [601]})
        raise LedgerError("new.csv, after row 2: cannot read the next rows")

    with pytest.raises(LedgerError, match="after row 2"):
        write_tables_atomically(frames(), tmp_path / "scored.csv")
    assert list(tmp_path.iterdir()) == []


def test_command_line_settings_detect_the_id_and_date_columns_and_map_the_outcome():
    frame = pd.DataFrame({
        "application_id": [f"A{i:04d}" for i in range(40)],
        "applied_on": pd.date_range("2024-01-01", periods=40).strftime("%Y-%m-%d"),
        "income": [1_000 + 100 * (i % 7) for i in range(40)],  # repeats: not an identifier
        "outcome": ["bad" if i % 4 == 0 else "good" for i in range(40)],
    })
    settings = command_line_settings(frame, ledger=Path("/data/ledger.csv"), target="outcome", bad=("bad",),
                                     folder=Path("/data"), source="ledger.csv")
    assert (settings.ledger.id_column, settings.ledger.date_column) == ("application_id", "applied_on")
    assert (settings.outcome.bad, settings.outcome.good) == (("bad",), ("good",))
    assert settings.ledger.path == "ledger.csv"
    with pytest.raises(LedgerError, match=r"ledger.csv: outcome column 'outcom' not found. Did you mean 'outcome' or 'income'\?"):
        command_line_settings(frame, ledger=Path("ledger.csv"), target="outcom", folder=Path("."), source="ledger.csv")
