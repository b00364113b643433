"""The scorecard as one Python file that needs nothing but the standard library.

The file defines ``score(record) -> (score, probability, reasons)`` for one application given as
a dict: one function per characteristic (its rules as an if-chain, in the order of
``scorecard.exports.rules``), points in whole units of the last decimal, the probability of
default looked up in a table of every reachable score (scorewright's own doubles), and the
reasons ranked as our scorer ranks them.
"""

from __future__ import annotations

import textwrap

from .rules import INTERVAL, LEVELS, SPECIAL, CharacteristicRules, ExportModel, Rule, number_text

_TEMPLATE = '''"""score(record) -> (score, probability, reasons): a points scorecard in one file.

{provenance}

{scaling}

record: a dict of one application, keyed by column name. A missing value is an absent key, None
or a float NaN. Numeric characteristics take numbers (or text float() reads); categorical ones
are matched by their text as scorewright knows it: 1 and 1.0 are the level '1', True is 'true'.
score: the sum of the points of the record's bins; probability: its probability of default,
1 / (1 + odds); reasons: up to REASON_COUNT reason codes, the characteristics that cost the most
points below their best, largest first, ties in the scorecard's order (REASON_TEXT says them).

This file needs only the standard library. It was generated; change the model, not the file.

{caution}
"""
{imports}
MODEL_CHECKSUM = {checksum!r}
REASON_COUNT = {reason_count}
REASON_TEXT = {reason_text}


def score(record):
    """Return (score, probability of default, reasons) of one application (a dict)."""
    units = 0
    lost = []
    for position, (name, points_of, best, code) in enumerate(_CHARACTERISTICS):
        points = points_of(record.get(name))
        units += points
        if points < best:
            lost.append((points - best, position, code))
    lost.sort()
    return {score}, {probability}, tuple(code for _, _, code in lost[:REASON_COUNT])


def _missing(value):
    return value is None or (isinstance(value, float) and value != value)


def _level(value):
    # the text scorewright knows a level by: '1' for 1 and 1.0, 'true' for True
    if type(value).__name__ in ("bool", "bool_"):  # also numpy's, which is no subclass of bool
        return str(bool(value)).lower()
    if isinstance(value, int) or type(value).__name__.startswith(("int", "uint")):
        return str(int(value))
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)
{functions}

# (column, its points function, its best points, its reason code), in the scorecard's order
_CHARACTERISTICS = (
{table}
)
{probabilities}'''


def python_text(model: ExportModel) -> str:
    """Return the source of a Python file (standard library only) that scores one application."""
    pd_rows = model.pd_table()
    scale = model.scaling
    if pd_rows is not None:
        rows = "\n".join(f"    {units}: {number_text(pd)}," for units, pd in pd_rows)
        probabilities = ("\n# probability of default of every reachable score, keyed by the score in units of its last "
                         f"decimal\n_PD = {{\n{rows}\n}}\n")
        probability, imports = "_PD[units]", ""
    else:
        probabilities = ""
        probability = f"1.0 / (1.0 + exp(({_score_expression(model)} - {number_text(scale.offset)}) / {number_text(scale.factor)}))"
        imports = "\nfrom math import exp\n"
    provenance, scaling, warning = (textwrap.fill(paragraph, 96) for paragraph in model.statement())
    return _TEMPLATE.format(
        provenance=provenance, scaling=scaling, caution=warning, checksum=model.fingerprint,
        imports=imports, reason_count=model.reason_count,
        reason_text="{" + "".join(f"\n    {c.reason_code!r}: {c.reason_label!r}," for c in model.characteristics) + "\n}",
        score=_score_expression(model), probability=probability,
        functions="".join(_function(j, c) for j, c in enumerate(model.characteristics, 1)),
        table="\n".join(f"    ({c.name!r}, _points_{j}, {c.best_units}, {c.reason_code!r}),"
                        for j, c in enumerate(model.characteristics, 1)),
        probabilities=probabilities,
    )


def _score_expression(model: ExportModel) -> str:
    return "units" if model.decimals == 0 else f"units / {model.unit}"


def _function(j: int, c: CharacteristicRules) -> str:
    missing, *middle, otherwise = c.rules
    lines = ["", "", f"def _points_{j}(value):  # {c.name!r}, in units of the last decimal",
             "    if _missing(value):", f"        return {missing.units}"]
    if c.kind == "numeric":
        lines += ["    value = float(value)", "    if value != value:  # the text 'nan'", f"        return {missing.units}"]
    else:
        lines.append("    value = _level(value)")
    for rule in middle:
        lines += [f"    if {_condition(rule)}:", f"        return {rule.units}"]
    lines.append(f"    return {otherwise.units}")
    return "\n".join(lines)


def _condition(rule: Rule) -> str:
    if rule.kind == SPECIAL:
        return f"value == {number_text(rule.value)}"
    if rule.kind == INTERVAL:
        return f"value < {number_text(rule.upper)}"  # the intervals below failed: value is at least the lower end
    assert rule.kind == LEVELS, rule.kind
    return f"value in {_level_set(rule.levels)}"


def _level_set(levels: tuple[str, ...]) -> str:
    return "{" + ", ".join(repr(level) for level in levels) + "}"  # a class has one level or more
