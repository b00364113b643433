"""The model file: a saved scorecard as versioned, checksummed JSON (never pickle).

The file holds what scoring needs (bins and points), what a reviewer needs to trace them
(coefficients, WoE, counts per sample, the settings used, the selection log), and the
development baseline that monitoring compares new quarters with (score histogram and bin
distributions). A SHA-256 checksum of the content guards against damage and hand edits;
``format_version`` guards against files from a newer tool; files of an older format are read
by carrying their old names over (``scorecard.settings.renamed``).
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from . import __version__
from .classing import Binning
from .errors import ModelFileError
from .files import write_text_atomically
from .points import CharacteristicPoints, PointsTable, Scaling
from .rows import ScoreHistogram
from .scoring import Scorecard
from .settings import Settings, settings_from_mapping, settings_to_mapping
from .settings.renamed import upgrade_binning, upgrade_settings
from .terms import NUMERIC, SAMPLE_NAMES, frozen

FORMAT = "scorewright-model"
FORMAT_VERSION = 2  # 2: the present names of classes, bad-rate shape and unseen bin (scorecard.settings.renamed)


@dataclass(frozen=True)
class SavedModel:
    """A model file's content: the scorecard, its settings and the development baseline.

    Attributes
    ----------
    scorecard : Scorecard
    settings : Settings
    baseline : dict of str to ScoreHistogram
        Score histogram per sample at build time (the development one is the stability baseline).
    bin_counts : dict
        Per model characteristic and sample, the weighted rows of every outcome per bin.
    performance : dict
        AUC, Gini and KS per sample at build time.
    document : dict
        The whole file as plain values.
    """

    scorecard: Scorecard
    settings: Settings
    baseline: Mapping[str, ScoreHistogram]
    bin_counts: Mapping[str, Mapping[str, Mapping[str, list[float]]]]
    performance: Mapping[str, Mapping[str, float]]
    document: Mapping[str, Any]


def model_document(build) -> dict[str, Any]:
    """Return the model file's content for a build, as plain JSON-ready values (no checksum yet)."""
    table = build.scorecard.table
    fit = build.selection.fit
    errors = dict(zip(fit.names, fit.std_errors))
    characteristics = []
    for char_points, binning in zip(table.characteristics, build.scorecard.binnings):
        classed = build.characteristic(char_points.name)
        counts = classed.counts
        characteristics.append({
            "name": char_points.name,
            "kind": binning.kind,
            "coefficient": char_points.coefficient,
            "std_error": float(errors[char_points.name]),
            "reason_code": char_points.reason_code,
            "reason_label": char_points.reason_label,
            "iv": classed.evidence.iv,
            "binning": binning.to_dict(),
            "bins": [
                {
                    "label": label,
                    **_bounds(binning, index),
                    "woe": float(char_points.woe[index]),
                    "exact_points": float(char_points.exact_points[index]),
                    "points": float(char_points.points[index]),
                    "counts": {
                        sample: {"goods": float(counts.goods(s)[index]), "bads": float(counts.bads(s)[index]),
                                 "everyone": float(counts.everyone(s)[index]),
                                 "n_goods": float(counts.n_goods(s)[index]), "n_bads": float(counts.n_bads(s)[index])}
                        for s, sample in enumerate(SAMPLE_NAMES) if sample in build.histograms
                    },
                }
                for index, label in enumerate(binning.labels)
            ],
        })
    return {
        "format": FORMAT,
        "format_version": FORMAT_VERSION,
        "tool_version": __version__,
        "settings": _plain(settings_to_mapping(build.settings)),
        "ledger": {"source": build.source, "fingerprint": build.fingerprint.to_dict(),
                   "samples": _samples(build.samples)},
        "scaling": table.scaling.to_dict(),
        "decimals": table.decimals,
        "intercept": table.intercept,
        "intercept_std_error": float(fit.std_errors[0]),
        "characteristics": characteristics,
        "fit": {"solver": fit.solver, "iterations": int(fit.iterations), "converged": bool(fit.converged),
                "log_likelihood": fit.log_likelihood, "deviance": fit.deviance, "aic": fit.aic, "bic": fit.bic,
                "n_observations": fit.n_observations, "l2": fit.l2, "cost_trace": list(fit.cost_trace)},
        "selection_log": [dataclasses.asdict(d) for d in build.selection.log],
        # the override log: who classed each characteristic, and the IV of the tool's proposal it departs from
        "classing": [{"characteristic": c.name, "classed_by": c.origin, "iv": c.evidence.iv, "proposal_iv": c.proposal_iv}
                     for c in build.characteristics],
        "performance": build.performance(),
        "baseline": {"score_histograms": {sample: h.to_dict() for sample, h in build.histograms.items()}},
        "notes": list(build.notes),
        "fairness": _fairness(build),
    }


def _fairness(build) -> dict[str, Any]:
    """What monitoring needs to repeat the adverse-impact checks: the cut-off and the protected attributes' levels."""
    from .validation import build_cutoff

    if not build.protected:
        return {}
    cutoff, source = build_cutoff(build)
    return {"cutoff": cutoff, "cutoff_source": source,
            "attributes": {attribute.name: list(attribute.levels) for attribute in build.protected}}


