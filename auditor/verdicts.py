"""The verdict words, defined once (case claims, stages, sweeps, report styles and the JSON schema read them).

``Verdict`` is a ``StrEnum``: a member compares equal to its word, formats as its word and
is written to JSON as its word, so documents and messages read as before.
"""
from __future__ import annotations

from enum import StrEnum


class Verdict(StrEnum):
    WELL_POSED = "well-posed"
    UNDER_SPECIFIED = "under-specified"
    OVER_SPECIFIED = "over-specified"
    INCONSISTENT = "inconsistent"
    NOT_CONFIRMED = "not-confirmed"
    FAILED = "failed"                  # a sweep point whose computation raised (never a case's verdict)


# the verdicts a case can have (and claim), in the order the schema lists them
CASE_VERDICTS: tuple[Verdict, ...] = (Verdict.WELL_POSED, Verdict.UNDER_SPECIFIED, Verdict.OVER_SPECIFIED,
                                      Verdict.INCONSISTENT, Verdict.NOT_CONFIRMED)
