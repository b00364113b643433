"""The build report: one self-contained HTML page that a model reviewer reads on screen or on paper.

``render_report`` turns a build and its validation into the page; ``write_report`` writes it.
The page carries its own style and its charts as inline SVG, and refers to nothing outside
itself, so it opens offline in any browser. Every value is formatted with the page kit and
escaped by the template (Jinja2 autoescaping), so a category label such as ``<b>`` shows as text.

The page is made from count tables, score histograms and small results only, never from rows,
so its rendering time does not grow with the ledger's rows.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from pathlib import Path

import numpy as np
from markupsafe import Markup

from .. import __version__
from ..checks.discrimination import band_labels, band_of, score_bands
from ..files import write_text_atomically
from ..rows import merge_histograms
from ..settings import settings_to_toml
from ..terms import ACT_PSI, DEVELOPMENT_NAME, NUMERIC, WATCH_PSI, most_honest, shape_words
from ..validation import review_flags
from . import CAUTION, REJECT_CAUTION, charts
from .page_kit import (
    ADJUSTED_MARK, DASH, NOT_COMPUTED, Cell, classed_by, Figure, Table, calibration_figures, captioned_chart, count_text, environment, fixed_text,
    interval_text, level_text, library_versions, p_value_text, percent_text, psi_table, reference_wording, score_text,
    signed_text, span_text, status_cell, text_table,
)


SECTIONS = (
    ("summary", "Summary"),
    ("data", "Data and samples"),
    ("characteristics", "Characteristics"),
    ("selection", "Selection log"),
    ("fit", "The fit"),
    ("points", "The points table"),
    ("discrimination", "Discrimination"),
    ("calibration", "Calibration"),
    ("stability", "Stability"),
    ("cutoffs", "Cut-offs"),
    ("rejects", "Reject inference"),
    ("fairness", "Fair lending"),
    ("cautions", "Cautions and limits"),
    ("reproducibility", "Reproducibility"),
)


CUTOFF_ROWS = 25  # most rows of the cut-off table the page shows; the workbook holds every cut-off
CUTOFF_STEPS = (1, 2, 5, 10, 20, 25, 50, 100, 200, 500, 1000)  # score steps tried for the shown rows
CUTOFF_SPAN = (0.02, 0.98)  # approval rates the shown rows cover: the cut-offs a lender would consider
SCORE_MEANING_ROWS = 10  # most rows of the table of odds and PD per score


def render_report(build, validation, *, generated_by: str = "", model_checksum: str = "") -> str:
    """Return the build report as one self-contained HTML page.

    Parameters
    ----------
    build : scorecard.build.Build
        The scorecard and the evidence behind it.
    validation : scorecard.validation.Validation
        The checks of ``build`` per sample (``validate_build(build)``).
    generated_by : str
        Who or what made the report (e.g. the command line); shown under Reproducibility.
    model_checksum : str
        The checksum of the model file written with the report, shown under Reproducibility so
        that the report and the model file can be checked to belong together.

    Returns
    -------
    str
        The HTML page: inline style and SVG charts, no script, no external reference.
    """
    report = build.settings.report
    context = {
        "title": report.title,
        "kicker": "Scorecard build report",
        "subtitle": _subtitle(build),
        "caution": CAUTION,
        "tool_version": __version__,
        "sections": SECTIONS,
        "summary": _summary(build, validation),
        "data": _data(build),
        "characteristics": _characteristics(build),
        "selection": _selection(build),
        "fit": _fit(build),
        "points": _points(build),
        "discrimination": _discrimination(build, validation),
        "calibration": _calibration(validation, build.scorecard.table.decimals),
        "stability": _stability(build, validation),
        "cutoffs": _cutoffs(validation, build.scorecard.table.decimals,
                            every_level=build.settings.checks.cutoff_step == 0),
        "rejects": _rejects(build),
        "rejects_note": "rejects.method = none" if build.settings.rejects.method == "none" else
                        "the ledger holds no rejected application made in time",
        "fairness": _fairness(build, validation),
        "cautions": _cautions(build),
        "reproducibility": _reproducibility(build, generated_by, model_checksum),
    }
    return environment().get_template("report.html").render(**context)


def write_report(build, validation, path, *, generated_by: str = "", model_checksum: str = "") -> Path:
    """Write the build report to ``path`` atomically and return the path.

    The page is written under a temporary name in the same folder and then renamed into place
    (``os.replace``), so a failed run leaves no half-written report.

    Parameters
    ----------
    build : scorecard.build.Build
    validation : scorecard.validation.Validation
    path : path-like
        Where the report goes, e.g. ``run1/report.html``; its folder is made if missing.
    generated_by : str
        The command that made the report, shown under reproducibility.
    model_checksum : str
        The checksum of the model file of the same build, shown under reproducibility.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    OSError
        The folder cannot be made or written to; any earlier report at ``path`` is left as it was.
    """
    return write_text_atomically(Path(path), render_report(build, validation, generated_by=generated_by,
                                                           model_checksum=model_checksum))


# --------------------------------------------------------------------------------------------
# 1. Summary


def _subtitle(build) -> str:
    lender = build.settings.report.lender
    made = f"built from {build.source} ({count_text(build.fingerprint.n_rows)} rows)"
    return f"{lender} · {made}" if lender else made[0].upper() + made[1:]


def _summary(build, validation) -> dict:
    table = build.scorecard.table
    honest = _honest_sample(validation)
    checks = validation.samples[honest]
    figures = [
        Figure("Characteristics in the model", f"{len(table.names)} of {len(build.characteristics)}",
               "classed characteristics"),
        Figure("Score range", f"{score_text(table.min_score, table.decimals)} to {score_text(table.max_score, table.decimals)}",
               "lowest and highest possible"),
        Figure(f"AUC, {honest} sample", fixed_text(checks.auc.auc, 4),
               f"{level_text(checks.auc.level)} interval {interval_text(checks.auc.lower, checks.auc.upper, 4)}"),
        Figure(f"Gini, {honest} sample", fixed_text(checks.auc.gini, 4), "2 × AUC − 1"),
        Figure(f"KS, {honest} sample", fixed_text(checks.ks.statistic, 4),
               f"widest at score {score_text(checks.ks.score, table.decimals)}"),
    ]
    return {
        "purpose": _purpose(build),
        "fingerprint": _fingerprint(build),
        "samples": _sample_table(build, brief=True),
        "figures": figures,
        "headline": _headline_table(validation, table.decimals),
        "attention": _attention(build, validation),
    }


def _purpose(build) -> str:
    report = build.settings.report
    table = build.scorecard.table
    lender = f" for {report.lender}" if report.lender else ""
    return (
        f"This report documents “{report.title}”, an application scorecard{lender}: a table of points that ranks "
        f"new credit applications by how likely the loan is to be repaid as agreed. An application earns points "
        f"on each of {len(table.names)} characteristics, according to the bin its answer falls into (section 6), "
        f"and the points add up to a score from {score_text(table.min_score, table.decimals)} to "
        f"{score_text(table.max_score, table.decimals)}: the higher the score, the lower the risk. The scorecard was "
        f"fitted on past applications in the ledger {build.source} whose outcome is known. What follows is the evidence a "
        f"model reviewer needs: how the data were split, how each characteristic was classed and chosen, how "
        f"well the score separates good loans from bad ones, and how well its predicted default rates "
        f"match what happened, on every sample."
    )


def _fingerprint(build) -> list[tuple[str, str]]:
    fingerprint = build.fingerprint
    return [("Ledger", build.source), ("Rows", count_text(fingerprint.n_rows)),
            (f"SHA-256 of the {fingerprint.of}", fingerprint.sha256)]


def _honest_sample(validation) -> str:
    """The sample whose figures say most about new applications: out-of-time, else hold-out."""
    return most_honest(validation.samples) or DEVELOPMENT_NAME


def _headline_table(validation, decimals: int) -> Table:
    rows = []
    for name, checks in validation.samples.items():
        area = checks.auc
        rows.append([name, count_text(checks.goods), count_text(checks.bads), percent_text(checks.bad_rate), fixed_text(area.auc, 4),
                     interval_text(area.lower, area.upper, 4), fixed_text(area.gini, 4),
                     interval_text(area.gini_lower, area.gini_upper, 4), fixed_text(checks.ks.statistic, 4),
                     score_text(checks.ks.score, decimals)])
    for name, why in validation.not_computed.items():
        rows.append([name, Cell(f"{NOT_COMPUTED}: {why}", "not-computed"), "", "", "", "", "", "", "", ""])
    level = level_text(next(iter(validation.samples.values())).auc.level) if validation.samples else "95%"
    return text_table(["sample", "goods", "bads", "bad rate", "AUC", f"AUC {level} interval", "Gini",
                       f"Gini {level} interval", "KS", "KS at score"], rows, numeric=range(1, 10),
                      caption=f"Headline figures per sample (AUC interval: DeLong, {level}).")


def _attention(build, validation) -> list[str]:
    """Every flag the build raised (``scorecard.validation.review_flags``), each with the section that shows it."""
    number = {section: position for position, (section, _) in enumerate(SECTIONS, start=1)}
    return [f"{flag.text} (section {number[flag.section]})" for flag in review_flags(build, validation)]


# --------------------------------------------------------------------------------------------
# 2. Data and samples


def _key_source(settings) -> str:
    id_column = settings.ledger.id_column
    return f"the id column {id_column!r}" if id_column else "all the values of the row (there is no id column)"


def _data(build) -> dict:
    settings = build.settings
    samples = settings.samples
    drawn = [
        f"Hold-out: {percent_text(samples.holdout_fraction, 0)} of the in-time rows of each outcome, those with the "
        f"smallest keys, a hash with seed {samples.seed} of {_key_source(settings)}: the same rows whatever their order "
        "or where they are read, and development and hold-out have the same bad rate to within one row.",
    ]
    if samples.out_of_time_from:
        drawn.append(f"Out-of-time: every row dated on or after {samples.out_of_time_from} "
                     f"(date column {settings.ledger.date_column!r}).")
    else:
        drawn.append("Out-of-time: none drawn (no date set under [samples] out_of_time_from).")
    drawn.append("Development: the rest. Only its goods and bads are used to class, choose and fit.")
    outcome = settings.outcome
    mapping = [f"Outcome column {outcome.column!r}.",
               f"Bad: {_values(outcome.bad) or 'the mapping read from the data'}.",
               f"Good: {_values(outcome.good) or 'the mapping read from the data'}."]
    if outcome.indeterminate:
        mapping.append(f"Indeterminate (left out of fitting, kept for stability): {_values(outcome.indeterminate)}.")
    if settings.ledger.weight_column:
        mapping.append(f"Counts are weighted by column {settings.ledger.weight_column!r}.")
    return {"samples": _sample_table(build, brief=False), "drawn": drawn, "mapping": mapping,
            "notes": list(build.notes)}


def _sample_table(build, *, brief: bool) -> Table:
    frame = build.samples[build.samples["rows"] > 0]
    if brief:
        columns = ["sample", "rows", "goods", "bads", "bad rate"]
        rows = [[name, count_text(r["rows"]), count_text(r["good"]), count_text(r["bad"]), percent_text(r["bad rate"])]
                for name, r in frame.iterrows()]
        return text_table(columns, rows, numeric=range(1, 5))
    columns = ["sample", "rows", "goods", "bads", "indeterminate", "unknown", "bad rate"]
    rows = [[name, count_text(r["rows"]), count_text(r["good"]), count_text(r["bad"]), count_text(r["indeterminate"]),
             count_text(r["unknown"]), percent_text(r["bad rate"])] for name, r in frame.iterrows()]
    totals = frame.sum(numeric_only=True)
    decided = totals["good"] + totals["bad"]
    rows.append(["all", count_text(totals["rows"]), count_text(totals["good"]), count_text(totals["bad"]),
                 count_text(totals["indeterminate"]), count_text(totals["unknown"]),
                 percent_text(totals["bad"] / decided if decided else math.nan)])
    return text_table(columns, rows, numeric=range(1, 7), row_css=[""] * (len(rows) - 1) + ["total"],
                      caption="Bad rate: bads over goods and bads; indeterminate and unknown outcomes are not in it.")


def _values(values: Sequence[str]) -> str:
    return ", ".join(repr(value) for value in values)


# --------------------------------------------------------------------------------------------
# 3. Characteristics


def _characteristics(build) -> dict:
    model = build.scorecard.table.names
    others = sorted((c for c in build.characteristics if c.name not in model), key=lambda c: -c.evidence.iv)
    ordered = [build.characteristic(name) for name in model] + others
    overview = text_table(
        ["characteristic", "in the model", "IV", "strength", "bins", "classing", "leakage flag"],
        [[Cell(Markup('<a href="#{}">{}</a>').format(_anchor(position), c.name)),
          "yes" if c.name in model else "no", fixed_text(c.evidence.iv, 4), c.evidence.strength,
          str(c.binning.n_bins), classed_by(c).split(" (")[0],
          _flag("IV above threshold") if c.evidence.leakage_flag else ""]
         for position, c in enumerate(ordered)],
        numeric=(2, 4),
        caption="Every characteristic classed, model ones first (in model order), then the others by IV. "
                "Development sample.",
    )
    views = [_characteristic_view(c, position, "" if c.name in model else _why_left_out(c.name, build.selection.log))
             for position, c in enumerate(ordered)]
    return {"overview": overview, "log": _classing_log(build, ordered), "model": views[:len(model)],
            "others": views[len(model):], "leakage_iv": f"{build.settings.selection.leakage_iv:g}",
            "classing": _classing_rules(build.settings.classing),
            "merged": _merged_table([c for c in ordered if c.merging is not None])}


def _classing_rules(classing) -> str:
    merging = ("then neighbouring classes whose bad rates do not differ significantly are merged, one pair at a time, the "
               f"least different first, while a likelihood-ratio test between the two gives a p-value at or above "
               f"{classing.merge_p:g} (classing.merge_p); merging keeps the shape and every size limit"
               if classing.merge_p > 0 else "neighbouring classes are not merged (classing.merge_p = 0)")
    return (
        "A classing proposed by the tool has the classes with the largest IV whose bad rate keeps its shape (it falls, or "
        "rises, as the value grows, or bends once: falls then rises, or rises then falls) and whose classes meet the size "
        f"limits, found exactly by dynamic programming; from-data takes a bend only when it gives more than "
        f"{classing.bend_min_gain:.0%} more IV than one way (classing.bend_min_gain). {merging[0].upper()}{merging[1:]}."
    )


def _merged_table(merged) -> Table | None:
    if not merged:
        return None
    return text_table(
        ["characteristic", "classes before", "classes after", "IV before", "IV after"],
        [[c.name, str(c.merging.classes_before), str(c.merging.classes_after), fixed_text(c.merging.iv_before, 4),
          fixed_text(c.merging.iv_after, 4)] for c in merged],
        numeric=(1, 2, 3, 4),
        caption="Characteristics whose proposed classing had neighbouring classes merged, with the IV before and after. "
                "Development sample.",
    )


def _classing_log(build, ordered) -> Table:
    """Who classed each characteristic, and what a change to the tool's proposal cost or gained in IV."""
    rows = []
    for c in ordered:
        change = c.evidence.iv - c.proposal_iv if c.proposal_iv is not None else None
        rows.append([c.name, classed_by(c).split(" (")[0], fixed_text(c.evidence.iv, 4),
                     fixed_text(c.proposal_iv, 4) if c.proposal_iv is not None else "",
                     signed_text(change, 4) if change is not None else "", build.settings.characteristic(c.name).note])
    return text_table(["characteristic", "classing", "IV", "IV of the tool's proposal", "change in IV", "the analyst's note"],
                      rows, numeric=(2, 3, 4),
                      caption="The override log: whether the tool proposed each classing (init records its proposal "
                              "in the settings file), the analyst changed it, or the analyst wrote it; a change shows "
                              "what it cost or gained in IV against the proposal. Development sample.")


