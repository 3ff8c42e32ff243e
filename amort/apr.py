"""Disclosure rates: the US APR (Regulation Z, Appendix J) and the EU APRC (2008/48/EC Annex I).

**US APR, actuarial method** (12 CFR 1026, Appendix J (b)): the *unit-period* is
the common period (occurring more than once), not over a year, that occurs most
often, a tie to the smaller; with none, the average period rounded to the
nearest standard interval (:func:`unit_period`). All months are equal, date to
same date or month-end to month-end. Each flow's time is counted back from its
date to the start, whole unit-periods and a fraction earning simple interest
(:func:`count_back`), and the general equation is solved for the unit-period
rate ``i``; APR = ``i x unit-periods a year``:

    sum_k A_k / ((1 + e_k i)(1 + i)^q_k) = sum_j P_j / ((1 + f_j i)(1 + i)^t_j)

The US Rule (Appendix J (a)(3)) is the option: simple interest each payment
period, interest never added to principal. Sourcing: the method, the month
rules and the tolerances of 12 CFR 1026.22(a) (:class:`Classification`) [text];
the fraction counting of (b)(5) [memory]; the (c)(1) examples are reproduced in
``tests/reference``.

**EU APRC** (Directive 2008/48/EC Annex I; 2014/17/EU the same) [text]:
``sum_k C_k (1 + X)^-t_k = sum_l D_l (1 + X)^-s_l``, ``X`` effective a year, time
in years from the first drawdown (:func:`eu_year_fraction`), rounded half-up to
at least one decimal.

Time factors are exact fractions; the root is float64 (:mod:`amort.flows`) and,
within 1e-9 of a rounding tie, the side of the tie is decided in 60-digit
decimals, so the figure disclosed is the correctly rounded one.

>>> flows = Flows.of([("1978-01-10", "5000", "advance")]
...     + [(f"{1978 + (k + 1) // 12}-{(k + 1) % 12 + 1:02d}-10", "230", "payment")
...        for k in range(24)])
>>> regz_apr(flows).apr                  # Appendix J (c)(1)(i): 9.69 %
Decimal('9.69')
"""

from __future__ import annotations

import enum
import itertools
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from decimal import Decimal, localcontext
from fractions import Fraction
from typing import Any, NoReturn

from amort.calendar import add_months, days_in_month, is_month_end
from amort.conventions import Frequency, parse_choice
from amort.errors import InvalidTerms, NoSolution
from amort.flows import (
    FlowKind,
    Flows,
    Roots,
    equation_roots,
    exact_value,
    round_rate,
    us_rule_balance,
    us_rule_rate,
)

__all__ = [
    "AprResult",
    "Classification",
    "Method",
    "Standard",
    "TimedFlow",
    "UnitPeriod",
    "YearBasis",
    "classify",
    "count_back",
    "eu_aprc",
    "eu_rate",
    "eu_year_fraction",
    "regz_apr",
    "regz_rate",
    "unit_period",
]

# Highest rates searched: a unit-period rate of 1000 %, an annual effective rate of 1,000,000 %.
_HIGH_UNIT = 10.0
_HIGH_YEAR = 1e4


class Standard(enum.Enum):
    """Which regulator's rate: US Regulation Z APR or the EU Consumer Credit Directive APRC."""

    US_REGZ = "us-regz"
    EU_CCD = "eu-ccd"

    @classmethod
    def parse(cls, value: Standard | str, field: str = "standard") -> Standard:
        aliases = {"regz": "us-regz", "reg-z": "us-regz", "us": "us-regz", "eu": "eu-ccd"}
        return parse_choice(cls, value, field, aliases)


class Method(enum.Enum):
    """How Regulation Z's rate treats interest: actuarial (Appendix J) or the US Rule."""

    ACTUARIAL = "actuarial"
    US_RULE = "us-rule"

    @classmethod
    def parse(cls, value: Method | str, field: str = "method") -> Method:
        return parse_choice(cls, value, field, {"united-states-rule": "us-rule"})


