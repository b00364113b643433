"""The monitoring report: one self-contained HTML page on how a saved scorecard fares on a new ledger.

``render_monitor`` turns a ``scorecard.monitor.MonitorResult`` into the page; ``write_monitor``
writes it. The page leads with the overall status (ok, watch or act) and the checks that set it,
each with its figure and its threshold, and then gives the detail: stability, discrimination and
calibration where outcomes are known, every check per calendar quarter, how the statuses are set,
the cautions, and what identifies the model and the ledger.

Like the build report, the page carries its own style and its charts as inline SVG, refers to
nothing outside itself, and is made from score histograms and count tables only. Every value is
formatted here (with the build report's helpers) and escaped by the template.

The words on how statuses are set and what to do about each are monitoring's own
(``scorecard.monitor.wording``), shared with the monitoring workbook.
"""

from __future__ import annotations

import shlex
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

from markupsafe import Markup

from .. import __version__
from ..checks import roc_points
from ..files import write_text_atomically
from ..intake import Fingerprint
from ..modelfile import SavedModel
from ..monitor import (
    MEANING, STATUSES, WHAT_TO_DO, CheckStatus, MonitorResult, driving_checks, monitoring_limits,
    status_rules,
)
from ..settings import CheckSettings
from . import CAUTION, charts
from .page_kit import (
    DASH, Cell, Figure, Table, calibration_figures, captioned_chart, count_text, environment, fixed_text, interval_text,
    level_text, library_versions, p_value_text, percent_text, psi_table, reference_wording, signed_text, span_text,
    status_cell, text_table,
)


SECTIONS = (
    ("status", "Status"),
    ("stability", "Stability"),
    ("discrimination", "Discrimination"),
    ("calibration", "Calibration"),
    ("fairness", "Fair lending"),
    ("quarters", "By quarter"),
    ("rules", "How statuses are set"),
    ("cautions", "Cautions and limits"),
    ("reproducibility", "Reproducibility"),
)


NEW = "new"  # the monitored ledger's name in tables beside "development"
DRIVING_ROWS = 8  # most raised checks listed under the status; the rest are counted
CALM_NAMES = 4  # checks named in the line that counts the calm ones


# The status colours of templates/style.css (--ok, --watch, --act), for the SVG bars.
STATUS_COLOURS = {"ok": "#3b7d4f", "watch": "#a86b12", "act": "#b23b3b"}


def render_monitor(result: MonitorResult, saved: SavedModel, *, model_path: str | Path = "model.json",
                   ledger_fingerprint: Fingerprint | None = None, generated_by: str = "") -> str:
    """Return the monitoring report as one self-contained HTML page.

    Parameters
    ----------
    result : MonitorResult
        The checks of the new ledger against the development baseline (``monitor_ledger``).
    saved : SavedModel
        The model that was monitored; its file's checksum and build are shown under reproducibility.
    model_path : path-like
        The model file as the user named it.
    ledger_fingerprint : Fingerprint, optional
        Rows and SHA-256 of the monitored ledger (``scorecard.intake.fingerprint_of``).
    generated_by : str
        The command that made the report.

    Returns
    -------
    str
        The HTML page: inline style and SVG charts, no script, no external reference.
    """
    report = saved.settings.report
    # without dates there is nothing by quarter: the section is left out, not shown empty
    sections = SECTIONS if result.quarters else tuple(item for item in SECTIONS if item[0] != "quarters")
    context = {
        "title": report.title,
        "kicker": "Scorecard monitoring report",
        "subtitle": _subtitle(result, saved),
        "caution": CAUTION,
        "tool_version": __version__,
        "sections": sections,
        "status": _status(result),
        "stability": _stability(result),
        "discrimination": _discrimination(result, saved),
        "calibration": _calibration(result, saved.scorecard.table.decimals),
        "fairness": _fairness(result, saved),
        "quarters": _quarters(result, saved),
        "rules": _rules(result.checks),
        "cautions": {"limits": monitoring_limits(result), "notes": list(result.notes)},
        "reproducibility": _reproducibility(result, saved, model_path, ledger_fingerprint, generated_by),
    }
    return environment().get_template("monitor.html").render(**context)


