"""Choosing the characteristics of the model, with every decision and its reason on record.

The steps, in order: characteristics the settings force out never enter; the IV screen (a
verdict, or only a proposal the stepwise choice may overrule); the leakage flag; of two WoE
columns correlated above the threshold, the one with the lower IV leaves; stepwise choice
(forward, backward or both, by p-value or by BIC); and the reversal check: a characteristic
whose coefficient comes out negative (a reversal of its WoE's meaning) is removed and the model
refitted, unless the settings force it in. Last, every characteristic under the screen's IV that
is not in the model gets a score test against the final model, so that a characteristic the
screen left out but that would still add significant discrimination is never dropped silently.
All of it works on the development pattern table; no rows are read.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import special

from .errors import FitError, ScorecardWarning
from .fitter import FitResult, NestedFits, PartCounts, fit_logistic, fit_logistic_by_parts, fit_logistic_by_sums
from .rows import MERGE_LIMIT, PatternTable, RowsOnDisk, goods_and_bads
from .settings import FitSettings, SelectionSettings


@dataclass(frozen=True)
class Decision:
    """One entry of the selection log.

    Attributes
    ----------
    step : str
        'intake' or 'settings' (a column left out before selection), 'forced', 'screen', 'leakage',
        'correlation', 'stepwise', 'reversal' or 'screen test' (a characteristic under the screen's
        IV, score-tested against the final model).
    characteristic : str
    action : str
        'forced in', 'left out', 'proposed out', 'flagged', 'kept', 'entered', 'removed' or 'tested'.
    reason : str
        Why, in a sentence a reviewer can check.
    value : float or None
        The figure the decision turned on (an IV, a correlation, a p-value, a BIC, a coefficient).
    """

    step: str
    characteristic: str
    action: str
    reason: str
    value: float | None = None


@dataclass(frozen=True)
class ScreenTest:
    """A characteristic under the IV screen and not in the model, score-tested against the final model.

    Attributes
    ----------
    characteristic : str
    iv : float
        Its development IV (under ``selection.min_iv``).
    statistic, p_value : float
        The score (Rao) test of adding it to the final model: chi-square with one degree of freedom.
    significant : bool
        Whether the p-value is below ``selection.p_enter`` and its coefficient would be positive: it
        would add significant discrimination to the final model, as the stepwise choice would let in.
    reverses : bool
        Whether its coefficient would come out negative (a reversal of its WoE's meaning).
    left_out_by : str
        'screen' (the screen was a verdict) or 'stepwise' (the screen was a proposal and the
        stepwise choice, or a later step, left it out).
    """

    characteristic: str
    iv: float
    statistic: float
    p_value: float
    significant: bool
    reverses: bool
    left_out_by: str


@dataclass(frozen=True)
class SelectionResult:
    """The chosen characteristics, the final fit, the log of every decision, and the screen's tests.

    ``screen_tests`` holds one ``ScreenTest`` per characteristic under ``selection.min_iv`` that is
    not in the model, in ledger order; ``screened_significant`` names those whose score test
    against the final model is significant.
    """

    chosen: tuple[str, ...]
    fit: FitResult
    log: tuple[Decision, ...]
    correlations: pd.DataFrame
    vif: Mapping[str, float]
    screen_tests: tuple[ScreenTest, ...] = ()

    @property
    def screened_significant(self) -> tuple[str, ...]:
        """Characteristics under the screen's IV, not in the model, that would add significant discrimination."""
        return tuple(t.characteristic for t in self.screen_tests if t.significant)

    def to_frame(self) -> pd.DataFrame:
        """Return the selection log as a table."""
        return pd.DataFrame([d.__dict__ for d in self.log], columns=["step", "characteristic", "action", "reason", "value"])


def select_characteristics(patterns: PatternTable, woe: Mapping[str, Sequence[float]], iv: Mapping[str, float], *,
                           forced: Sequence[str] = (), selection: SelectionSettings = SelectionSettings(),
                           fit: FitSettings = FitSettings(),
                           final_patterns: PatternTable | Callable[[Sequence[str]], PatternTable] | None = None) -> SelectionResult:
    """Choose the model's characteristics and fit it.

    Parameters
    ----------
    patterns : PatternTable
        Development patterns of every candidate characteristic's bin codes, with goods and bads;
        the choice is made on these.
    final_patterns : PatternTable or callable, optional
        The patterns the final model is fitted on, when the choice was made on a sample of the
        development rows (default: ``patterns``); or a function that makes that table for the
        chosen characteristics only (a large ledger's table of every candidate would not fit).
    woe : mapping of str to sequence of float
        Development WoE of each bin, per candidate.
    iv : mapping of str to float
        Development IV per candidate.
    forced : sequence of str
        Characteristics the settings force in (``use = "always"``).
    selection, fit : settings sections

    Returns
    -------
    SelectionResult

    Raises
    ------
    FitError
        The final model cannot be fitted (separation or linear dependence among forced
        characteristics); the message names them.
    """
    log: list[Decision] = []
    design = _WoeDesign(patterns, woe, fit)
    candidates = [name for name in patterns.characteristics]
    for name in forced:
        log.append(Decision("forced", name, "forced in", "use = always in the settings"))
    screened = _screen(candidates, iv, forced, selection, log)
    correlations = design.correlation(screened)  # before decorrelation, so the pairs left out show
    candidates = _decorrelate(screened, iv, forced, correlations, selection, log)
    chosen = _stepwise(candidates, forced, design, selection, log)
    if callable(final_patterns):
        final_patterns = final_patterns(chosen) if chosen else patterns
    # the final fit starts from the intercept alone, so that its cost trace shows the whole descent
    final = _WoeDesign(patterns if final_patterns is None else final_patterns, woe, fit, guard=True)
    chosen, result = _remove_reversals(chosen, forced, final, log)
    tests = _screen_tests(design, chosen, [name for name in patterns.characteristics if name not in forced], iv, selection, log)
    # every characteristic chosen passed the screen, so its correlations are among the screened ones'
    return SelectionResult(tuple(chosen), result, tuple(log), correlations,
                           variance_inflation(correlations.loc[list(chosen), list(chosen)]), tests)


class _WoeDesign:
    """WoE-coded columns of the pattern table, and fits on subsets of them.

    The search's trial fits (``guard=False``) run on ``fitter.NestedFits`` over the WoE columns
    of every pattern, held in memory once: each fit starts from the last one's estimate, and the
    one cross-product made at each point serves its Newton step, its covariance and the score
    tests of the characteristics outside. A final fit (``guard=True``) is ``fit_logistic``, from
    the intercept alone (so that its cost trace shows the whole descent), to full tolerance and
    with its guards, on the pattern table of just its characteristics (their distinct bin
    combinations, counts added: the same likelihood, and far smaller when they are few).
    """

    def __init__(self, patterns: PatternTable, woe: Mapping[str, Sequence[float]], fit: FitSettings, *,
                 guard: bool = False):
        self.patterns = patterns
        self.woe = {name: np.asarray(woe[name], float) for name in patterns.characteristics}
        self.fit_settings = fit
        self.fits: dict[tuple[str, ...], FitResult] = {}
        self.position = {name: j for j, name in enumerate(patterns.characteristics)}
        self.guard = guard  # trial fits skip the separation and dependence checks; the final fit runs them
        self._full: np.ndarray | None = None
        self._search: NestedFits | None = None

    @property
    def weights(self) -> np.ndarray:
        """Goods plus bads per pattern."""
        return self.patterns.goods + self.patterns.bads

    @property
    def full(self) -> np.ndarray:
        """Every characteristic's WoE per pattern, column by column in memory (made once, when first needed)."""
        if self._full is None:
            self._full = self.matrix(self.patterns.characteristics, self.patterns)
        return self._full

    @property
    def search(self) -> NestedFits:
        """The trial fits and score tests of the search, on every characteristic's WoE column."""
        if self._search is None:
            self._search = NestedFits(self.full, self.patterns.goods, self.patterns.bads, names=self.patterns.characteristics,
                                      l2=self.fit_settings.l2, max_iterations=self.fit_settings.max_iterations or None)
        return self._search

    def matrix(self, names: Sequence[str], patterns: PatternTable | None = None, rows: slice = slice(None)) -> np.ndarray:
        """WoE columns of ``names``; columns stored one after another, so each is written and read in one sweep."""
        if patterns is None:
            return self.full[rows, [self.position[name] for name in names]]
        codes = patterns.part(names, rows)
        matrix = np.empty(codes.shape, order="F")
        for j, name in enumerate(names):
            np.take(self.woe[name], codes[:, j], out=matrix[:, j])
        return matrix

    def fit(self, names: Sequence[str]) -> FitResult:
        key = tuple(names)
        if key not in self.fits:
            with warnings.catch_warnings():
                if not self.guard:  # a trial fit that does not converge is only ranked, not reported
                    warnings.simplefilter("ignore", ScorecardWarning)
                self.fits[key] = self._final_fit(names) if self.guard else self.search.fit(names)
        return self.fits[key]

    def _final_fit(self, names: Sequence[str]) -> FitResult:
        settings = self.fit_settings
        table = self.patterns.subset(names) if len(names) < len(self.patterns.characteristics) else self.patterns
        if hasattr(table, "sums"):  # a table kept by the engine: each Newton step is one pass there
            return _fit_in_engine(table, names, self.woe, settings)
        # a table kept as rows (above MERGE_LIMIT) is fitted a part at a time, so that no design
        # matrix of all of them is ever held (the Newton steps cost the same either way)
        if table.n_patterns > MERGE_LIMIT and settings.solver == "newton" and settings.l2 == 0:
            goods, bads = _row_counts(table)
            return fit_logistic_by_parts(lambda rows: self.matrix(names, table, rows), goods, bads,
                                         names=list(names), max_iterations=settings.max_iterations or None)
        return fit_logistic(self.matrix(names, table), *goods_and_bads(table), names=list(names), solver=settings.solver,
                            l2=settings.l2, max_iterations=settings.max_iterations or None)

    def correlation(self, names: Sequence[str]) -> pd.DataFrame:
        return pd.DataFrame(weighted_correlation(self.matrix(names), self.weights), index=list(names), columns=list(names))


def _row_counts(table: PatternTable | RowsOnDisk):
    """The goods and bads of a table kept as rows: arrays in memory, or read a part at a time from disk."""
    if isinstance(table, RowsOnDisk):
        return (PartCounts(table.goods_of, table.n_rows, table.goods_total),
                PartCounts(table.bads_of, table.n_rows, table.bads_total))
    return table.goods, table.bads


def _fit_in_engine(table, names: Sequence[str], woe: Mapping[str, np.ndarray], settings: FitSettings) -> FitResult:
    """Newton's method on sums the engine adds up (``fitter.sums``); only that solver, without a penalty, runs there."""
    if settings.solver != "newton" or settings.l2 != 0:
        raise FitError(f"the final pattern table holds {table.n_patterns:,} patterns and stays in the engine, where only "
                       "Newton's method without a penalty runs. Set fit.solver = \"newton\" and fit.l2 = 0.")
    return fit_logistic_by_sums(lambda beta: table.sums(names, woe, beta), names=list(names), goods=table.goods_total,
                                bads=table.bads_total, spread=table.spread(names, woe),
                                max_iterations=settings.max_iterations or None)


def weighted_correlation(matrix: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Return the weighted Pearson correlation matrix of the columns of ``matrix``."""
    if matrix.shape[1] == 0:
        return np.zeros((0, 0))
    mean = weights @ matrix / weights.sum()
    centred = matrix - mean
    covariance = (centred * weights[:, None]).T @ centred / weights.sum()
    spread = np.sqrt(np.diag(covariance))
    with np.errstate(divide="ignore", invalid="ignore"):
        correlation = covariance / np.outer(spread, spread)
    return np.nan_to_num(correlation)


def variance_inflation(correlation: pd.DataFrame) -> dict[str, float]:
    """Return each column's variance inflation factor: the diagonal of the inverse correlation matrix."""
    if correlation.empty:
        return {}
    inverse = np.linalg.pinv(correlation.to_numpy())
    return {name: float(value) for name, value in zip(correlation.index, np.diag(inverse))}


def score_test(design: _WoeDesign, fit: FitResult | None, candidates: Sequence[str]) -> np.ndarray:
    """Return the score (Rao) test p-value of adding each candidate to the fitted model.

    See ``score_statistics``; on a large ledger many p-values are 0 in floating point, so choose
    between candidates by the statistic.
    """
    return special.chdtrc(1, score_statistics(design, fit, candidates))


def score_statistics(design: _WoeDesign, fit: FitResult | None, candidates: Sequence[str]) -> np.ndarray:
    """Return the score (Rao) test statistic of adding each candidate to the fitted model.

    Notes
    -----
    U = z'(g − nπ), V = z'Wz − z'WX (X'WX)⁻¹ X'Wz with W = nπ(1 − π); U²/V is χ² with one
    degree of freedom under the null (C. R. Rao, 1948; standard in stepwise logistic regression).
    """
    return _chi_square(*score_parts(design, fit, candidates))


def score_parts(design: _WoeDesign, fit: FitResult | None, candidates: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
    """Return the score U and its variance V of adding each candidate to the fitted model (see ``score_statistics``).

    The sign of U is the sign the candidate's coefficient would take: a negative U on a WoE column
    is a reversal. Made from the cross-product at the model's estimate, widened to the candidates.
    """
    return design.search.score_parts(fit, candidates)


def _chi_square(score: np.ndarray, variance: np.ndarray) -> np.ndarray:
    return np.divide(score**2, variance, out=np.zeros(len(score)), where=variance > 1e-12)


def _screen(candidates, iv, forced, selection: SelectionSettings, log) -> list[str]:
    kept = []
    for name in candidates:
        if iv[name] > selection.leakage_iv:
            log.append(Decision("leakage", name, "flagged",
                                f"IV {iv[name]:.3f} is above {selection.leakage_iv}: check it is known at the time of application", iv[name]))
        if name in forced:
            kept.append(name)
        elif iv[name] < selection.min_iv and selection.screen == "verdict":
            log.append(Decision("screen", name, "left out", f"IV {iv[name]:.4f} is below min_iv {selection.min_iv}", iv[name]))
        elif iv[name] < selection.min_iv:
            log.append(Decision("screen", name, "proposed out", f"IV {iv[name]:.4f} is below min_iv {selection.min_iv}; "
                                "the screen is a proposal (selection.screen), so it stays a candidate", iv[name]))
            kept.append(name)
        else:
            kept.append(name)
    return kept


def _screen_tests(design: _WoeDesign, chosen, candidates, iv, selection: SelectionSettings, log) -> tuple[ScreenTest, ...]:
    """Score-test every characteristic under the screen's IV that is not in the model against the final model.

    The final model is refitted on the rows the choice ran on (the same rows as the final fit
    unless the choice ran on a sample), so the test is the stepwise choice's own entry test.
    """
    under = [name for name in candidates if iv[name] < selection.min_iv and name not in chosen]
    if not under:
        return ()
    score, variance = score_parts(design, design.fit(chosen), under)
    statistics = _chi_square(score, variance)
    p_values = special.chdtrc(1, statistics)
    tests = []
    for name, statistic, p_value, direction in zip(under, statistics, p_values, score):
        reverses = bool(direction < 0)
        significant = bool(p_value < selection.p_enter) and not reverses
        by = "screen" if selection.screen == "verdict" else "stepwise"
        tests.append(ScreenTest(name, float(iv[name]), float(statistic), float(p_value), significant, reverses, by))
        verdict = ("it would add significant discrimination to the final model" if significant
                   else "but its coefficient would be negative (a reversal), so it is no help" if p_value < selection.p_enter
                   else "it adds nothing significant to the final model")
        log.append(Decision("screen test", name, "tested",
                            f"IV {iv[name]:.4f} is under min_iv; score test against the final model: p-value {p_value:.4g}, "
                            f"{'below' if significant else 'not below'} p_enter {selection.p_enter}: {verdict}", float(p_value)))
        if significant and by == "screen":
            warnings.warn(
                f"{name!r} was left out by the IV screen (IV {iv[name]:.4f} under min_iv {selection.min_iv}), but its score "
                f"test against the final model gives p-value {p_value:.3g}, below p_enter {selection.p_enter}: it would add "
                "significant discrimination. Set selection.screen = \"proposal\" to let the stepwise choice weigh it, or "
                f"use = \"always\" under [characteristics.{name}] to force it in.", ScorecardWarning, stacklevel=3,
            )
    return tuple(tests)


def _decorrelate(candidates, iv, forced, correlation: pd.DataFrame, selection: SelectionSettings, log) -> list[str]:
    """Walk the candidates by IV, strongest first; leave out any too correlated with one already kept."""
    kept: list[str] = []
    for name in sorted(candidates, key=lambda c: (c not in forced, -iv[c])):
        partners = [(other, correlation.loc[name, other]) for other in kept if abs(correlation.loc[name, other]) > selection.max_correlation]
        if partners and name not in forced:
            other, value = max(partners, key=lambda p: abs(p[1]))
            log.append(Decision("correlation", name, "left out",
                                f"WoE correlation {value:.3f} with {other!r} is above {selection.max_correlation}; "
                                f"{other!r} has the larger IV ({iv[other]:.3f} against {iv[name]:.3f})", float(value)))
            continue
        kept.append(name)
    return [name for name in candidates if name in kept]


def _stepwise(candidates, forced, design: _WoeDesign, selection: SelectionSettings, log) -> list[str]:
    forced = [name for name in candidates if name in forced]
    if selection.stepwise == "none":
        return list(candidates)
    if selection.criterion == "bic":
        return _stepwise_bic(candidates, forced, design, selection, log)
    chosen = list(candidates) if selection.stepwise == "backward" else list(forced)
    removed: set[str] = set()
    limit = selection.max_characteristics or len(candidates)
    for _ in range(4 * len(candidates) + 1):
        fit = design.fit(chosen) if chosen else None
        if selection.stepwise in ("backward", "both") and fit is not None:
            worst = _weakest(fit, forced)
            if worst and worst[1] > selection.p_remove:
                chosen.remove(worst[0])
                removed.add(worst[0])
                log.append(Decision("stepwise", worst[0], "removed", f"Wald p-value {worst[1]:.4g} is above p_remove {selection.p_remove}", worst[1]))
                continue
        if selection.stepwise == "backward" or len(chosen) >= limit:
            break
        outside = [name for name in candidates if name not in chosen and name not in removed]
        if not outside:
            break
        statistics = score_statistics(design, fit, outside)
        best = int(np.argmax(statistics))  # the largest statistic: p-values of 0 cannot be told apart
        p_values = special.chdtrc(1, statistics)
        if p_values[best] >= selection.p_enter:
            break
        chosen.append(outside[best])
        log.append(Decision("stepwise", outside[best], "entered", f"score-test p-value {p_values[best]:.4g} is below p_enter {selection.p_enter}", float(p_values[best])))
    _log_left_out(candidates, chosen, log, "its p-value never came below p_enter" if selection.stepwise != "backward" else "")
    return chosen


def _weakest(fit: FitResult, forced) -> tuple[str, float] | None:
    """The characteristic with the smallest Wald |z| (largest p-value), and its p-value."""
    options = [(name, float(p), abs(float(z))) for name, p, z in zip(fit.names[1:], fit.p_values[1:], fit.z_values[1:])
               if name not in forced]
    weakest = min(options, key=lambda o: o[2]) if options else None
    return weakest[:2] if weakest else None


def _stepwise_bic(candidates, forced, design: _WoeDesign, selection: SelectionSettings, log) -> list[str]:
    chosen = list(candidates) if selection.stepwise == "backward" else list(forced)
    limit = selection.max_characteristics or len(candidates)
    current = _bic(design, chosen)
    for _ in range(4 * len(candidates) + 1):
        moves = []
        if selection.stepwise in ("forward", "both") and len(chosen) < limit:
            moves += [("entered", name, _bic(design, [*chosen, name])) for name in candidates if name not in chosen]
        if selection.stepwise in ("backward", "both"):
            moves += [("removed", name, _bic(design, [c for c in chosen if c != name])) for name in chosen if name not in forced]
        if not moves:
            break
        action, name, value = min(moves, key=lambda m: m[2])
        if value >= current:
            break
        chosen = [*chosen, name] if action == "entered" else [c for c in chosen if c != name]
        log.append(Decision("stepwise", name, action, f"BIC falls from {current:.2f} to {value:.2f}", value))
        current = value
    _log_left_out(candidates, chosen, log, "adding it would not lower the BIC")
    return chosen


def _bic(design: _WoeDesign, names: Sequence[str]) -> float:
    if not names:
        weights = design.weights
        share = design.patterns.goods.sum() / weights.sum()
        log_likelihood = design.patterns.goods.sum() * np.log(share) + design.patterns.bads.sum() * np.log(1 - share)
        return float(-2 * log_likelihood + np.log(weights.sum()))
    try:
        return float(design.fit(names).bic)
    except FitError:
        return np.inf


def _log_left_out(candidates, chosen, log, reason: str) -> None:
    if not reason:
        return
    for name in candidates:
        if name not in chosen and not any(d.characteristic == name and d.action == "removed" for d in log):
            log.append(Decision("stepwise", name, "left out", reason))


def _remove_reversals(chosen, forced, design: _WoeDesign, log) -> tuple[list[str], FitResult]:
    """Refit; while a coefficient that is not forced is negative, remove the most negative and refit."""
    chosen = list(chosen)
    if not chosen:
        raise FitError(
            "no characteristic entered the model. Check the selection log: lower selection.min_iv or raise "
            "selection.p_enter, or force characteristics in with use = \"always\"."
        )
    while True:
        fit = design.fit(chosen)
        negative = [(name, float(fit.coefficients[i + 1]), float(fit.z_values[i + 1]))
                    for i, name in enumerate(fit.names[1:]) if fit.coefficients[i + 1] < 0]
        removable = [r for r in negative if r[0] not in forced]
        if not removable or len(chosen) == 1:
            break
        name, coefficient, _ = min(removable, key=lambda r: r[2])
        chosen.remove(name)
        log.append(Decision("reversal", name, "removed",
                            f"coefficient {coefficient:.4f} is negative: its points would run against its WoE", coefficient))
    for name, coefficient, _ in negative:
        why = "use = always forces it in" if name in forced else "it is the only characteristic left"
        log.append(Decision("reversal", name, "kept", f"coefficient {coefficient:.4f} is negative (its points run against its WoE), but {why}", coefficient))
    return chosen, fit
