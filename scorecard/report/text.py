"""The text deliverables: the IV table ``init`` prints, ``summary.txt`` of a build and ``monitor.txt`` of a monitoring run."""

from __future__ import annotations

from pathlib import Path

from ..classing import ClassedLedger
from ..monitor import STATUSES
from ..terms import ANY, FROM_DATA, NUMERIC


def iv_table(classed: ClassedLedger, left_out: dict[str, str] | None = None) -> str:
    """Return an aligned text table of characteristics sorted by IV, strongest first."""
    rows = [("characteristic", "kind", "bins", "IV", "strength", "bad rate", "flag")]
    ranked = sorted(classed.characteristics, key=lambda c: -c.evidence.iv)
    for char in ranked:
        flag = "check for leakage" if char.evidence.leakage_flag else ""
        numeric = char.binning.kind == NUMERIC
        # how the bad rate moves as the value grows (a categorical's classes have no order of their own)
        ordered = numeric and char.binning.n_chain > 1 and char.binning.bad_rate_shape not in (ANY, FROM_DATA)
        shape = char.binning.bad_rate_shape if ordered else ""
        rows.append((char.name, "numeric" if numeric else "categorical", str(char.binning.n_bins), f"{char.evidence.iv:.4f}",
                     char.evidence.strength, shape, flag))
    widths = [max(len(row[i]) for row in rows) for i in range(len(rows[0]))]
    aligned = ["  ".join(cell.rjust(w) if i in (2, 3) else cell.ljust(w) for i, (cell, w) in enumerate(zip(row, widths))).rstrip()
               for row in rows]
    lines = [aligned[0], "  ".join("-" * w for w in widths).rstrip(), *aligned[1:]]
    for name, why in (left_out or {}).items():
        lines.append(f"{name}: left out ({why})")
    return "\n".join(lines)


def build_summary(build) -> str:
    """Return the short text summary of a build: samples, characteristics with coefficients, figures per sample."""
    samples = build.samples
    counts = ", ".join(f"{name} {int(samples.loc[name, 'rows']):,}" for name in samples.index if samples.loc[name, "rows"] > 0)
    fit = build.selection.fit
    lines = [f"scorecard built from {build.source} ({build.fingerprint.n_rows:,} rows: {counts})", ""]
    rows = [("characteristic", "coefficient", "std error", "IV", "flag")]
    for name, coefficient, error in zip(fit.names[1:], fit.coefficients[1:], fit.std_errors[1:]):
        evidence = build.characteristic(name).evidence
        flag = "check for leakage" if evidence.leakage_flag else ""
        rows.append((name, f"{coefficient:.4f}", f"{error:.4f}", f"{evidence.iv:.4f}", flag))
    lines += _aligned(rows, numeric=(1, 2, 3))
    flagged = [name for name in fit.names[1:] if build.characteristic(name).evidence.leakage_flag]
    if flagged:
        lines += ["", f"FLAGGED: {', '.join(flagged)} {'has' if len(flagged) == 1 else 'have'} an IV above "
                  f"{build.settings.selection.leakage_iv} and {'is' if len(flagged) == 1 else 'are'} in the model. Check each is "
                  "known at the time of application; if not, set use = \"never\" and build again."]
    lines += ["", f"intercept {fit.coefficients[0]:.4f}; {len(fit.names) - 1} characteristics; scores from "
              f"{build.scorecard.table.min_score:g} to {build.scorecard.table.max_score:g}", ""]
    figures = [("sample", "AUC", "Gini", "KS")]
    for sample, values in build.performance().items():
        figures.append((sample, f"{values['auc']:.4f}", f"{values['gini']:.4f}", f"{values['ks']:.4f}"))
    lines += _aligned(figures, numeric=(1, 2, 3))
    if build.rejects is not None:
        inferred, before = build.rejects.inferred, build.rejects.accepted_performance()
        shown = "; ".join(f"{sample} {values['auc']:.4f}" for sample, values in before.items())
        lines += ["", f"reject inference: {inferred.method}, {inferred.rejects.sum():,.0f} in-time rejects at an inferred "
                  f"bad rate of {inferred.bad_rate:.2%}; the figures above are of booked applications. The accepted-only "
                  f"scorecard's AUC: {shown}. Reject inference rests on assumptions the data cannot test (see the report)."]
    return "\n".join(lines)


def monitor_summary(result, *, model: Path) -> str:
    """Return the short text summary of a monitoring run: overall status first, then each check."""
    overall = result.overall
    lines = [
        f"monitoring {result.source} with {model}",
        f"{overall.rows:,.0f} rows: {overall.goods:,.0f} good, {overall.bads:,.0f} bad, "
        f"{overall.indeterminate:,.0f} indeterminate, {overall.unknown:,.0f} with no outcome yet",
        "",
        f"overall status: {result.status}",
    ]
    ranked = sorted(overall.statuses, key=lambda s: -STATUSES.index(s.status))
    raised = [s for s in ranked if s.status != "ok"]
    rows = [(s.status, s.check, f"{s.figure} {s.value:.3g}", s.thresholds) for s in raised]
    for line, status in zip(_aligned(rows) if rows else [], raised):
        lines += ["  " + line, f"         {status.detail}"]
    calm = [s.check for s in ranked if s.status == "ok"]
    if calm:
        lead = f"ok on the other {len(calm)} checks" if raised else f"ok on all {len(calm)} checks"
        lines.append(f"  {lead}: {', '.join(calm[:4])}{', ...' if len(calm) > 4 else ''}")
    if overall.outcomes is None:
        why = overall.not_computed.get("calibration", "no row has a known outcome")
        lines += ["", f"stability only: {why}; discrimination and calibration are not computed"]
    if result.quarters:
        lines += ["", "per quarter: " + ", ".join(f"{q.period} {q.status}" for q in result.quarters)]
    return "\n".join(lines)


def _aligned(rows, *, numeric=()) -> list[str]:
    widths = [max(len(row[i]) for row in rows) for i in range(len(rows[0]))]
    return ["  ".join(cell.rjust(w) if i in numeric else cell.ljust(w) for i, (cell, w) in enumerate(zip(row, widths))).rstrip()
            for row in rows]
