"""Generate the ledger of the invented demo scenario.

The scenario is made up from start to finish (no outside source): Tarnwick Vale Lending
Cooperative, an invented regional cooperative, makes small personal loans and keeps a ledger of
eight quarters of applications (2024Q1 to 2025Q4) whose 12-month outcome is known. Its story is
in ``README.md`` beside this file.

Each row carries an identifier, an application date, 30 characteristics (20 numeric and 10
categorical) and the outcome ``good``, ``bad`` or ``indeterminate``. The probability of bad comes
from a known logistic model of the characteristics (``true_log_odds``), so tests and benchmarks
can compare a fitted scorecard with the truth. Three traps are built in on purpose:

- ``collections_status`` is recorded after the outcome and leaks it;
- ``monthly_income`` and ``verified_income`` measure the same thing and are strongly correlated;
- in the last two quarters the ``channel`` mix moves towards brokers, and in the last quarter
  the log-odds of bad rise by ``LAST_QUARTER_SHIFT`` for every applicant (calibration slips,
  ranking does not).

Rows are made in fixed blocks of ``BLOCK_ROWS`` rows, each with its own random stream spawned
from the seed, so a ledger of a given size and seed is the same however it is chunked.

Run ``python -m scorecard.demo.generator --rows 1000000 --seed 7 --out ledger.parquet``.
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

import numpy as np
import pandas as pd

from scorecard.errors import ScorecardError
from scorecard.files import replacing

SCENARIO_NAME = "Tarnwick Vale Lending Cooperative"

TARGET = "outcome"
ID_COLUMN = "application_id"
DATE_COLUMN = "application_date"
LEAKING = "collections_status"
CORRELATED_PAIR = ("monthly_income", "verified_income")
DRIFTING = "channel"

OUTCOMES = ("good", "bad", "indeterminate")

NUMERIC_CHARACTERISTICS = (
    "applicant_age",
    "monthly_income",
    "verified_income",
    "months_at_address",
    "months_with_employer",
    "dependants",
    "oldest_account_months",
    "active_accounts",
    "card_limit_total",
    "revolving_utilisation_pct",
    "debt_to_income",
    "enquiries_6m",
    "months_since_last_enquiry",
    "months_since_delinquency",
    "worst_arrears_24m",
    "bureau_score",
    "savings_balance",
    "loans_with_us",
    "loan_amount",
    "loan_term_months",
)

LEVELS: dict[str, tuple[str, ...]] = {
    "housing": ("own", "rent", "with_family", "other"),
    "employment_type": (
        "permanent", "fixed_term", "self_employed", "part_time", "retired", "student", "unemployed",
    ),
    "marital_status": ("single", "married", "cohabiting", "divorced", "widowed"),
    "education": ("secondary", "vocational", "bachelor", "postgraduate"),
    "home_district": tuple(f"D{k:02d}" for k in range(1, 41)),
    "region": (
        "north", "north_east", "east", "south_east", "south", "south_west", "west", "central",
    ),
    "phone_provided": ("yes", "no"),
    "loan_purpose": (
        "debt_consolidation", "car", "home_improvement", "holiday", "education", "medical", "other",
    ),
    "channel": ("branch", "online", "broker"),
    "collections_status": ("none", "payment_plan", "referred"),
}

CATEGORICAL_CHARACTERISTICS = tuple(LEVELS)
CHARACTERISTICS = NUMERIC_CHARACTERISTICS + CATEGORICAL_CHARACTERISTICS
# Protected attributes the ledger records, for the fairness checks only (invented scenario, no outside
# source). National origin is spread unevenly over the home districts, more in those where loans go bad
# more often, so that home_district stands in for it: the proxy the checks should find.
PROTECTED = ("applicant_sex", "national_origin")
PROTECTED_LEVELS = {"applicant_sex": ("female", "male"), "national_origin": ("born_here", "born_abroad")}
FEMALE_SHARE = 0.48
BORN_ABROAD_SHARE = {"riskier districts": 0.8, "other districts": 0.03}
COLUMNS = (ID_COLUMN, DATE_COLUMN) + CHARACTERISTICS + PROTECTED + (TARGET,)

# Special codes stand for "no record", not for a number of months.
SPECIAL_CODES: dict[str, int] = {"months_since_delinquency": -1, "months_since_last_enquiry": 999}

# Invented scenario, no outside source: which columns have holes, and how many.
MISSING_SHARE = 0.05
MISSING_NUMERIC = (
    "monthly_income",
    "verified_income",
    "months_at_address",
    "months_with_employer",
    "revolving_utilisation_pct",
    "bureau_score",
    "savings_balance",
)
MISSING_CATEGORICAL: dict[str, float] = {
    "housing": 0.02,
    "employment_type": 0.015,
    "marital_status": 0.03,
    "education": 0.05,
}

FIRST_MONTH = np.datetime64("2024-01", "M")
QUARTERS = 8
DRIFT_QUARTERS = 2
LAST_QUARTER_SHIFT = 0.7
CHANNEL_MIX = (0.45, 0.42, 0.13)
DRIFTED_CHANNEL_MIX = (0.22, 0.38, 0.40)

BLOCK_ROWS = 1_000_000

# The known model: log-odds of bad = INTERCEPT + numeric terms + level effects (+ the slip).
INTERCEPT = -3.47
LEVEL_EFFECTS: dict[str, dict[str | None, float]] = {
    "housing": {"own": -0.30, "rent": 0.15, "with_family": 0.0, "other": 0.20, None: 0.10},
    "employment_type": {
        "permanent": 0.0, "fixed_term": 0.20, "self_employed": 0.25, "part_time": 0.30,
        "retired": -0.10, "student": 0.40, "unemployed": 0.70, None: 0.30,
    },
    "loan_purpose": {
        "debt_consolidation": 0.25, "car": -0.15, "home_improvement": -0.10, "holiday": 0.10,
        "education": 0.0, "medical": 0.20, "other": 0.15,
    },
    "channel": {"branch": 0.0, "online": 0.10, "broker": 0.75},
    "phone_provided": {"yes": 0.0, "no": 0.30},
    "home_district": dict(zip(
        LEVELS["home_district"], np.round(0.3 * np.sin(2.3 * np.arange(40) + 0.5), 3).tolist()
    )),
}
_DISTRICT_WEIGHTS = np.exp(1.2 * np.cos(1.7 * np.arange(40)))
_DISTRICTS_PER_REGION = 5


def generate_ledger(
    n_rows: int = 20_000, *, seed: int = 2024, quarters: int = QUARTERS, drift: bool = True
) -> pd.DataFrame:
    """Make the demo ledger in memory.

    Parameters
    ----------
    n_rows : int
        Number of applications, spread evenly over the quarters.
    seed : int
        Seed of the random streams; the same seed and size give the same frame.
    quarters : int
        Number of calendar quarters from 2024Q1 on.
    drift : bool
        Whether the last two quarters drift (channel mix) and the last one's calibration slips.

    Returns
    -------
    pandas.DataFrame
        Columns ``COLUMNS``: the identifier, the date, 20 numeric and 10 categorical
        characteristics, and the outcome.

    Raises
    ------
    ScorecardError
        If a size or count is not positive, or there are too few quarters for the drift.
    """
    return pd.concat(
        list(iter_chunks(n_rows, BLOCK_ROWS, seed=seed, quarters=quarters, drift=drift)),
        ignore_index=True,
    )


def iter_chunks(
    n_rows: int,
    chunk_rows: int = BLOCK_ROWS,
    *,
    seed: int = 2024,
    quarters: int = QUARTERS,
    drift: bool = True,
) -> Iterator[pd.DataFrame]:
    """Yield the demo ledger in consecutive chunks of ``chunk_rows`` rows (the last may be shorter).

    Parameters
    ----------
    n_rows, seed, quarters, drift
        As in ``generate_ledger``; concatenating the chunks gives exactly its frame.
    chunk_rows : int
        Rows per chunk. Memory stays bounded by about ``max(chunk_rows, BLOCK_ROWS)`` rows.

    Yields
    ------
    pandas.DataFrame
        A chunk with a fresh 0-based index.

    Raises
    ------
    ScorecardError
        As in ``generate_ledger``, or if ``chunk_rows`` is not positive.
    """
    _check_arguments(n_rows, chunk_rows, quarters, drift)
    return _rechunk(_blocks(n_rows, seed, quarters, drift), chunk_rows)


def true_log_odds(frame: pd.DataFrame, *, quarters: int = QUARTERS, drift: bool = True) -> np.ndarray:
    """Return each row's true log-odds of bad under the scenario's known model.

    Parameters
    ----------
    frame : pandas.DataFrame
        A ledger with the characteristics and the date column (strings or datetimes).
    quarters, drift : int, bool
        As the ledger was made: they place the last quarter, whose log-odds are raised.

    Returns
    -------
    numpy.ndarray
        Float log-odds of bad, one per row.

    Raises
    ------
    ScorecardError
        If a categorical column holds a level the scenario does not know.

    Notes
    -----
    log-odds(bad) = ``INTERCEPT`` + Σ numeric terms (see ``_NUMERIC_TERMS``; a missing value
    gets a term of its own) + Σ ``LEVEL_EFFECTS`` + ``LAST_QUARTER_SHIFT`` in the last quarter
    when ``drift``. The leaking column is not in it: it is drawn from the outcome afterwards.
    """
    numeric = sum(term(_as_float(frame[name])) for name, term in _NUMERIC_TERMS.items())
    levels = sum(_level_effect(frame[name], effects, name) for name, effects in LEVEL_EFFECTS.items())
    slip = LAST_QUARTER_SHIFT * (drift & (quarter_index(frame) == quarters - 1))
    return INTERCEPT + numeric + levels + slip


def true_bad_probability(frame: pd.DataFrame, *, quarters: int = QUARTERS, drift: bool = True) -> np.ndarray:
    """Return each row's true probability of bad, the logistic function of ``true_log_odds``.

    Parameters
    ----------
    frame : pandas.DataFrame
        A ledger with the characteristics and the date column.
    quarters, drift : int, bool
        As the ledger was made (defaults as in ``generate_ledger``).

    Returns
    -------
    numpy.ndarray
        Probabilities in (0, 1), one per row.
    """
    return 1.0 / (1.0 + np.exp(-true_log_odds(frame, quarters=quarters, drift=drift)))


def quarter_index(frame: pd.DataFrame) -> np.ndarray:
    """Return the 0-based quarter of each row's application date, counted from 2024Q1.

    Parameters
    ----------
    frame : pandas.DataFrame
        A ledger with the date column (ISO strings or datetimes).

    Returns
    -------
    numpy.ndarray
        Integer quarter numbers (0 is 2024Q1, 7 is 2025Q4).
    """
    months = pd.to_datetime(frame[DATE_COLUMN]).to_numpy().astype("datetime64[M]") - FIRST_MONTH
    return months.astype(np.int64) // 3


def quarter_names(quarters: int = QUARTERS) -> tuple[str, ...]:
    """Return the labels of the scenario's quarters: ('2024Q1', '2024Q2', ...)."""
    return tuple(f"{2024 + q // 4}Q{q % 4 + 1}" for q in range(quarters))


