"""Run the analyst's whole flow on the invented demo scenario, printing each step.

The steps are the commands an analyst types, run in this process with the same arguments:
generate the ledgers; ``init`` on the first six quarters (the last two of them as the
out-of-time sample); the analyst's decisions from ``analyst.toml``; ``build``; ``score`` the
next applications with reasons; ``monitor`` the last two quarters once their outcomes are known.
"""

from __future__ import annotations

import shlex
import time
import tomllib
from importlib import resources
from pathlib import Path

from scorecard.commands import check_output_folder
from scorecard.demo import generator
from scorecard.errors import ScorecardError, SettingsError
from scorecard.options import DemoOptions, Streams
from scorecard.settings import toml_value

BUILD_QUARTERS = 6  # 2024Q1 to 2025Q2: the history the scorecard is built on
OUT_OF_TIME_FROM = "2025-01-01"  # the last two of those quarters are kept out of time
SPECIAL = ("months_since_delinquency=-1:no missed payment on record", "months_since_last_enquiry=999:no enquiry on record")
REJECTED = f"{generator.DECISION_COLUMN}=declined"  # the applications the earlier policy declined: no outcome


def run_demo(options: DemoOptions, streams: Streams) -> int:
    """Run the demo into folder ``options.out``; return 0 when every step succeeded (``scorewright demo``)."""
    from scorecard.cli import main  # the demo types the commands an analyst would

    if options.rows < 8_000:
        raise SettingsError(f"--rows {options.rows}: the demo needs at least 8000 applications (1000 a quarter).")
    check_output_folder(options.out, options.force)
    out, rows, seed = options.out, options.rows, options.seed
    started = time.perf_counter()
    data = out / "data"
    data.mkdir(parents=True, exist_ok=True)
    history, applications, recent = _write_ledgers(data, rows=rows, seed=seed, streams=streams)
    settings = out / "scorecard.toml"
    steps = [
        ("Propose a classing of every characteristic and write the settings file",
         ["init", str(history), "--target", "outcome", "--bad", "bad", "--good", "good", "--indeterminate", "indeterminate",
          "--out-of-time-from", OUT_OF_TIME_FROM, "--special", *SPECIAL, "--rejected", REJECTED,
          "--out", str(settings), "--force"]),
        ("The analyst's decisions, recorded in the settings file", "decisions"),
        ("Build the scorecard: selection, fit, points, checks, reports",
         ["build", str(settings), "--out", str(out / "build"), "--force"]),
        ("Score the next applications, with the reasons behind each score",
         ["score", str(out / "build" / "model.json"), str(applications), "--out", str(out / "scored.csv"), "--force"]),
        ("Monitor the last two quarters once their outcomes are known",
         ["monitor", str(out / "build" / "model.json"), str(recent), "--out", str(out / "monitor"), "--force"]),
    ]
    for number, (title, argv) in enumerate(steps, start=2):
        streams.say(f"\n== step {number} of {len(steps) + 1}: {title}")
        if argv == "decisions":
            argv = _decisions(settings, streams)
        streams.say("$ scorewright " + " ".join(shlex.quote(a) for a in argv))
        code = main(argv, stdout=streams.out, stderr=streams.err)
        if code not in (0, 1):
            raise ScorecardError(f"the demo stopped at 'scorewright {argv[0]}' (exit code {code}); the message above says why.")
    streams.say(f"\n== done in {time.perf_counter() - started:.0f} s. Open these files:")
    for path, what in [
        (out / "build" / "report.html", "the reviewer's report (any browser, offline)"),
        (out / "build" / "workbook.xlsx", "the reviewer's workbook, with live formulas"),
        (out / "build" / "model-document.html", "the model document for model-risk review (printable)"),
        (out / "scored.csv", "scores, PDs and reasons of the new applications"),
        (out / "monitor" / "monitor.html", "the monitoring report of the last two quarters"),
        (settings, "the settings file: every decision, editable"),
    ]:
        if path.exists():
            streams.say(f"  {path}  {what}")
    return 0


def _write_ledgers(data: Path, *, rows: int, seed: int, streams):
    streams.say(f"== step 1 of 6: Generate the ledgers of {generator.SCENARIO_NAME} (invented), {rows:,} applications over eight quarters")
    frame, _ = generator.with_rejections(generator.generate_ledger(rows, seed=seed), seed=seed)
    quarter = generator.quarter_index(frame)
    history = generator.write_ledger(frame[quarter < BUILD_QUARTERS], data / "history.csv")
    later = frame[quarter >= BUILD_QUARTERS]
    applications = generator.write_ledger(later.drop(columns=[generator.TARGET, generator.LEAKING, generator.DECISION_COLUMN]),
                                          data / "new_applications.csv")
    recent = generator.write_ledger(later, data / "recent_outcomes.csv")
    names = generator.quarter_names()
    declined = int((frame[generator.DECISION_COLUMN].eq("declined") & (quarter < BUILD_QUARTERS)).sum())
    streams.say(f"  {history}: {names[0]} to {names[BUILD_QUARTERS - 1]}, {int((quarter < BUILD_QUARTERS).sum()):,} applications: "
                f"{declined:,} declined by the earlier policy (no outcome), the rest with outcomes")
    streams.say(f"  {applications}: {names[BUILD_QUARTERS]} to {names[-1]}, {len(later):,} applications to score")
    streams.say(f"  {recent}: the same applications with the decisions, and the outcomes known a year later")
    return history, applications, recent


def _decisions(settings: Path, streams) -> list[str]:
    """Say each of the analyst's decisions and why; return the 'scorewright set' arguments that make them."""
    text = resources.files("scorecard.demo").joinpath("analyst.toml").read_text(encoding="utf-8")
    document = tomllib.loads(text)
    decisions = document["decision"]
    for decision in decisions:
        streams.say(f"  {decision['key']} = {decision['value']!r}: {decision['why']}")
    labels = document["labels"]
    streams.say(f"  characteristics.NAME.label for {len(labels)} characteristics: the reason texts applicants are given "
                f"(e.g. {next(iter(labels))} = {next(iter(labels.values()))!r})")
    assignments = [f"{d['key']}={toml_value(d['value'])}" for d in decisions]
    assignments += [f"characteristics.{name}.label={toml_value(label)}" for name, label in labels.items()]
    return ["set", str(settings), *assignments]
