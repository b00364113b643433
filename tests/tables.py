"""A small invented points table shared by the points, scoring and row tests (invented numbers, no source)."""

from __future__ import annotations

from scorecard.points import points_table, scaling


def example_points_table(decimals=0):
    coefficients = {"age": 0.8, "housing": 1.1, "enquiries": 0.6}
    woe = {"age": [-0.6, 0.1, 0.7], "housing": [-0.4, 0.5], "enquiries": [0.9, 0.0, -1.2, -0.3]}
    labels = {name: [f"{name}{i}" for i in range(len(values))] for name, values in woe.items()}
    return points_table(coefficients, 1.3, woe, labels, scaling(), decimals=decimals)