def write_ledger(frame: pd.DataFrame | Iterable[pd.DataFrame], path: str | os.PathLike) -> Path:
    """Write a ledger, or an iterable of its chunks, to CSV or Parquet chosen by the suffix.

    Parameters
    ----------
    frame : pandas.DataFrame or iterable of pandas.DataFrame
        The ledger, or its chunks in order (as from ``iter_chunks``) to keep memory bounded.
    path : str or os.PathLike
        Target file ending in ``.csv`` or ``.parquet``. It is written under a temporary name
        in the same folder and renamed into place, so a failed write leaves nothing behind.

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    ScorecardError
        If the suffix is neither ``.csv`` nor ``.parquet``, or the folder does not exist.
    """
    path = Path(path)
    writer = _WRITERS.get(path.suffix.lower())
    if writer is None:
        raise ScorecardError(
            f"{path}: suffix {path.suffix!r} is not a ledger format. End the name in .csv or .parquet."
        )
    if not path.parent.is_dir():
        raise ScorecardError(f"{path}: folder {str(path.parent)!r} does not exist. Create it first.")
    chunks = [frame] if isinstance(frame, pd.DataFrame) else frame
    with replacing(path) as temporary:
        writer(chunks, str(temporary))
    return path


@dataclass(frozen=True)
class GeneratorOptions:
    """What the command line asked for: rows, seed, quarters, drift, output path and chunk size."""

    rows: int
    seed: int
    quarters: int
    drift: bool
    out: Path
    chunk_rows: int


