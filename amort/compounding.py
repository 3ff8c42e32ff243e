"""Compounding conventions: how many times a year interest is added, and exact rate input.

A :class:`Compounding` is a whole number of compoundings a year, or continuous
(``per_year=None``). :func:`exact_rate` reads a rate as an exact fraction
(floats through their repr, ``"6.5%"`` strings). The conversions built on
these live in :mod:`amort.rates`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from typing import Any, ClassVar

import numpy as np

from amort.conventions import Frequency
from amort.errors import InvalidTerms, describe
from amort.money import parse_number

#: The most compoundings (or payments) a year accepted; beyond it, use continuous
#: compounding (which differs from a million a year by about j^2 / 2,000,000).
MAX_PER_YEAR = 1_000_000

#: The largest numerator or denominator of the power ``m/p`` computed exactly;
#: 366 covers daily compounding with annual payments. Above it the rational
#: answer would have thousands of digits and the nearest double is returned.
MAX_EXACT_POWER = 366

#: Significant digits kept beyond those lost to cancellation in decimal work.
_GUARD_DIGITS = 40

#: Exact inputs with more bits than this in numerator or denominator are refused,
#: and exact answers that would need more are given as the nearest double: about
#: 3,900 digits, under Python's limit on printing integers (4,300 digits), so every
#: exact rate can be shown and fed back in. A double read through its repr needs
#: at most 1,100 bits.
_MAX_EXACT_BITS = 13_000

#: The exact and nearest-double functions take rates of size at most MAX_RATE
#: (100,000,000 %) and, unless zero, at least MIN_RATE (below every double). The
#: bounds keep exact powers and decimal precision (which grows with the digits a
#: tiny rate loses to cancellation) to sizes computed in milliseconds.
MAX_RATE = 10**6
MIN_RATE = Fraction(1, 10**330)

_CONTINUOUS_NAMES = ("continuous", "continuously")
_NAMES: dict[int, str] = {f.per_year: f.value for f in Frequency} | {365: "daily"}

#: What a rate argument may be: exact types, floats (read through their repr), "6.5%".
RateLike = Fraction | Decimal | int | float | str


@dataclass(frozen=True)
class Compounding:
    """How often interest compounds: ``per_year`` times a year, or continuously (``None``).

    ``Compounding(12)`` is monthly compounding; :attr:`CONTINUOUS` is the limit.
    Names (see :meth:`parse`): the payment frequencies of
    :class:`~amort.conventions.Frequency` (``"annual"`` 1, ``"semiannual"`` 2,
    ``"quarterly"`` 4, ``"bimonthly"`` 6, ``"monthly"`` 12, ``"semimonthly"``
    24, ``"biweekly"`` 26, ``"weekly"`` 52, with their aliases such as
    ``"fortnightly"``), ``"daily"`` 365 (a 365-day year, common practice) and
    ``"continuous"``. There is deliberately no ``"none"`` or ``"simple"``: in
    :func:`periodic_rate` the absence of a compounding (``None``) means that
    interest compounds with each payment, ``i = j/p``.

    >>> Compounding.parse("monthly")
    Compounding(per_year=12)
    >>> Compounding.parse("continuous").continuous
    True
    >>> str(Compounding(8))
    '8 times a year'
    """

    per_year: int | None

    ANNUAL: ClassVar[Compounding]
    SEMIANNUAL: ClassVar[Compounding]
    QUARTERLY: ClassVar[Compounding]
    MONTHLY: ClassVar[Compounding]
    WEEKLY: ClassVar[Compounding]
    DAILY: ClassVar[Compounding]
    CONTINUOUS: ClassVar[Compounding]

    def __post_init__(self) -> None:
        m = self.per_year
        if m is not None and (type(m) is not int or not 1 <= m <= MAX_PER_YEAR):
            raise InvalidTerms(_compounding_rule("compounding", m))

    @property
    def continuous(self) -> bool:
        """True for continuous compounding (growth ``exp(r t)``)."""
        return self.per_year is None

    @property
    def name(self) -> str:
        """The name :meth:`parse` reads back: ``"monthly"``, ``"continuous"`` or ``"8"``."""
        if self.per_year is None:
            return "continuous"
        return _NAMES.get(self.per_year, str(self.per_year))

    def __str__(self) -> str:
        if self.per_year is None:
            return "continuous"
        if self.per_year in _NAMES:
            return f"{_NAMES[self.per_year]} ({self.per_year} a year)"
        return f"{self.per_year} times a year"

    @classmethod
    def parse(cls, value: object, field: str = "compounding") -> Compounding:
        """Return the compounding that ``value`` names.

        Accepts a :class:`Compounding`, a :class:`~amort.conventions.Frequency`,
        a whole number of times a year from 1 to :data:`MAX_PER_YEAR` (``12``,
        ``12.0``, ``"12"``), a name (``"monthly"``, ``"daily"``, ...) or
        ``"continuous"``. Anything else is :class:`~amort.errors.InvalidTerms`.

        >>> Compounding.parse("semi-annual")
        Compounding(per_year=2)
        >>> Compounding.parse(365) == Compounding.DAILY
        True
        >>> Compounding.parse(2.5)
        Traceback (most recent call last):
        ...
        amort.errors.InvalidTerms: 'compounding' must be a whole number ... (got 2.5)
        """
        if isinstance(value, Compounding):
            return value
        if isinstance(value, Frequency):
            return cls(value.per_year)
        if isinstance(value, str):
            text = value.strip().lower().replace("_", "-").replace(" ", "-")
            if text in _CONTINUOUS_NAMES:
                return cls.CONTINUOUS
            if text == "daily":
                return cls.DAILY
            if text[:1].isalpha():
                try:
                    return cls(Frequency.parse(text).per_year)
                except InvalidTerms:
                    raise InvalidTerms(_compounding_rule(field, value)) from None
        return cls(_whole_per_year(value, field, rule=_compounding_rule))


Compounding.ANNUAL = Compounding(1)
Compounding.SEMIANNUAL = Compounding(2)
Compounding.QUARTERLY = Compounding(4)
Compounding.MONTHLY = Compounding(12)
Compounding.WEEKLY = Compounding(52)
Compounding.DAILY = Compounding(365)
Compounding.CONTINUOUS = Compounding(None)

#: What a compounding argument may be (see :meth:`Compounding.parse`).
CompoundingLike = Compounding | Frequency | int | str


def _compounding_rule(field: str, value: object) -> str:
    return (
        f"{field!r} must be a whole number of times a year from 1 to {MAX_PER_YEAR:,}, "
        f"a name such as 'monthly' or 'daily', or 'continuous' (got {describe(value)})"
    )


def _per_year_rule(field: str, value: object) -> str:
    return (
        f"{field!r} must be a whole number of payments a year from 1 to {MAX_PER_YEAR:,} "
        f"or a payment frequency such as 'monthly' (got {describe(value)})"
    )


def _whole_per_year(value: object, field: str, *, rule: Any) -> int:
    """Return ``value`` as a whole number in 1..MAX_PER_YEAR, else raise ``rule(field, value)``."""
    if isinstance(value, bool):
        raise InvalidTerms(rule(field, value))
    if isinstance(value, (int, np.integer)):
        number = int(value)
    else:
        try:
            exact = (
                Fraction(parse_number(value, field)) if not isinstance(value, Fraction) else value
            )
        except InvalidTerms:
            raise InvalidTerms(rule(field, value)) from None
        if exact.denominator != 1:
            raise InvalidTerms(rule(field, value))
        number = exact.numerator
    if not 1 <= number <= MAX_PER_YEAR:
        raise InvalidTerms(rule(field, value))
    return number


def _payments_per_year(value: object, field: str = "per_year") -> int:
    """Return payments a year from an int or a :class:`~amort.conventions.Frequency`."""
    if isinstance(value, Frequency):
        return value.per_year
    if isinstance(value, str) and value.strip()[:1].isalpha():
        try:
            return Frequency.parse(value, field).per_year
        except InvalidTerms:
            raise InvalidTerms(_per_year_rule(field, value)) from None
    return _whole_per_year(value, field, rule=_per_year_rule)


def exact_rate(value: object, field: str = "rate", *, percent: bool = False) -> Fraction:
    """Return a rate as an exact fraction (a decimal fraction: ``0.065`` is 6.5 %).

    Accepts :class:`~fractions.Fraction`, :class:`~decimal.Decimal`, int, float
    (read through its shortest repr, as everywhere in amort: ``0.065`` is
    13/200) and strings (``"0.065"``, ``"6.5%"``; a bare number is percent when
    ``percent`` is true). Any sign and size is returned; the conversions check
    their own domain.

    >>> exact_rate(0.065)
    Fraction(13, 200)
    >>> exact_rate("6.5%") == exact_rate("6.5", percent=True) == Fraction(13, 200)
    True
    """
    if isinstance(value, Fraction):
        result = value
    else:
        is_percent = percent
        text = value
        if isinstance(value, str):
            text = value.strip()
            if text.endswith("%"):
                text = text[:-1].strip()
                is_percent = True
        result = Fraction(parse_number(text, field))
        if is_percent:
            result /= 100
    if max(result.numerator.bit_length(), result.denominator.bit_length()) > _MAX_EXACT_BITS:
        raise InvalidTerms(
            f"{field!r} must have at most about 3,900 digits in its numerator and "
            f"denominator (got a fraction of about {_digits(result)} digits)"
        )
    return result


def _digits(q: Fraction) -> int:
    """About how many decimal digits the larger of numerator and denominator has."""
    bits = max(abs(q.numerator).bit_length(), q.denominator.bit_length())
    return math.ceil(bits * math.log10(2))
