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
from .terms import CATEGORICAL, DEVELOPMENT_NAME, NUMERIC, SAMPLE_NAMES, frozen

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


def document_checksum(document: Mapping[str, Any]) -> str:
    """Return the checksum ``save_model`` records for a model document."""
    return checksum(_plain(dict(document)))


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
        document = json.loads(text, parse_constant=_no_constant, parse_float=_finite_float)
    except json.JSONDecodeError as error:
        raise ModelFileError(f"{path}: not a valid model file (JSON error at line {error.lineno}). It may be damaged; build it again.") from None
    except (ValueError, RecursionError) as error:  # NaN, Infinity, 1e400; brackets nested past any model's depth
        reason = "it is nested too deeply" if isinstance(error, RecursionError) else str(error)
        raise ModelFileError(f"{path}: not a valid model file ({reason}). It may be damaged; build it again.") from None
    if not isinstance(document, dict) or document.get("format") != FORMAT:
        raise ModelFileError(f"{path}: not a scorewright model file. Give the model.json written by 'scorewright build'.")
    version = document.get("format_version")
    if isinstance(version, bool) or not isinstance(version, int) or version < 1:
        raise ModelFileError(f"{path}: model file format version {version!r} is not one this tool wrote. "
                             "It may be damaged; build it again.")
    if version > FORMAT_VERSION:
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
    check_meaning(document, path, older=older)
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
    except (KeyError, TypeError, ValueError, AttributeError, IndexError) as error:
        raise ModelFileError(f"{path}: the model file lacks or mangles an entry ({type(error).__name__}: {error}). Build it again.") from None
    return SavedModel(scorecard, settings, baseline, bin_counts, document.get("performance", {}), document)


def _no_constant(name: str) -> None:
    raise ValueError(f"it holds {name}, which is not a number")


def _finite_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"it holds {text}, a number too large for a double")
    return value


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



# --------------------------------------------------------------------------------------------
# The meaning of a model file: a checksum proves the file is as written, not that what was
# written makes sense (a file edited and its checksum recomputed passes it). Everything scoring,
# monitoring and the exports rely on is checked here, once, where the file enters.


def check_meaning(document: Mapping[str, Any], path: Path, *, older: bool = False) -> None:
    """Refuse a model file whose content no build could have written.

    Raises
    ------
    ModelFileError
        Naming the entry and what is wrong with it.
    """
    where = f"{path}: "
    _entry(document, "settings", dict, where)
    scaling = _entry(document, "scaling", dict, where)
    for key in ("base_score", "base_odds", "pdo", "factor", "offset"):
        _number(scaling, key, f"{where}scaling.")
    if not scaling["base_odds"] > 0 or not scaling["pdo"] > 0:
        _refuse(f"{where}scaling: base_odds and pdo must be positive (they are {scaling['base_odds']!r} and {scaling['pdo']!r})")
    factor = scaling["pdo"] / math.log(2.0)
    offset = scaling["base_score"] - factor * math.log(scaling["base_odds"])
    if not (math.isclose(scaling["factor"], factor, rel_tol=1e-9) and math.isclose(scaling["offset"], offset, rel_tol=1e-9, abs_tol=1e-9)):
        _refuse(f"{where}scaling: factor and offset do not follow from base_score, base_odds and pdo")
    decimals = _entry(document, "decimals", int, where)
    if not 0 <= decimals <= 6:
        _refuse(f"{where}decimals = {decimals!r}: points keep 0 to 6 decimals")
    _number(document, "intercept", where)
    characteristics = _entry(document, "characteristics", list, where)
    if not characteristics:
        _refuse(f"{where}the model has no characteristics")
    names = set()
    for index, char in enumerate(characteristics):
        here = f"{where}characteristics[{index}]"
        if not isinstance(char, dict):
            _refuse(f"{here}: not an entry of a characteristic")
        name = _entry(char, "name", str, f"{here}.")
        if not name or name in names:
            _refuse(f"{here}: the name {name!r} is empty or given twice")
        names.add(name)
        _check_characteristic(char, f"{where}characteristic {name!r}", decimals, older=older)
    baseline = _entry(document, "baseline", dict, where)
    histograms = _entry(baseline, "score_histograms", dict, f"{where}baseline.")
    if DEVELOPMENT_NAME not in histograms:
        _refuse(f"{where}baseline.score_histograms: no histogram of the {DEVELOPMENT_NAME} sample")
    for sample, data in histograms.items():
        _check_histogram(data, f"{where}baseline.score_histograms.{sample}")
    performance = _entry(document, "performance", dict, where)
    for sample, figures in performance.items():
        here = f"{where}performance.{sample}"
        if not isinstance(figures, dict) or not all(
                value is None or (not isinstance(value, bool) and isinstance(value, (int, float)) and math.isfinite(value))
                for value in figures.values()):
            _refuse(f"{here}: not figures (numbers) of a sample")
        if "auc" in figures:  # monitoring compares a new quarter with these
            for key in ("auc", "gini", "ks"):
                _number(figures, key, f"{here}.")
            if sample not in histograms:
                _refuse(f"{here}: no score histogram of the sample in the baseline")


