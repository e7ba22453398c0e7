"""Exact sums in the engine: fixed-point integers, so any thread order gives the same bits.

Why. A float sum depends on the order of its additions. An engine on several threads
adds partial sums in whatever order its threads finish, so a float Σd² changes in its
last digits from run to run, and with it every mean, sd, slope and p-value the brief
prints. Integer addition is associative: the same integers give the same total in any
order, on one thread or many, and on any engine.

How. Every value summed is already small: a deviation from a median, a mean or a level
mean, so an offset such as 1e12 never reaches it. Each such value v becomes the integer
q = round(v · 2^k), held as decimal(38, 0) (DuckDB sums it as a 128-bit HUGEINT, Spark as
its 38-digit decimal), and the engine sums q, q², q·q′ or q³ exactly. Multiplying by a
power of two is exact in float64, so the rounding to an integer is the only one; Python
finishes with exact integers and ``Fraction`` and rounds once, at the end (centring
Σq² − (Σq)²/n there cancels nothing).

Scale. ``FixedPoint.fit(bound, rows, degree)`` picks k from a bound on |v| and the number
of rows: |q| ≤ 2^b with b = (126 − bits(rows)) // degree, so rows · 2^(b·degree) ≤ 2^126
< 10^38 and no sum of degree-th powers (or of products of two such values) can overflow
38 digits, whatever the data. b is 62 (the most an int64 carries) up to 2^2 rows, 53 at
1e6 rows and 49 at 1e8 (squares); each value moves by at most 2^−(b+1) · bound, a few
float64 spacings of the largest deviation at 1e8 rows and less than one below 1e6 rows.
Bounds come from order statistics the callers already have (min, max, median), so the
scale costs no extra pass. Only portable Ibis expressions: the same code runs on Spark.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from fractions import Fraction

import ibis
import ibis.expr.datatypes as dt
import ibis.expr.types as ir

# 38 decimal digits: DuckDB's HUGEINT-backed decimal and Spark's largest decimal.
DECIMAL = dt.Decimal(38, 0)
# 2^126 < 10^38 − 1: a sum whose terms are at most 2^126 / rows in size always fits.
TOTAL_BITS = 126
# q passes through the engine's int64 on its way to decimal (rounding gives an integer).
MOST_BITS = 62
# 2^k must be a normal float64: a factor of 2^1023 still scales deviations as small as
# 2^−961 to 62 bits; smaller ones keep fewer bits (and are far below any real data).
LOWEST_EXPONENT, HIGHEST_EXPONENT = -1022, 1023


def bits_for(rows: int, degree: int = 2) -> int:
    """Bits each value may carry so that a sum of ``degree``-th powers over ``rows`` fits."""
    return min(MOST_BITS, (TOTAL_BITS - max(rows, 1).bit_length()) // degree)


@dataclass(frozen=True, slots=True)
class FixedPoint:
    """A power-of-two scale 2^``exponent``: q = round(v · 2^exponent) is an exact integer.

    Example: ``scale = FixedPoint.fit(bound=12.5, rows=10_000)``;
    ``exact_sum(scale.quantise(d) * scale.quantise(d))`` in the engine, then
    ``value_of(total, scale, scale)`` in Python is Σd² as an exact ``Fraction``.
    """

    exponent: int

    @classmethod
    def fit(cls, bound: float, rows: int, degree: int = 2) -> FixedPoint:
        """The finest scale at which sums of ``degree``-th powers of ``rows`` values fit.

        ``bound`` is at least every |v| that will be quantised (an exact bound from the
        rows' min and max, or a caller's bound with a margin for its own rounding).
        """
        if not math.isfinite(bound):
            raise ValueError(f"a fixed-point bound must be finite, not {bound!r}")
        bits = bits_for(rows, degree)
        if bound == 0:  # every value is 0: any scale is exact
            return cls(bits)
        mantissa, top = math.frexp(abs(bound))  # |bound| < 2^top
        if mantissa == 0.5:  # a power of two: |bound| = 2^(top − 1) may scale to 2^bits
            top -= 1
        return cls(max(LOWEST_EXPONENT, min(HIGHEST_EXPONENT, bits - top)))

    @classmethod
    def around(
        cls, reference: float, low: float, high: float, rows: int, shift: float = 0.0
    ) -> FixedPoint:
        """The scale for (value − reference) − shift over ``rows`` values in [low, high].

        Float subtraction is monotone, so no row's deviation, computed by the engine as
        written, lies beyond those of ``low`` and ``high``: the bound is exact.
        """
        bound = max(abs((high - reference) - shift), abs((low - reference) - shift))
        return cls.fit(bound, rows)

    @property
    def factor(self) -> float:
        """2^exponent as a float64 (exact)."""
        return math.ldexp(1.0, self.exponent)

    def quantise(
        self, value: ir.NumericValue, where: ir.BooleanValue | None = None
    ) -> ir.DecimalValue:
        """round(value · 2^exponent) as a 38-digit integer expression (null stays null).

        ``where``: rows outside it become null before scaling, since the bound holds
        only for the rows it was taken over (a value beyond it could overflow).
        """
        return quantise(value, ibis.literal(self.factor, dt.float64), where)

    def quantised(self, value: float) -> Fraction:
        """``quantise`` of one Python float, as the engine computes it: round(v · 2^k) / 2^k.

        The same exact power-of-two product, rounded half away from zero as SQL ROUND is;
        for taking one row's terms back out of an engine's exact sums.
        """
        q = int(Decimal(value * self.factor).quantize(Decimal(1), rounding=ROUND_HALF_UP))
        return Fraction(q) / Fraction(2) ** self.exponent


def quantise(
    value: ir.NumericValue, factor: ir.NumericValue, where: ir.BooleanValue | None = None
) -> ir.DecimalValue:
    """round(value · factor) as a 38-digit integer; ``factor`` may be a per-key column.

    SQL ROUND takes ties away from zero (DuckDB and Spark alike): deterministic on any
    number of threads, and symmetric, so it adds no bias to a sum of symmetric values.
    """
    if where is not None:
        value = ibis.ifelse(where, value, ibis.null(value.type()))
    return (value * factor).round().cast(DECIMAL)


def exact_sum(value: ir.NumericColumn, where: ir.BooleanValue | None = None) -> ir.DecimalScalar:
    """Σ of integer-valued ``value`` (fixed-point or counts), exact, in 38 digits.

    Cast back to decimal(38, 0): Ibis types a decimal sum as scale 2, which would cost
    two of the 38 digits when the result is fetched.
    """
    if value.type() != DECIMAL:
        value = value.cast(DECIMAL)
    return value.sum(where=where).cast(DECIMAL)


def as_integer(total: Decimal | int | None) -> int:
    """An exact sum as a Python int; a sum over no rows (SQL NULL) is 0."""
    return 0 if total is None else int(total)


def value_of(total: Decimal | int | None, *scales: FixedPoint) -> Fraction:
    """The real value of a sum of products of fixed-point values, one scale per factor.

    ``value_of(Σq, s)`` is Σv; ``value_of(Σqx·qy, sx, sy)`` is Σvx·vy; exact.
    """
    exponent = sum(scale.exponent for scale in scales)
    integer = as_integer(total)
    if exponent >= 0:
        return Fraction(integer, 1 << exponent)
    return Fraction(integer << -exponent)


# The five sums a straight line or a correlation needs from a pair of deviations.
PAIR_SUMS = ("sx", "sy", "sxx", "sxy", "syy")


def pair_sums(dx: ir.NumericValue, dy: ir.NumericValue, tag: str) -> dict[str, ir.DecimalScalar]:
    """Exact Σdx, Σdy, Σdx², Σdx·dy, Σdy² of two quantised deviations, named ``tag`` + sum."""
    products = (dx, dy, dx * dx, dx * dy, dy * dy)
    return {f"{tag}{name}": exact_sum(term) for name, term in zip(PAIR_SUMS, products, strict=True)}


def pair_values(
    totals: dict, tag: str, scale_x: FixedPoint, scale_y: FixedPoint
) -> dict[str, Fraction]:
    """The real values of ``pair_sums``' totals, by sum name (``sx`` … ``syy``), exact."""
    scales = ((scale_x,), (scale_y,), (scale_x, scale_x), (scale_x, scale_y), (scale_y, scale_y))
    return {
        name: value_of(totals[f"{tag}{name}"], *factors)
        for name, factors in zip(PAIR_SUMS, scales, strict=True)
    }


def centred_pair(values: dict[str, Fraction], n: int) -> tuple[Fraction, Fraction, Fraction]:
    """Exact Sxx, Sxy, Syy about the means, from ``pair_values``' sums over ``n`` ≥ 1 rows.

    Σd² − (Σd)²/n on exact sums cancels nothing, whatever the shift the deviations share.
    """
    sx, sy = values["sx"], values["sy"]
    return values["sxx"] - sx * sx / n, values["sxy"] - sx * sy / n, values["syy"] - sy * sy / n