def _why_left_out(name: str, log) -> str:
    """The last decision that kept a characteristic out of the model, in words."""
    decisions = [d for d in log if d.characteristic == name and d.action in ("left out", "removed")]
    if not decisions:
        return "not chosen"
    return f"{decisions[-1].action} at the {decisions[-1].step} step: {decisions[-1].reason}"


def _characteristic_view(classed, position: int, why: str) -> dict:
    evidence = classed.evidence
    return {
        "name": classed.name,
        "anchor": _anchor(position),
        "iv": fixed_text(evidence.iv, 4),
        "strength": evidence.strength,
        "origin": classed_by(classed),
        "shape": shape_words(classed.binning.bad_rate_shape) if classed.binning.kind == NUMERIC else "",
        "leakage": evidence.leakage_flag,
        "table": _evidence_table(evidence),
        "adjusted": bool(evidence.adjusted.any()),
        "chart": captioned_chart(charts.woe_bars(evidence.labels, evidence.woe,
                                                 title=f"WoE of {classed.name} by bin, {evidence.sample} sample"),
                                 f"WoE of each bin of {classed.name}: bars to the right of 0 have fewer bads than average; "
                                 f"{evidence.sample} sample."),
        "notes": list(classed.notes),
        "sample": evidence.sample,
        "why": why,
    }


