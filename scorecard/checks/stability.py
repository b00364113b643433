"""Stability of a population between a baseline sample and a newer one.

The population stability index compares two distributions over the same bins: the bands of a
score, or the bins of one characteristic. ``expected`` is the baseline (usually the development
sample) and ``actual`` the newer sample. No outcomes are needed, so a quarter whose loans have not
matured yet can be checked.

Status words of a PSI value (our own): "ok" below 0.10, "watch" from 0.10 up to 0.25, "act" at
0.25 and over (thresholds: common practice, no source).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.checks.discrimination import (
    band_edges,
    band_labels,
    band_sums,
    freeze_arrays,
    validated_levels,
)
from scorecard.errors import ScorecardError
from scorecard.terms import ACT_PSI, EMPTY_CELL, WATCH_PSI

__all__ = [
    "ACT_PSI",
    "EMPTY_CELL",
    "WATCH_PSI",
    "PointsShift",
    "PsiResult",
    "points_shift",
    "psi",
    "psi_status",
    "score_psi",
]



@dataclass(frozen=True, eq=False)  # eq=False: arrays have no single truth value to compare by
class PsiResult:
    """Population stability index of two distributions over the same bins.

    Attributes
    ----------
    value : float
        ``Σ (a_i − e_i)·ln(a_i / e_i)`` over the bins.
    status : str
        ``"ok"``, ``"watch"`` or ``"act"`` (see :func:`psi_status`).
    labels : tuple of str
        Name of each bin.
    expected_counts, actual_counts : numpy.ndarray
        Weighted counts per bin as given, baseline and newer sample.
    expected_share, actual_share : numpy.ndarray
        Shares per bin after the empty-cell adjustment (each sums to 1).
    contributions : numpy.ndarray
        Each bin's term of the sum; all are >= 0.
    adjusted : numpy.ndarray
        True where a bin was empty in one sample and ``empty_cell`` was added to both its counts.
    """

    value: float
    status: str
    labels: tuple[str, ...]
    expected_counts: np.ndarray
    actual_counts: np.ndarray
    expected_share: np.ndarray
    actual_share: np.ndarray
    contributions: np.ndarray
    adjusted: np.ndarray

    def __post_init__(self):
        freeze_arrays(self)

    @property
    def adjusted_labels(self) -> tuple[str, ...]:
        """Labels of the bins whose counts were adjusted."""
        return tuple(label for label, flag in zip(self.labels, self.adjusted) if flag)

    def to_frame(self) -> pd.DataFrame:
        """Return one row per bin: counts, shares, contribution and whether it was adjusted."""
        return pd.DataFrame({
            "bin": self.labels, "expected_count": self.expected_counts, "actual_count": self.actual_counts,
            "expected_share": self.expected_share, "actual_share": self.actual_share,
            "contribution": self.contributions, "adjusted": self.adjusted,
        })


@dataclass(frozen=True, eq=False)
class PointsShift:
    """Change in the mean points one characteristic contributes, between two samples.

    Attributes
    ----------
    expected_mean, actual_mean : float
        Count-weighted mean points of the characteristic in the baseline and the newer sample.
    shift : float
        ``actual_mean − expected_mean``; negative means the newer population scores lower on it.
    contributions : numpy.ndarray
        ``points_i·(actual share_i − expected share_i)`` per bin; they sum to ``shift``.
    """

    expected_mean: float
    actual_mean: float
    shift: float
    contributions: np.ndarray

    def __post_init__(self):
        freeze_arrays(self)


def psi(expected, actual, *, labels=None, empty_cell: float = EMPTY_CELL, watch: float = WATCH_PSI,
        act: float = ACT_PSI) -> PsiResult:
    """Return the population stability index of two distributions over the same bins.

    Parameters
    ----------
    expected : array_like, shape (k,)
        Weighted counts per bin in the baseline sample (e.g. development).
    actual : array_like, shape (k,)
        Weighted counts per bin in the newer sample, bins in the same order.
    labels : sequence of str, optional
        Names of the bins; their numbers from 1 by default.
    empty_cell : float
        Added to both counts of a bin that is empty in one of the samples, before shares are taken.
    watch, act : float
        Thresholds of the status words (see :func:`psi_status`).

    Returns
    -------
    PsiResult

    Raises
    ------
    ScorecardError
        If the counts are not aligned, finite and non-negative, a sample has no weight, or an
        option is out of range.

    Notes
    -----
    ``PSI = Σ_i (a_i − e_i)·ln(a_i / e_i)`` with ``a`` and ``e`` the shares of the newer and the
    baseline sample: the symmetrised Kullback–Leibler divergence ``KL(a‖e) + KL(e‖a)``
    (S. Kullback, R. A. Leibler, "On information and sufficiency", Annals of Mathematical
    Statistics 22, 1951, where it is their divergence J). A bin empty in exactly one sample would
    make it infinite, so ``empty_cell`` is added to that bin's counts in both samples, as is done
    for WoE; the result marks such bins. A bin empty in both samples says nothing about a shift:
    it is left unadjusted and adds 0.

    Example
    -------
    >>> round(psi([50, 30, 20], [40, 30, 30]).value, 4)
    0.0629
    """
    expected, actual = _validated_bins(expected, actual, caller="psi")
    labels = _validated_labels(labels, expected.size)
    _check_options(empty_cell, watch, act, caller="psi")
    return _index(expected, actual, labels, empty_cell=empty_cell, watch=watch, act=act)


def psi_status(value: float, *, watch: float = WATCH_PSI, act: float = ACT_PSI) -> str:
    """Return the status word of a PSI value: "ok", "watch" or "act".

    Parameters
    ----------
    value : float
        A population stability index, >= 0.
    watch, act : float
        ``"ok"`` below ``watch``, ``"watch"`` from ``watch`` up to ``act``, ``"act"`` at ``act``
        and over. The defaults 0.10 and 0.25 are common practice, no source.

    Returns
    -------
    str

    Raises
    ------
    ScorecardError
        If ``value`` is NaN or negative, or the thresholds are not ``0 < watch < act``.
    """
    _check_thresholds(watch, act, caller="psi_status")
    if not value >= 0:
        raise ScorecardError(f"psi_status: value = {value!r}; a PSI is a number >= 0.")
    return "ok" if value < watch else "watch" if value < act else "act"


def score_psi(expected_scores, expected_counts, actual_scores, actual_counts, *, n_bands: int = 10, edges=None,
              empty_cell: float = EMPTY_CELL, watch: float = WATCH_PSI, act: float = ACT_PSI,
              labels=None) -> PsiResult:
    """Return the PSI of two score histograms over bands defined on the baseline.

    Parameters
    ----------
    expected_scores, expected_counts : array_like, shape (n,)
        Baseline score histogram: strictly ascending score levels and the weighted number of
        applications at each (goods plus bads, or all applications).
    actual_scores, actual_counts : array_like, shape (m,)
        Newer sample's score histogram; its score levels need not be those of the baseline.
    n_bands : int
        Number of equal-population bands of the baseline (see
        :func:`~scorecard.checks.discrimination.score_bands`); not used when ``edges`` is given.
    edges : array_like, optional
        Strictly ascending band edges chosen by the analyst.
    empty_cell, watch, act : float
        As for :func:`psi`.
    labels : sequence of str, optional
        The bands' names (default: their score intervals, see
        :func:`~scorecard.checks.discrimination.band_labels`).

    Returns
    -------
    PsiResult
        Bins are the bands, lowest first. Scores of the newer
        sample below the first edge or above the last fall in the end bands.

    Raises
    ------
    ScorecardError
        If either histogram or the edges are malformed, or a histogram has no weight.

    Notes
    -----
    The bands are fixed on the baseline so the baseline shares are about ``1 / n_bands`` each and
    a shift of the newer population shows as uneven actual shares; see :func:`psi` for the index.
    """
    expected_scores, (expected_counts,) = validated_levels(expected_scores, {"expected_counts": expected_counts},
                                                           caller="score_psi")
    actual_scores, (actual_counts,) = validated_levels(actual_scores, {"actual_counts": actual_counts},
                                                       caller="score_psi")
    for name, counts in (("baseline", expected_counts), ("newer", actual_counts)):
        if not counts.sum() > 0:
            raise ScorecardError(f"score_psi: every count of the {name} histogram is 0; each sample needs some weight.")
    _check_options(empty_cell, watch, act, caller="score_psi")
    edges = band_edges(expected_scores, expected_counts, n_bands=n_bands, edges=edges, caller="score_psi")
    expected_bands = band_sums(expected_scores, edges, expected_counts)
    actual_bands = band_sums(actual_scores, edges, actual_counts)
    labels = band_labels(edges) if labels is None else _validated_labels(labels, edges.size + 1)
    return _index(expected_bands, actual_bands, labels, empty_cell=empty_cell, watch=watch, act=act)


def points_shift(expected, actual, points) -> PointsShift:
    """Return how much the mean points of one characteristic moved between two samples.

    Parameters
    ----------
    expected : array_like, shape (k,)
        Weighted counts per bin of the characteristic in the baseline (development) sample.
    actual : array_like, shape (k,)
        Weighted counts per bin in the newer sample, bins in the same order.
    points : array_like, shape (k,)
        Points the scorecard gives each bin.

    Returns
    -------
    PointsShift

    Raises
    ------
    ScorecardError
        If the arrays are not aligned, counts are not finite and non-negative, points are not
        finite, or a sample has no weight.

    Notes
    -----
    ``shift = Σ_i points_i·(a_i − e_i)`` with ``a`` and ``e`` the bins' shares of the newer and
    the baseline sample (common practice, no source): the change in the mean score that this
    characteristic alone accounts for. Unlike :func:`psi`, no empty-cell adjustment is needed.

    Example
    -------
    >>> points_shift([50, 50], [25, 75], [10, 30]).shift
    5.0
    """
    expected, actual = _validated_bins(expected, actual, caller="points_shift")
    points = np.asarray(points)
    if points.dtype.kind not in "iuf" or points.shape != expected.shape or not np.all(np.isfinite(points)):
        raise ScorecardError(
            f"points_shift: points must be {expected.size} finite numbers, one per bin; got shape "
            f"{points.shape} of type {points.dtype}."
        )
    expected_share, actual_share = _shares(expected), _shares(actual)
    contributions = points * (actual_share - expected_share)
    expected_mean, actual_mean = float(points @ expected_share), float(points @ actual_share)
    return PointsShift(expected_mean=expected_mean, actual_mean=actual_mean, shift=float(contributions.sum()),
                       contributions=contributions)


# ---------------------------------------------------------------------------------------------
# Private helpers.


def _validated_bins(expected, actual, *, caller: str) -> tuple[np.ndarray, np.ndarray]:
    """Check two aligned 1-D arrays of finite, non-negative counts, each with some weight."""
    arrays = []
    for name, values in (("expected", expected), ("actual", actual)):
        array = np.asarray(values)
        if array.dtype.kind not in "iuf" or array.ndim != 1 or array.size == 0:
            raise ScorecardError(f"{caller}: {name} must be a non-empty 1-D array of counts; got shape "
                                 f"{array.shape} of type {array.dtype}.")
        array = array.astype(float)
        rows = np.flatnonzero(~(np.isfinite(array) & (array >= 0)))
        if rows.size:
            raise ScorecardError(
                f"{caller}: {name}, bin {rows[0] + 1} (counted from 1; {rows.size} bin(s) in all): value "
                f"{array[rows[0]].item()!r} is not a finite, non-negative count."
            )
        if not array.sum() > 0:
            raise ScorecardError(f"{caller}: every {name} count is 0; each sample needs some weight.")
        arrays.append(array)
    if arrays[0].size != arrays[1].size:
        raise ScorecardError(
            f"{caller}: expected has {arrays[0].size} bins but actual has {arrays[1].size}; give counts over "
            f"the same bins, in the same order."
        )
    return arrays[0], arrays[1]


def _validated_labels(labels, n_bins: int) -> tuple[str, ...]:
    if labels is None:
        return tuple(str(number) for number in range(1, n_bins + 1))
    labels = tuple(str(label) for label in labels)
    if len(labels) != n_bins:
        raise ScorecardError(f"psi: labels has {len(labels)} entries but there are {n_bins} bins; give one per bin.")
    return labels


def _index(expected: np.ndarray, actual: np.ndarray, labels: tuple[str, ...], *, empty_cell: float, watch: float,
           act: float) -> PsiResult:
    """The PSI of checked counts: adjust one-sided empty bins, take shares, sum the terms."""
    adjusted = (expected == 0) != (actual == 0)
    expected_share = _shares(expected + np.where(adjusted, empty_cell, 0.0))
    actual_share = _shares(actual + np.where(adjusted, empty_cell, 0.0))
    # After the adjustment a bin has a share in both samples or in neither; the latter adds 0.
    occupied = expected_share > 0
    log_ratio = np.log(actual_share, where=occupied, out=np.zeros_like(actual_share)) - np.log(
        expected_share, where=occupied, out=np.zeros_like(expected_share))
    contributions = (actual_share - expected_share) * log_ratio
    value = float(contributions.sum())
    return PsiResult(
        value=value, status=psi_status(value, watch=watch, act=act), labels=labels, expected_counts=expected,
        actual_counts=actual, expected_share=expected_share, actual_share=actual_share,
        contributions=contributions, adjusted=adjusted,
    )


def _check_options(empty_cell: float, watch: float, act: float, *, caller: str) -> None:
    if not (np.isfinite(empty_cell) and empty_cell > 0):
        raise ScorecardError(f"{caller}: empty_cell = {empty_cell!r}; give a small positive count such as 0.5.")
    _check_thresholds(watch, act, caller=caller)


def _check_thresholds(watch: float, act: float, *, caller: str) -> None:
    if not (np.isfinite(watch) and np.isfinite(act) and 0 < watch < act):
        raise ScorecardError(f"{caller}: watch = {watch!r} and act = {act!r}; give thresholds with 0 < watch < act.")


def _shares(counts: np.ndarray) -> np.ndarray:
    return counts / counts.sum()
