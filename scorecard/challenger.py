"""The challenger: a benchmark fitted on the same samples without the scorecard's constraints.

The scorecard's format costs something: each characteristic's fine bins are joined into a few
classes with a monotone bad rate, scored through one WoE column, and many characteristics are left
out. The challenger keeps every candidate characteristic on its fine bins, with one indicator per
bin and a ridge (L2) penalty that pulls each bin's effect toward its characteristic's average, fitted by our own fitter
(``scorecard.fitter.fit_logistic``). Both are functions of the same rows' fine-bin codes, so their
AUCs on the hold-out and out-of-time samples are compared with DeLong's paired test: the gap is
what the scorecard's simplicity costs, or that it costs nothing worth having.

This room computes from codes and count tables; the rows are the row source's.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from .checks.discrimination import AucResult, PairedAucTest, auc, paired_auc_test
from .fitter import FitResult, fit_logistic

# The most cells (patterns × indicator columns) of the challenger's design held at once: 20 million
# doubles, 160 MB (our limit on a machine shared with the rest of the build).
DESIGN_CELLS_LIMIT = 20_000_000


@dataclass(frozen=True)
class ChallengerComparison:
    """The scorecard against the challenger on one sample: each AUC with its DeLong interval, and the paired test."""

    sample: str
    scorecard: AucResult
    challenger: AucResult
    paired: PairedAucTest


@dataclass(frozen=True)
class Challenger:
    """The challenger's fit and its comparison with the scorecard on every sample with goods and bads.

    Attributes
    ----------
    characteristics : tuple of str
        The candidate characteristics it uses, each on its fine bins.
    n_indicators : int
        Indicator columns of its design (one per fine bin).
    l2 : float
        The ridge penalty (``challenger.l2``).
    fit : FitResult
    comparisons : dict of sample name to ChallengerComparison
    """

    characteristics: tuple[str, ...]
    n_indicators: int
    l2: float
    fit: FitResult
    comparisons: Mapping[str, ChallengerComparison]


def indicator_design(columns: Sequence[np.ndarray], n_bins: Sequence[int]) -> np.ndarray:
    """Return one indicator column per fine bin of each characteristic (every bin, none left as a reference).

    Parameters
    ----------
    columns : sequence of numpy.ndarray
        Each characteristic's bin code per pattern (or row).
    n_bins : sequence of int
        Each characteristic's number of bins.

    Notes
    -----
    With an intercept the indicators of one characteristic add up to the intercept's column, so
    the plain likelihood has no single maximum; the ridge penalty gives it one, and pulls every
    bin's effect toward the characteristic's average rather than toward one bin chosen as reference.
    """
    n_rows = len(columns[0]) if columns else 0
    design = np.zeros((n_rows, sum(n_bins)))
    start = 0
    for codes, n in zip(columns, n_bins):
        design[np.arange(n_rows), start + codes.astype(np.int64)] = 1.0
        start += n
    return design


def fit_challenger(columns: Sequence[np.ndarray], n_bins: Sequence[int], goods: np.ndarray, bads: np.ndarray, *,
                   names: Sequence[str], l2: float) -> FitResult:
    """Fit the challenger's log-odds of good:bad on the indicators of ``indicator_design``, with a ridge penalty."""
    labels = [f"{name} bin {b + 1}" for name, n in zip(names, n_bins) for b in range(n)]
    return fit_logistic(indicator_design(columns, n_bins), goods, bads, names=labels, l2=l2, guard=False)


def bin_effects(fit: FitResult, n_bins: Sequence[int]) -> list[np.ndarray]:
    """Each characteristic's fitted effect of every bin, to look up by bin code."""
    effects, start = [], 1
    for n in n_bins:
        effects.append(np.asarray(fit.coefficients[start:start + n], float))
        start += n
    return effects


def challenger_log_odds(codes: np.ndarray, fit: FitResult, effects: Sequence[np.ndarray]) -> np.ndarray:
    """Each row's challenger log-odds of good:bad: the intercept plus the effect of its bin of each characteristic."""
    log_odds = np.full(codes.shape[0], float(fit.coefficients[0]))
    for j, effect in enumerate(effects):
        log_odds += effect[codes[:, j].astype(np.int64)]
    return log_odds


def compare(sample: str, scorecard_scores: np.ndarray, challenger_scores: np.ndarray, goods: np.ndarray,
            bads: np.ndarray) -> ChallengerComparison:
    """The two scores' AUCs on one sample's rows, each with DeLong's interval, and DeLong's paired test."""
    return ChallengerComparison(sample, _auc_of(scorecard_scores, goods, bads), _auc_of(challenger_scores, goods, bads),
                                paired_auc_test(scorecard_scores, challenger_scores, goods, bads))


def _auc_of(scores: np.ndarray, goods: np.ndarray, bads: np.ndarray) -> AucResult:
    levels, inverse = np.unique(scores, return_inverse=True)
    return auc(levels, np.bincount(inverse, weights=goods, minlength=len(levels)),
               np.bincount(inverse, weights=bads, minlength=len(levels)))