def _evidence_table(evidence) -> Table:
    rows_per_bin = evidence.goods + evidence.bads
    total = rows_per_bin.sum()
    rows = []
    for label, goods, bads, rate, count, woe, iv, adjusted in zip(
            evidence.labels, evidence.goods, evidence.bads, evidence.bad_rate, rows_per_bin, evidence.woe,
            evidence.iv_contributions, evidence.adjusted):
        woe_text = fixed_text(woe, 4) + (f" {ADJUSTED_MARK}" if adjusted else "")
        rows.append([label, count_text(goods), count_text(bads), percent_text(rate), percent_text(count / total, 1),
                     Cell(woe_text, "adjusted" if adjusted else ""), fixed_text(iv, 4)])
    n_goods, n_bads = evidence.goods.sum(), evidence.bads.sum()
    rows.append(["all", count_text(n_goods), count_text(n_bads), percent_text(n_bads / total), percent_text(1.0, 1), "",
                 fixed_text(evidence.iv, 4)])
    return text_table(["bin", "goods", "bads", "bad rate", "share", "WoE", "IV contribution"], rows,
                      numeric=range(1, 7), row_css=[""] * (len(rows) - 1) + ["total"],
                      caption=f"{evidence.sample.capitalize()} sample. Share: the bin's part of all goods and bads.")


def _anchor(position: int) -> str:
    # Numbered ids: names come from the ledger and may hold any character.
    return f"characteristic-{position + 1}"


def _flag(text: str) -> Cell:
    return Cell(text, "flag")


# --------------------------------------------------------------------------------------------
# 4. Selection log