def run(options: GeneratorOptions) -> Path:
    """Generate the ledger chunk by chunk and write it to ``options.out``; return the path."""
    chunks = iter_chunks(
        options.rows, options.chunk_rows, seed=options.seed, quarters=options.quarters, drift=options.drift
    )
    return write_ledger(chunks, options.out)


def main(argv: list[str] | None = None, *, stdout: TextIO | None = None, stderr: TextIO | None = None) -> int:
    """Write a demo ledger from the command line; return the exit code (0 done, 2 bad input).

    Parameters
    ----------
    argv : list of str, optional
        The arguments (default: ``sys.argv[1:]``).
    stdout, stderr : text streams, optional
        Where the written path and the error messages go (default: the process's streams).

    Returns
    -------
    int
        0 when the file was written, 2 for bad input (argparse exits with 2 on usage errors).
    """
    stdout = stdout or sys.stdout
    stderr = stderr or sys.stderr
    args = _parser().parse_args(argv)
    out = Path(args.out)
    if args.format is not None:
        out = out.with_suffix(f".{args.format}")
    options = GeneratorOptions(args.rows, args.seed, args.quarters, not args.no_drift, out, args.chunk_rows)
    try:
        written = run(options)
    except ScorecardError as error:
        print(f"scorewright: error: {error}", file=stderr)
        return 2
    print(written, file=stdout)
    return 0


def _parser() -> argparse.ArgumentParser:
    """Build the argument parser of the generator's command line."""
    parser = argparse.ArgumentParser(
        prog="python -m scorecard.demo.generator",
        description=f"Write the ledger of the invented demo scenario ({SCENARIO_NAME}).",
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=(
            "examples:\n"
            "  python -m scorecard.demo.generator --out ledger.csv\n"
            "  python -m scorecard.demo.generator --rows 1000000 --seed 7 --out ledger.parquet\n"
            "\nexit codes: 0 done, 2 bad input or usage"
        ),
    )
    parser.add_argument("--rows", type=int, default=20_000, help="applications to make (default 20000)")
    parser.add_argument("--seed", type=int, default=2024, help="random seed (default 2024)")
    parser.add_argument("--quarters", type=int, default=QUARTERS, help="quarters from 2024Q1 (default 8)")
    parser.add_argument("--no-drift", action="store_true", help="no drift and no calibration slip")
    parser.add_argument("--out", required=True, help="output file, .csv or .parquet")
    parser.add_argument("--format", choices=("csv", "parquet"), help="override the suffix of --out")
    parser.add_argument("--chunk-rows", type=int, default=BLOCK_ROWS, help="rows held in memory at once")
    return parser


def _check_arguments(n_rows: int, chunk_rows: int, quarters: int, drift: bool) -> None:
    """Refuse sizes and quarter counts the generator cannot honour."""
    if n_rows < 1 or chunk_rows < 1:
        raise ScorecardError(
            f"rows {n_rows!r} and chunk rows {chunk_rows!r} must both be at least 1."
        )
    if quarters < 1:
        raise ScorecardError(f"quarters {quarters!r} must be at least 1.")
    if drift and quarters <= DRIFT_QUARTERS:
        raise ScorecardError(
            f"quarters {quarters!r} is too few for the drift, which needs undrifted quarters "
            f"before the last {DRIFT_QUARTERS}. Use at least {DRIFT_QUARTERS + 1} quarters or drift=False."
        )


