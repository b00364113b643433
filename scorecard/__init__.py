"""scorewright: build, validate and monitor points scorecards for credit applications.

The public names are listed in ``__all__`` and imported on first use, so that importing the
package (and running ``scorewright --help``) stays fast.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

_PUBLIC = {
    # intake and settings
    "read_ledger": "ledger", "prepare_ledger": "ledger", "split_samples": "ledger", "Ledger": "ledger",
    "Settings": "settings", "read_settings": "settings", "write_settings": "settings",
    "settings_from_mapping": "settings", "settings_reference": "settings",
    # classing and evidence
    "Binning": "classing", "fine_classing": "classing", "coarse_classing": "classing", "code_rows": "classing",
    "optimal_grouping": "classing", "binning_from_settings": "classing",
    "BinCounts": "counting", "count_bins": "counting", "PatternTable": "counting", "pattern_table": "counting",
    "EvidenceTable": "evidence", "evidence_table": "evidence", "information_value": "evidence", "woe_values": "evidence",
    "class_ledger": "build", "ClassedLedger": "build", "build_scorecard": "build", "Build": "build",
    # fit, points, checks, deliverables
    "fit_logistic": "logistic", "FitResult": "logistic", "select_characteristics": "selection",
    "SelectionResult": "selection", "scaling": "points", "points_table": "points", "PointsTable": "points",
    "Scorecard": "points", "ScoreHistogram": "points", "validate_build": "validation", "Validation": "validation",
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