def _selection(build) -> dict:
    selection = build.selection
    rules = build.settings.selection
    log = text_table(["step", "characteristic", "action", "reason", "value"],
                     [[d.step, d.characteristic, d.action, d.reason, _decision_value(d.value)] for d in selection.log],
                     numeric=(4,), caption="Every decision in the order it was taken; development sample.")
    settings_text = (
        (f"Screen: IV below {rules.min_iv:g} leaves" if rules.screen == "verdict"
         else f"Screen: IV below {rules.min_iv:g} is proposed to leave (a proposal: the stepwise choice decides)")
        + "; every characteristic under it that is not in the model is score-tested against the final model "
        f"(step 'screen test'). IV above {rules.leakage_iv:g} is flagged for leakage. "
        f"Of two WoE columns correlated above {rules.max_correlation:g}, the one with the lower IV leaves. "
        f"Stepwise: {rules.stepwise}, by {rules.criterion.replace('_', '-')}"
        + (f" (enter below {rules.p_enter:g}, leave above {rules.p_remove:g})" if rules.criterion == "p_value" else "")
        + ". A characteristic whose coefficient comes out negative is removed and the model refitted."
    )
    vif = text_table(["characteristic", "VIF"], [[name, fixed_text(value, 2)] for name, value in selection.vif.items()],
                     numeric=(1,), caption="Variance inflation factors of the model's WoE columns, development sample.")
    return {"rules": settings_text, "log": log, "vif": vif,
            "correlations": _correlation_table(selection.correlations, rules.max_correlation)}


def _correlation_table(correlations, threshold: float) -> Table:
    """The lower triangle of the candidates' WoE correlations, columns numbered to stay narrow."""
    names = list(correlations.index)
    values = correlations.to_numpy()
    rows = []
    for i, name in enumerate(names):
        cells = [f"{i + 1}  {name}"]
        for j in range(len(names)):
            if j > i:
                cells.append("")
            elif j == i:
                cells.append(Cell("1", "diagonal"))
            else:
                cells.append(Cell(fixed_text(values[i, j], 2), "high" if abs(values[i, j]) > threshold else ""))
        rows.append(cells)
    columns = ["characteristic"] + [str(j + 1) for j in range(len(names))]
    return text_table(columns, rows, numeric=range(1, len(names) + 1), css="matrix",
                      caption=f"Weighted correlations of the WoE columns of the candidate characteristics; development "
                          f"sample. Highlighted: above {threshold:g} in absolute value.")


def _decision_value(value: float | None) -> str:
    """An IV, correlation, p-value, BIC or coefficient: tiny and huge ones in e-notation."""
    if value is None or not np.isfinite(value):
        return ""
    if value != 0 and (abs(value) < 0.001 or abs(value) >= 1e5):
        return f"{value:.3g}"
    return f"{value:,.4f}"


# --------------------------------------------------------------------------------------------
# 5. The fit


def _fit(build) -> dict:
    fit = build.selection.fit
    rows = []
    for position, (name, coefficient, error, z, p) in enumerate(
            zip(fit.names, fit.coefficients, fit.std_errors, fit.z_values, fit.p_values)):
        reversal = position > 0 and coefficient < 0
        rows.append([name, Cell(fixed_text(coefficient, 4), "flag" if reversal else ""), fixed_text(error, 4),
                     fixed_text(z, 2), p_value_text(p)])
    coefficients = text_table(["name", "coefficient", "standard error", "z", "p-value"], rows, numeric=range(1, 5),
                              caption="Logistic regression of the log-odds of good:bad on the WoE of each characteristic; "
                                  "development sample. Each coefficient should be positive.")
    figures = [
        Figure("Log-likelihood", fixed_text(fit.log_likelihood, 2)),
        Figure("AIC", fixed_text(fit.aic, 2)),
        Figure("BIC", fixed_text(fit.bic, 2)),
        Figure("Observations", count_text(fit.n_observations), "goods and bads, development"),
        Figure("Iterations", str(fit.iterations), f"solver: {fit.solver}"),
        Figure("Converged", "yes" if fit.converged else "no", f"ridge penalty {fit.l2:g}"),
    ]
    trace = captioned_chart(charts.cost_trace_chart(fit.cost_trace, title="Cost per iteration of the fit, development sample"),
                            "Mean negative log-likelihood at the start and after each iteration; development sample.")
    return {"coefficients": coefficients, "figures": figures, "trace": trace}


# --------------------------------------------------------------------------------------------
# 11. Reject inference

THROUGH_THE_DOOR_BANDS = 10  # equal-population bands of the through-the-door scores, for their distribution


def _rejects(build) -> dict:
    rejects = build.rejects
    if rejects is None:
        return {}
    inferred, settings = rejects.inferred, build.settings.rejects
    factor = "" if inferred.method == "fuzzy-augmentation" else f" with factor {settings.factor:g}"
    n_in_time = float(inferred.rejects.sum())
    intro = (
        f"The ledger holds {count_text(rejects.n_rejects)} rejected applications; the {count_text(n_in_time)} made in time "
        f"entered the model as inferred goods and bads by {inferred.method}{factor}, from their scores on the scorecard "
        "fitted to the booked applications alone (the accepted-only scorecard). The scorecard of this report is the one "
        "fitted with them, on the accepted-only classes with their WoE counted again; every other figure of the report "
        "is of booked applications, whose outcomes are known."
    )
    return {"intro": intro, "caution": REJECT_CAUTION, "comparison": _reject_comparison(build),
            "bands": _reject_bands(rejects), **_through_the_door(build)}


def _reject_comparison(build) -> Table:
    rejects = build.rejects
    accepted_table = rejects.accepted_scorecard.table
    booked_accepted = _in_time(rejects.accepted_histograms)
    booked_delivered = _in_time(build.histograms)
    accepted_rejects = _predicted_bads(rejects.inferred.scores, rejects.inferred.rejects, accepted_table)
    delivered_rejects = _predicted_bads(rejects.rejected.scores, rejects.rejected.everyone, build.scorecard.table)
    n_rejects = rejects.inferred.rejects.sum()
    n_booked = booked_delivered.everyone.sum()
    rows = [["characteristics in the model", str(len(accepted_table.names)), str(len(build.scorecard.table.names))]]
    accepted_figures, delivered_figures = rejects.accepted_performance(), build.performance()
    for sample in delivered_figures:
        rows.append([f"AUC, {sample} sample (booked)", fixed_text(accepted_figures.get(sample, {}).get("auc", math.nan), 4),
                     fixed_text(delivered_figures[sample]["auc"], 4)])
    rows += [
        ["predicted bad rate of the in-time rejects", percent_text(accepted_rejects / n_rejects),
         percent_text(delivered_rejects / n_rejects)],
        ["predicted bad rate through the door (in time)",
         percent_text((accepted_rejects + _predicted_bads(booked_accepted.scores, booked_accepted.everyone, accepted_table))
                      / (n_rejects + n_booked)),
         percent_text((delivered_rejects + _predicted_bads(booked_delivered.scores, booked_delivered.everyone,
                                                            build.scorecard.table)) / (n_rejects + n_booked))],
        ["inferred bad rate of the in-time rejects", DASH, percent_text(rejects.inferred.bad_rate)],
    ]
    return text_table(["figure", "accepted-only scorecard", "scorecard with the inferred rejects"], rows, numeric=(1, 2),
                      caption="The accepted-only scorecard beside the one fitted with the inferred rejects. AUCs are of "
                              "booked applications; predicted bad rates are the mean PD of the scores.")