def write_monitor(result: MonitorResult, saved: SavedModel, path, *, model_path: str | Path = "model.json",
                  ledger_fingerprint: Fingerprint | None = None, generated_by: str = "") -> Path:
    """Write the monitoring report to ``path`` atomically and return the path.

    The page is written under a temporary name in the same folder and renamed into place, so a
    failed run leaves no half-written report.

    Parameters
    ----------
    result, saved, model_path, ledger_fingerprint, generated_by
        As for ``render_monitor``.
    path : path-like
        Where the report goes, e.g. ``q3/monitor.html``; its folder is made if missing.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    OSError
        The folder cannot be made or written to; any earlier report at ``path`` is left as it was.
    """
    page = render_monitor(result, saved, model_path=model_path, ledger_fingerprint=ledger_fingerprint,
                          generated_by=generated_by)
    return write_text_atomically(Path(path), page)


def figure_text(status: CheckStatus) -> str:
    """Return a check's figure as text: 'PSI 0.4831' or 'p-value < 0.001'."""
    value = fixed_text(status.value, 4) if status.direction == "above" else p_value_text(status.value)
    return f"{status.figure} {value}"


# --------------------------------------------------------------------------------------------
# 1. Status


def _subtitle(result: MonitorResult, saved: SavedModel) -> str:
    lender = saved.settings.report.lender
    periods = [q.period for q in result.quarters]
    span = f", {periods[0]} to {periods[-1]}" if len(periods) > 1 else "".join(f", {p}" for p in periods)
    built = saved.document.get("ledger", {}).get("source", "the build")
    made = (f"{result.source} ({count_text(result.overall.rows)} applications{span}) against the development "
            f"sample of {built}")
    return f"{lender} · {made}" if lender else made


def _status(result: MonitorResult) -> dict:
    overall = result.overall
    word = result.status
    driving = driving_checks(overall)
    shown = driving[:DRIVING_ROWS]
    rows = [[status_cell(s.status), s.check, Cell(figure_text(s), "check-figure"), s.thresholds, s.detail] for s in shown]
    caption = ("The checks that set the overall status, most serious first; whole ledger against the development "
               "sample." if overall.status != "ok" else
               "No check crossed a threshold; the headline checks are shown with their thresholds; whole ledger.")
    if len(driving) > len(shown):
        caption += f" {len(driving) - len(shown)} more raised checks are in sections 2 to 4."
    table = text_table(["status", "check", "figure", "threshold", "detail"], rows, numeric=(2,), caption=caption,
                       css="driving")
    calm = [s.check for s in overall.statuses if s.status == "ok" and s not in shown]
    calm_line = ""
    if calm:
        more = len(calm) - CALM_NAMES
        named = ", ".join(calm[:CALM_NAMES]) + (f" and {more} more" if more > 0 else "")
        calm_line = f"ok on the other {len(calm)} checks: {named}."
    return {
        "word": word,
        "meaning": MEANING[word],
        "todo": WHAT_TO_DO[word],
        "driving": table,
        "calm": calm_line,
        "figures": _headline_figures(result),
        "quarters": [(q.period, q.status) for q in result.quarters],
        "stability_only": _stability_only(result),
    }


def _stability_only(result: MonitorResult) -> str:
    if result.overall.outcomes is not None:
        return ""
    return (f"No row of {result.source} has a known outcome (good or bad), so discrimination and "
            f"calibration were not checked. Both compare scores with what happened to the loans: either the ledger "
            f"has no outcome column, or its loans have not run long enough to be called good or bad. Monitor the "
            f"same applications again once their outcomes are known.")


def _headline_figures(result: MonitorResult) -> list[Figure]:
    overall = result.overall
    figures = [
        Figure("Applications", count_text(overall.rows),
               f"{count_text(overall.goods)} good, {count_text(overall.bads)} bad, "
               f"{count_text(overall.indeterminate)} indeterminate, {count_text(overall.unknown)} no outcome yet"),
        Figure("Score PSI", fixed_text(overall.score_stability.value, 4),
               f"{overall.score_stability.status}; against the development bands"),
    ]
    if overall.outcomes is not None:
        large = overall.outcomes.in_the_large
        area = overall.outcomes.auc
        figures.append(Figure("Bad rate, observed", percent_text(large.observed_rate),
                              f"predicted {percent_text(large.expected_rate)}"))
        baseline = result.baseline_auc
        if baseline is not None:
            figures.append(Figure("AUC, new", fixed_text(area.auc, 4),
                                  f"baseline {fixed_text(baseline.auc, 4)}: the {baseline.sample} sample at build time"))
    return figures


# --------------------------------------------------------------------------------------------
# 2. Stability


