"""Checks of a fit's inputs at entry: shapes, finite values, non-negative counts, options in range."""

from __future__ import annotations

import collections

import numpy as np
import pandas as pd

from ..errors import FitError, describe_rows
from .result import INTERCEPT_NAME

SOLVERS = ("newton", "gradient", "lbfgs")


def checked_features(features, names) -> tuple[np.ndarray, tuple[str, ...]]:
    if names is None and isinstance(features, pd.DataFrame):
        names = [str(column) for column in features.columns]
    try:
        array = np.asarray(features, dtype=float)  # read only: the design is made from it, never written into it
    except (TypeError, ValueError) as error:
        raise FitError(f"features cannot be read as numbers ({error}). Code every characteristic as numbers first.") from None
    if array.ndim != 2:
        raise FitError(
            f"features must be a 2-D array, one row per application or pattern and one column per "
            f"characteristic; got shape {array.shape}. Reshape it, e.g. x.reshape(-1, 1) for one column."
        )
    names = tuple(f"x{j + 1}" for j in range(array.shape[1])) if names is None else tuple(map(str, names))
    check_names(names, array.shape[1])
    bad_rows, bad_columns = np.nonzero(~np.isfinite(array))
    if bad_rows.size:
        column = bad_columns[np.argmin(bad_columns)]
        rows = np.flatnonzero(~np.isfinite(array[:, column]))
        raise FitError(
            f"characteristic {names[column]!r}, {describe_rows(rows + 1)} (counted from 1): value "
            f"{float(array[rows[0], column])!r} is not a finite number. Code missing and special values as "
            f"bins of their own before fitting."
        )
    return array, names


def checked_start(start, names: tuple[str, ...]) -> np.ndarray:
    array = np.array(start, dtype=float)
    if array.shape != (len(names),) or not np.all(np.isfinite(array)):
        raise FitError(
            f"start = {start!r}: give {len(names)} finite numbers, one per coefficient in the order "
            f"{', '.join(map(repr, names))}."
        )
    return array


def check_names(names: tuple[str, ...], n_columns: int) -> None:
    if len(names) != n_columns:
        raise FitError(f"names has {len(names)} entries but features has {n_columns} columns; give one name per column.")
    repeated = sorted(name for name, n in collections.Counter(names).items() if n > 1)
    if repeated:
        raise FitError(f"names {', '.join(map(repr, repeated))} appear more than once; give each characteristic its own name.")
    if INTERCEPT_NAME in names:
        raise FitError(f"the name {INTERCEPT_NAME!r} is kept for the intercept; rename that characteristic.")


def checked_counts(goods, bads, n_rows: int) -> tuple[np.ndarray, np.ndarray]:
    checked = []
    for label, counts in (("goods", goods), ("bads", bads)):
        array = np.asarray(counts, dtype=float)
        if array.shape != (n_rows,):
            raise FitError(
                f"{label} has shape {array.shape} but features has {n_rows} rows; give one count "
                f"of goods and one of bads per row."
            )
        rows = np.flatnonzero(~(np.isfinite(array) & (array >= 0)))
        if rows.size:
            raise FitError(
                f"{label}, {describe_rows(rows + 1)} (counted from 1): value {float(array[rows[0]])!r} is "
                f"not a finite, non-negative count. Weights of goods and bads must be >= 0."
            )
        if not array.sum() > 0:
            raise FitError(
                f"the {label} have total weight {float(array.sum())!r}: a logistic fit needs both goods and "
                f"bads. Check the outcome mapping and the sample the rows come from."
            )
        checked.append(array)
    return checked[0], checked[1]


def checked_options(solver, l2, max_iterations, tolerance, gradient_tolerance) -> int | None:
    if solver not in SOLVERS:
        raise FitError(f"solver {solver!r} is not known; choose one of {', '.join(map(repr, SOLVERS))}.")
    if not (np.isfinite(l2) and l2 >= 0):
        raise FitError(f"l2 = {l2!r}: the ridge penalty must be a finite number >= 0.")
    if max_iterations is not None and not (int(max_iterations) == max_iterations and max_iterations >= 1):
        raise FitError(f"max_iterations = {max_iterations!r}: give a whole number >= 1.")
    for label, value in (("tolerance", tolerance), ("gradient_tolerance", gradient_tolerance)):
        if not (np.isfinite(value) and value > 0):
            raise FitError(f"{label} = {value!r}: give a small positive number such as 1e-10.")
    return None if max_iterations is None else int(max_iterations)