def _in_time(histograms):
    in_time = [histograms[name] for name in ("development", "hold-out") if name in histograms]
    return merge_histograms(in_time)


def _predicted_bads(scores, counts, table) -> float:
    return float(np.asarray(counts) @ table.scaling.pd_of_score(np.asarray(scores, float)))


def _reject_bands(rejects) -> Table:
    bands = rejects.bands
    rows = [[label, count_text(accepts), percent_text(accept_rate), count_text(rejected), percent_text(reject_rate)]
            for label, accepts, accept_rate, rejected, reject_rate in zip(
                bands.labels, bands.accepts, bands.accept_bad_rate, bands.rejects, bands.reject_bad_rate)]
    return text_table(["accepted-only score band", "accepts", "accepts' bad rate (observed)", "rejects",
                       "rejects' bad rate (inferred)"], rows, numeric=range(1, 5),
                      caption="Bands of equal numbers of development accepts on the accepted-only scorecard: the accepts' "
                              "bad rate as observed, the in-time rejects' as inferred.")


def _through_the_door(build) -> dict:
    booked, rejected = _in_time(build.histograms), build.rejects.rejected
    everyone = merge_histograms([booked, rejected])
    edges = score_bands(everyone.scores, everyone.everyone, n_bands=THROUGH_THE_DOOR_BANDS)
    labels = band_labels(edges)
    booked_counts = np.bincount(band_of(booked.scores, edges), weights=booked.everyone, minlength=len(labels))
    rejected_counts = np.bincount(band_of(rejected.scores, edges), weights=rejected.everyone, minlength=len(labels))
    total = booked_counts + rejected_counts
    table = text_table(
        ["score band", "applications", "booked", "rejected", "share rejected"],
        [[label, count_text(t), count_text(b), count_text(r), percent_text(r / t if t else math.nan)]
         for label, t, b, r in zip(labels, total, booked_counts, rejected_counts)],
        numeric=range(1, 5),
        caption="The through-the-door population (in time: development and hold-out samples and the in-time rejects) "
                "on the scorecard of this report, in bands of about equal numbers of applications.",
    )
    chart = captioned_chart(
        charts.clustered_columns(labels, {"booked": booked_counts / booked_counts.sum(),
                                          "rejected": rejected_counts / rejected_counts.sum()},
                                 x_label="score band", y_label="share", percent=True,
                                 title="Scores of the booked and the rejected applications, through the door"),
        "Share of the booked and of the rejected applications in each band of the through-the-door scores.",
    )
    return {"through_the_door": table, "chart": chart}


# --------------------------------------------------------------------------------------------
# 6. The points table


def _points(build) -> dict:
    table = build.scorecard.table
    scale = table.scaling
    rows, css = [], []
    for characteristic in table.characteristics:
        for number, (label, points) in enumerate(zip(characteristic.labels, characteristic.points)):
            rows.append([characteristic.name if number == 0 else "", label, score_text(points, table.decimals)])
            css.append("characteristic-start" if number == 0 else "")
    points = text_table(["characteristic", "bin", "points"], rows, numeric=(2,), row_css=css, css="points-table")
    k = len(table.names)
    scaling = [
        ("Base score", f"{scale.base_score:g}"), ("Base odds (good:bad)", f"{scale.base_odds:g} : 1"),
        ("Points to double the odds (PDO)", f"{scale.pdo:g}"), ("Factor = PDO / ln 2", fixed_text(scale.factor, 4)),
        ("Offset = base score − factor × ln(base odds)", fixed_text(scale.offset, 4)),
        ("Intercept of the fit", fixed_text(table.intercept, 4)), ("Characteristics (k)", str(k)),
    ]
    rounding = "whole points" if table.decimals == 0 else f"{table.decimals} decimals"
    formula = (
        f"Each bin's points are the factor times (the characteristic's coefficient times the bin's weight of "
        f"evidence, plus the intercept divided by {k}), plus the offset divided by {k}, rounded to {rounding}. "
        f"An application's score is the sum of the points of its bins. Before rounding, that sum equals the "
        f"offset plus the factor times the natural log of the predicted odds of good to bad, so the odds double "
        f"every {scale.pdo:g} points, the score {scale.base_score:g} stands for odds of "
        f"{scale.base_odds:g} to 1, and the probability of default of a score is 1 / (1 + odds)."
    )
    return {"table": points, "scaling": scaling, "formula": formula, "meaning": _score_meaning(table)}


def _score_meaning(table) -> Table:
    """Odds and PD at the base score and at steps of whole PDOs from it, within the score range."""
    scale = table.scaling
    pdo = abs(scale.pdo)
    low, high = (table.min_score - scale.base_score) / pdo, (table.max_score - scale.base_score) / pdo
    stride = max(1, math.ceil((math.floor(high) - math.ceil(low) + 1) / SCORE_MEANING_ROWS))
    scores = [scale.base_score + step * pdo for step in range(math.ceil(low), math.floor(high) + 1) if step % stride == 0]
    rows = [[f"{score:g}", _odds(math.exp(scale.log_odds_of_score(score))), percent_text(float(scale.pd_of_score(score)))]
            for score in scores]
    return text_table(["score", "odds good:bad", "probability of default"], rows, numeric=(0, 1, 2),
                      caption=f"What a score stands for, every {stride * pdo:g} points from the base score.")


def _odds(odds: float) -> str:
    return f"{odds:,.1f} : 1" if odds >= 1 else f"1 : {1 / odds:,.1f}"