def _stability(result: MonitorResult) -> dict:
    overall = result.overall
    score = overall.score_stability
    by_check = {s.check: s for s in overall.statuses}
    score_status = by_check["score stability"]
    labels = list(score.labels)
    shares = captioned_chart(
        charts.clustered_columns(labels, {"development": score.expected_share, NEW: score.actual_share},
                               x_label="score band", y_label="share of applications", percent=True, width=460,
                               title="Share of applications per score band, development and new"),
        "Share of all applications in each score band fixed on the development sample: development against the "
        "new ledger.")
    characteristics = overall.characteristics
    statuses = [by_check[f"stability of {c.characteristic}"] for c in characteristics]
    psi_chart = captioned_chart(
        charts.bar_chart([c.characteristic for c in characteristics], [c.psi.value for c in characteristics],
                         value_label="PSI against development", colours=[STATUS_COLOURS[s.status] for s in statuses],
                         title="PSI of each model characteristic, new ledger against development", width=520),
        f"PSI of each model characteristic over its bins, new ledger against development, rounded to two decimals "
        f"beside the bars; bar colour is the check's status (watch from {result.checks.psi_watch:g}, act from "
        f"{result.checks.psi_act:g}).")
    raised = [(c, s) for c, s in zip(characteristics, statuses) if s.status != "ok"]
    return {
        "figure": fixed_text(score.value, 4),
        "status": score_status.status,
        "thresholds": score_status.thresholds,
        "bands": psi_table(score, NEW, "scores"),
        "shares": shares,
        "psi_chart": psi_chart,
        "characteristics": _characteristic_table(characteristics, statuses, overall.unseen),
        "unseen": _unseen_table(overall.unseen),
        "raised": [{"name": c.characteristic, "status": s.status, "figure": fixed_text(c.psi.value, 4),
                    "bins": replace(psi_table(c.psi, NEW, "bin"),
                                    caption=f"Bins of {c.characteristic}: development against the new ledger; "
                                            f"every application counts, whatever its outcome.")}
                   for c, s in raised],
    }


def _characteristic_table(characteristics, statuses: Sequence[CheckStatus], unseen) -> Table:
    def missing(share):
        return percent_text(share, 1) if share is not None else DASH

    rows = []
    for item, status in zip(characteristics, statuses):
        levels = unseen.get(item.characteristic, {})
        rows.append([item.characteristic, fixed_text(item.psi.value, 4), status_cell(status.status),
                     fixed_text(item.shift.expected_mean, 2), fixed_text(item.shift.actual_mean, 2),
                     signed_text(item.shift.shift, 2), missing(item.missing_share_development),
                     missing(item.missing_share_other), count_text(sum(levels.values())) if levels else ""])
    return text_table(
        ["characteristic", "PSI", "status", "mean points, development", "mean points, new", "points shift",
         "missing, development", "missing, new", "rows with unseen levels"], rows, numeric=range(3, 9),
        caption="Each model characteristic over its bins, development against the new ledger. Points shift: how far "
                "this characteristic alone moves the mean score. A level never seen at build time makes the "
                "status at least watch.")


def _unseen_table(unseen) -> Table | None:
    rows = [[name, level, count_text(n)] for name, levels in unseen.items() for level, n in levels.items()]
    if not rows:
        return None
    return text_table(["characteristic", "level never seen at build time", "rows"], rows, numeric=(2,),
                      caption="Levels of the new ledger that the development sample did not have. The scorecard "
                              "scores them in the unseen bin its settings give; check that bin suits them.")


# --------------------------------------------------------------------------------------------
# 3. Discrimination


