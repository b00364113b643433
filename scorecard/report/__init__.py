"""The deliverables: the HTML report, the Excel workbook, and the SVG charts they draw.

Every report carries the same caution (``scorecard.terms.caution``, which the exports say too).
"""

from ..terms import caution

CAUTION = caution("This report")