# --------------------------------------------------------------------------------------------
# 7. Discrimination


def _discrimination(build, validation) -> dict:
    decimals = build.scorecard.table.decimals
    roc = captioned_chart(
        charts.roc_chart({name: (c.roc.goods_declined, c.roc.bads_declined) for name, c in validation.samples.items()},
                         title="ROC curves, " + ", ".join(validation.samples) + " samples"),
        "ROC curve of each sample: share of bads against share of goods declined as the cut-off rises. "
        "The dashed diagonal is a score that does not discriminate.")
    per_sample = []
    for name, checks in validation.samples.items():
        cutoffs = checks.roc.cutoffs[1:]  # the first point declines nothing
        ks = captioned_chart(charts.ks_chart(cutoffs, checks.roc.goods_declined[1:], checks.roc.bads_declined[1:],
                                             ks_score=checks.ks.score, ks=checks.ks.statistic,
                                             title=f"Cumulative goods and bads by score, {name} sample"),
                             f"Share of all goods and of all bads scored at or below each score; {name} sample.")
        gains = checks.gains
        labels = [validation.band_names[band] for band in gains.band]
        distribution = captioned_chart(charts.score_distribution(labels, gains.goods, gains.bads,
                                                                 title=f"Goods and bads by score band, {name} sample"),
                                       f"Share of all goods and of all bads in each score band; {name} sample.")
        per_sample.append({"name": name, "ks": ks, "distribution": distribution, "gains": _gains_table(gains, labels, name)})
    return {"headline": _headline_table(validation, decimals), "roc": roc, "samples": per_sample,
            "challenger": _challenger(build)}


def _challenger(build) -> dict:
    """The scorecard against the challenger per sample, or why the challenger was not fitted."""
    challenger = build.challenger
    if challenger is None:
        why = next((note for note in build.notes if note.startswith("The challenger was not fitted")), "")
        return {"table": None, "text": why or "The challenger was not fitted."}
    gap = build.settings.challenger.auc_gap
    rows = [[name, interval_cell(c.scorecard), interval_cell(c.challenger), signed_text(c.paired.difference, 4),
             fixed_text(c.paired.std_error, 4), fixed_text(c.paired.z, 2), p_value_text(c.paired.p_value)]
            for name, c in challenger.comparisons.items()]
    table = text_table(["sample", "scorecard AUC (95% interval)", "challenger AUC (95% interval)", "difference",
                        "std error", "z", "p-value"], rows, numeric=range(3, 7),
                       caption="Challenger minus scorecard, DeLong's paired test on the same applications (two-sided). "
                               f"A challenger ahead by more than {gap:g} on the hold-out or out-of-time sample, "
                               "significantly, is flagged (challenger.auc_gap, common practice, no source).")
    text = (f"The challenger is a benchmark, never a model to deploy: every one of the {len(challenger.characteristics)} "
            f"candidate characteristics on its fine bins, one indicator per bin ({challenger.n_indicators} in all), "
            f"fitted by the same fitter with a ridge penalty (challenger.l2 = {challenger.l2:g}) on the development rows. "
            "What it gains over the scorecard on honest samples is what the scorecard's format (few classes, a "
            "monotone bad rate, few characteristics) costs; on development it always looks better.")
    return {"table": table, "text": text}


def interval_cell(result) -> str:
    """An AUC with its interval: '0.7472 (0.7301 to 0.7636)'."""
    return f"{fixed_text(result.auc, 4)} ({interval_text(result.lower, result.upper, 4)})"


def _gains_table(gains, labels: Sequence[str], sample: str) -> Table:
    rows = [[label, count_text(count), count_text(goods), count_text(bads), percent_text(rate), percent_text(share, 1),
             percent_text(bads_share, 1), percent_text(goods_share, 1), fixed_text(lift, 2)]
            for label, count, goods, bads, rate, share, bads_share, goods_share, lift in zip(
                labels, gains.count, gains.goods, gains.bads, gains.bad_rate, gains.cumulative_count_share,
                gains.cumulative_bads_share, gains.cumulative_goods_share, gains.lift)]
    return text_table(["scores", "applications", "goods", "bads", "bad rate", "cumulative applications",
                       "cumulative bads", "cumulative goods", "lift"], rows, numeric=range(0, 9),
                      caption=f"Gains by score band, lowest scores first; {sample} sample. Cumulative shares count "
                          f"from the lowest band; lift is the band's bad rate over the sample's "
                          f"({percent_text(gains.overall_bad_rate)}).")


# --------------------------------------------------------------------------------------------
# 8. Calibration


def _calibration(validation, decimals: int) -> list[dict]:
    return [_sample_calibration(name, checks, validation.band_names) for name, checks in validation.samples.items()]


def _sample_calibration(name: str, checks, band_names) -> dict:
    table = checks.calibration
    labels = [band_names[band] for band in table.band]
    adjusted = {test.test: test.adjusted_p_value for test in checks.calibration_tests}
    level = level_text(table.level)
    chart = captioned_chart(charts.calibration_chart(labels, table.observed_rate, table.jeffreys_lower, table.jeffreys_upper,
                                                     table.mean_pd, title=f"Observed and predicted bad rate by band, {name} sample"),
                            f"Observed bad rate per score band with its Jeffreys {level} interval, and the band's mean "
                            f"predicted PD; {name} sample.")
    rows = [[label, count_text(count), count_text(bads), percent_text(observed), percent_text(predicted), fixed_text(expected, 1),
             interval_text(100 * low, 100 * high, 2) + "%", p_value_text(jeffreys), p_value_text(excess), p_value_text(two_sided),
             p_value_text(adjusted[f"band {label}"])]
            for label, count, bads, observed, predicted, expected, low, high, jeffreys, excess, two_sided in zip(
                labels, table.count, table.bads, table.observed_rate, table.mean_pd, table.expected_bads,
                table.jeffreys_lower, table.jeffreys_upper, table.jeffreys_p, table.binomial_p_excess,
                table.binomial_p_two_sided)]
    bands = text_table(
        ["scores", "applications", "bads", "observed bad rate", "predicted PD", "expected bads",
         f"Jeffreys {level} interval", "Jeffreys p", "binomial p (more bads), unadjusted",
         "binomial p (two-sided), unadjusted", "Holm-adjusted p (two-sided)"],
        rows, numeric=range(0, 11),
        caption=f"Observed against predicted defaults per score band; {name} sample. One-sided p-values are small "
                f"when a band has more bads than predicted. The unadjusted p-values are each band's own; the "
                f"Holm-adjusted one counts every test of the sample's calibration family (in the large, "
                f"Hosmer–Lemeshow and every band's two-sided binomial test), as monitoring does, and is the one to "
                f"judge the band by."
                + (" Band counts were rounded to whole numbers for the binomial tests." if table.rounded_counts else ""))
    return {"name": name, "chart": chart, "bands": bands, "figures": calibration_figures(checks), "notes": list(checks.notes)}


