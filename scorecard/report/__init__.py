"""The deliverables: the HTML report, the Excel workbook, and the SVG charts they draw.

Every report carries the same caution (``scorecard.terms.caution``, which the exports say too); so
does every build that inferred the rejects' outcomes, about what that rests on.
"""

from ..terms import caution

CAUTION = caution("This report")

REJECT_CAUTION = (
    "Reject inference rests on assumptions these data cannot test: nobody knows how the rejected applicants would "
    "have repaid. The inferred goods and bads follow from the method and the factor chosen, not from anything "
    "observed, and no figure of the booked applications can confirm them. Treat the model fitted with them as a "
    "judgement to be argued and recorded, and watch its first booked cohorts closely."
)
