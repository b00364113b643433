"""RESULTS.md: the findings of one run as Markdown tables, written atomically."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from scorecard.files import write_text_atomically

from . import results as r
from .measure import Run, median
from .sections import BASELINE, BUILD, BUILD_NO_REPORTS, HANDWRITTEN, SCORE

PROCESSES = {
    BUILD: "`scorewright build settings.toml --out DIR --force --timings`",
    BUILD_NO_REPORTS: "`scorewright build settings.toml --out DIR --force --no-reports --timings`",
    HANDWRITTEN: "`python benchmarks/handwritten.py LEDGER` (pandas, statsmodels, scikit-learn, scipy)",
    SCORE: "`scorewright score model.json LEDGER --out scored.csv --force`",
}


def write_results(results: r.Results, path: Path) -> Path:
    """Write RESULTS.md under a temporary name in the same folder, then rename it into place."""
    return write_text_atomically(path, markdown(results))


def markdown(results: r.Results) -> str:
    """Return the whole RESULTS.md text."""
    parts = [
        _heading(results), _machine(results), _targets(results), _processes(results), _auc(results),
        _engines(results), _help(results), _scoring(results), _reports(results), _streaming(results),
        _row_engines(results), _where_time_goes(results), _profile(), _every_run(results),
    ]
    return "\n\n".join(part.rstrip() for part in parts if part) + "\n"


def large_markdown(results: r.Results) -> str:
    """Return RESULTS-large.md's text (but the figures as JSON, which ``large.write_large`` adds): the streamed
    builds of a ``--large`` run and the three targets of the 100M build."""
    took = (results.finished - results.started).total_seconds() / 60 if results.finished else None
    heading = "\n".join([
        "# Benchmark results: the streamed build of 100M rows",
        "",
        f"Run {results.started:%Y-%m-%d %H:%M} (local time) with `{results.command}`; it took {_number(took, '{:.0f}')} min. "
        "Each size is one `scorewright build SETTINGS --out DIR --force --stream --no-reports --timings` on the Parquet "
        "ledger of that size, the classing fixed by `scorewright init` on the 1M-row CSV (as `make bench` does). "
        "`make bench` copies the three targets below into RESULTS.md, saying when they were recorded.",
        "",
        "Machine load (1-minute load average just before each build): "
        + ", ".join(f"{size:,} rows {run.load:.1f}" for size, run in
                    (results.streaming if isinstance(results.streaming, list) else [])) + f" on {results.machine['cores']} cores.",
    ] + ([f"", f"**Note:** {results.note}"] if results.note else []))
    large = [target for target in r.target_list(results) if target.before and "100M" in target.promise or
             target.promise.startswith("… and ≤ 1.3× the 1M") or target.promise.startswith("… time per row at 100M")]
    targets = "## Targets\n\n" + table(["target", "before", "measured", "status"],
                                        [(t.promise, t.before, t.figure(), t.verdict()) for t in large])
    stages = [f"Streamed build, {size:,} rows: " + ", ".join(f"{stage} {seconds:.1f} s" for stage, seconds in
                                                          r.stage_medians([run]).items()) + "."
              for size, run in (results.streaming if isinstance(results.streaming, list) else []) if r.stage_medians([run])]
    parts = [heading, _machine(results), targets, _streaming(results), "## Where the time goes\n\n" + "\n\n".join(stages)]
    return "\n\n".join(part.rstrip() for part in parts if part) + "\n"


def _profile() -> str:
    """The profiling notes kept by hand in PROFILE.md: where the time went, and what was changed."""
    notes = Path(__file__).with_name("PROFILE.md")
    return notes.read_text(encoding="utf-8") if notes.exists() else ""


def table(header: Sequence[str], rows: Sequence[Sequence[object]], numeric: Sequence[int] = ()) -> str:
    """Return a Markdown table; columns listed in ``numeric`` are right-aligned."""
    align = ["---:" if i in numeric else "---" for i in range(len(header))]
    lines = [header, align, *[[str(cell) for cell in row] for row in rows]]
    return "\n".join("| " + " | ".join(line) + " |" for line in lines)


def _number(value: float | None, pattern: str = "{:.2f}") -> str:
    return "—" if value is None else pattern.format(value)


def _heading(results: r.Results) -> str:
    took = (results.finished - results.started).total_seconds() / 60 if results.finished else None
    loads = [run.load for run in results.runs()]
    lines = [
        "# Benchmark results",
        "",
        f"Run {results.started:%Y-%m-%d %H:%M} (local time) with `{results.command}`; it took {_number(took, '{:.0f}')} min.",
        f"Ledger: `{results.ledger}` from the demo scenario's generator, {results.rows:,} rows × 30 characteristics "
        f"(seed {results.seed}, {results.ledger_mb:,.0f} MB of CSV). {results.pairs} alternating pairs per comparison.",
    ]
    if loads:
        lines.append(f"Machine load (1-minute load average just before each timed process, this run's own process "
                     f"included): median {median(loads):.1f}, max {max(loads):.1f} on {results.machine['cores']} cores.")
    if results.code_changes:
        shown = ", ".join(f"`{name}`" for name in results.code_changes[:6])
        more = f" and {len(results.code_changes) - 6} more" if len(results.code_changes) > 6 else ""
        lines += ["", f"**The tool's code changed while this run was going** ({shown}{more}): the runs measured "
                      "more than one version of it, so compare the pairs in order (last section)."]
    if results.note:
        lines += ["", f"**Note:** {results.note}"]
    return "\n".join(lines)


def _machine(results: r.Results) -> str:
    return "## Machine\n\n" + table(["", ""], list(results.machine.items()))


def _targets(results: r.Results) -> str:
    targets = r.target_list(results)
    issue = [(target.promise, target.before, target.figure(), target.verdict()) for target in targets if target.before]
    standing = [(target.promise, target.figure(), target.verdict()) for target in targets if not target.before]
    return ("## Targets\n\nIssue 18's table (1M rows × 30 characteristics, CSV, unless said), measured side by side in this "
            "run; \"before\" is the figure the issue started from. Why a missed target is missed, and what would close "
            "it, is in the profile notes below.\n\n"
            + table(["target", "before", "measured", "status"], issue)
            + "\n\nStanding checks (the first performance issue):\n\n" + table(["target", "measured", "status"], standing))


def _processes(results: r.Results) -> str:
    baseline = [a for pairs in results.paired.values() for a, _ in pairs]
    rows = [(f"{BASELINE} (pandas `read_csv`, {results.engine} engine)", _ok(baseline), _number(r.wall(baseline)),
             _number(r.peak(baseline), "{:,.0f}"), "1", "1", "")]
    for label, pairs in results.paired.items():
        others = [b for _, b in pairs]
        ratios = [b.wall / a.wall for a, b in r.ok_pairs(pairs)]
        spread = f"{min(ratios):.2f}–{max(ratios):.2f}" if ratios else "—"
        rows.append((PROCESSES[label], _ok(others), _number(r.wall(others)), _number(r.peak(others), "{:,.0f}"),
                     _number(r.time_ratio(pairs)), _number(r.memory_ratio(pairs)), spread))
    failures = [f"- {b.label}: {b.failure()}" for pairs in results.paired.values() for a, b in pairs if not b.ok]
    text = ("## Whole processes\n\nEach process is started fresh under `/usr/bin/time -v` and paired with a parse-only "
            "run just before it. Wall and peak RSS are medians over the runs; ratios are medians of the per-pair "
            "ratios to parse-only.\n\n")
    text += table(["process", "runs ok", "wall s", "peak RSS MB", "time ratio", "memory ratio", "time ratio range"],
                  rows, numeric=(1, 2, 3, 4, 5, 6))
    return text + ("\n\nFailed runs:\n" + "\n".join(sorted(set(failures))) if failures else "")


def _ok(runs: Sequence[Run]) -> str:
    return f"{sum(run.ok for run in runs)}/{len(runs)}"


def _auc(results: r.Results) -> str:
    truth = results.truth
    rows = [
        ("scorewright build", _number(results.build_auc, "{:.4f}"),
         "its own hold-out (`performance` → `hold-out` → `auc` of model.json; 30 % of the rows, seeded in the settings)"),
        ("hand-written pipeline", _number(r.handwritten_auc(results), "{:.4f}"),
         f"its 70/30 stratified split, seed {results.seed}"),
        ("true model", _number(truth.get("holdout"), "{:.4f}"), "the hand-written pipeline's hold-out rows"),
        ("true model", _number(truth.get("all_decided"), "{:.4f}"), "all decided rows of the ledger"),
        ("true model without the last quarter's shift", _number(truth.get("holdout_without_shift"), "{:.4f}"),
         "the hand-written pipeline's hold-out rows (characteristics only: the ceiling of a scorecard without the date)"),
    ]
    text = "## Hold-out AUC\n\nAUC of ranking bads below goods; the true model is the generator's `true_bad_probability`.\n\n"
    text += table(["model", "AUC", "on"], rows, numeric=(1,))
    return text + (f"\n\nTrue model: {truth['error']}" if "error" in truth else "")


def _engines(results: r.Results) -> str:
    rows = [(engine, "yes" if engine == results.engine else "", _number(run.wall) if run.ok else run.failure(),
             _number(run.peak_mb, "{:,.0f}")) for engine, run in results.engines.items()]
    return ("## Parse-only engine\n\npandas `read_csv` was timed once with each engine; the faster one is the "
            f"parse-only baseline everywhere: **{results.engine}**.\n\n"
            + table(["engine", "chosen", "wall s", "peak RSS MB"], rows, numeric=(2, 3)))


def _help(results: r.Results) -> str:
    walls = [run.wall for run in results.help if run.ok]
    if not walls:
        return "## Start-up\n\n`scorewright --help` did not run successfully."
    return (f"## Start-up\n\n`scorewright --help`, {len(walls)} runs: median {median(walls):.3f} s, "
            f"fastest {min(walls):.3f} s, slowest {max(walls):.3f} s (GNU time resolution 0.01 s).")


def _scoring(results: r.Results) -> str:
    found = results.scoring
    if "seconds" not in found:
        return f"## In-memory scoring\n\nNot measured: {found.get('error', 'no model')}."
    seconds = found["seconds"]
    return ("## In-memory scoring\n\n`load_model(model.json).scorecard.score(frame)` on the "
            f"{found['rows']:,}-row frame already in memory, {len(seconds)} times (model loaded once): median "
            f"{median(seconds):.3f} s, i.e. {found['rows'] / median(seconds) / 1e6:.1f}M rows/s "
            f"(runs: {', '.join(f'{s:.3f}' for s in seconds)} s).")


def _reports(results: r.Results) -> str:
    text = "## Report rendering against rows\n\n"
    if results.reports is None:
        return text + "Not run."
    if isinstance(results.reports, str):
        return text + results.reports[0].upper() + results.reports[1:] + "."
    rows = []
    for size, found in results.reports.items():
        if "error" in found:
            rows.append((f"{size:,}", "failed", found["error"], "", ""))
            continue
        rows.append((f"{size:,}", _number(found["build_and_validate"]), _number(median(found["render_report"]), "{:.3f}"),
                     _number(median(found["workbook"]), "{:.3f}"), len(found["render_report"])))
    text += ("`render_report(build, validation)` and `workbook(build, validation)` (the workbook object, not saved) "
             "timed in one process after `build_scorecard(frame, settings)` and `validate_build(build)`; medians.\n\n")
    text += table(["rows", "build + validate s", "render_report s", "workbook s", "repeats"], rows, numeric=(0, 1, 2, 3, 4))
    credit = results.credit_workbook.get("workbook")
    if credit:
        text += (f"\n\nThe workbook of `credit_data` (modeldata, {results.credit_workbook['rows']:,} rows; "
                 f"`python -m benchmarks.inmemory credit-data`): {median(credit):.3f} s, median of {len(credit)}.")
    elif results.credit_workbook:
        text += f"\n\nThe workbook of `credit_data`: {results.credit_workbook.get('error', 'not measured')}."
    return text


def _streaming(results: r.Results) -> str:
    text = "## Streamed builds\n\n"
    if results.streaming is None:
        return text + "Not run (pass `--streaming`)."
    if isinstance(results.streaming, str):
        return text + results.streaming[0].upper() + results.streaming[1:] + "."
    done = [(size, run) for size, run in results.streaming if run.ok]
    first_size, first = done[0] if done else (None, None)
    rows = []
    for size, run in results.streaming:
        if not run.ok:
            rows.append((f"{size:,}", run.failure(), "", "", "", ""))
            continue
        per_million = run.wall / size * 1e6
        rows.append((f"{size:,}", _number(run.wall), _number(run.peak_mb, "{:,.0f}"), _number(run.peak_mb / first.peak_mb),
                     _number(per_million), _number(per_million / (first.wall / first_size * 1e6))))
    text += ("Flat memory shows as a peak ratio near 1 at every size; linear time as seconds per million rows "
             "staying near the smallest size's.\n\n")
    return text + table(["rows", "wall s", "peak RSS MB", "peak vs smallest", "s per million rows",
                         "per-row time vs smallest"], rows, numeric=(0, 1, 2, 3, 4, 5))


def _row_engines(results: r.Results) -> str:
    text = "## Engines: the same build where the rows live\n\n"
    if results.row_engines is None:
        return text + "Not run (pass `--engines`)."
    from .rowengines import summary_rows

    text += ("`scorewright build SETTINGS --out DIR --force --no-reports --timings --engine E` once per engine and size, "
             "on the Parquet ledger of that size; in process the 1M ledger is read whole and the 10M one in batches "
             "(`--stream`). Peak RSS of the process is GNU time's; of the process tree, sampled every 0.25 s (Spark's "
             "JVM is a process of its own). Time against in-process: the in-process build of the same size (read whole "
             "at 1M, streamed at 10M). Same model: the model file equals the in-process one but for `ledger.engine`, the "
             "fit's solver name and the fairness checks (computed in process only; an engine's build says they were not "
             "computed), every float to 1e-9 relative (the issue's tolerance; sums added in another order). "
             "On this 2-core machine Spark is not expected to win: the point is the same answer where the data lives.\n\n")
    return text + table(["engine", "rows", "wall s", "peak RSS MB (process)", "peak RSS MB (process tree)",
                         "time vs in-process", "same model"], summary_rows(results.row_engines), numeric=(1, 2, 3, 4, 5))


def _where_time_goes(results: r.Results) -> str:
    text = "## Where the time goes\n\n"
    blocks = []
    for label in (BUILD, BUILD_NO_REPORTS):
        runs = [b for _, b in results.paired.get(label, [])]
        stages, total = r.stage_medians(runs), r.wall(runs)
        if not stages or not total:
            continue
        rows = [(stage, f"{seconds:.2f}", f"{seconds / total:.0%}") for stage, seconds in stages.items()]
        rows.append(("outside the stages (start-up, imports, exit)", f"{total - sum(stages.values()):.2f}",
                     f"{(total - sum(stages.values())) / total:.0%}"))
        top = sorted(stages.items(), key=lambda item: -item[1])[:2]
        blocks.append(f"`{label}` — median process wall {total:.2f} s; the largest stages are "
                      + " and ".join(f"{stage} ({seconds / total:.0%})" for stage, seconds in top) + ".\n\n"
                      + table(["stage", "median s", "share of wall"], rows, numeric=(1, 2)))
    if isinstance(results.streaming, list):
        for size, run in results.streaming:
            stages = r.stage_medians([run])
            if stages:
                blocks.append(f"Streamed build, {size:,} rows: "
                              + ", ".join(f"{stage} {seconds:.1f} s" for stage, seconds in stages.items()) + ".")
    if not blocks:
        return text + "No stage table was printed (`build --timings`)."
    return text + ("Medians of the stage table `scorewright build --timings` prints on stderr, over the timed runs.\n\n"
                   + "\n\n".join(blocks))


def _every_run(results: r.Results) -> str:
    rows = []
    for label, pairs in results.paired.items():
        for number, (a, b) in enumerate(pairs, start=1):
            for run in (a, b):
                rows.append((label, number, run.label, _number(run.wall) if run.ok else "failed",
                             _number(run.peak_mb, "{:,.0f}"), _number(run.cpu), f"{run.load:.1f}"))
    return ("## Every paired run\n\n"
            + table(["comparison", "pair", "process", "wall s", "peak RSS MB", "CPU s", "load"], rows,
                    numeric=(1, 3, 4, 5, 6)))