# --------------------------------------------------------------------------------------------
# 9. Stability


def _stability(build, validation) -> dict:
    checks = build.settings.checks
    overview = text_table(["sample", "score PSI", "status"],
                          [[name, fixed_text(result.value, 4), status_cell(result.status)]
                           for name, result in validation.score_stability.items()],
                          numeric=(1,), caption="Score PSI of each sample against development, over the development bands.")
    samples = []
    for name, result in validation.score_stability.items():
        samples.append({
            "name": name,
            "bands": psi_table(result, name, "scores"),
            "characteristics": _characteristic_stability_table(validation.characteristic_stability.get(name, ()), name),
        })
    return {"overview": overview, "samples": samples, "watch": f"{checks.psi_watch:.2f}", "act": f"{checks.psi_act:.2f}",
            "defaults": (checks.psi_watch, checks.psi_act) == (WATCH_PSI, ACT_PSI)}


def _characteristic_stability_table(items, sample: str) -> Table:
    rows = [[item.characteristic, fixed_text(item.psi.value, 4), status_cell(item.psi.status),
             fixed_text(item.shift.expected_mean, 2), fixed_text(item.shift.actual_mean, 2), signed_text(item.shift.shift, 2),
             percent_text(item.missing_share_development, 1) if item.missing_share_development is not None else DASH,
             percent_text(item.missing_share_other, 1) if item.missing_share_other is not None else DASH]
            for item in items]
    return text_table(["characteristic", "PSI", "status", "mean points, development", f"mean points, {sample}",
                       "points shift", "missing, development", f"missing, {sample}"], rows, numeric=(1, 3, 4, 5, 6, 7),
                      caption=f"Each model characteristic over its bins, development against the {sample} sample. "
                          f"Points shift: how far this characteristic alone moves the mean score.")


# --------------------------------------------------------------------------------------------
# 10. Cut-offs


def _cutoffs(validation, decimals: int, *, every_level: bool) -> dict | None:
    sample = "hold-out" if "hold-out" in validation.samples else DEVELOPMENT_NAME
    checks = validation.samples.get(sample)
    if checks is None:
        return None
    table = checks.cutoffs
    shown, step = _shown_cutoffs(table.cutoffs, table.approval_rate, checks.ks.score, every_level=every_level)
    rows, css = [], []
    for score, i, marked in shown:
        rows.append([score_text(score, decimals), percent_text(table.approval_rate[i], 1), percent_text(table.approved_bad_rate[i]),
                     count_text(table.goods_declined[i]), count_text(table.bads_declined[i]),
                     percent_text(table.bads_declined_share[i], 1)])
        css.append("marked" if marked else "")
    caption = (f"Cut-offs on the {sample} sample, every {step:g} points where between "
               f"{percent_text(CUTOFF_SPAN[0], 0)} and {percent_text(CUTOFF_SPAN[1], 0)} of applications are approved. "
               f"The marked row is the first cut-off above the KS score {score_text(checks.ks.score, decimals)}. "
               f"Rates count goods and bads only.")
    shown_table = text_table(["approve at or above", "approval rate", "bad rate among approved", "goods declined",
                              "bads declined", "share of bads declined"], rows, numeric=range(0, 6), row_css=css,
                             caption=caption)
    trade_off = captioned_chart(
        charts.line_chart([_trade_off(name, c.cutoffs) for name, c in validation.samples.items()],
                          x_label="approval rate", y_label="bad rate among approved", x_range=(0.0, 1.0),
                          x_percent=True, y_percent=True, width=460, height=300,
                          title="Bad rate among approved against approval rate, " + ", ".join(validation.samples) + " samples"),
        f"Bad rate among the approved against the share approved, as the cut-off moves, from "
        f"{percent_text(CUTOFF_SPAN[0], 0)} approved; each sample.")
    return {"sample": sample, "table": shown_table, "n_cutoffs": count_text(len(table.cutoffs)), "n_shown": len(rows),
            "trade_off": trade_off}


def _trade_off(name: str, table) -> charts.Series:
    # Below the lowest approval rate worth considering, a handful of applications make the bad rate jump about.
    keep = table.approval_rate >= CUTOFF_SPAN[0]
    return charts.Series(name, tuple(table.approval_rate[keep]), tuple(table.approved_bad_rate[keep]))


def _shown_cutoffs(cutoffs: np.ndarray, approval_rate: np.ndarray, ks_score: float, *, every_level: bool):
    """Round scores, a fixed step apart, across the cut-offs a lender would consider, plus the KS cut-off.

    The step is the smallest of ``CUTOFF_STEPS`` that keeps the rows to ``CUTOFF_ROWS``. Each round
    score takes the row of the first cut-off at or above it. When the table has a cut-off at every
    score level, approving from the round score approves the same applications, so the round score
    is shown; otherwise the table's own cut-off is.

    Returns
    -------
    list of (score shown, row of the table, whether it is the KS cut-off), and the step.
    """
    low_rate, high_rate = CUTOFF_SPAN
    useful = np.flatnonzero((approval_rate >= low_rate) & (approval_rate <= high_rate))
    if useful.size == 0:
        useful = np.arange(len(cutoffs))
    low, high = float(cutoffs[useful[0]]), float(cutoffs[useful[-1]])
    for step in CUTOFF_STEPS:
        grid = np.arange(math.ceil(low / step) * step, high + step / 2, step)
        if len(grid) <= CUTOFF_ROWS:
            break
    rows = np.searchsorted(cutoffs, grid, side="left")
    shown = {int(row): float(score if every_level else cutoffs[row]) for score, row in zip(grid, rows)
             if row < len(cutoffs)}
    shown = [(score, row, False) for row, score in shown.items()]
    ks_row = int(np.searchsorted(cutoffs, ks_score, side="right"))
    if ks_row < len(cutoffs):
        ks_cutoff = float(cutoffs[ks_row])
        shown = [item for item in shown if item[0] != ks_cutoff] + [(ks_cutoff, ks_row, True)]
        shown.sort(key=lambda item: item[0])
    return shown, step


