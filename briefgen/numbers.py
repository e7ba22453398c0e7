"""How numbers are written in the brief: one formatter, used by text, tables and figures.

The number of decimals follows the spread of the measure, not its size, so a
value near 1e12 with spread 0.1 keeps the digits that differ between groups.
"""

from __future__ import annotations

import calendar
import datetime as dt
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


def fmt_share(value: float | None, decimals: int = 0) -> str:
    """A share of rows or of variation as a percent, never "0%" or "100%" unless exactly so.

    R² = 0.0049 rounds to "0%", which beside a clear relationship says it explains
    nothing; such a share reads "under 1%" (with one decimal, "under 0.1%"), and one
    just short of all reads "over 99%".
    """
    text = fmt_percent(value, decimals)
    if value is None or not math.isfinite(value):
        return text
    step = 10.0**-decimals
    if value > 0 and text == fmt_percent(0.0, decimals):
        return f"under {fmt(step, decimals)}%"
    if value < 1 and text == fmt_percent(1.0, decimals):
        return f"over {fmt(100 - step, decimals)}%"
    return text


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


def readable_step(slope: float | None, x_range: float | None) -> float:
    """A power of ten of the predictor to state a slope per: per 1, per 10, per 1,000, per 0.1.

    Starts at 1 and grows tenfold while the change per step would read below 1 (so
    "0.00768 per unit" becomes "7.68 per 1,000"), but never past the largest power of
    ten inside the predictor's observed range, since a step the data never cover
    says nothing. A predictor spanning less than 1 gets a step below 1.
    """
    if slope is None or not slope or not x_range or not math.isfinite(x_range) or x_range <= 0:
        return 1.0
    top = 10.0 ** math.floor(math.log10(x_range))
    step = 1.0
    while abs(slope) * step < 1 and step * 10 <= top:
        step *= 10
    while step > top:
        step /= 10
    return step


def fmt_step(step: float) -> str:
    """A step as a sentence names it: 1 ─► 'unit', 1000 ─► '1,000', 0.1 ─► '0.1'."""
    if step == 1:
        return "unit"
    if step >= 1:
        return fmt_count(int(round(step)))
    return fmt(step, max(0, -math.floor(math.log10(step))))


def _plural(count: float, unit: str) -> str:
    number = f"{count:,.1f}".removesuffix(".0") if isinstance(count, float) else f"{count:,}"
    return f"{number} {unit}" if number == "1" else f"{number} {unit}s"


def _whole_months(first: dt.date, last: dt.date) -> tuple[int, int]:
    """Calendar months from ``first`` to ``last`` and the days left over after them."""
    months = (last.year - first.year) * 12 + last.month - first.month
    if last.day < first.day:
        months -= 1
    total = first.year * 12 + first.month - 1 + months
    year, month = divmod(total, 12)
    # The same day of the month, or the month's last day when it is shorter.
    day = min(first.day, calendar.monthrange(year, month + 1)[1])
    return months, (last - dt.date(year, month + 1, day)).days


def fmt_span(first: dt.date | dt.datetime, last: dt.date | dt.datetime) -> str:
    """The time from ``first`` to ``last`` in the unit people say it in: 45 days, 12 years.

    Days up to 60 days, weeks up to half a year (183 days), months up to two years,
    then years to one decimal (common practice, no published source). Computed from
    the calendar dates, so a span of 1 Jan 1991 to 1 Jan 2010 is 19 years whatever
    the periods in between hold.
    """
    a = first.date() if isinstance(first, dt.datetime) else first
    b = last.date() if isinstance(last, dt.datetime) else last
    if b < a:
        raise ValueError(f"span ends ({b}) before it starts ({a})")
    days = (b - a).days
    if days == 0:
        return "under a day"
    if days <= 60:
        return _plural(days, "day")
    if days < 183:
        return _plural(round(days / 7), "week")
    months, rest = _whole_months(a, b)
    months += rest >= 15  # nearer the next month than this one
    if months < 24:
        return _plural(months, "month")
    return _plural(round(months / 12, 1), "year")