def _blocks(n_rows: int, seed: int, quarters: int, drift: bool) -> Iterator[pd.DataFrame]:
    """Yield the fixed blocks of the ledger, each from its own spawned random stream."""
    for number, start in enumerate(range(0, n_rows, BLOCK_ROWS)):
        # A spawn key of its own per block: block k's stream does not depend on how many follow.
        rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(number,)))
        # the protected attributes draw from a stream of their own, so every other column is as it was without them
        protected_rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(number, 1)))
        yield _block(rng, protected_rng, start, min(start + BLOCK_ROWS, n_rows), n_rows, quarters, drift)


def _rechunk(blocks: Iterator[pd.DataFrame], chunk_rows: int) -> Iterator[pd.DataFrame]:
    """Cut a stream of frames into frames of exactly ``chunk_rows`` rows (the last may be short)."""
    pending: list[pd.DataFrame] = []
    held = 0
    for block in blocks:
        pending.append(block)
        held += len(block)
        if held < chunk_rows:
            continue
        # One concatenation per crossing, then slices: no quadratic re-copying of a big block.
        joined = pd.concat(pending, ignore_index=True) if len(pending) > 1 else block
        cut = held - held % chunk_rows
        for start in range(0, cut, chunk_rows):
            yield joined.iloc[start : start + chunk_rows].reset_index(drop=True)
        pending = [joined.iloc[cut:]]
        held -= cut
    if held:
        yield pd.concat(pending, ignore_index=True)


def _block(
    rng: np.random.Generator, protected_rng: np.random.Generator, start: int, stop: int, n_rows: int, quarters: int,
    drift: bool,
) -> pd.DataFrame:
    """Make rows ``start`` to ``stop`` of a ledger of ``n_rows`` rows."""
    size = stop - start
    dates, quarter = _dates(rng, np.arange(start, stop), n_rows, quarters)
    people = _people(rng, size)
    columns = {
        ID_COLUMN: _identifiers(np.arange(start + 1, stop + 1)),
        DATE_COLUMN: dates,
        **_numeric_columns(rng, people),
        **_categorical_columns(rng, people, drift & (quarter >= quarters - DRIFT_QUARTERS)),
    }
    frame = pd.DataFrame(columns)
    bad_probability = true_bad_probability(frame, quarters=quarters, drift=drift)
    outcome = _outcome_codes(rng, bad_probability)
    frame[LEAKING] = _categorical(_collections_codes(rng, outcome), LEAKING)
    for name, values in _protected_columns(protected_rng, frame["home_district"]).items():
        frame[name] = values
    frame[TARGET] = pd.Categorical.from_codes(outcome, categories=OUTCOMES)
    return frame


def _protected_columns(rng: np.random.Generator, district: pd.Series) -> dict[str, pd.Categorical]:
    """Draw sex (independent of risk) and national origin (more often born abroad in the riskier districts)."""
    size = len(district)
    effects = LEVEL_EFFECTS["home_district"]
    riskier = district.map(lambda level: effects[level] > 0.2).to_numpy(dtype=bool)
    abroad = rng.random(size) < np.where(riskier, BORN_ABROAD_SHARE["riskier districts"], BORN_ABROAD_SHARE["other districts"])
    female = rng.random(size) < FEMALE_SHARE
    return {
        "applicant_sex": pd.Categorical.from_codes(np.where(female, 0, 1), categories=PROTECTED_LEVELS["applicant_sex"]),
        "national_origin": pd.Categorical.from_codes(abroad.astype(int), categories=PROTECTED_LEVELS["national_origin"]),
    }


def _dates(
    rng: np.random.Generator, row: np.ndarray, n_rows: int, quarters: int
) -> tuple[np.ndarray, np.ndarray]:
    """Spread rows evenly over the quarters' days, in row order; return dates and quarter numbers."""
    starts = (FIRST_MONTH + 3 * np.arange(quarters + 1)).astype("datetime64[D]")
    offsets = (starts - starts[0]).astype(np.int64)
    # Row i lands at a uniform point of the i-th slice of the period: dates never go back.
    day = np.floor((row + rng.random(row.size)) / n_rows * offsets[-1]).astype(np.int64)
    quarter = np.searchsorted(offsets, day, side="right") - 1
    return (starts[0] + day).astype("datetime64[us]"), quarter


def _identifiers(number: np.ndarray) -> pd.api.extensions.ExtensionArray:
    """Format 1-based row numbers as 'A000000001': fixed width, so they sort as they were made."""
    import pyarrow as pa
    import pyarrow.compute as pc

    digits = pc.utf8_lpad(pa.array(number).cast(pa.string()), width=9, padding="0")
    return pd.array(pc.binary_join_element_wise("A", digits, ""), dtype="str")


@dataclass(frozen=True)
class _People:
    """Hidden traits the characteristics share: credit quality, age, log income, employment."""

    quality: np.ndarray
    age: np.ndarray
    log_income: np.ndarray
    employment: np.ndarray


def _people(rng: np.random.Generator, size: int) -> _People:
    """Draw the hidden traits that tie the characteristics together."""
    quality = rng.standard_normal(size)
    age = np.clip(np.rint(18 + rng.gamma(3.0, 7.5, size)), 18, 85).astype(np.int64)
    employment = _employment(rng, age)
    return _People(quality, age, _log_income(rng, quality, age, employment), employment)


