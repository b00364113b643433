"""The scorecard as PMML 4.4, the open standard for predictive models: its ``Scorecard`` model element.

One ``Characteristic`` per characteristic of the model, one ``Attribute`` per rule in the order
of ``scorecard.exports.rules`` (PMML takes the first Attribute whose predicate holds, as our
scorer does): ``isMissing``, ``equal`` for each special value, the intervals (``greaterOrEqual``
and ``lessThan``), ``isIn`` for the levels of a class, and ``True`` for a level never seen.
Fields carry no list of valid values, so that an unseen level is valid input that reaches the
``True`` attribute rather than an invalid value.

Reasons use the standard's ``pointsBelow`` method: a characteristic's difference is its
``baselineScore`` less the points it gave, and the codes are ranked by difference, largest first.
The output field ``Probability`` applies 1 / (1 + exp((score − offset) / factor)) to the score.
"""

from __future__ import annotations

from xml.sax.saxutils import escape, quoteattr

from ..errors import ModelFileError
from ..terms import NUMERIC
from .rules import INTERVAL, LEVELS, MISSING, OTHERWISE, SPECIAL, CharacteristicRules, ExportModel, Rule, number_text

NAMESPACE = "http://www.dmg.org/PMML-4_4"
TARGET = "score"  # the model's predicted field


def pmml_text(model: ExportModel) -> str:
    """Return the scorecard as a PMML 4.4 document.

    Raises
    ------
    ModelFileError
        Two characteristics share a reason code (``pointsBelow`` adds up the differences of
        one code, so the ranking would not be ours), or a name or level holds a character XML
        cannot carry.
    """
    _check_reason_codes(model)
    text = "\n".join([
        '<?xml version="1.0" encoding="UTF-8"?>',
        f'<PMML xmlns="{NAMESPACE}" version="4.4">',
        *_header(model),
        f'  <DataDictionary numberOfFields="{len(model.characteristics) + 1}">',
        *(_data_field(c) for c in model.characteristics),
        f'    <DataField name="{TARGET}" optype="continuous" dataType="double"/>',
        '  </DataDictionary>',
        f'  <Scorecard modelName={_attribute(model.title)} functionName="regression" initialScore="0"'
        ' useReasonCodes="true" reasonCodeAlgorithm="pointsBelow" baselineMethod="other">',
        '    <MiningSchema>',
        # asIs: a missing value reaches the isMissing attribute, an unseen level the True attribute
        *(f'      <MiningField name={_attribute(c.name)} usageType="active" missingValueTreatment="asIs"'
          ' invalidValueTreatment="asIs"/>' for c in model.characteristics),
        f'      <MiningField name="{TARGET}" usageType="target"/>',
        '    </MiningSchema>',
        *_output(model),
        '    <Characteristics>',
        *(line for position, c in enumerate(model.characteristics) for line in _characteristic(position, c, model)),
        '    </Characteristics>',
        '  </Scorecard>',
        '</PMML>',
        '',
    ])
    return text


def _header(model: ExportModel) -> list[str]:
    provenance, scaling, warning = model.statement()
    lines = [
        provenance, scaling,
        "Score: the sum of the partial scores" + (
            "; the output field Score is that sum rounded to the points' decimals." if model.decimals else "."),
        "Probability: the probability of default of the score, 1 / (1 + exp((Score - offset) / factor)).",
        "Reasons: pointsBelow. Each baselineScore is the characteristic's best points less half a unit of the "
        "last decimal, plus a smaller part of a unit for the characteristics earlier in the table: only "
        "characteristics that cost points are reasons, and of two that cost as much the earlier comes first.",
        warning,
    ]
    return [
        '  <Header description="scorewright points scorecard">',
        f'    <Extension name="scorewright-model-checksum" value={_attribute(model.fingerprint)}/>',
        f'    <Application name="scorewright" version={_attribute(model.tool_version)}/>',
        *(f'    <Annotation>{_text(line)}</Annotation>' for line in lines),
        '  </Header>',
    ]


def _data_field(c: CharacteristicRules) -> str:
    optype, data_type = ("continuous", "double") if c.kind == NUMERIC else ("categorical", "string")
    return f'    <DataField name={_attribute(c.name)} optype="{optype}" dataType="{data_type}"/>'


def _output(model: ExportModel) -> list[str]:
    lines = ['    <Output>']
    if model.decimals:
        # a sum of decimal points in doubles carries noise (600.3 + 15.6 = 615.9000000000001): the
        # score our scorer gives is that sum rounded to the points' decimals
        lines += [
            '      <OutputField name="SumOfPoints" optype="continuous" dataType="double" feature="predictedValue"/>',
            '      <OutputField name="Score" optype="continuous" dataType="double" feature="transformedValue">',
            f'        <Apply function="/"><Apply function="round"><Apply function="*"><FieldRef field="SumOfPoints"/>'
            f'<Constant dataType="double">{model.unit}</Constant></Apply></Apply>'
            f'<Constant dataType="double">{model.unit}</Constant></Apply>',
            '      </OutputField>',
        ]
    else:
        lines.append('      <OutputField name="Score" optype="continuous" dataType="double" feature="predictedValue"/>')
    lines += [
        f'      <OutputField name="Reason{rank}" optype="categorical" dataType="string" feature="reasonCode" rank="{rank}"/>'
        for rank in range(1, model.reason_count + 1)
    ]
    scale = model.scaling
    lines += [
        '      <OutputField name="Probability" optype="continuous" dataType="double" feature="transformedValue">',
        '        <Apply function="/"><Constant dataType="double">1</Constant><Apply function="+">'
        '<Constant dataType="double">1</Constant><Apply function="exp"><Apply function="/"><Apply function="-">'
        f'<FieldRef field="Score"/><Constant dataType="double">{number_text(scale.offset)}</Constant></Apply>'
        f'<Constant dataType="double">{number_text(scale.factor)}</Constant></Apply></Apply></Apply></Apply>',
        '      </OutputField>',
        '    </Output>',
    ]
    return lines


