"""Exact money: decimal parsing of amounts and rates, rounding modes, integer cents.

Amounts are exact decimals. A Python float is read through its shortest repr
(``0.065`` means 65/1000, never the binary value nearest to it), so what the
user typed is what is computed with. Inside the schedule engine money is held
as integer cents and rates as exact rationals; this module holds the
conversions and the four rounding rules, both for Python integers and for
numpy ``int64`` arrays.
"""

from __future__ import annotations

import enum
import math
import re
from decimal import Decimal
from fractions import Fraction

import numpy as np
import numpy.typing as npt

from amort.conventions import parse_choice
from amort.errors import InvalidTerms, describe

CENT = Decimal("0.01")

#: Largest principal accepted, in currency units: keeps every balance, payment
#: and product inside exact int64 cents with room to spare.
MAX_AMOUNT = Decimal(10) ** 12


class Rounding(enum.Enum):
    """How a value is rounded to a whole cent.

    ``HALF_UP`` rounds ties away from zero (the default for payments and
    interest, common practice in lending); ``HALF_EVEN`` rounds ties to the
    even cent (banker's rounding); ``UP`` rounds away from zero to the next
    cent; ``DOWN`` truncates towards zero.
    """

    HALF_UP = "half-up"
    HALF_EVEN = "half-even"
    UP = "up"
    DOWN = "down"

    @classmethod
    def parse(cls, value: Rounding | str, field: str = "rounding") -> Rounding:
        """Return the rounding mode named by ``value`` (``"half-up"``, ...)."""
        return parse_choice(cls, value, field)

    @property
    def half_unit(self) -> bool:
        """True for the two modes whose error is at most half a cent."""
        return self in (Rounding.HALF_UP, Rounding.HALF_EVEN)

    @property
    def max_error_cents(self) -> Fraction:
        """The largest |rounded - exact| this mode allows, in cents."""
        return Fraction(1, 2) if self.half_unit else Fraction(1)


_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?$")


#: A number whose commas group thousands: 1,234,567.89 (not 6,5 or 1,23).
_THOUSANDS = re.compile(r"^[+-]?\d{1,3}(,\d{3})+(\.\d*)?%?$")


def parse_number(value: object, field: str) -> Decimal:
    """Return ``value`` as an exact finite decimal; floats through their shortest repr.

    >>> parse_number(0.065, "rate")
    Decimal('0.065')
    """
    if isinstance(value, bool):
        raise InvalidTerms(f"{field!r} must be a number (got {describe(value)})")
    if isinstance(value, Decimal):
        result = value
    elif isinstance(value, int):
        result = Decimal(value)
    elif isinstance(value, float):
        if not math.isfinite(value):
            raise InvalidTerms(f"{field!r} must be a finite number (got {value})")
        # float(value): numpy.float64 is a float whose repr is "np.float64(...)"
        result = Decimal(repr(float(value)))
    elif isinstance(value, Fraction):
        raise InvalidTerms(f"{field!r} must be a decimal number, not a fraction (got {value})")
    elif isinstance(value, (np.integer, np.floating)):
        return parse_number(value.item(), field)
    elif isinstance(value, str):
        text = value.strip().replace("_", "")
        if "," in text and not _THOUSANDS.match(text):
            # "6,5" must not silently read as 65: commas only group thousands.
            raise InvalidTerms(
                f"{field!r} must be a number with a dot for decimals; commas may only "
                f"group thousands, as in 250,000.00 (got {describe(value)})"
            )
        text = text.replace(",", "")
        if not _NUMBER.match(text):
            raise InvalidTerms(f"{field!r} must be a number (got {describe(value)})")
        result = Decimal(text)
    else:
        raise InvalidTerms(f"{field!r} must be a number (got {describe(value)})")
    if not result.is_finite():
        raise InvalidTerms(f"{field!r} must be a finite number (got {describe(value)})")
    return result


def parse_amount(value: object, field: str = "amount", *, allow_zero: bool = False) -> Decimal:
    """Return a money amount as an exact :class:`~decimal.Decimal` in currency units.

    Accepts int, float (through its shortest repr), Decimal and strings such as
    ``"250000"``, ``"250,000.00"`` or ``"1_000"``. The amount must be whole
    cents, positive (or zero when ``allow_zero``) and at most 10**12.

    >>> parse_amount(0.1) + parse_amount("0.2")
    Decimal('0.3')
    >>> parse_amount("250,000")
    Decimal('250000')
    """
    amount = parse_number(value, field)
    if amount < 0 or (amount == 0 and not allow_zero):
        rule = ">= 0" if allow_zero else "> 0"
        raise InvalidTerms(f"{field!r} must be {rule} (got {describe(value)})")
    if amount > MAX_AMOUNT:
        raise InvalidTerms(
            f"{field!r} must be at most {MAX_AMOUNT:,} currency units (got {describe(value)})"
        )
    if amount != amount.quantize(CENT, rounding="ROUND_DOWN"):
        raise InvalidTerms(f"{field!r} must be a whole number of cents (got {describe(value)})")
    return amount


