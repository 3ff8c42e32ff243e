"""Payment frequencies and payment timing, parsed once at the boundary."""

from __future__ import annotations

import enum
from collections.abc import Mapping
from typing import TypeVar

from amort.errors import InvalidTerms, describe

_Choice = TypeVar("_Choice", bound=enum.Enum)


def parse_choice(
    kind: type[_Choice],
    value: _Choice | str,
    field: str,
    aliases: Mapping[str, str] | None = None,
) -> _Choice:
    """Return the member of the enum ``kind`` whose value ``value`` names.

    Case, surrounding space, underscores and inner spaces are forgiven
    (``"Half_Up"`` and ``"half up"`` name ``"half-up"``); ``aliases`` maps other
    spellings to a member's value. Anything else is one sentence naming the
    field, the valid values and what was given.

    >>> parse_choice(Frequency, "Semi Annual", "frequency", _ALIASES)
    <Frequency.SEMIANNUAL: 'semiannual'>
    """
    if isinstance(value, kind):
        return value
    if isinstance(value, str):
        text = "-".join(value.strip().lower().replace("_", " ").replace("-", " ").split())
        text = (aliases or {}).get(text, text)
        for member in kind:
            if member.value == text:
                return member
    valid = ", ".join(repr(m.value) for m in kind)
    raise InvalidTerms(f"{field!r} must be one of {valid} (got {describe(value)})")


class Frequency(enum.Enum):
    """How often payments fall due; the value is the name used in files and the CLI."""

    WEEKLY = "weekly"
    BIWEEKLY = "biweekly"
    SEMIMONTHLY = "semimonthly"
    MONTHLY = "monthly"
    BIMONTHLY = "bimonthly"
    QUARTERLY = "quarterly"
    SEMIANNUAL = "semiannual"
    ANNUAL = "annual"

    @property
    def per_year(self) -> int:
        """Payments in one year (52 for weekly, 26 biweekly, 24 semimonthly, ...)."""
        return _PER_YEAR[self]

    @classmethod
    def parse(cls, value: Frequency | str, field: str = "frequency") -> Frequency:
        """Return the frequency named by ``value`` (``"monthly"``, ``"annual"``, ...)."""
        return parse_choice(cls, value, field, _ALIASES)


_PER_YEAR = {
    Frequency.WEEKLY: 52,
    Frequency.BIWEEKLY: 26,
    Frequency.SEMIMONTHLY: 24,
    Frequency.MONTHLY: 12,
    Frequency.BIMONTHLY: 6,
    Frequency.QUARTERLY: 4,
    Frequency.SEMIANNUAL: 2,
    Frequency.ANNUAL: 1,
}

_ALIASES = {
    "fortnightly": "biweekly",
    "semi-monthly": "semimonthly",
    "semi-annual": "semiannual",
    "yearly": "annual",
    "annually": "annual",
    "half-yearly": "semiannual",
    "semi-annually": "semiannual",
    "bi-weekly": "biweekly",
    "bi-monthly": "bimonthly",
}


class Timing(enum.Enum):
    """When in each period the payment falls.

    ``ARREARS``: at the end of the period (an annuity-immediate, the loan
    default), ``B_k = a B_{k-1} - P``. ``ADVANCE``: at the start (an
    annuity-due, common for leases), ``B_k = a (B_{k-1} - P)``.
    """

    ARREARS = "arrears"
    ADVANCE = "advance"

    @classmethod
    def parse(cls, value: Timing | str | bool, field: str = "timing") -> Timing:
        """Return the timing named by ``value``; ``True`` means advance."""
        if isinstance(value, Timing):
            return value
        if isinstance(value, bool):
            return cls.ADVANCE if value else cls.ARREARS
        text = str(value).strip().lower()
        for timing in cls:
            if timing.value == text:
                return timing
        if text in ("due", "in-advance", "beginning", "start"):
            return cls.ADVANCE
        if text in ("immediate", "in-arrears", "end"):
            return cls.ARREARS
        raise InvalidTerms(f"{field!r} must be 'arrears' or 'advance' (got {describe(value)})")


class Structure(enum.Enum):
    """How the principal is repaid.

    ``LEVEL``: a level payment (after any interest-only periods). ``EQUAL_PRINCIPAL``:
    the same principal every period plus that period's interest (straight-line).
    ``BULLET``: interest only every period, all principal with the last payment.
    """

    LEVEL = "level"
    EQUAL_PRINCIPAL = "equal-principal"
    BULLET = "bullet"

    @classmethod
    def parse(cls, value: Structure | str, field: str = "structure") -> Structure:
        """Return the structure named by ``value`` (``"straight-line"`` means equal principal)."""
        return parse_choice(
            cls, value, field, {"straight-line": "equal-principal", "linear": "equal-principal"}
        )