def _discrimination(result: MonitorResult, saved: SavedModel) -> dict:
    overall = result.overall
    outcomes = overall.outcomes
    if outcomes is None:
        return {"checked": False, "why": overall.not_computed.get("discrimination", "")}
    baseline = result.baseline_auc
    area, ks = outcomes.auc, outcomes.ks
    level = level_text(area.level)
    if baseline is None:  # no sample of the build had goods and bads: nothing to compare with
        return {"checked": True, "table": None, "test": None, "baseline": "",
                "roc": _roc(None, saved, outcomes)}
    comparison = [
        ["AUC", fixed_text(baseline.auc, 4), fixed_text(area.auc, 4), signed_text(area.auc - baseline.auc, 4),
         interval_text(area.lower, area.upper, 4)],
        ["AUC standard error (DeLong)", fixed_text(baseline.std_error, 4), fixed_text(area.std_error, 4), "", ""],
        ["Gini", fixed_text(baseline.gini, 4), fixed_text(area.gini, 4), signed_text(area.gini - baseline.gini, 4),
         interval_text(area.gini_lower, area.gini_upper, 4)],
        ["KS", fixed_text(baseline.ks, 4), fixed_text(ks.statistic, 4), signed_text(ks.statistic - baseline.ks, 4), ""],
    ]
    table = text_table(["figure", f"{baseline.sample} at build time", NEW, "change", f"new, {level} interval"],
                       comparison, numeric=range(1, 5),
                       caption=f"Baseline: the build's {baseline.sample} sample, its most honest (out-of-time, else "
                               f"hold-out, else development), as saved in the model file; the fall test compares with "
                               f"it. New: the whole ledger's goods and bads. AUC interval: DeLong, {level}.")
    status = next((s for s in overall.statuses if s.check == "discrimination"), None)
    fall = overall.auc_fall
    test = None
    if fall is not None and status is not None:
        test = {"status": status.status, "figure": figure_text(status), "thresholds": status.thresholds,
                "text": f"AUC {fixed_text(fall.auc, 4)} (standard error {fixed_text(fall.std_error, 4)}) against "
                        f"{fixed_text(fall.reference, 4)} (standard error {fixed_text(fall.reference_std_error, 4)}) on "
                        f"the {baseline.sample} sample at build time: z = difference / √(sum of the two variances) = "
                        f"{fixed_text(fall.z, 2)}."}
    return {"checked": True, "table": table, "test": test, "baseline": baseline.sample,
            "roc": _roc(baseline.sample, saved, outcomes)}


def _roc(sample: str | None, saved: SavedModel, outcomes):
    """ROC curves of the baseline sample (from the model file's histogram) and of the new ledger."""
    curves = {}
    if sample is not None:
        histogram = saved.baseline[sample]
        keep = (histogram.goods + histogram.bads) > 0
        curve = roc_points(histogram.scores[keep], histogram.goods[keep], histogram.bads[keep])
        curves[f"{sample} at build time"] = (curve.goods_declined, curve.bads_declined)
    curves[NEW] = (outcomes.roc.goods_declined, outcomes.roc.bads_declined)
    named = f"the {sample} sample at build time (from the model file's histogram) and " if sample else ""
    return captioned_chart(
        charts.roc_chart(curves, title="ROC curves, " + (f"{sample} sample at build time and " if sample else "")
                         + "new ledger"),
        f"Share of bads against share of goods declined as the cut-off rises: {named}the new ledger. The dashed "
        "diagonal is a score that does not discriminate.")


# --------------------------------------------------------------------------------------------
# 4. Calibration


def _calibration(result: MonitorResult, decimals: int) -> dict:
    overall = result.overall
    outcomes = overall.outcomes
    if outcomes is None:
        return {"checked": False, "why": overall.not_computed.get("calibration", "")}
    table = outcomes.calibration
    labels = [result.band_names[band] for band in table.band]
    tests = overall.calibration_tests
    chart = captioned_chart(
        charts.calibration_chart(labels, table.observed_rate, table.jeffreys_lower, table.jeffreys_upper,
                                 table.mean_pd, title="Observed and predicted bad rate by band, new ledger"),
        f"Observed bad rate per score band with its Jeffreys {level_text(table.level)} interval, and the band's "
        f"mean predicted PD; new ledger, bands fixed on development.")
    family = text_table(
        ["test", "p-value", "Holm-adjusted p"],
        [[t.test, p_value_text(t.p_value), _adjusted_cell(t.adjusted_p_value, result.checks)]
         for t in tests if not t.test.startswith("band ")],
        numeric=(1, 2), caption="The whole-ledger tests of the calibration family (the band tests are in the table "
                                "above).")
    status = next(s for s in overall.statuses if s.check == "calibration")
    smallest = min(tests, key=lambda t: t.adjusted_p_value)
    large = outcomes.in_the_large
    detail = (f"from {smallest.test}; {count_text(large.observed_bads)} bads observed against "
              f"{fixed_text(large.expected_bads, 1)} predicted")
    return {"checked": True, "status": status.status, "figure": figure_text(status), "thresholds": status.thresholds,
            "detail": detail, "figures": calibration_figures(outcomes), "chart": chart,
            "bands": _calibration_bands(table, labels, [t for t in tests if t.test.startswith("band ")], result.checks),
            "family": family,
            "notes": list(outcomes.notes)}