# --------------------------------------------------------------------------------------------
# 11. Fair lending


def _fairness(build, validation) -> dict:
    settings = build.settings
    declared = [name for name, spec in settings.characteristics.items() if spec.use == "protected"]
    refused = {name: why for name, why in build.selection_left_out().items()
               if why.startswith("it looks like") and "fair-lending" in why}
    fairness = validation.fairness
    grounds = [(ground.rpartition(":")[0].strip(), ground.rpartition(":")[2].strip()) for ground in settings.fairness.grounds]
    context = {"declared": declared, "refused": refused, "grounds": grounds, "source": settings.fairness.grounds_source,
               "checked": fairness is not None}
    if fairness is None:
        return context
    threshold = settings.fairness.proxy_cramers_v
    proxies = text_table(
        ["model characteristic", "protected attribute", "Cramér's V", "flag"],
        [[p.characteristic, p.attribute, fixed_text(p.cramers_v, 3), _flag(f"above {threshold:g}") if p.flagged else ""]
         for p in fairness.proxies],
        numeric=(2,), caption=f"How well each model characteristic's bins stand in for each protected attribute's levels: "
                              f"Cramér's V (0 none, 1 one determines the other), development sample; flagged above "
                              f"{threshold:g} (fairness.proxy_cramers_v, common practice, no source). Strongest first.")
    guide = settings.fairness.impact_ratio
    impacts = []
    for attribute in build.protected:
        impact = fairness.impacts.get(attribute.name)
        if impact is None:
            continue
        rows = [[level, count_text(n), count_text(approved), percent_text(rate, 1),
                 Cell(fixed_text(ratio, 3), "flag" if ratio < guide else ""), percent_text(bad_rate)]
                for level, n, approved, rate, ratio, bad_rate in zip(impact.levels, impact.applications, impact.approved,
                                                                     impact.approval_rate, impact.ratio, impact.approved_bad_rate)]
        table = text_table(["level", "applications", "approved", "approval rate", "ratio to the reference",
                            "bad rate among approved"], rows, numeric=range(1, 6),
                           caption=f"{attribute.name}: applications approved at or above the cut-off "
                                   f"{score_text(impact.cutoff, build.scorecard.table.decimals)}, {fairness.sample} sample. "
                                   f"A ratio under {guide:g} (the four-fifths rule of thumb, common practice, no source) "
                                   f"is marked: a guide for a closer look, not a verdict. The reference level is "
                                   f"{impact.reference}. " + reference_wording(settings.fairness.reference_share))
        impacts.append({"name": attribute.name, "table": table,
                        "chart": _group_distribution(attribute, fairness.sample, validation)})
    return {**context, "cutoff": score_text(fairness.cutoff, build.scorecard.table.decimals),
            "cutoff_source": fairness.cutoff_source, "proxies": proxies, "impacts": impacts,
            "strongest": [p for p in fairness.proxies[:3]]}


def _group_distribution(attribute, sample: str, validation):
    """Each level's applications over the score bands fixed on development, as shares of the level."""
    from ..checks.discrimination import band_sums

    shares = {}
    for level, histogram in attribute.histograms[sample].items():
        counts = band_sums(histogram.scores, validation.edges, histogram.everyone)
        shares[level] = counts / counts.sum()
    return captioned_chart(
        charts.clustered_columns(list(validation.band_names), shares, x_label="score band",
                                 y_label="share of the level's applications", percent=True,
                                 title=f"Score distribution of each level of {attribute.name}, {sample} sample"),
        f"Share of each level's applications in each score band (bands fixed on development); {sample} sample.")


# --------------------------------------------------------------------------------------------
# 11. Cautions


def _cautions(build) -> list[str]:
    outcome = build.settings.outcome
    declined = (
        "Applicants who were declined never had an outcome, and no reject inference was done, so scores of applicants "
        "unlike past approvals are less certain than the figures here suggest." if build.rejects is None else
        f"Applicants who were declined never had an outcome; reject inference ({build.rejects.inferred.method}) gave "
        "them outcomes that rest on assumptions these data cannot test (see Reject inference), so scores of applicants unlike "
        "past approvals are less certain than the figures here suggest."
    )
    limits = [
        "The model describes past applicants who were approved and whose loans ran long enough to be called good "
        f"or bad. {declined}",
        "Figures on the development sample are optimistic: the classing, the choice of characteristics and the "
        "coefficients were all fitted to it. Judge the scorecard on the hold-out and out-of-time samples.",
        "Stepwise selection makes the p-values of the final fit smaller than they would be for a model fixed in "
        "advance; read them as a ranking, not as tests.",
        f"'Bad' means the outcome column {outcome.column!r} holds {_values(outcome.bad) or 'the bad value'}; "
        "another definition of bad, or another outcome window, gives another scorecard.",
        "The past may not repeat: changes in the economy, the products, the channels or the lending policy can "
        "move both who applies and how they repay. Re-check the scorecard on each new quarter "
        "(scorewright monitor) and act on the stability and calibration checks.",
        "Points show association, not cause. A characteristic that earns few points is a reason a score is low, "
        "not a judgement of the person.",
        "Check that no characteristic, and no close stand-in for one, is a ground the law forbids lending "
        "decisions to rest on where the lender operates; the tool cannot know those rules.",
        "Many p-values are shown (per band, per sample); some will be small by chance alone. The calibration tests "
        "of each sample are also shown Holm-adjusted over their family, as monitoring judges them; the others are "
        "not adjusted for multiplicity.",
        "Indeterminate and unknown outcomes are left out of the fit and of every figure that needs an outcome; "
        "they count only in the stability checks.",
    ]
    if build.settings.ledger.weight_column:
        limits.append("Counts are weighted; the tests treat the weighted counts as if they were numbers of "
                      "applications.")
    return limits


# --------------------------------------------------------------------------------------------
# 12. Reproducibility


def _reproducibility(build, generated_by: str, model_checksum: str = "") -> dict:
    versions = library_versions()
    command = "scorewright build settings.toml --out REBUILD_FOLDER"
    return {
        "versions": versions,
        "fingerprint": _fingerprint(build),
        "settings": settings_to_toml(build.settings),
        "command": command,
        "generated_by": generated_by,
        "model_checksum": model_checksum,
    }
