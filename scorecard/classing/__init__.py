"""Classing: binning and labels, fine classing, the best classing, the analyst's overrides, and the passes over rows.

- ``bins``: ``Binning`` (where every value of a characteristic goes) and the bins' labels;
- ``fine``: candidate bins from weighted quantiles or levels;
- ``best``: the best classing, the partition with the largest information value under a bad-rate shape
  (one way or one bend; exact DP);
- ``overrides``: a classing fixed in the settings, completed from counts and checked against the limits;
- ``passes``: classing a whole ledger in passes over its rows (``class_ledger``).
"""

from .best import (
    CoarseClassing, ClassLimits, Merging, best_classing, coarse_classing, keeps_shape, merge_alike_neighbours,
    neighbour_p_values, worst_bin,
)
from .bins import (
    MISSING_LABEL, RARE_LABEL, Binning, categorical_binning, format_number, class_label, interval_labels, numeric_binning,
)
from .fine import fine_classing, quantile_cuts, roundest_between
from .overrides import binning_from_settings, check_constraints, classing_settings_values, resolve_unseen
from .passes import ClassedCharacteristic, ClassedLedger, class_ledger, fine_binnings

__all__ = [
    "MISSING_LABEL", "RARE_LABEL", "Binning", "ClassedCharacteristic", "ClassedLedger", "CoarseClassing", "ClassLimits",
    "binning_from_settings", "categorical_binning", "check_constraints", "class_ledger", "classing_settings_values",
    "coarse_classing", "fine_binnings", "fine_classing", "format_number", "class_label", "interval_labels", "numeric_binning",
    "best_classing", "keeps_shape", "merge_alike_neighbours", "Merging", "neighbour_p_values", "quantile_cuts", "resolve_unseen", "roundest_between", "worst_bin",
]
