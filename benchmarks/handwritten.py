"""The comparison pipeline: a points scorecard written by hand with general-purpose libraries.

This is the script a competent practitioner writes without scorewright, vectorised pandas
throughout, so that the benchmarks can compare time, memory and hold-out AUC with it:

1. ``pandas.read_csv`` of the ledger; indeterminate outcomes dropped.
2. A 70/30 random split, seeded and stratified by outcome (``sklearn.model_selection.train_test_split``).
3. Classing on the development rows: ``pandas.qcut`` into 10 bins per numeric characteristic
   (``duplicates="drop"``, missing values a bin of their own); categories as they are, missing a
   level of its own. The identifier, the date and the leaking ``collections_status`` are left out.
4. Weight of evidence per bin by group-by, ln(share of goods / share of bads), with 0.5 added to
   both counts of a bin where either is zero; information value Σ (share goods − share bads) × WoE.
5. Characteristics with IV below 0.02 are screened out; the rest are WoE-coded and fitted together
   with ``statsmodels`` ``Logit`` (log-odds of good) on all development rows.
6. Points: factor = 20 / ln 2, offset = 600 − factor × ln 50, points of a bin =
   round(factor × (β × WoE + β0 / k) + offset / k); a hold-out row's score is the sum of its points
   (a bin or level never seen in development gets WoE 0).
7. Hold-out AUC (``sklearn.metrics.roc_auc_score``) and KS (``scipy.stats.ks_2samp``) of the scores.

Run ``python benchmarks/handwritten.py LEDGER.csv [--seed 7]``; it prints the hold-out figures as
JSON on stdout. It imports nothing of scorewright.
"""

import argparse
import json

import numpy as np
import pandas as pd
import statsmodels.api as sm
from scipy.stats import ks_2samp
from sklearn.metrics import roc_auc_score
from sklearn.model_selection import train_test_split

TARGET = "outcome"
NOT_CHARACTERISTICS = ("application_id", "application_date", TARGET, "collections_status")
HOLDOUT_SHARE = 0.3
N_BINS = 10
MIN_IV = 0.02
EMPTY_CELL = 0.5
PDO, BASE_SCORE, BASE_ODDS = 20.0, 600.0, 50.0
MISSING = "(missing)"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("ledger")
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args(argv)
    print(json.dumps(holdout_figures(pd.read_csv(args.ledger), seed=args.seed)))
    return 0


def split_samples(frame: pd.DataFrame, seed: int) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Return the development and hold-out rows (characteristics and outcome, original index), indeterminates dropped."""
    columns = [c for c in frame.columns if c not in NOT_CHARACTERISTICS] + [TARGET]
    decided = frame.loc[frame[TARGET].isin(["good", "bad"]), columns]
    return train_test_split(decided, test_size=HOLDOUT_SHARE, stratify=decided[TARGET], random_state=seed)


def holdout_figures(frame: pd.DataFrame, *, seed: int) -> dict:
    """Build the scorecard on the development rows; return its hold-out AUC and KS."""
    development, holdout = split_samples(frame, seed)
    good_dev = (development[TARGET] == "good").astype(int)
    good_hold = (holdout[TARGET] == "good").to_numpy()
    characteristics = [c for c in development.columns if c != TARGET]
    bins_dev, bins_hold, woe = {}, {}, {}
    for name in characteristics:
        bins_dev[name], bins_hold[name] = bin_labels(development[name], holdout[name])
        woe[name], iv = woe_and_iv(bins_dev[name], good_dev)
        if iv < MIN_IV:
            del woe[name]
    kept = list(woe)
    coded = pd.DataFrame({name: bins_dev[name].map(woe[name]) for name in kept})
    fit = sm.Logit(good_dev, sm.add_constant(coded)).fit(disp=0)
    scores = np.zeros(len(holdout))
    for name in kept:
        points = bin_points(woe[name], fit.params[name], fit.params["const"], len(kept))
        unseen = bin_points(0.0, fit.params[name], fit.params["const"], len(kept))  # a bin new in hold-out: WoE 0
        scores += bins_hold[name].map(points).fillna(unseen).to_numpy()
    return {
        "auc": float(roc_auc_score(good_hold, scores)),
        "ks": float(ks_2samp(scores[good_hold], scores[~good_hold]).statistic),
        "characteristics": len(kept),
        "development_rows": len(development),
        "holdout_rows": len(holdout),
    }


def bin_labels(development: pd.Series, holdout: pd.Series) -> tuple[pd.Series, pd.Series]:
    """Return the bin of every development and hold-out value (deciles, or the category itself)."""
    if pd.api.types.is_numeric_dtype(development):
        codes, edges = pd.qcut(development, N_BINS, labels=False, retbins=True, duplicates="drop")
        edges[0], edges[-1] = -np.inf, np.inf  # hold-out values beyond the development range
        coded_holdout = pd.cut(holdout, edges, labels=False)
        return codes.fillna(-1).astype(int), coded_holdout.fillna(-1).astype(int)  # -1: missing
    return development.fillna(MISSING), holdout.fillna(MISSING)


def woe_and_iv(bins: pd.Series, is_good: pd.Series) -> tuple[pd.Series, float]:
    """Return the WoE of every bin and the information value of the characteristic."""
    counts = is_good.groupby(bins).agg(["sum", "count"])
    goods = counts["sum"].astype(float)
    bads = (counts["count"] - counts["sum"]).astype(float)
    empty = (goods == 0) | (bads == 0)
    goods[empty] += EMPTY_CELL
    bads[empty] += EMPTY_CELL
    share_goods, share_bads = goods / is_good.sum(), bads / (len(is_good) - is_good.sum())
    woe = np.log(share_goods / share_bads)
    return woe, float(((share_goods - share_bads) * woe).sum())


def bin_points(woe, coefficient: float, intercept: float, k: int):
    """Return the points of bins with weight of evidence ``woe`` of a characteristic among ``k``."""
    factor = PDO / np.log(2)
    offset = BASE_SCORE - factor * np.log(BASE_ODDS)
    return np.round(factor * (coefficient * woe + intercept / k) + offset / k)

if __name__ == "__main__":
    raise SystemExit(main())