def _check_characteristic(char: Mapping[str, Any], here: str, decimals: int, *, older: bool) -> None:
    for key in ("reason_code", "reason_label"):
        _entry(char, key, str, f"{here}, ")
    _number(char, "coefficient", f"{here}, ")
    binning = _entry(char, "binning", dict, f"{here}, ")
    if older:
        binning = upgrade_binning(binning)
    kind = binning.get("kind")
    if kind not in (NUMERIC, CATEGORICAL) or char.get("kind", kind) != kind:
        _refuse(f"{here}, binning.kind: {kind!r} is not numeric or categorical, or not the characteristic's kind")
    bins = _entry(char, "bins", list, f"{here}, ")
    n_bins = len(bins)
    labels = _entry(binning, "labels", list, f"{here}, binning.")
    if len(labels) != n_bins or not all(isinstance(label, str) for label in labels):
        _refuse(f"{here}: {n_bins} bins but {len(labels)} bin labels in the binning")
    if kind == NUMERIC:
        cuts = _numbers(binning, "cuts", f"{here}, binning.")
        if any(b <= a for a, b in zip(cuts, cuts[1:])):
            _refuse(f"{here}, binning.cuts: not strictly ascending")
        n_chain = len(cuts) + 1
    else:
        classes = _entry(binning, "classes", list, f"{here}, binning.")
        if not all(isinstance(levels, list) and levels and all(isinstance(v, str) for v in levels) for levels in classes):
            _refuse(f"{here}, binning.classes: every class must be a non-empty list of levels (text)")
        levels = [level for levels_of_class in classes for level in levels_of_class]
        if len(set(levels)) != len(levels):
            _refuse(f"{here}, binning.classes: a level is in two classes")
        n_chain = len(classes)
    special_values = _numbers(binning, "special_values", f"{here}, binning.")
    special_bins = _entry(binning, "special_bins", list, f"{here}, binning.")
    if kind == CATEGORICAL and special_values or len(special_bins) != len(special_values) or len(set(special_values)) != len(special_values):
        _refuse(f"{here}, binning: special values and their bins do not match")
    if not 1 <= n_chain <= n_bins:
        _refuse(f"{here}: {n_bins} bins cannot hold the binning's {n_chain} classes")
    for key, value, lowest in [*(("special_bins", b, -1) for b in special_bins), ("missing_bin", binning.get("missing_bin"), -1),
                               ("unseen_bin", binning.get("unseen_bin"), 0)]:
        if isinstance(value, bool) or not isinstance(value, int) or not lowest <= value < n_bins:
            _refuse(f"{here}, binning.{key} = {value!r}: not a bin of the characteristic (0 to {n_bins - 1})")
    unit = 10.0**decimals
    for index, entry in enumerate(bins):
        at = f"{here}, bins[{index}]"
        if not isinstance(entry, dict):
            _refuse(f"{at}: not an entry of a bin")
        for key in ("woe", "exact_points", "points"):
            _number(entry, key, f"{at}.")
        if not math.isclose(entry["points"] * unit, round(entry["points"] * unit), abs_tol=1e-6):
            _refuse(f"{at}.points = {entry['points']!r}: not rounded to the model's {decimals} decimals")
        counts = _entry(entry, "counts", dict, f"{at}.")
        if DEVELOPMENT_NAME not in counts:
            _refuse(f"{at}.counts: no counts of the {DEVELOPMENT_NAME} sample")
        for sample, numbers in counts.items():
            for key in ("goods", "bads", "everyone"):
                if _number(numbers if isinstance(numbers, dict) else {}, key, f"{at}.counts.{sample}.", largest=math.inf) < 0:
                    _refuse(f"{at}.counts.{sample}.{key}: a negative count")
        if entry.get("label", labels[index]) != labels[index]:
            _refuse(f"{at}.label differs from the binning's label of the bin")
        if kind == NUMERIC and index < n_chain:
            edges = [None, *cuts, None]
            if (entry.get("lower", edges[index]), entry.get("upper", edges[index + 1])) != (edges[index], edges[index + 1]):
                _refuse(f"{at}: lower and upper do not match the binning's cuts")
        if kind == CATEGORICAL and index < n_chain and entry.get("levels", classes[index]) != classes[index]:
            _refuse(f"{at}.levels do not match the binning's classes")


def _check_histogram(data: Any, here: str) -> None:
    if not isinstance(data, dict):
        _refuse(f"{here}: not a score histogram")
    columns = [_numbers(data, key, f"{here}.") for key in ("scores", "goods", "bads", "others")]
    if len({len(c) for c in columns}) != 1 or any(v < 0 for c in columns[1:] for v in c):
        _refuse(f"{here}: its columns differ in length or hold negative counts")
    if any(b <= a for a, b in zip(columns[0], columns[0][1:])):
        _refuse(f"{here}.scores: not strictly ascending")


def _entry(mapping: Mapping[str, Any], key: str, kind: type, where: str) -> Any:
    value = mapping.get(key) if isinstance(mapping, Mapping) else None
    if isinstance(value, bool) or not isinstance(value, kind):
        _refuse(f"{where}{key}: {'missing' if value is None else repr(value)[:40]}, where {kind.__name__} was written")
    return value


# No scorecard has a number this large in its scaling, points or counts; beyond it sums of points
# in units of a sixth decimal would leave the integers a double holds exactly
LARGEST = 1e9


def _number(mapping: Mapping[str, Any], key: str, where: str, *, largest: float = LARGEST) -> float:
    value = mapping.get(key)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not abs(value) <= largest:
        _refuse(f"{where}{key} = {repr(value)[:40]}: not a number within ±{largest:g}")
    return float(value)


def _numbers(mapping: Mapping[str, Any], key: str, where: str) -> list[float]:
    values = _entry(mapping, key, list, where)
    if not all(not isinstance(v, bool) and isinstance(v, (int, float)) and math.isfinite(v) for v in values):
        _refuse(f"{where}{key}: not a list of finite numbers")
    return [float(v) for v in values]


def _refuse(text: str) -> None:
    raise ModelFileError(f"{text}. The file was edited after the build; build the model again instead of editing it.")
