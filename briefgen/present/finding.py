"""A finding as data: the sentence a reader sees and the claim behind it.

The document orders and selects findings from these fields (``claim`` above all),
never by reading their text; stats.json carries them for other readers.
"""

from __future__ import annotations

from dataclasses import dataclass

# Claims a finding can make; the document orders page 1 by these, never by reading text.
# "explained": a difference or link the tests found, which another configured variable
# accounts for; it is not claimed, but it is not chance either.
CLAIMS = ("summary", "difference", "rise", "fall", "none", "not_tested", "explained")


SETTLED = ("summary", "difference", "rise", "fall")


@dataclass(frozen=True, slots=True)
class Finding:
    """One sentence for the reader, the certainty behind it, and the figure that backs it.

    Also the claim as data, for stats.json and the document: ``kind`` (the analysis),
    ``claim`` (one of CLAIMS), ``variables`` (data column names, target excluded),
    ``levels`` (in the order the sentence names them), the ``estimate`` with its
    interval, the ``test`` the verdict rests on with its ``p_value`` and, where the
    test was adjusted for multiplicity, ``p_adjusted``.
    """

    headline: str
    text: str
    certainty: str
    figure: str | None = None
    detail: str = ""  # a further sentence for the section; page 1 shows only the certainty
    key: str = ""
    kind: str = ""
    claim: str = "summary"
    variables: tuple[str, ...] = ()
    levels: tuple[str, ...] = ()
    estimate: float | None = None
    ci_low: float | None = None
    ci_high: float | None = None
    test: str | None = None
    p_value: float | None = None
    p_adjusted: float | None = None