def _employment(rng: np.random.Generator, age: np.ndarray) -> np.ndarray:
    """Draw employment codes (levels of ``employment_type``), fitted to the applicant's age."""
    code = rng.choice(7, size=age.size, p=(0.58, 0.10, 0.10, 0.13, 0.02, 0.04, 0.03))
    u = rng.random(age.size)
    code = np.where((age >= 63) & (u < 0.75), 4, code)
    code = np.where((code == 4) & (age < 55), 0, code)
    return np.where((code == 5) & (age > 30), 3, code)


def _log_income(rng: np.random.Generator, quality: np.ndarray, age: np.ndarray, employment: np.ndarray) -> np.ndarray:
    """Draw true log monthly income, with a few very high earners far out in the tail."""
    shift = np.array([0.0, -0.10, 0.10, -0.45, -0.30, -0.60, -0.80])[employment]
    log_income = np.log(2300) + 0.18 * quality + 0.015 * (np.minimum(age, 55) - 35) + shift
    log_income += 0.45 * rng.standard_normal(age.size)
    outlier = rng.random(age.size) < 0.001
    return log_income + outlier * rng.uniform(1.5, 3.5, age.size)


def _numeric_columns(rng: np.random.Generator, people: _People) -> dict[str, np.ndarray]:
    """Draw the 20 numeric characteristics, holes included, in ``NUMERIC_CHARACTERISTICS`` order."""
    columns = {
        "applicant_age": people.age,
        **_income_columns(rng, people),
        **_tenure_columns(rng, people),
        **_bureau_columns(rng, people),
        **_loan_columns(rng, people),
    }
    for name in MISSING_NUMERIC:
        columns[name] = np.where(rng.random(people.age.size) < MISSING_SHARE, np.nan, columns[name])
    return {name: columns[name] for name in NUMERIC_CHARACTERISTICS}


def _income_columns(rng: np.random.Generator, people: _People) -> dict[str, np.ndarray]:
    """Draw stated income (heaped at 50s, a little optimistic) and verified income."""
    size = people.age.size
    income = np.exp(people.log_income)
    stated = 50 * np.rint(income * np.exp(0.03 + 0.15 * rng.standard_normal(size)) / 50)
    verified = np.round(income * np.exp(-0.02 + 0.10 * rng.standard_normal(size)), 2)
    return {"monthly_income": np.maximum(stated, 50.0), "verified_income": verified}


def _tenure_columns(rng: np.random.Generator, people: _People) -> dict[str, np.ndarray]:
    """Draw months at address and with employer, capped by adult life, and dependants."""
    size, age = people.age.size, people.age
    adult_months = (age - 16) * 12
    at_address = np.rint(np.exp(np.log(36) + 0.02 * (age - 35) + 0.9 * rng.standard_normal(size)))
    with_employer = np.rint(
        np.exp(np.log(40) + 0.015 * (age - 35) + 0.1 * people.quality + rng.standard_normal(size))
    )
    # Retired and unemployed applicants have no current employer.
    with_employer = np.where(np.isin(people.employment, (4, 6)), 0, np.minimum(with_employer, adult_months))
    return {
        "months_at_address": np.minimum(at_address, adult_months).astype(np.int64),
        "months_with_employer": with_employer.astype(np.int64),
        "dependants": np.minimum(rng.poisson(0.4 + 0.025 * np.clip(age - 22, 0, 20)), 7),
    }


def _bureau_columns(rng: np.random.Generator, people: _People) -> dict[str, np.ndarray]:
    """Draw the credit-file characteristics, all tied to the hidden credit quality."""
    size, quality = people.age.size, people.quality
    oldest = np.rint((people.age - 18) * 12 * rng.beta(3.0, 1.5, size)).astype(np.int64)
    oldest = np.where(rng.random(size) < 0.04, 0, oldest)
    limit = _card_limit(rng, people)
    enquiries = rng.poisson(np.exp(0.1 - 0.4 * quality))
    delinquency = _months_since_delinquency(rng, people)
    return {
        "oldest_account_months": oldest,
        "active_accounts": rng.poisson(np.exp(1.1 + 0.15 * quality)) + (limit > 0),
        "card_limit_total": limit,
        "revolving_utilisation_pct": _utilisation(rng, quality, limit),
        "debt_to_income": np.round(rng.gamma(2.2, 0.12, size) * np.exp(-0.15 * quality), 3),
        "enquiries_6m": enquiries,
        "months_since_last_enquiry": _months_since_last_enquiry(rng, enquiries),
        "months_since_delinquency": delinquency,
        "worst_arrears_24m": _worst_arrears(rng, quality, delinquency),
        "bureau_score": np.clip(np.rint(610 + 45 * quality + 40 * rng.standard_normal(size)), 300, 850),
        "savings_balance": _savings(rng, quality),
    }


def _card_limit(rng: np.random.Generator, people: _People) -> np.ndarray:
    """Draw the total card limit, rounded to 100; about one applicant in eight has no card."""
    size = people.age.size
    no_card = rng.random(size) < 1 / (1 + np.exp(2.0 + 0.6 * people.quality))
    log_limit = np.log(3500) + 0.35 * people.quality + 0.6 * (people.log_income - np.log(2300))
    limit = 100 * np.rint(np.exp(log_limit + 0.6 * rng.standard_normal(size)) / 100)
    return np.where(no_card, 0, limit).astype(np.int64)


def _utilisation(rng: np.random.Generator, quality: np.ndarray, limit: np.ndarray) -> np.ndarray:
    """Draw revolving utilisation in %: 0 without a card or balance, a few over 100."""
    size = quality.size
    drawn = 100 * rng.beta(1.3, 2.0, size) * np.exp(-0.35 * quality + 0.15 * rng.standard_normal(size))
    idle = (limit == 0) | (rng.random(size) < 0.07)
    return np.where(idle, 0.0, np.round(np.minimum(drawn, 180.0), 1))


