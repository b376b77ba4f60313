"""The caution every workbook carries, in one place: the results support, and never replace,
the review and sign-off. The report workbook (and its JSON) says it above the sign-off block;
the nightly digest above its table, in words for a page whose decisions are each spec's."""

from __future__ import annotations

#: What every caution says first.
CAUTION_SUPPORT = (
    "These statistical results support, and never replace, the engineering and quality review "
    "and sign-off that the change-control procedure, the customer's requirements and local "
    "regulations call for. verify approves nothing: a PASS means only that the declared "
    "statistical criteria were met by the data"
)

#: The report workbook's and the JSON result's (``Evaluation.caution``).
CAUTION = CAUTION_SUPPORT + " listed here; release is decided by the people who sign below."

#: The nightly digest's: its decisions are each spec's, whose workbook holds the sign-off.
DIGEST_CAUTION = (CAUTION_SUPPORT + " each spec's workbook lists; release is decided by the "
                  "people who sign that workbook.")