def parse_rate(value: object, field: str = "annual_rate", *, percent: bool = False) -> Decimal:
    """Return a rate as an exact decimal fraction (``0.065`` for 6.5 %).

    A string ending in ``%`` is always read as percent (``"6.5%"``). A bare
    number is a decimal fraction, or percent when ``percent`` is true (the CLI
    reads ``6.5`` as 6.5 %). In the Python API a bare number above 1 is
    refused, because ``annual_rate=6.5`` is far more often a slip for 6.5 %
    than a 650 % loan; write ``"650%"`` for such a rate.

    >>> parse_rate("6.5%")
    Decimal('0.065')
    >>> parse_rate(0.065)
    Decimal('0.065')
    >>> parse_rate("6.5", percent=True)
    Decimal('0.065')
    """
    is_percent = percent
    text = value
    if isinstance(value, str):
        text = value.strip()
        if text.endswith("%"):
            text = text[:-1].strip()
            is_percent = True
    rate = parse_number(text, field)
    if rate < 0:
        raise InvalidTerms(f"{field!r} must be >= 0 (got {describe(value)})")
    if is_percent:
        return rate / 100
    if rate > 1:
        raise InvalidTerms(
            f"{field!r} is a decimal fraction and {describe(value)} would mean "
            f"{rate * 100:f} % a year; write {str(rate) + '%'!r} or {rate / 100} instead"
        )
    return rate


def to_cents(amount: Decimal) -> int:
    """Return a whole-cent decimal amount as an integer number of cents.

    >>> to_cents(Decimal("1580.17"))
    158017
    """
    cents = amount * 100
    if cents != cents.to_integral_value():
        raise InvalidTerms(f"amount {amount} is not a whole number of cents")
    return int(cents)


def from_cents(cents: int) -> Decimal:
    """Return integer cents as an exact decimal in currency units.

    >>> from_cents(158017)
    Decimal('1580.17')
    """
    return (Decimal(int(cents)) / 100).quantize(CENT)


def round_fraction(value: Fraction, mode: Rounding) -> int:
    """Return the exact rational ``value`` rounded to an integer under ``mode``.

    >>> round_fraction(Fraction(5, 2), Rounding.HALF_UP)
    3
    >>> round_fraction(Fraction(5, 2), Rounding.HALF_EVEN)
    2
    >>> round_fraction(Fraction(-5, 2), Rounding.HALF_UP)
    -3
    """
    return round_ratio(value.numerator, value.denominator, mode)


def round_ratio(numerator: int, denominator: int, mode: Rounding) -> int:
    """Return ``numerator / denominator`` (denominator > 0) rounded under ``mode``."""
    if denominator <= 0:
        raise ValueError("denominator must be > 0")
    sign = -1 if numerator < 0 else 1
    q, r = divmod(abs(numerator), denominator)
    if mode is Rounding.DOWN:
        pass
    elif mode is Rounding.UP:
        q += r > 0
    elif mode is Rounding.HALF_UP:
        q += 2 * r >= denominator
    else:  # HALF_EVEN
        twice = 2 * r
        q += twice > denominator or (twice == denominator and q % 2 == 1)
    return sign * q


def round_ratio_array(
    numerator: npt.NDArray[np.int64],
    denominator: npt.NDArray[np.int64] | int,
    mode: Rounding,
) -> npt.NDArray[np.int64]:
    """Vectorised :func:`round_ratio` for non-negative int64 numerators.

    The caller guarantees ``numerator >= 0`` and ``denominator > 0``; the
    schedule engine only rounds non-negative interest amounts.
    """
    q, r = np.divmod(numerator, denominator)
    return q + round_up_flags(q, r, denominator, mode)


def round_up_flags(
    quotient: npt.NDArray[np.int64],
    remainder: npt.NDArray[np.int64],
    denominator: npt.NDArray[np.int64] | int,
    mode: Rounding,
) -> npt.NDArray[np.int64]:
    """Return 1 where ``quotient + remainder/denominator`` rounds up, else 0.

    ``0 <= remainder < denominator``; the comparison ``2 r >= d`` is written
    ``r >= d - r`` so that it cannot overflow.
    """
    if mode is Rounding.DOWN:
        return np.zeros_like(quotient)
    if mode is Rounding.UP:
        return (remainder > 0).astype(np.int64)
    other = denominator - remainder
    if mode is Rounding.HALF_UP:
        return (remainder >= other).astype(np.int64)
    return ((remainder > other) | ((remainder == other) & (quotient % 2 == 1))).astype(np.int64)
