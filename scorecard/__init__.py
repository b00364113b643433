"""scorewright: build, validate and monitor points scorecards for credit applications.

The public names are listed in ``__all__`` and imported on first use, so that importing the
package (and running ``scorewright --help``) stays fast.
"""

from __future__ import annotations

import importlib
from pathlib import Path

__version__ = "0.1.0"

# templates/ and demo/ are installed as scorecard.templates and scorecard.demo (pyproject.toml). In a
# source checkout that was never installed they sit beside this package, not inside it: let the
# package find them there too, so that `python -m scorecard` runs from a checkout (with the
# dependencies of pyproject.toml importable).
_CHECKOUT = Path(__file__).resolve().parent.parent
if (_CHECKOUT / "pyproject.toml").is_file() and (_CHECKOUT / "templates" / "__init__.py").is_file():
    __path__.append(str(_CHECKOUT))

_PUBLIC = {
    # the shared words, intake and settings
    "SAMPLE_NAMES": "terms", "OUTCOME_NAMES": "terms",
    "read_ledger": "intake", "prepare_ledger": "intake", "open_ledger": "intake", "split_samples": "intake",
    "Ledger": "intake",
    "Settings": "settings", "read_settings": "settings", "write_settings": "settings", "edit_settings": "settings",
    "settings_from_mapping": "settings", "settings_reference": "settings",
    # rows and their count tables
    "InProcessRows": "rows", "BinCounts": "rows", "count_bins": "rows", "PatternTable": "rows", "pattern_table": "rows",
    "ScoreHistogram": "rows", "code_rows": "rows",
    # classing and evidence
    "Binning": "classing", "fine_classing": "classing", "coarse_classing": "classing", "best_classing": "classing",
    "binning_from_settings": "classing", "class_ledger": "classing", "ClassedLedger": "classing",
    "EvidenceTable": "evidence", "evidence_table": "evidence", "information_value": "evidence", "woe_values": "evidence",
    # fit, selection, points, scoring, checks
    "fit_logistic": "fitter", "FitResult": "fitter", "select_characteristics": "selection",
    "SelectionResult": "selection", "ScreenTest": "selection", "scaling": "points", "points_table": "points", "PointsTable": "points",
    "Scorecard": "scoring", "validate_build": "validation", "Validation": "validation",
    # the build, the model file, monitoring
    "build_scorecard": "build", "Build": "build",
    "load_model": "modelfile", "save_model": "modelfile", "model_document": "modelfile", "SavedModel": "modelfile",
    "monitor_ledger": "monitor", "MonitorResult": "monitor",
    # errors
    "ScorecardError": "errors", "LedgerError": "errors", "SettingsError": "errors", "ClassingError": "errors",
    "FitError": "errors", "ModelFileError": "errors", "ScorecardWarning": "errors",
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name: str):
    if name in _PUBLIC:
        value = getattr(importlib.import_module(f".{_PUBLIC[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'scorecard' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
