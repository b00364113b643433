"""model-document.html: the build's evidence under the headings a model-risk reviewer looks for.

The headings follow the parts of model documentation that supervisory guidance on model risk
asks for (the US Federal Reserve and OCC's *Supervisory Guidance on Model Risk Management*,
SR 11-7 / OCC 2011-12, 2011, from memory): purpose and intended use, data, method, performance,
fair lending, assumptions and limitations, monitoring, and the changes since the previous model.
What only the lender can write (purpose, intended use, owner, approval) comes from ``[report]``
in the settings, and a blank one is a marked placeholder, never invented text. With
``--previous OLD/model.json`` the change log sets this model beside the old one.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .. import __version__
from ..files import write_text_atomically
from ..terms import DEVELOPMENT_NAME, caution
from .build_page import _challenger, _data, _fairness, _fingerprint, _headline_table
from .page_kit import DASH, classed_by, environment, fixed_text, signed_text, text_table

GUIDANCE = ("Supervisory Guidance on Model Risk Management (US Federal Reserve SR 11-7 and OCC Bulletin 2011-12, 2011; "
            "cited from memory)")

SECTIONS = (
    ("purpose", "Purpose and intended use"),
    ("data", "Data"),
    ("method", "Method and the decisions behind it"),
    ("performance", "Performance"),
    ("fairness", "Fair lending"),
    ("limitations", "Assumptions and limitations"),
    ("monitoring", "Monitoring plan"),
    ("changes", "Changes since the previous model"),
    ("approval", "Ownership and approval"),
)

PLACEHOLDER = "To be written by the model owner: set {key} under [report] in the settings."


def render_model_document(build, validation, *, previous=None, previous_name: str = "", model_checksum: str = "") -> str:
    """Return the model document as one self-contained HTML page (inline style, no script).

    Parameters
    ----------
    build : scorecard.build.Build
    validation : scorecard.validation.Validation
    previous : scorecard.modelfile.SavedModel, optional
        The model this one replaces, for the change log.
    previous_name : str
        How to name the previous model file in the page.
    model_checksum : str
        The checksum of the model file the document describes (as ``model.json`` records it).
    """
    report = build.settings.report
    context = {
        "title": f"{report.title}: model document",
        "kicker": "Model document",
        "subtitle": (f"{report.lender} · " if report.lender else "") + f"built from {build.source}",
        "caution": caution("This document"),
        "tool_version": __version__,
        "sections": SECTIONS,
        "guidance": GUIDANCE,
        "purpose": [_written("Purpose", report.purpose, "purpose"),
                    _written("Intended use", report.intended_use, "intended_use")],
        "approval": [_written("Owner", report.owner, "owner"), _written("Approval", report.approval, "approval")],
        "fingerprint": _fingerprint(build),
        "model_checksum": model_checksum,
        "data": _data(build),
        "method": _method(build),
        "performance": {"headline": _headline_table(validation, build.scorecard.table.decimals),
                        "challenger": _challenger(build)},
        "fairness": _fairness(build, validation),
        "limitations": _limitations(build, validation),
        "monitoring": _monitoring(build),
        "changes": _changes(build, previous, previous_name),
    }
    return environment().get_template("model-document.html").render(**context)


def write_model_document(build, validation, path, *, previous=None, previous_name: str = "",
                         model_checksum: str = "") -> Path:
    """Write the model document to ``path`` atomically and return the path."""
    page = render_model_document(build, validation, previous=previous, previous_name=previous_name,
                                 model_checksum=model_checksum)
    return write_text_atomically(Path(path), page)


def _written(label: str, text: str, key: str) -> dict:
    return {"label": label, "text": text or PLACEHOLDER.format(key=key), "placeholder": not text}


def _method(build) -> dict:
    settings = build.settings
    rows = [[c.name, classed_by(c), fixed_text(c.evidence.iv, 4),
             fixed_text(c.proposal_iv, 4) if c.proposal_iv is not None else DASH,
             "in the model" if c.name in build.scorecard.table.names else "left out"]
            for c in build.characteristics]
    classing = text_table(["characteristic", "classed by", "IV", "IV of the tool's proposal", "outcome"], rows,
                          numeric=(2, 3), caption="Who decided each characteristic's classes, and what it came to.")
    fit = build.selection.fit
    steps = [
        f"Classing: fine bins (at most {settings.classing.max_fine_bins}), then classes merged into a bad-rate shape "
        f"(classing.bad_rate_shape = {settings.classing.bad_rate_shape!r}), each class at least "
        f"{settings.classing.min_class_share:.0%} of development; the analyst's classes where the settings give them.",
        f"Selection: stepwise on weight of evidence (the selection log of the build report); characteristics under IV "
        f"{settings.selection.min_iv:g} screened out (selection.screen = {settings.selection.screen!r}), and every one "
        "left out score-tested against the final model.",
        f"Fit: logistic regression by our own fitter ({fit.solver}), {fit.iterations} iterations, "
        f"{'converged' if fit.converged else 'not converged'}.",
        f"Scaling: {settings.scaling.base_score:g} points at odds {settings.scaling.base_odds:g}:1, "
        f"{settings.scaling.pdo:g} points to double the odds.",
    ]
    return {"classing": classing, "steps": steps, "notes": _proposal_notes(build)}


def _proposal_notes(build) -> list[str]:
    return [f"{name}: {spec.note}" for name, spec in build.settings.characteristics.items() if spec.note]


def _limitations(build, validation) -> list[str]:
    items = [
        "The model learns from booked applications only; its scores for the kinds of applicant the lender declined "
        "are extrapolation" + (" (reject inference was applied: it rests on assumptions the data cannot test)."
                               if build.rejects is not None else "."),
        "Bad is the outcome as the ledger defines it; a change of that definition, of the products or of the "
        "applicants makes the figures here out of date.",
        "The probabilities of default are calibrated on development; calibration on later applications is "
        "checked by monitoring, not assumed.",
    ]
    if "out-of-time" not in validation.samples:
        items.append("No out-of-time sample was drawn: the performance on later applications is not yet known.")
    items += [f"{sample}: {why}." for sample, why in validation.not_computed.items()]
    return items


def _monitoring(build) -> list[str]:
    checks = build.settings.checks
    return [
        "Every quarter, once the outcomes are known: scorewright monitor model.json NEW_LEDGER.",
        f"Stability: score and characteristic PSI against development; watch at {checks.psi_watch:g}, act at "
        f"{checks.psi_act:g}.",
        f"Discrimination: the new AUC against the build's, DeLong's two-sample test; watch below p = {checks.p_watch:g}, "
        f"act below {checks.p_act:g}.",
        "Calibration: observed against predicted bads per score band, a Holm-adjusted family of tests, same thresholds.",
        "Fair lending: the adverse impact ratio per level of each protected attribute, at the cut-off, per quarter.",
    ]


def _changes(build, previous, previous_name: str) -> dict:
    if previous is None:
        return {"given": False}
    old, new = previous.scorecard.table, build.scorecard.table
    added = [name for name in new.names if name not in old.names]
    removed = [name for name in old.names if name not in new.names]
    rows = []
    for name in new.names:
        if name not in old.names:
            continue
        before, after = old.get(name), new.get(name)
        same_bins = before.labels == after.labels
        change = (np.max(np.abs(np.asarray(after.points, float) - np.asarray(before.points, float)))
                  if same_bins else math.nan)
        rows.append([name, "same" if same_bins else "changed",
                     fixed_text(change, new.decimals) if same_bins else DASH])
    kept = text_table(["characteristic", "bins", "largest change of points"], rows, numeric=(2,),
                      caption="Characteristics in both models.") if rows else None
    performance = []
    for sample in sorted(set(previous.performance) | set(build.performance()),
                         key=lambda s: (s != DEVELOPMENT_NAME, s)):
        was, now = previous.performance.get(sample, {}), build.performance().get(sample, {})
        performance.append([sample, fixed_text(was.get("auc", math.nan), 4), fixed_text(now.get("auc", math.nan), 4),
                            signed_text(now.get("auc", math.nan) - was.get("auc", math.nan), 4),
                            fixed_text(was.get("ks", math.nan), 4), fixed_text(now.get("ks", math.nan), 4)])
    side = text_table(["sample", "AUC before", "AUC now", "change", "KS before", "KS now"], performance,
                      numeric=range(1, 6), caption="Performance side by side (each model on its own samples).")
    return {"given": True, "name": previous_name, "added": added, "removed": removed, "kept": kept,
            "performance": side}


__all__ = ["GUIDANCE", "render_model_document", "write_model_document"]