def _calibration_bands(table, labels: Sequence[str], band_tests, checks: CheckSettings) -> Table:
    """Per band: observed against predicted, Jeffreys interval and p, binomial p, and its Holm-adjusted p.

    ``band_tests`` are the band tests of ``calibration_family``, in the table's band order.
    """
    level = level_text(table.level)
    rows = [[label, count_text(count), count_text(bads), percent_text(observed), percent_text(predicted),
             fixed_text(expected, 1), interval_text(100 * low, 100 * high, 2) + "%", p_value_text(jeffreys),
             p_value_text(two_sided), _adjusted_cell(test.adjusted_p_value, checks)]
            for label, count, bads, observed, predicted, expected, low, high, jeffreys, two_sided, test in zip(
                labels, table.count, table.bads, table.observed_rate, table.mean_pd, table.expected_bads,
                table.jeffreys_lower, table.jeffreys_upper, table.jeffreys_p, table.binomial_p_two_sided, band_tests)]
    return text_table(
        ["scores", "applications", "bads", "observed bad rate", "predicted PD", "expected bads",
         f"Jeffreys {level} interval", "Jeffreys p (more bads)", "binomial p (two-sided)", "Holm-adjusted p"],
        rows, numeric=range(0, 10),
        caption="Observed against predicted defaults per score band; new ledger. Holm-adjusted p: the band's binomial "
                "p-value adjusted over the whole family of calibration tests; the smallest adjusted p-value of the "
                "family sets the status."
                + (" Band counts were rounded to whole numbers for the binomial tests." if table.rounded_counts else ""))


def _adjusted_cell(p_value: float, checks: CheckSettings) -> Cell:
    """A Holm-adjusted p-value, marked when it is below the watch threshold."""
    return Cell(p_value_text(p_value), "small-p" if p_value < checks.p_watch else "")


# --------------------------------------------------------------------------------------------
# 5. Fair lending


def _fairness(result: MonitorResult, saved: SavedModel) -> dict:
    """Each protected attribute's levels at the build's cut-off: approvals and the adverse impact ratio, per period."""
    guide = saved.settings.fairness.impact_ratio
    attributes = list((saved.document.get("fairness") or {}).get("attributes", {}))
    tables = []
    for name, periods in result.impacts.items():
        whole = periods["all"]
        quarters = [label for label in periods if label != "all"]
        rows = []
        for i, level in enumerate(whole.levels):
            cells = [level, count_text(whole.applications[i]), percent_text(whole.approval_rate[i], 1),
                     _ratio_cell(whole.ratio[i], guide)]
            for label in quarters:
                table = periods[label]
                cells.append(_ratio_cell(table.ratio[table.levels.index(level)], guide) if level in table.levels else DASH)
            rows.append(cells)
        tables.append(text_table(
            ["level", "applications", "approval rate", "ratio, whole ledger", *(f"ratio, {q}" for q in quarters)], rows,
            numeric=range(1, 4 + len(quarters)),
            caption=f"{name}: each level's applications approved at or above the build's cut-off "
                    f"{fixed_text(result.cutoff, 0)}, and the ratio of its approval rate to the reference level's "
                    f"({whole.reference} on the whole ledger), whole ledger and each quarter. A ratio under {guide:g} is "
                    "marked (the four-fifths rule of thumb: common practice, no source; a guide, not a verdict). "
                    + reference_wording(saved.settings.fairness.reference_share)))
    missing = [name for name in attributes if name not in result.impacts]
    return {"tables": tables, "attributes": attributes, "missing": missing}


def _ratio_cell(ratio: float, guide: float) -> Cell:
    return Cell(fixed_text(ratio, 3), "flag" if ratio < guide else "")


# --------------------------------------------------------------------------------------------
# 6. By quarter


def _quarters(result: MonitorResult, saved: SavedModel) -> dict:
    quarters = result.quarters
    if not quarters:
        return {"dated": False}
    summary_rows = []
    for q in quarters:
        large = q.outcomes.in_the_large if q.outcomes is not None else None
        area = q.outcomes.auc.auc if q.outcomes is not None else float("nan")
        summary_rows.append([q.period, count_text(q.rows), count_text(q.goods), count_text(q.bads),
                             percent_text(large.observed_rate) if large else DASH,
                             percent_text(large.expected_rate) if large else DASH,
                             fixed_text(q.score_stability.value, 4), fixed_text(area, 4), status_cell(q.status)])
    summary = text_table(["quarter", "applications", "goods", "bads", "observed bad rate", "predicted bad rate",
                          "score PSI", "AUC", "status"], summary_rows, numeric=range(1, 8),
                         caption="Each calendar quarter of the ledger on its own, against the development sample.")
    return {"dated": True, "summary": summary, "checks": _quarter_table(result), "charts": _quarter_charts(result)}


