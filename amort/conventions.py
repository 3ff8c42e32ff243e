"""Payment frequencies and payment timing, parsed once at the boundary."""

from __future__ import annotations

import enum

from amort.errors import InvalidTerms, describe


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
        if isinstance(value, Frequency):
            return value
        text = str(value).strip().lower().replace("_", "-")
        text = _ALIASES.get(text, text)
        for freq in cls:
            if freq.value == text:
                return freq
        valid = ", ".join(repr(f.value) for f in cls)
        raise InvalidTerms(f"{field!r} must be one of {valid} (got {describe(value)})")


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