class YearBasis(enum.Enum):
    """How the EU Annex I counts time in years (see the module documentation)."""

    DAYS = "days"
    DAYS_365 = "365-days"
    MONTHS = "months"
    WEEKS = "weeks"

    @classmethod
    def parse(cls, value: YearBasis | str, field: str = "year_basis") -> YearBasis:
        return parse_choice(cls, value, field, {"365": "365-days", "equal-months": "months"})


# -- unit-periods -----------------------------------------------------------------------------

_KINDS = {"day": 365, "week": 52, "semimonth": 1, "month": 12}


@dataclass(frozen=True)
class UnitPeriod:
    """A unit-period: ``count`` days, weeks or months, or one semimonth.

    >>> UnitPeriod("month", 3).per_year, UnitPeriod("month", 3).name
    (Fraction(4, 1), '3 months')
    """

    kind: str
    count: int = 1

    def __post_init__(self) -> None:
        if self.kind not in _KINDS:
            raise InvalidTerms(f"'unit' must be one of {tuple(_KINDS)} (got {self.kind!r})")
        if not 1 <= self.count <= _KINDS[self.kind]:
            raise InvalidTerms(
                f"a unit-period of {self.kind}s must be 1 to {_KINDS[self.kind]} (got {self.count})"
            )

    @classmethod
    def for_frequency(cls, frequency: Frequency | str) -> UnitPeriod:
        """The unit-period of an undated loan that pays ``frequency``."""
        freq = Frequency.parse(frequency)
        if freq is Frequency.SEMIMONTHLY:
            return cls("semimonth")
        if freq in (Frequency.WEEKLY, Frequency.BIWEEKLY):
            return cls("week", 52 // freq.per_year)
        return cls("month", 12 // freq.per_year)

    @property
    def per_year(self) -> Fraction:
        """Unit-periods in a year: 365 days, 52 weeks, 24 semimonths or 12 months."""
        return {"day": Fraction(365), "week": Fraction(52), "semimonth": Fraction(24)}.get(
            self.kind, Fraction(12)
        ) / (1 if self.kind == "semimonth" else self.count)

    @property
    def name(self) -> str:
        if (self.kind, self.count) == ("month", 12):
            return "year"
        return self.kind if self.count == 1 else f"{self.count} {self.kind}s"


def _length(label: tuple[str, int]) -> Fraction:
    kind, count = label
    size = {"day": Fraction(1), "week": Fraction(7), "semimonth": Fraction(365, 24)}
    return size.get(kind, Fraction(365, 12)) * count


def _nominal_day(start: date, end: date) -> int:
    """The day of the month ``end`` stands for when months are counted back from it."""
    if not is_month_end(end):
        return end.day
    if is_month_end(start):
        return 31  # month-end to month-end
    return max(end.day, start.day)  # the last of February in a series on the 29th or 30th


def _months_before(start: date, end: date, months: int) -> date:
    index = end.year * 12 + end.month - 1 - months
    year, month0 = divmod(index, 12)
    return date(year, month0 + 1, min(_nominal_day(start, end), days_in_month(year, month0 + 1)))


def _count_months(start: date, end: date) -> tuple[int, int]:
    """Whole months counted back from ``end`` without passing ``start``, and the days left."""
    months = (end.year - start.year) * 12 + end.month - start.month
    if _months_before(start, end, months) < start:
        months -= 1
    return months, (_months_before(start, end, months) - start).days


def count_back(start: date, end: date, unit: UnitPeriod) -> tuple[int, Fraction]:
    """Return the whole unit-periods from ``start`` to ``end`` counted back from ``end``, and
    the fraction left (Appendix J (b)(5) [memory]): the days left over 30 (a month), over
    15 (a semimonth), ``(30 months + days) / (30 x months)`` for a multiple of a month,
    over the unit's days (days, weeks); for a year the months over 12, or the days over
    365 when not whole months. A series on the 29th or 30th uses the last of February.

    >>> count_back(date(1978, 2, 10), date(1978, 4, 1), UnitPeriod("month"))   # (c)(1)(ii)
    (1, Fraction(19, 30))
    >>> count_back(date(1978, 5, 23), date(1978, 10, 1), UnitPeriod("month", 3))  # (c)(1)(iv)
    (1, Fraction(13, 30))
    """
    if end < start:
        raise InvalidTerms(f"the date {end} comes before the start of the term {start}")
    if unit.kind in ("day", "week"):
        size = unit.count * (7 if unit.kind == "week" else 1)
        whole, rest = divmod((end - start).days, size)
        return whole, Fraction(rest, size)
    months, days = _count_months(start, end)
    if unit.kind == "semimonth":
        extra = 1 if days >= 15 else 0
        return 2 * months + extra, Fraction(days - 15 * extra, 15)
    whole, left = divmod(months, unit.count)
    if unit.count == 12 and days:
        stop = _months_before(start, end, 12 * whole)
        return whole, Fraction((stop - start).days, 365)
    return whole, Fraction(30 * left + days, 30 * unit.count)


def _label(start: date, end: date) -> tuple[str, int]:
    months, days = _count_months(start, end)
    if days == 0 and months >= 1:
        return ("month", months)
    span = (end - start).days
    return ("week", span // 7) if span % 7 == 0 else ("day", span)


def _chain_labels(start: date, dates: Sequence[date]) -> list[tuple[str, int]]:
    """Labels of the periods start -> d_0 -> d_1 ...; a run on two days a month is semimonths."""
    chain = [start, *dates] if dates and dates[0] > start else list(dates)
    labels = [_label(a, b) for a, b in itertools.pairwise(chain)]
    for k in range(len(chain) - 2):
        gap = (chain[k + 1] - chain[k]).days
        if 10 <= gap <= 20 and _count_months(chain[k], chain[k + 2]) == (1, 0):
            labels[k] = labels[k + 1] = ("semimonth", 1)
    return labels


def unit_period(start: date, payments: Sequence[date], advances: Sequence[date] = ()) -> UnitPeriod:
    """Return the unit-period of a transaction (Appendix J (b)(4)).

    start: the beginning of the term (the first advance); payments, advances: the
    dates of the payments and of any later advances.

    >>> unit_period(date(1978, 5, 23), [add_months(date(1978, 10, 1), 3 * k) for k in range(40)])
    UnitPeriod(kind='month', count=3)
    """
    pay = sorted(set(payments))
    later = sorted({d for d in advances if d > start})
    if not pay:
        raise InvalidTerms("a transaction needs at least one payment")
    if len(pay) == 1 and not later:
        # A single advance and a single payment: the term itself, up to a year ((b)(4)(ii)).
        months, days = _count_months(start, pay[0])
        span = (pay[0] - start).days
        if days == 0 and 1 <= months <= 12:
            return UnitPeriod("month", months)
        return (
            UnitPeriod("day", span) if 1 <= span <= 365 and months < 12 else UnitPeriod("month", 12)
        )
    labels = _chain_labels(start, pay) + _chain_labels(start, later)
    year = Fraction(365)
    counts = Counter(label for label in labels if _length(label) <= year)
    common = [label for label, count in counts.items() if count >= 2]
    if common:
        best = max(common, key=lambda label: (counts[label], -_length(label)))
        return UnitPeriod(*best)
    average = sum((_length(label) for label in labels), Fraction(0)) / len(labels)
    standard = [("day", 1), ("semimonth", 1)]
    standard += [("week", k) for k in range(1, 53)] + [("month", m) for m in range(1, 13)]
    best = min(standard, key=lambda label: (abs(_length(label) - average), _length(label)))
    return UnitPeriod(*best)


# -- results -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class TimedFlow:
    """One flow placed in time: whole unit-periods and a fraction (US), or years (EU)."""

    kind: FlowKind
    amount: Decimal
    on: date | None
    period: int | None
    whole: int
    fraction: Fraction
    years: Fraction | None = None

    @property
    def signed(self) -> Decimal:
        return self.amount if self.kind is FlowKind.PAYMENT else -self.amount


@dataclass(frozen=True)
class Classification:
    """Regular or irregular under 12 CFR 1026.22(a), and the tolerance that follows."""

    regular: bool
    features: tuple[str, ...]

    @property
    def tolerance(self) -> Decimal:
        """Percentage points either side: 1/8 regular, 1/4 irregular."""
        return Decimal("0.125") if self.regular else Decimal("0.25")

    @property
    def rule(self) -> str:
        return "12 CFR 1026.22(a)(2)" if self.regular else "12 CFR 1026.22(a)(3)"


@dataclass(frozen=True)
class AprResult:
    """A disclosure rate and how it was found.

    apr: percent a year as disclosed (half-up to ``decimals`` places), Decimal.
    apr_unrounded: percent a year, float64. US: nominal (unit-period rate x
        unit-periods a year); EU: effective.
    unit_period, unit_period_rate (decimal fraction), method: US only.
    year_basis: EU only. classification: US only (regular or irregular, tolerance).
    roots: every rate (percent a year) that solves the equation; more than one
        makes the answer ambiguous and the smallest >= 0 is taken.
    flows: the flows as placed in time, for the record.
    """

    standard: Standard
    apr: Decimal
    apr_unrounded: float
    decimals: int
    roots: tuple[float, ...]
    flows: tuple[TimedFlow, ...]
    method: Method | None = None
    unit_period: UnitPeriod | None = None
    unit_period_rate: float | None = None
    classification: Classification | None = None
    year_basis: YearBasis | None = None

    @property
    def ambiguous(self) -> bool:
        return len(self.roots) > 1

    def as_dict(self) -> dict[str, Any]:
        """Return the figures for JSON: ``apr`` (rounded percent) and ``apr_unrounded`` first."""
        rules, unit = self.classification, self.unit_period
        return {
            "apr": self.apr,
            "apr_unrounded": self.apr_unrounded,
            "decimals": self.decimals,
            "standard": self.standard.value,
            "method": None if self.method is None else self.method.value,
            "year_basis": None if self.year_basis is None else self.year_basis.value,
            "unit_period": None if unit is None else unit.name,
            "unit_periods_per_year": None if unit is None else unit.per_year,
            "unit_period_rate": self.unit_period_rate,
            "transaction": None if rules is None else ("regular" if rules.regular else "irregular"),
            "irregular_features": None if rules is None else list(rules.features),
            "tolerance_points": None if rules is None else rules.tolerance,
            "tolerance_rule": None if rules is None else rules.rule,
            "roots": list(self.roots),
            "ambiguous": self.ambiguous,
        }


# -- the Regulation Z rate ---------------------------------------------------------------------


def _decimals(value: object, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, int) or not minimum <= value <= 8:
        raise InvalidTerms(f"'decimals' must be a whole number from {minimum} to 8 (got {value!r})")
    return value


def _starting(flows: Flows) -> date:
    first = flows.items[0]
    if first.kind is not FlowKind.ADVANCE:
        raise InvalidTerms(
            f"a payment on {first.on} comes before the first advance on "
            f"{flows.advances[0].on}; the term begins with the first advance"
        )
    return first.on


def classify(advances: int, regular_periods: bool, amounts: Sequence[Decimal]) -> Classification:
    """Return the 12 CFR 1026.22(a) class of a transaction with ``advances`` advance dates,
    payment periods all equal to the unit-period (the first excepted) or not, and the
    payment ``amounts`` in date order (the first and final may differ)."""
    checks = (
        ("multiple advances", advances > 1),
        ("irregular payment periods", not regular_periods),
        ("irregular payment amounts", len(set(amounts[1:-1])) > 1),
    )
    features = tuple(name for name, found in checks if found)
    return Classification(not features, features)


def regz_apr(flows: Flows, *, method: Method | str = "actuarial", decimals: int = 2) -> AprResult:
    """Return the Regulation Z APR of dated flows (Appendix J; see the module documentation).

    The term begins on the first advance. Raises :class:`~amort.errors.NoSolution`
    when no rate >= 0 balances the flows (payments short of the advances: the
    negative rate is named in the message).
    """
    start = _starting(flows)
    paid = flows.by_date(FlowKind.PAYMENT)
    pay_dates = [d for d, _ in paid]
    adv_dates = [d for d, _ in flows.by_date(FlowKind.ADVANCE)]
    unit = unit_period(start, pay_dates, adv_dates)
    timed = tuple(
        TimedFlow(i.kind, i.amount, i.on, None, *count_back(start, i.on, unit)) for i in flows
    )
    regular = all(
        label == (unit.kind, unit.count) for label in _chain_labels(pay_dates[0], pay_dates)
    )
    rules = classify(len(adv_dates), regular, [a for _, a in paid])
    return regz_rate(timed, unit, method=method, decimals=decimals, classification=rules)


def regz_rate(
    timed: Sequence[TimedFlow],
    unit: UnitPeriod,
    *,
    method: Method | str = "actuarial",
    decimals: int = 2,
    classification: Classification,
) -> AprResult:
    """Return the Regulation Z APR of flows already placed in unit-periods (``whole``,
    ``fraction``), first an advance; :func:`regz_apr` places dated flows."""
    method, decimals = Method.parse(method), _decimals(decimals, 0)
    timed = tuple(timed)
    per_year = unit.per_year
    amounts = [t.signed for t in timed]
    if method is Method.ACTUARIAL:
        wholes, fractions = [t.whole for t in timed], [t.fraction for t in timed]
        found = equation_roots(amounts, wholes, fractions, high=_HIGH_UNIT)
        rate = _chosen(found, timed, float(per_year), "1000 % a unit-period")
        slope = found.slope_at(rate)
        roots = tuple(r * float(per_year) * 100 for r in found.rates)

        def side(tie: Fraction) -> int:
            return -slope * _sign(exact_value(amounts, wholes, fractions, tie / 100 / per_year))

    else:
        steps = _us_rule_steps(timed)
        rate = us_rule_rate([(float(a), p, float(m)) for a, p, m in steps], high=_HIGH_UNIT)
        roots = (rate * float(per_year) * 100,)

        def side(tie: Fraction) -> int:
            with localcontext() as ctx:
                ctx.prec = 60
                i = Decimal(tie.numerator) / tie.denominator / 100 / _dec(per_year)
                exact = [(_dec(a), p, m) for a, p, m in steps]
                return -_sign(us_rule_balance(exact, i, Decimal(0))[0])

    percent = rate * float(per_year) * 100
    return AprResult(
        standard=Standard.US_REGZ,
        apr=round_rate(percent, decimals, side),
        apr_unrounded=percent,
        decimals=decimals,
        roots=roots,
        flows=timed,
        method=method,
        unit_period=unit,
        unit_period_rate=rate,
        classification=classification,
    )


def _chosen(found: Roots, timed: Sequence[TimedFlow], per_year: float, high: str) -> float:
    """The root to disclose, or NoSolution saying why there is none >= 0."""
    rate = found.chosen
    if rate is not None and rate >= 0:
        return rate
    paid = sum((t.amount for t in timed if t.kind is FlowKind.PAYMENT), Decimal(0))
    lent = sum((t.amount for t in timed if t.kind is FlowKind.ADVANCE), Decimal(0))
    if paid < lent:
        _short(
            paid,
            lent,
            "" if rate is None else f" (the rate that does is {rate * per_year * 100:.4f} %)",
        )
    raise NoSolution(f"the rate that balances the flows is above {high}, more than amort searches")


def _short(paid: Decimal, lent: Decimal, negative: str) -> NoReturn:
    raise NoSolution(
        f"the payments total {paid:,.2f}, less than the {lent:,.2f} advanced; no rate >= 0 "
        f"balances them{negative}"
    )


def _sign(value: Decimal) -> int:
    return 0 if abs(value) < Decimal("1e-40") else (1 if value > 0 else -1)


def _dec(value: Fraction) -> Decimal:
    return Decimal(value.numerator) / Decimal(value.denominator)


# -- the US Rule --------------------------------------------------------------------------------


def _us_rule_steps(timed: Sequence[TimedFlow]) -> list[tuple[Fraction, bool, Decimal]]:
    """(position in unit-periods, is a payment, amount), advances first on a shared date."""
    ordered = sorted(timed, key=lambda t: (t.whole + t.fraction, t.kind is FlowKind.PAYMENT))
    return [(t.whole + t.fraction, t.kind is FlowKind.PAYMENT, t.amount) for t in ordered]


# -- the EU APRC --------------------------------------------------------------------------------


def eu_year_fraction(start: date, end: date, basis: YearBasis | str = "days") -> Fraction:
    """Return the time from ``start`` to ``end`` in years under Annex I's options (exact).

    A year is 365 days (366 in a leap year), 52 weeks or 12 equal months of 365/12
    days [text]. ``days`` counts whole years back, then the days left over the 365 or
    366 of the year ending there (UK MCOB 10A.2.3R [text]); ``365-days`` divides all
    days by 365; ``months`` counts whole months back, the days over 365/12 a month;
    ``weeks`` divides days by 7 x 52.

    >>> eu_year_fraction(date(2025, 1, 1), date(2026, 7, 1))          # 1 + 181/365
    Fraction(546, 365)
    >>> eu_year_fraction(date(2027, 1, 15), date(2027, 4, 1), "months")  # 2/12 + 17/365
    Fraction(467, 2190)
    """
    how = YearBasis.parse(basis)
    if end < start:
        raise InvalidTerms(f"the date {end} comes before the first drawdown {start}")
    days = (end - start).days
    if how is YearBasis.DAYS_365:
        return Fraction(days, 365)
    if how is YearBasis.WEEKS:
        return Fraction(days, 7 * 52)
    months, left = _count_months(start, end)
    if how is YearBasis.MONTHS:
        return Fraction(months, 12) + Fraction(left, 365)
    stop = _months_before(start, end, 12 * (months // 12))
    return months // 12 + Fraction((stop - start).days, (stop - add_months(stop, -12)).days)


def eu_aprc(flows: Flows, *, basis: YearBasis | str = "days", decimals: int = 1) -> AprResult:
    """Return the EU APRC of dated flows (Annex I), time from the first drawdown.

    >>> flows = Flows.of([("2025-01-01", 1000, "advance"), ("2026-07-01", 1200, "payment")])
    >>> eu_aprc(flows).apr              # Directive 98/7/EC proposal, Annex III: 12.96 % -> 13.0
    Decimal('13.0')
    """
    how = YearBasis.parse(basis)
    start = _starting(flows)
    timed = tuple(
        TimedFlow(i.kind, i.amount, i.on, None, 0, Fraction(0), eu_year_fraction(start, i.on, how))
        for i in flows
    )
    return eu_rate(timed, basis=how, decimals=decimals)


def eu_rate(
    timed: Sequence[TimedFlow], *, basis: YearBasis | None = None, decimals: int = 1
) -> AprResult:
    """Return the EU APRC of flows already placed in ``years``; :func:`eu_aprc` places dated
    flows (``basis`` is recorded as the one used, None for equal periods)."""
    timed, decimals = tuple(timed), _decimals(decimals, 1)
    amounts = [t.signed for t in timed]
    years = [t.years or Fraction(0) for t in timed]
    found = equation_roots(amounts, years, high=_HIGH_YEAR)
    rate = _chosen(found, timed, 1.0, "1,000,000 % a year")
    slope = found.slope_at(rate)

    def side(tie: Fraction) -> int:
        return -slope * _sign(exact_value(amounts, years, [0] * len(years), tie / 100))

    return AprResult(
        standard=Standard.EU_CCD,
        apr=round_rate(rate * 100, decimals, side),
        apr_unrounded=rate * 100,
        decimals=decimals,
        roots=tuple(r * 100 for r in found.rates),
        flows=timed,
        year_basis=basis,
    )
