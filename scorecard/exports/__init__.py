"""Exports: the scorecard leaves the tool as PMML, SQL or a Python file, each giving our scores.

Every form is written from one reading of the model file (``rules.export_model``), so the bins,
points, reasons and fingerprint are the same in all three, and each states the model's
checksum, its scaling and the caution.
"""

from .pmml import pmml_text
from .python_file import python_text
from .rules import PD_TABLE_LIMIT, CharacteristicRules, ExportModel, Rule, export_model
from .sql import DEFAULT_TABLE, sql_text

__all__ = [
    "CharacteristicRules", "DEFAULT_TABLE", "ExportModel", "PD_TABLE_LIMIT", "Rule", "export_model", "pmml_text",
    "python_text", "sql_text",
]