def _months_since_last_enquiry(rng: np.random.Generator, enquiries: np.ndarray) -> np.ndarray:
    """Draw months since the last enquiry; 999 codes "no enquiry on record"."""
    size = enquiries.size
    recent = rng.integers(0, 6, size)
    older = np.where(rng.random(size) < 0.55, rng.integers(6, 61, size), SPECIAL_CODES["months_since_last_enquiry"])
    return np.where(enquiries > 0, recent, older)


def _months_since_delinquency(rng: np.random.Generator, people: _People) -> np.ndarray:
    """Draw months since the latest delinquency; -1 codes "no delinquency on record"."""
    size = people.age.size
    has_record = rng.random(size) < 1 / (1 + np.exp(0.9 + 0.9 * people.quality))
    months = np.minimum(np.rint(rng.exponential(28.0, size)), np.minimum(120, (people.age - 18) * 12))
    return np.where(has_record, months, SPECIAL_CODES["months_since_delinquency"]).astype(np.int64)


def _worst_arrears(rng: np.random.Generator, quality: np.ndarray, delinquency: np.ndarray) -> np.ndarray:
    """Draw the worst arrears status (0 to 6) of the last 24 months, consistent with delinquency."""
    severity = 1 + rng.binomial(5, 1 / (1 + np.exp(1.8 + 0.7 * quality)))
    return np.where((delinquency >= 0) & (delinquency < 24), severity, 0).astype(np.int64)


def _savings(rng: np.random.Generator, quality: np.ndarray) -> np.ndarray:
    """Draw the savings balance: about a third hold none, the rest a long right tail."""
    size = quality.size
    none = rng.random(size) < 1 / (1 + np.exp(0.7 + 0.5 * quality))
    balance = np.round(np.exp(np.log(1200) + 0.6 * quality + 1.2 * rng.standard_normal(size)), 2)
    return np.where(none, 0.0, balance)


def _loan_columns(rng: np.random.Generator, people: _People) -> dict[str, np.ndarray]:
    """Draw existing loans with us and the loan asked for: amount (rounded to 100) and term."""
    size = people.age.size
    repeat = rng.random(size) < 0.28
    log_amount = np.log(5000) + 0.25 * (people.log_income - np.log(2300)) + 0.6 * rng.standard_normal(size)
    amount = np.clip(100 * np.rint(np.exp(log_amount) / 100), 500, 40_000).astype(np.int64)
    term = rng.choice(5, size=size, p=(0.10, 0.22, 0.35, 0.15, 0.18)) + (amount > 12_000)
    return {
        "loans_with_us": np.where(repeat, np.minimum(1 + rng.poisson(0.35, size), 5), 0),
        "loan_amount": amount,
        "loan_term_months": 12 * (1 + np.minimum(term, 4)),
    }


def _categorical_columns(
    rng: np.random.Generator, people: _People, drifted: np.ndarray
) -> dict[str, pd.Categorical]:
    """Draw nine categorical characteristics (all but the leaking one), holes included."""
    size, age = people.age.size, people.age
    district = rng.choice(40, size=size, p=_DISTRICT_WEIGHTS / _DISTRICT_WEIGHTS.sum())
    codes = {
        "housing": _gumbel_choice(rng, _housing_scores(age, people.quality)),
        "employment_type": people.employment,
        "marital_status": _gumbel_choice(rng, _marital_scores(age)),
        "education": _gumbel_choice(rng, _education_scores(people.quality)),
        "home_district": district,
        "region": district // _DISTRICTS_PER_REGION,
        "phone_provided": (rng.random(size) < 0.07).astype(np.int64),
        "loan_purpose": rng.choice(7, size=size, p=(0.34, 0.18, 0.14, 0.09, 0.06, 0.05, 0.14)),
        "channel": _channel(rng, drifted),
    }
    for name, share in MISSING_CATEGORICAL.items():
        codes[name] = np.where(rng.random(size) < share, -1, codes[name])
    return {name: _categorical(value, name) for name, value in codes.items()}


def _gumbel_choice(rng: np.random.Generator, scores: np.ndarray) -> np.ndarray:
    """Draw one level per row with probabilities softmax(scores[row]) (the Gumbel-max trick)."""
    return np.argmax(scores + rng.gumbel(size=scores.shape), axis=1)


def _housing_scores(age: np.ndarray, quality: np.ndarray) -> np.ndarray:
    """Log-weights of own / rent / with_family / other: owners are older, family homes younger."""
    own = -1.0 + 0.06 * (age - 35) + 0.3 * quality
    family = -0.5 - 0.12 * np.maximum(age - 25, 0)
    return np.column_stack([own, np.zeros_like(own), family, np.full_like(own, -2.5)])


def _marital_scores(age: np.ndarray) -> np.ndarray:
    """Log-weights of single / married / cohabiting / divorced / widowed by age."""
    years = age - 40.0
    return np.column_stack(
        [-0.05 * years, 0.5 + 0.03 * years, -0.2 - 0.04 * years, -1.3 + 0.02 * years, -4.5 + 0.09 * years]
    )


