"""The deliverables: the HTML report, the Excel workbook, and the SVG charts they draw.

Every report carries the same caution, defined once here.
"""

CAUTION = (
    "This report supports, and does not replace, the lender's own credit policy, model risk "
    "management and the law that applies where it lends: fair-lending, consumer-credit and "
    "data-protection rules. Lending decisions made with this scorecard must follow local "
    "regulation and licensed practice, and must be reviewed by people accountable for them."
)
