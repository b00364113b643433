"""Invented ledgers shared by the monitoring tests (invented process, no outside source)."""

from __future__ import annotations

import numpy as np
import pandas as pd


def monitor_frame(n, seed, *, shift=0.0, bad_factor=1.0, start="2024-01-01", days=90):
    """Invented process: income and enquiries drive the outcome; housing a little."""
    rng = np.random.default_rng(seed)
    income = rng.lognormal(8 + shift, 0.4, n).round(-1)
    enquiries = rng.poisson(1.2, n)
    housing = rng.choice(["own", "rent", "family"], n, p=[0.5, 0.35, 0.15]).astype(object)
    log_odds_bad = -2.2 - 1.1 * (np.log(income) - 8) + 0.35 * enquiries + np.where(housing == "rent", 0.3, 0.0)
    p_bad = np.minimum(bad_factor / (1 + np.exp(-log_odds_bad)), 1.0)
    outcome = np.where(rng.random(n) < p_bad, "bad", "good")
    dates = pd.Timestamp(start) + pd.to_timedelta(rng.integers(0, days, n), unit="D")
    return pd.DataFrame({"income": income, "enquiries": enquiries, "housing": housing, "outcome": outcome,
                         "date": dates.strftime("%Y-%m-%d")})