def _education_scores(quality: np.ndarray) -> np.ndarray:
    """Log-weights of secondary / vocational / bachelor / postgraduate, a little better with quality."""
    return np.column_stack(
        [np.zeros_like(quality), 0.1 + 0.1 * quality, -0.1 + 0.25 * quality, -1.2 + 0.35 * quality]
    )


def _channel(rng: np.random.Generator, drifted: np.ndarray) -> np.ndarray:
    """Draw the channel, whose mix turns towards brokers in the drifted quarters."""
    cumulative = np.where(drifted[:, None], np.cumsum(DRIFTED_CHANNEL_MIX), np.cumsum(CHANNEL_MIX))
    return np.sum(rng.random(drifted.size)[:, None] >= cumulative[:, :-1], axis=1)


def _categorical(codes: np.ndarray, name: str) -> pd.Categorical:
    """Wrap level codes (-1 for missing) as a categorical holding all of ``name``'s levels."""
    return pd.Categorical.from_codes(codes, categories=LEVELS[name])


def _outcome_codes(rng: np.random.Generator, bad_probability: np.ndarray) -> np.ndarray:
    """Draw outcome codes 0 good, 1 bad, 2 indeterminate.

    Indeterminate accounts (briefly in arrears, then cured) are taken from those that did not go
    bad, more often among riskier ones, so ``bad_probability`` stays the probability of bad.
    """
    size = bad_probability.size
    bad = rng.random(size) < bad_probability
    cured = rng.random(size) < np.minimum(0.02 + 0.25 * bad_probability, 0.5)
    return np.where(bad, 1, np.where(cured, 2, 0)).astype(np.int8)


# Invented scenario, no outside source: P(status | outcome), rows good, bad, indeterminate.
_COLLECTIONS_GIVEN_OUTCOME = np.array([[0.984, 0.012, 0.004], [0.02, 0.08, 0.90], [0.42, 0.55, 0.03]])


def _collections_codes(rng: np.random.Generator, outcome: np.ndarray) -> np.ndarray:
    """Draw the collections status seen at the 12-month review, given the outcome (the leak)."""
    cumulative = np.cumsum(_COLLECTIONS_GIVEN_OUTCOME, axis=1)[outcome]
    return np.sum(rng.random(outcome.size)[:, None] >= cumulative[:, :-1], axis=1)


def _as_float(series: pd.Series) -> np.ndarray:
    """Return a numeric column as floats with NaN for missing values."""
    return pd.to_numeric(series, errors="coerce").to_numpy(dtype=float, na_value=np.nan)


def _level_effect(series: pd.Series, effects: dict[str | None, float], name: str) -> np.ndarray:
    """Look up each row's level effect; a missing value takes ``effects[None]`` (0 if absent)."""
    levels = LEVELS[name]
    codes = _level_codes(series, levels)
    unknown = (codes < 0) & series.notna().to_numpy()
    if unknown.any():
        value = series[unknown].iloc[0]
        raise ScorecardError(
            f"column {name!r}: value {value!r} is not a level of the demo scenario "
            f"({', '.join(levels)}). Pass a ledger made by the demo generator."
        )
    table = np.array([effects.get(level, 0.0) for level in levels] + [effects.get(None, 0.0)])
    return table[codes]


def _level_codes(series: pd.Series, levels: tuple[str, ...]) -> np.ndarray:
    """Return each row's position in ``levels``; -1 for a missing or unknown value."""
    index = pd.Index(levels)
    if isinstance(series.dtype, pd.CategoricalDtype):
        # Recode the few categories, not the many rows.
        recode = np.append(index.get_indexer(series.cat.categories), -1)
        return recode[series.cat.codes.to_numpy()]
    return index.get_indexer(series)


def _bureau_term(score: np.ndarray) -> np.ndarray:
    """Higher scores lower the risk; no bureau file costs +0.45."""
    return np.where(np.isnan(score), 0.45, -0.005 * (score - 610))


def _arrears_term(arrears: np.ndarray) -> np.ndarray:
    """Each step of worst arrears adds 0.25."""
    return 0.25 * arrears


def _delinquency_term(months: np.ndarray) -> np.ndarray:
    """A recent delinquency adds up to 0.9, fading with a 12-month scale; none on record adds 0."""
    return np.where(months >= 0, 0.9 * np.exp(-np.maximum(months, 0) / 12), 0.0)


def _utilisation_term(percent: np.ndarray) -> np.ndarray:
    """Risk rises with utilisation up to 150 %; an unused line is slightly worse than a light one."""
    used = 0.012 * np.minimum(percent, 150) + 0.3 * (percent == 0)
    return np.where(np.isnan(percent), 0.2, used)


def _enquiries_term(count: np.ndarray) -> np.ndarray:
    """Each recent enquiry adds 0.15, up to ten."""
    return 0.15 * np.minimum(count, 10)


def _debt_term(ratio: np.ndarray) -> np.ndarray:
    """Debt-to-income adds one unit of log-odds per unit, capped at 2."""
    return 1.0 * np.minimum(ratio, 2.0)


def _income_term(income: np.ndarray) -> np.ndarray:
    """Higher stated income lowers the risk on a log scale; not stating it costs +0.35."""
    return np.where(np.isnan(income), 0.35, -0.55 * np.log(np.clip(income, 500, 20_000) / 2300))


def _employer_term(months: np.ndarray) -> np.ndarray:
    """Longer employment lowers the risk on a log scale; missing costs +0.15."""
    return np.where(np.isnan(months), 0.15, -0.20 * np.log1p(months / 12))