def save_model(document: Mapping[str, Any], path: str | os.PathLike[str]) -> Path:
    """Write a model document with its checksum, atomically (temporary name, then rename).

    Returns
    -------
    Path
        The path written.
    """
    body = _plain(dict(document))
    body.pop("checksum", None)
    body["checksum"] = checksum(body)
    text = json.dumps(body, indent=1, ensure_ascii=False, allow_nan=False) + "\n"
    return write_text_atomically(path, text)


def checksum(body: Mapping[str, Any]) -> str:
    """Return the SHA-256 of a document's canonical JSON (sorted keys, no spaces), without its checksum."""
    content = {key: value for key, value in body.items() if key != "checksum"}
    canonical = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()


def load_model(path: str | os.PathLike[str]) -> SavedModel:
    """Read a model file, verify its format, version and checksum, and rebuild the scorecard.

    Raises
    ------
    ModelFileError
        The file is missing, not JSON, not a scorewright model, from a newer format, or its
        checksum does not match (damaged or edited).
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ModelFileError(f"{path}: model file not found. Give the model.json written by 'scorewright build'.") from None
    except IsADirectoryError:
        raise ModelFileError(f"{path}: is a folder. Give the model.json inside the folder 'scorewright build' wrote.") from None
    except (OSError, UnicodeDecodeError) as error:
        raise ModelFileError(f"{path}: cannot read the model file ({error}).") from None
    try:
        document = json.loads(text)
    except json.JSONDecodeError as error:
        raise ModelFileError(f"{path}: not a valid model file (JSON error at line {error.lineno}). It may be damaged; build it again.") from None
    if not isinstance(document, dict) or document.get("format") != FORMAT:
        raise ModelFileError(f"{path}: not a scorewright model file. Give the model.json written by 'scorewright build'.")
    version = document.get("format_version")
    if not isinstance(version, int) or version > FORMAT_VERSION:
        raise ModelFileError(
            f"{path}: model file format version {version!r} is newer than this tool reads ({FORMAT_VERSION}). "
            f"Upgrade scorewright (this is {__version__})."
        )
    if document.get("checksum") != checksum(document):
        raise ModelFileError(
            f"{path}: the checksum does not match the content: the file was damaged or edited by hand. "
            "Change the settings and build again instead of editing the model file."
        )
    return _saved_model(document, path)


def _saved_model(document: Mapping[str, Any], path: Path) -> SavedModel:
    older = document["format_version"] < FORMAT_VERSION
    try:
        settings_document = upgrade_settings(document["settings"]) if older else document["settings"]
        settings = settings_from_mapping(settings_document, source=f"{path} (settings)")
        scale = Scaling(**document["scaling"])
        characteristics, binnings, bin_counts = [], [], {}
        for char in document["characteristics"]:
            binnings.append(Binning.from_dict(char["name"], upgrade_binning(char["binning"]) if older else char["binning"]))
            bins = char["bins"]
            characteristics.append(CharacteristicPoints(
                name=char["name"], labels=tuple(b["label"] for b in bins), woe=frozen([b["woe"] for b in bins]),
                coefficient=float(char["coefficient"]), exact_points=frozen([b["exact_points"] for b in bins]),
                points=frozen([b["points"] for b in bins]), reason_code=char["reason_code"], reason_label=char["reason_label"],
            ))
            samples = bins[0]["counts"].keys() if bins else []
            bin_counts[char["name"]] = {
                sample: {key: [b["counts"][sample][key] for b in bins] for key in ("goods", "bads", "everyone")}
                for sample in samples
            }
        table = PointsTable(scale, float(document["intercept"]), tuple(characteristics), int(document["decimals"]))
        scorecard = Scorecard(table, tuple(binnings), settings.ledger.id_column)
        baseline = {sample: ScoreHistogram.from_dict(sample, data)
                    for sample, data in document["baseline"]["score_histograms"].items()}
    except (KeyError, TypeError, ValueError) as error:
        raise ModelFileError(f"{path}: the model file lacks or mangles an entry ({type(error).__name__}: {error}). Build it again.") from None
    return SavedModel(scorecard, settings, baseline, bin_counts, document.get("performance", {}), document)


def _bounds(binning: Binning, index: int) -> dict[str, Any]:
    """The values a bin holds: an interval, levels, a special value, or missing."""
    held: dict[str, Any] = {}
    if index < binning.n_chain:
        if binning.kind == NUMERIC:
            edges = [-math.inf, *binning.cuts, math.inf]
            held["lower"] = None if math.isinf(edges[index]) else edges[index]
            held["upper"] = None if math.isinf(edges[index + 1]) else edges[index + 1]
        else:
            held["levels"] = list(binning.classes[index])
    held["special_values"] = [v for v, b in zip(binning.special_values, binning.special_bins) if b == index]
    held["missing"] = binning.missing_bin == index
    held["unseen"] = binning.unseen_bin == index
    return held


def _samples(frame) -> dict[str, dict[str, float]]:
    return {str(sample): {str(k): (None if isinstance(v, float) and math.isnan(v) else float(v)) for k, v in row.items()}
            for sample, row in frame.iterrows()}


def _plain(value: Any) -> Any:
    """Turn tuples, numpy scalars and arrays into JSON-ready values; NaN becomes null."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, np.ndarray)):
        return [_plain(v) for v in value]
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        value = float(value)
        return None if math.isnan(value) or math.isinf(value) else value
    if isinstance(value, np.bool_):
        return bool(value)
    return value