def _characteristic(position: int, c: CharacteristicRules, model: ExportModel) -> list[str]:
    baseline = _baseline_units(position, c, len(model.characteristics)) / model.unit
    lines = [f'      <Characteristic name={_attribute(c.name + " points")} reasonCode={_attribute(c.reason_code)}'
             f' baselineScore="{number_text(baseline)}">']
    for rule in c.rules:
        points = number_text(rule.units / model.unit)
        lines.append(f'        <Attribute partialScore="{points}">{_predicate(c, rule)}</Attribute>')
    lines.append('      </Characteristic>')
    return lines


def _baseline_units(position: int, c: CharacteristicRules, k: int) -> float:
    """The baseline of the characteristic at ``position`` (0 first) of ``k``, in units of the last decimal.

    pointsBelow ranks by baselineScore − partial score. With the baseline at the best points less
    half a unit plus (k − 1 − position) / 2k of a unit, a characteristic's difference is its points
    lost less a part of a unit that shrinks along the table:
    - losses a whole unit apart keep their order, since the parts differ by less than half a unit;
    - equal losses rank the earlier characteristic first, as our scorer does, by at least 1/2k of
      a unit: far above the rounding of double arithmetic on decimal points (about 1e-13), which
      would otherwise order them at random;
    - a characteristic that lost nothing has a negative difference, so it is no reason (evaluators
      differ on a difference of exactly 0; one we tried keeps it).
    """
    return c.best_units - 0.5 + (k - 1 - position) / (2 * k)


def _predicate(c: CharacteristicRules, rule: Rule) -> str:
    field = _attribute(c.name)
    if rule.kind == MISSING:
        return f'<SimplePredicate field={field} operator="isMissing"/>'
    if rule.kind == SPECIAL:
        return f'<SimplePredicate field={field} operator="equal" value="{number_text(rule.value)}"/>'
    if rule.kind in (INTERVAL, OTHERWISE) and c.kind == NUMERIC:
        low = None if rule.lower is None else (
            f'<SimplePredicate field={field} operator="greaterOrEqual" value="{number_text(rule.lower)}"/>')
        high = None if rule.upper is None else (
            f'<SimplePredicate field={field} operator="lessThan" value="{number_text(rule.upper)}"/>')
        if low and high:
            return f'<CompoundPredicate booleanOperator="and">{low}{high}</CompoundPredicate>'
        return low or high or "<True/>"
    if rule.kind == LEVELS:
        return _levels_predicate(field, rule.levels)
    return "<True/>"  # a level never seen at build time: the unseen bin


def _levels_predicate(field: str, levels: tuple[str, ...]) -> str:
    # an Array item in double quotes may hold spaces, and \" stands for a quote; the standard gives no
    # escape for a backslash itself (an evaluator we tried reads \\ as two), so a level holding one is
    # matched on its own with 'equal'
    listed = [level for level in levels if "\\" not in level]
    parts = [f'<SimplePredicate field={field} operator="equal" value={_attribute(level)}/>'
             for level in levels if "\\" in level]
    if listed:
        items = " ".join('"' + level.replace('"', '\\"') + '"' for level in listed)
        parts.insert(0, f'<SimpleSetPredicate field={field} booleanOperator="isIn">'
                        f'<Array type="string" n="{len(listed)}">{_text(items)}</Array></SimpleSetPredicate>')
    if len(parts) == 1:
        return parts[0]
    return f'<CompoundPredicate booleanOperator="or">{"".join(parts)}</CompoundPredicate>'


def _check_reason_codes(model: ExportModel) -> None:
    seen: dict[str, str] = {}
    for c in model.characteristics:
        if c.reason_code in seen:
            raise ModelFileError(
                f"characteristics {seen[c.reason_code]!r} and {c.name!r} share the reason code {c.reason_code!r}. "
                "PMML adds up the points lost under one code, so its reasons would not be the scorecard's. "
                f"Give each its own code (characteristics.{c.name}.reason_code in the settings) and build again."
            )
        seen[c.reason_code] = c.name


def _attribute(value: str) -> str:
    return quoteattr(_xml_safe(value))


def _text(value: str) -> str:
    # a carriage return in element text would reach the reader as a line feed (XML's end-of-line rule)
    return escape(_xml_safe(value), {"\r": "&#13;"})


def _xml_safe(value: str) -> str:
    bad = [ch for ch in value if not _xml_character(ch)]
    if bad:
        raise ModelFileError(
            f"{value[:60]!r} holds the character {bad[0]!r}, which an XML document cannot carry, so the "
            "scorecard cannot be written as PMML. Rename the column or level in the ledger and build again, "
            "or export as SQL or Python."
        )
    return value


def _xml_character(ch: str) -> bool:
    # the characters XML 1.0 allows (its Char production)
    code = ord(ch)
    return code in (0x9, 0xA, 0xD) or 0x20 <= code <= 0xD7FF or 0xE000 <= code <= 0xFFFD or 0x10000 <= code <= 0x10FFFF