def _quarter_table(result: MonitorResult) -> Table:
    periods = [result.overall, *result.quarters]
    names = list(dict.fromkeys(s.check for p in periods for s in p.statuses))
    by_period = [{s.check: s for s in p.statuses} for p in periods]
    rows = []
    for name in names:
        cells = [name]
        for found in by_period:
            status = found.get(name)
            cells.append(Cell(Markup('<span class="status {0}">{0}</span> {1}').format(status.status, figure_text(status)))
                         if status else "not checked")
        rows.append(cells)
    return text_table(["check", "whole ledger", *(q.period for q in result.quarters)], rows,
                      numeric=range(1, len(periods) + 1), css="by-quarter",
                      caption="Every check's status and figure, for the whole ledger and each quarter. Levels never "
                              "seen at build time are counted over the whole ledger only.")


def _quarter_charts(result: MonitorResult) -> list:
    quarters = result.quarters
    labels = [q.period for q in quarters]
    psi = {"score": [q.score_stability.value for q in quarters]}
    # one characteristic, named: the one that moved most over the whole ledger
    moved = max(result.overall.characteristics, key=lambda c: c.psi.value, default=None)
    if moved is not None:
        psi[moved.characteristic] = [next(c.psi.value for c in q.characteristics if c.characteristic == moved.characteristic)
                                     for q in quarters]
    named = f" and of {moved.characteristic}" if moved is not None else ""
    found = [captioned_chart(
        charts.clustered_columns(labels, psi, x_label="quarter", y_label="PSI against development",
                               title=f"PSI of the score{named} by quarter", width=460),
        f"PSI of the score{named}, the model characteristic whose PSI over the whole ledger is the largest, per "
        f"quarter (watch from {result.checks.psi_watch:g}, act from {result.checks.psi_act:g}).")]
    known = [q for q in quarters if q.outcomes is not None]
    if known:
        rates = {"observed": [q.outcomes.in_the_large.observed_rate for q in known],
                 "predicted": [q.outcomes.in_the_large.expected_rate for q in known]}
        found.append(captioned_chart(
            charts.clustered_columns([q.period for q in known], rates, x_label="quarter", y_label="bad rate",
                                   colours=(charts.BAD_COLOUR, charts.MUTED), percent=True, width=460,
                                   title="Observed and predicted bad rate by quarter"),
            "Observed bad rate of each quarter's goods and bads against the mean PD their scores predict."))
    return found


# --------------------------------------------------------------------------------------------
# 6. How statuses are set, and reproducibility


def _rules(checks: CheckSettings) -> dict:
    table = text_table(["check", "figure", "watch", "act", "how and on what authority"],
                       [list(rule) for rule in status_rules(checks)], css="rules",
                       caption="The thresholds of this run, from the model's settings under [checks].")
    return {"table": table, "todo": [(word, WHAT_TO_DO[word]) for word in STATUSES],
            "watch": f"{checks.p_watch:g}", "watch_share": percent_text(checks.p_watch, 0)}


def _reproducibility(result: MonitorResult, saved: SavedModel, model_path, ledger_fingerprint: Fingerprint | None,
                     generated_by: str) -> dict:
    document = saved.document
    built = document.get("ledger", {})
    built_print = built.get("fingerprint", {})
    # (label, value, whether the value is a hash to show in small type)
    model = [("Model file", str(model_path), False),
             ("Checksum (SHA-256 of its content)", str(document.get("checksum", DASH)), True),
             ("Format version", str(document.get("format_version", DASH)), False),
             ("Built by scorewright", str(document.get("tool_version", DASH)), False),
             ("Built from", f"{built.get('source', DASH)} ({count_text(built_print.get('rows', float('nan')))} rows)", False),
             ("SHA-256 of that ledger", str(built_print.get("sha256", DASH)), True)]
    ledger = [("Ledger", result.source, False), ("Rows", count_text(result.overall.rows), False)]
    if ledger_fingerprint is not None:
        ledger = [("Ledger", result.source, False), ("Rows", count_text(ledger_fingerprint.n_rows), False),
                  (f"SHA-256 of the {ledger_fingerprint.of}", ledger_fingerprint.sha256, True)]
    versions = library_versions()
    command = shlex.join(["scorewright", "monitor", str(model_path), result.source, "--out", "MONITOR_FOLDER"])
    return {"model": model, "ledger": ledger, "versions": versions, "command": command, "generated_by": generated_by}
