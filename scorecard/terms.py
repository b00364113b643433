"""The shared words and defaults of the tool, each defined once (floor one: imports nothing of ours).

Every stage speaks of outcomes, samples, kinds of characteristic and the trade's thresholds;
they are written here and nowhere else, so that a newcomer finds each in one place and a change
of one reaches every stage.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np

# Outcome codes of a row, as intake maps them; the names are the words the reports use.
GOOD, BAD, INDETERMINATE, UNKNOWN = 0, 1, 2, 3
OUTCOME_NAMES = ("good", "bad", "indeterminate", "unknown")
# A rejected application (never booked, so never an outcome): a code of intake's alone, since intake
# sets rejected rows apart before any count table is made.
REJECTED = 4

# Reject inference: how the rejected applications enter the model (the settings' rejects.method).
NO_INFERENCE, FUZZY_AUGMENTATION, PARCELLING, HARD_CUTOFF = "none", "fuzzy-augmentation", "parcelling", "hard-cutoff"
REJECT_METHODS = (NO_INFERENCE, FUZZY_AUGMENTATION, PARCELLING, HARD_CUTOFF)

# Sample codes of a row, and the samples' names in the order every table lists them.
DEVELOPMENT, HOLDOUT, OUT_OF_TIME = 0, 1, 2
SAMPLE_NAMES = ("development", "hold-out", "out-of-time")
DEVELOPMENT_NAME = SAMPLE_NAMES[DEVELOPMENT]

# The challenger is compared with the scorecard row by row (DeLong's paired test needs every row's two
# scores), so a sample with more goods and bads than this is compared on a seeded sub-sample of them,
# drawn at intake like the others (the name of each: "comparison <sample name>"); about 50 bytes a row.
COMPARISON_ROWS = 2_000_000
COMPARISON = "comparison"

# The samples whose figures say most about new applications, most honest first: the development
# sample's figures are optimistic, since the classing, the choice and the fit were made on it.
MOST_HONEST_FIRST = ("out-of-time", "hold-out", "development")

# The two kinds of characteristic.
NUMERIC, CATEGORICAL = "numeric", "categorical"

# The engines that read and count a ledger's rows (the settings' ledger.engine): this process, an
# embedded SQL engine, a cluster. Every one gives the same model file from the same ledger.
IN_PROCESS, DUCKDB, SPARK = "in-process", "duckdb", "spark"
ENGINES = (IN_PROCESS, DUCKDB, SPARK)

# How the bad rate may move as a numeric characteristic's value grows (the settings' bad_rate_shape):
# as the data say (the tool tries every shape below but 'any', and takes a single bend only when it
# buys a clear gain in IV), it falls, it rises, it falls and then rises (one bend), it rises and then
# falls, or in any order. WoE = ln(good share / bad share), so a bad rate that falls as the value
# grows is a WoE that rises with it.
FROM_DATA, FALLS, RISES, ANY = "from-data", "falls", "rises", "any"
FALLS_THEN_RISES, RISES_THEN_FALLS = "falls-then-rises", "rises-then-falls"
BAD_RATE_SHAPES = (FROM_DATA, FALLS, RISES, FALLS_THEN_RISES, RISES_THEN_FALLS, ANY)
ONE_WAY_SHAPES = (FALLS, RISES)
SINGLE_BEND_SHAPES = (FALLS_THEN_RISES, RISES_THEN_FALLS)

# Added to both counts of a cell with no goods or no bads (WoE) or an empty bin (PSI), which keeps
# the logarithm finite; the reports say where it was done (common practice, no source).
EMPTY_CELL = 0.5

# An information value above this flags a characteristic for a leakage check (N. Siddiqi, Credit
# Risk Scorecards, Wiley 2006, from memory).
LEAKAGE_IV = 0.5

# Status thresholds: a PSI from WATCH_PSI is 'watch', from ACT_PSI 'act' (common practice, no
# source); a test p-value below WATCH_P is 'watch', below ACT_P 'act' (the 5% and 1% test levels).
WATCH_PSI, ACT_PSI = 0.10, 0.25
WATCH_P, ACT_P = 0.05, 0.01

# Over-fitting flags (common practice, no source): a Gini that falls by more than this share from
# the development sample to an honest one deserves a look; a coefficient of a WoE-coded
# characteristic far from 1 (outside this range) suggests collinearity or over-fitting, since
# each WoE column alone has coefficient 1 by construction.
GINI_DROP = 0.10
COEFFICIENT_RANGE = (0.5, 1.5)

# Grounds fair-lending law commonly protects, each with words a column's name or its levels may hold.
# Age is lawful in some places, with conditions: the tool flags it and says so, it never refuses it.
PROTECTED_GROUNDS = (
    "sex or gender: sex, gender, male, female",
    "race or colour: race, racial, colour, color, skin",
    "ethnicity or national origin: ethnic, ethnicity, ethnicity_group, nationality, national_origin, citizenship, "
    "origin_group",
    "religion: religion, religious, faith, creed",
    "marital status: marital, married, divorced, widowed, cohabiting, spouse",
    "disability: disability, disabled, handicap",
    "age (lawful in some places with conditions: check local law): age, birth, dob",
)
GROUNDS_SOURCE = ("common practice, no single source; the grounds of, e.g., the US Equal Credit Opportunity Act "
                  "(15 U.S.C. 1691) and Article 21 of the EU Charter of Fundamental Rights, from memory")
CHECK_LOCAL_LAW = "check local law"


def caution(subject: str) -> str:
    """Return the caution every deliverable carries (reports, workbooks, exported scorecards), said of ``subject``."""
    return (
        f"{subject} supports, and does not replace, the lender's own credit policy, model risk "
        "management and the law that applies where it lends: fair-lending, consumer-credit and "
        "data-protection rules. Lending decisions made with this scorecard must follow local "
        "regulation and licensed practice, and must be reviewed by people accountable for them."
    )


def most_honest(samples: Iterable[str]) -> str:
    """Return the most honest of the named samples (out-of-time, else hold-out, else development), or ''."""
    present = set(samples)
    return next((name for name in MOST_HONEST_FIRST if name in present), "")


def shape_words(shape: str) -> str:
    """Say a bad-rate shape in words: 'the bad rate falls as the value grows'."""
    return {
        FALLS: "the bad rate falls as the value grows",
        RISES: "the bad rate rises as the value grows",
        FALLS_THEN_RISES: "the bad rate falls, then rises, as the value grows (one bend)",
        RISES_THEN_FALLS: "the bad rate rises, then falls, as the value grows (one bend)",
        FROM_DATA: "the bad rate moves one way, or bends once, as the value grows",
        ANY: "the bad rate may move either way",
    }[shape]


def value_text(value: object) -> str:
    """Return the text a value is known by: '1' for 1 and 1.0 (a column read as numbers or as text
    gives the same levels), 'true' for True, else ``str(value)``."""
    if isinstance(value, (bool, np.bool_)):
        return str(bool(value)).lower()
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)) and float(value).is_integer():
        return str(int(value))
    return str(value)


def frozen(values) -> np.ndarray:
    """Return a read-only array of the values: float, or bool when given a bool array."""
    is_bool = isinstance(values, np.ndarray) and values.dtype == bool
    array = np.array(values, dtype=bool if is_bool else float)
    array.setflags(write=False)
    return array
