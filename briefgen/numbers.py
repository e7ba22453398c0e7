"""How numbers are written in the brief: one formatter, used by text, tables and figures.

The number of decimals follows the spread of the measure, not its size, so a
value near 1e12 with spread 0.1 keeps the digits that differ between groups.
"""

from __future__ import annotations

import math


def decimals_for(spread: float | None, significant: int = 3) -> int:
    """Decimals that show ``significant`` digits of a typical difference of size ``spread``."""
    if spread is None or not math.isfinite(spread) or spread <= 0:
        return 2
    return max(0, min(MAX_DECIMALS, significant - 1 - math.floor(math.log10(spread))))


MAX_DECIMALS = 20
FIXED_DECIMALS = 9  # beyond this, fixed notation is a row of zeros: switch to powers of ten


def fmt(value: float | None, decimals: int) -> str:
    """Thousands separators, fixed decimals, a real minus sign; a dash for no value.

    Measures in tiny units (spread below about 1e-7) are written as 1.234×10⁻¹²
    style scientific notation with the same resolution, since fixed decimals would
    show only zeros.
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    if decimals > FIXED_DECIMALS and value != 0:
        digits = max(0, decimals + math.floor(math.log10(abs(value))))
        mantissa, exponent = f"{value:.{digits}e}".split("e")
        return f"{mantissa}e{int(exponent)}".replace("-", "−")
    text = f"{value:,.{decimals}f}"
    if text.lstrip("-").strip("0.,") == "":
        text = text.lstrip("-")  # never print "-0.0"
    return text.replace("-", "−")


MAX_EXTRA_DECIMALS = 4  # beyond this the bounds are equal for any reader: show them as they are


def fmt_interval(
    low: float | None,
    high: float | None,
    decimals: int,
    *,
    suffix: str = "",
    sign: bool = False,
    joiner: str = " to ",
) -> str:
    """The bounds of an interval, with enough decimals that unequal bounds read unequal.

    Rounding both bounds to the measure's decimals can print "0.1% to 0.1%" for an
    interval that has width; that reads as certainty the data do not give. Decimals
    are added, one at a time and at most ``MAX_EXTRA_DECIMALS``, until the printed
    bounds differ. Bounds that are truly equal keep ``decimals``. ``suffix`` follows
    each bound ("%"); ``sign`` writes "+" before positive bounds.
    """
    digits = decimals
    if low is not None and high is not None and low != high:
        limit = min(decimals + MAX_EXTRA_DECIMALS, MAX_DECIMALS)
        while digits < limit and fmt(low, digits) == fmt(high, digits):
            digits += 1
    return f"{_bound(low, digits, sign)}{suffix}{joiner}{_bound(high, digits, sign)}{suffix}"


def _bound(value: float | None, decimals: int, sign: bool) -> str:
    text = fmt(value, decimals)
    return f"+{text}" if sign and text[:1] not in ("−", "–") else text


def fmt_level(confidence: float) -> str:
    """A confidence level as people write it: 0.95 ─► '95%', 0.995 ─► '99.5%' (never rounded)."""
    return f"{confidence * 100:.10g}%"


def fmt_count(value: int) -> str:
    return f"{value:,}"


def fmt_percent(value: float | None, decimals: int = 0) -> str:
    if value is None or not math.isfinite(value):
        return "–"
    return fmt(100 * value, decimals) + "%"


def fmt_p(p: float | None) -> str:
    """p-values the way journals print them: two significant digits, floor at 0.001."""
    if p is None or not math.isfinite(p):
        return "–"
    if p < 0.001:
        return "< 0.001"
    text = f"{p:.2g}" if p < 0.1 else f"{p:.2f}"
    # Near the conventional 0.05 line, two digits would print 0.0496 and 0.0504 alike.
    return f"{p:.3g}" if text == "0.05" else text


def p_text(p: float | None) -> str:
    """'p < 0.001' or 'p = 0.38', joined by no-break spaces so it never splits across lines."""
    text = fmt_p(p)
    phrase = f"p {text}" if text.startswith("<") else f"p = {text}"
    return phrase.replace(" ", "\u00a0")