def _address_term(months: np.ndarray) -> np.ndarray:
    """Longer time at the address lowers the risk a little; missing costs +0.10."""
    return np.where(np.isnan(months), 0.10, -0.12 * np.log1p(months / 12))


def _age_term(age: np.ndarray) -> np.ndarray:
    """Risk falls with age up to 65."""
    return -0.02 * (np.clip(age, 18, 65) - 40)


def _term_term(months: np.ndarray) -> np.ndarray:
    """Longer loan terms are a little riskier."""
    return 0.008 * (months - 36)


def _repeat_term(loans: np.ndarray) -> np.ndarray:
    """Existing loans with us lower the risk, up to three."""
    return -0.30 * np.minimum(loans, 3)


def _savings_term(balance: np.ndarray) -> np.ndarray:
    """Savings lower the risk a little on a log scale; missing counts as none."""
    return -0.08 * np.log1p(np.nan_to_num(balance, nan=0.0) / 100)


_NUMERIC_TERMS = {
    "bureau_score": _bureau_term,
    "worst_arrears_24m": _arrears_term,
    "months_since_delinquency": _delinquency_term,
    "revolving_utilisation_pct": _utilisation_term,
    "enquiries_6m": _enquiries_term,
    "debt_to_income": _debt_term,
    "monthly_income": _income_term,
    "months_with_employer": _employer_term,
    "months_at_address": _address_term,
    "applicant_age": _age_term,
    "loan_term_months": _term_term,
    "loans_with_us": _repeat_term,
    "savings_balance": _savings_term,
}


# ---------------------------------------------------------------------------------------------
# Rejected applications: the cooperative's earlier lending policy, and what the rejected would have done
#
# Invented scenario, no outside source. Before this scorecard the cooperative decided by a simple
# points rule on the bureau score, arrears and recent enquiries, and a loan officer's judgement at
# interview, which saw a little of what was to come. It declined REJECT_SHARE of the applications.
# The ledger of a lender keeps no outcome for them; the generator knows what each would have done.

DECISION_COLUMN = "decision"
DECISIONS = ("approved", "declined")
REJECT_SHARE = 0.15
# how strongly the officer's judgement leans on an applicant who was going to go bad (log-odds units)
JUDGEMENT_SIGHT = 1.0
_REJECTIONS_STREAM = 16  # spawn key of the random stream of the judgement, apart from every block's


def with_rejections(frame: pd.DataFrame, *, seed: int = 2024, share: float = REJECT_SHARE) -> tuple[pd.DataFrame, np.ndarray]:
    """Return the ledger as the cooperative's earlier policy would have left it, and every row's true outcome.

    Parameters
    ----------
    frame : pandas.DataFrame
        A ledger from ``generate_ledger`` (every application booked, every outcome known).
    seed : int
        Seed of the loan officers' judgement.
    share : float
        The share of applications declined: those the earlier policy found riskiest.

    Returns
    -------
    (pandas.DataFrame, numpy.ndarray)
        A copy of the ledger with a ``decision`` column ('approved' or 'declined'); a declined
        application has no outcome and no collections status (it was never booked). And the
        outcome each application had in ``frame``, what the declined ones would have done.

    Notes
    -----
    The policy's risk is -0.006 per bureau point above 610 (0.45 without a bureau file), 0.3 per
    step of worst arrears, 0.5 for three or more recent enquiries, and the officer's judgement:
    normal noise plus ``JUDGEMENT_SIGHT`` for an applicant who was going to go bad. So the declined
    are worse than booked applicants with the same characteristics, as reject inference assumes.
    """
    rng = np.random.default_rng(np.random.SeedSequence(seed, spawn_key=(_REJECTIONS_STREAM,)))
    truth = frame[TARGET].astype(str).to_numpy()
    bureau = _as_float(frame["bureau_score"])
    risk = (np.where(np.isnan(bureau), 0.45, -0.006 * (bureau - 610)) + 0.3 * _as_float(frame["worst_arrears_24m"])
            + 0.5 * (_as_float(frame["enquiries_6m"]) >= 3) + JUDGEMENT_SIGHT * (truth == "bad")
            + rng.standard_normal(len(frame)))
    declined = risk > np.quantile(risk, 1 - share)
    result = frame.copy()
    result[DECISION_COLUMN] = pd.Categorical.from_codes(declined.astype(np.int8), categories=DECISIONS)
    result[TARGET] = result[TARGET].where(~declined)
    result[LEAKING] = result[LEAKING].where(~declined)
    return result, truth


def _write_csv(chunks: Iterable[pd.DataFrame], path: str) -> None:
    """Write chunks to one CSV file with a single header and ISO dates."""
    with open(path, "w", newline="", encoding="utf-8") as handle:
        for number, chunk in enumerate(chunks):
            chunk.to_csv(handle, index=False, header=number == 0, date_format="%Y-%m-%d")


def _write_parquet(chunks: Iterable[pd.DataFrame], path: str) -> None:
    """Write chunks to one Parquet file, one or more of its row blocks per chunk."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    writer = None
    try:
        for chunk in chunks:
            table = pa.Table.from_pandas(chunk, preserve_index=False)
            if writer is None:
                writer = pq.ParquetWriter(path, table.schema)
            writer.write_table(table.cast(writer.schema))
    finally:
        if writer is not None:
            writer.close()


_WRITERS = {".csv": _write_csv, ".parquet": _write_parquet}


if __name__ == "__main__":
    raise SystemExit(main())
