"""Dated terms turned into what the engine needs: due dates and each period's exact rate.

A dated loan runs from its disbursement date ``start``; its payments fall on
the due dates of :func:`amort.calendar.due_dates` from ``first_payment``.

- **In arrears** period k runs from ``d_{k-1}`` to ``d_k`` (``d_0 = start``) and
  its payment falls on ``d_k``.
- **In advance** the payment of period k falls on ``d_k`` at the start of the
  period, which runs to ``d_{k+1}`` (the last one to a step after ``d_N``);
  ``first_payment`` may then equal ``start``.

Each period's rate is exact: ``i_k = j x yearfrac(d_{k-1}, d_k)`` under a day
count (simple interest within the period); under the ``equal`` rule every
regular period earns the periodic rate ``i`` of :func:`amort.rates.periodic_rate`
(compounding honoured) and an odd first period ``i x (w + s)``: ``w`` whole
regular periods counted back from the first payment date and the remaining
stub ``s`` as a fraction of the regular period it falls in.

Odd days of a long first period (the stub before one regular period ahead of
the first due date) are, as ``odd_days`` says: ``"accrue"`` (default: part of
the first period's interest, and the level payment is solved with that larger
first growth factor), ``"separate"`` (their interest is due on its own at the
first due date; the level payment is solved as for a regular first period) or
``"capitalise"`` (their interest is added to the balance before the first
regular period). In advance the odd days come before the first payment, so
``accrue`` and ``capitalise`` both add their interest to the balance. A short
first period always accrues its fewer days.
"""

from __future__ import annotations

import enum
import itertools
from dataclasses import dataclass
from datetime import date, timedelta
from fractions import Fraction

from amort import calendar
from amort.calendar import BusinessDay, PaymentDates
from amort.conventions import Frequency, parse_choice
from amort.daycount import DayCount, day_count_days, year_fraction
from amort.errors import InvalidTerms

#: A first period longer than this many regular periods is refused as a likely date slip.
MAX_FIRST_PERIODS = 60
#: The last date a pandas datetime64[ns] column holds.
LAST_DATE = date(2262, 4, 11)
_MONTHS = {
    Frequency.MONTHLY: 1,
    Frequency.BIMONTHLY: 2,
    Frequency.QUARTERLY: 3,
    Frequency.SEMIANNUAL: 6,
    Frequency.ANNUAL: 12,
}
_DAYS = {Frequency.WEEKLY: 7, Frequency.BIWEEKLY: 14}


class OddDays(enum.Enum):
    """What happens to the interest of the extra days of a long first period."""

    ACCRUE = "accrue"
    SEPARATE = "separate"
    CAPITALISE = "capitalise"

    @classmethod
    def parse(cls, value: OddDays | str, field: str = "odd_days") -> OddDays:
        """Return the option named by ``value`` (``"capitalize"`` is accepted too)."""
        return parse_choice(cls, value, field, {"capitalize": "capitalise"})


class InterestDates(enum.Enum):
    """Whether interest runs to the scheduled (unadjusted) or the business-day-adjusted dates."""

    UNADJUSTED = "unadjusted"
    ADJUSTED = "adjusted"

    @classmethod
    def parse(cls, value: InterestDates | str, field: str = "interest_dates") -> InterestDates:
        """Return the option named by ``value``."""
        return parse_choice(cls, value, field, {"scheduled": "unadjusted", "moved": "adjusted"})


@dataclass(frozen=True)
class DatedPlan:
    """Per-period facts of a dated loan (tuples, one element a period, k = 1..N).

    due: the date each payment falls (business-day adjusted when asked).
    bounds: the N + 1 dates the periods run between (the interest dates).
    days: each period's day count (30-day or actual days; actual under ``equal``).
    rates: each period's exact periodic rate, as the engine applies it.
    odd_rate: the exact rate of the odd stub whose interest is separated or
        capitalised, applied to the principal (0 when there is none).
    """

    due: tuple[date, ...]
    bounds: tuple[date, ...]
    days: tuple[int, ...]
    rates: tuple[Fraction, ...]
    odd_rate: Fraction
    odd_days: OddDays


@dataclass(frozen=True)
class _Rules:
    frequency: Frequency
    day_count: DayCount
    annual_rate: Fraction
    periodic_rate: Fraction
    end_of_month: bool
    semimonthly: tuple[int, int]
    termination: date | None = None

    def back(self, end: date, periods: int = 1) -> date:
        """Return the date ``periods`` regular periods before ``end``.

        Months are counted from ``end``'s own day (31 March back two months is
        31 January, not 28 January), so no day is lost on the way.
        """
        months = _MONTHS.get(self.frequency)
        if months is not None:
            return calendar.add_months(end, -months * periods, end_of_month=self.end_of_month)
        days = _DAYS.get(self.frequency)
        if days is not None:
            return end - timedelta(days=days * periods)
        for _ in range(periods):
            end = calendar.regular_period_start(
                end,
                self.frequency,
                end_of_month=self.end_of_month,
                semimonthly_days=self.semimonthly,
            )
        return end

    def share(self, start: date, end: date) -> Fraction:
        """Return how many regular periods run from ``start`` to ``end`` (equal rule).

        Whole periods are counted back from ``end``; what is left before them
        is a fraction (in actual days) of the regular period it falls in.
        """
        whole = 0
        stop = end
        while stop > start:
            begin = self.back(end, whole + 1)
            if begin <= start:
                return whole + Fraction((stop - start).days, (stop - begin).days)
            whole += 1
            if whole > MAX_FIRST_PERIODS:
                raise InvalidTerms(
                    f"the first period from {start} to {end} spans more than "
                    f"{MAX_FIRST_PERIODS} regular periods; check 'start' and 'first_payment'"
                )
            stop = begin
        return Fraction(whole)

    def rate(self, start: date, end: date) -> Fraction:
        """Return the exact rate earned from ``start`` to ``end``."""
        if start >= end:
            return Fraction(0)
        if self.day_count is DayCount.EQUAL:
            return self.periodic_rate * self.share(start, end)
        fraction = year_fraction(
            start,
            end,
            self.day_count,
            per_year=self.frequency.per_year,
            termination=self.termination,
        )
        return self.annual_rate * fraction

    def regular_rate(self, start: date, end: date) -> Fraction:
        """Return the rate of a regular period (exactly ``i`` under the equal rule)."""
        if self.day_count is DayCount.EQUAL:
            return self.periodic_rate
        return self.rate(start, end)

    def days(self, start: date, end: date) -> int:
        if self.day_count is DayCount.EQUAL:
            return (end - start).days
        return day_count_days(start, end, self.day_count, termination=self.termination)


def plan(
    *,
    start: date,
    first_payment: date,
    periods: int,
    frequency: Frequency,
    annual_rate: Fraction,
    periodic_rate: Fraction,
    day_count: DayCount,
    advance: bool,
    odd_days: OddDays,
    end_of_month: bool = False,
    semimonthly_days: tuple[int, int] = (1, 15),
    business_days: BusinessDay = BusinessDay.NONE,
    holidays: str | tuple[str, ...] | None = None,
    interest_dates: InterestDates = InterestDates.UNADJUSTED,
) -> DatedPlan:
    """Return the dated plan of a loan (see the module docstring for the rules)."""
    if advance and first_payment < start:
        raise InvalidTerms(
            f"'first_payment' {first_payment} must be on or after 'start' {start} "
            "for payments in advance"
        )
    if not advance and first_payment <= start:
        raise InvalidTerms(
            f"'first_payment' {first_payment} must be after 'start' {start} (the disbursement date)"
        )

    def due(first: date, count: int) -> PaymentDates:
        return calendar.due_dates(
            first,
            count,
            frequency,
            end_of_month=end_of_month,
            semimonthly_days=semimonthly_days,
            adjustment=business_days,
            holiday_calendar=holidays,
        )

    count = periods + 1 if advance else periods
    dates = due(first_payment, count)
    anchored = False
    if not advance:
        # A first payment one regular period after the start keeps the start's day
        # of the month (a loan made on the 31st is due on the 31st in long months),
        # and its first period is a regular one.
        try:
            from_start = due(start, count + 1)
        except InvalidTerms:
            from_start = None  # the start is not a due day of this calendar
        if from_start is not None and from_start.unadjusted[1] == first_payment:
            dates = PaymentDates(from_start.unadjusted[1:], from_start.adjusted[1:])
            anchored = True
    last = max(dates.adjusted[-1], dates.unadjusted[-1])
    if last > LAST_DATE:
        raise InvalidTerms(
            f"the due dates run to {last}, past {LAST_DATE}, the last date a schedule's "
            "datetime64 column holds; use fewer periods or an earlier start"
        )
    marks = list(dates.adjusted if interest_dates is InterestDates.ADJUSTED else dates.unadjusted)
    bounds = tuple(marks[: periods + 1]) if advance else (start, *marks[:periods])
    rules = _Rules(
        frequency=frequency,
        day_count=day_count,
        annual_rate=annual_rate,
        periodic_rate=periodic_rate,
        end_of_month=end_of_month,
        semimonthly=semimonthly_days,
        termination=bounds[-1],
    )
    pairs = list(itertools.pairwise(bounds))
    rates = [rules.regular_rate(a, b) for a, b in pairs]
    days = [rules.days(a, b) for a, b in pairs]
    # The equal rule counts periods on the scheduled dates, never the moved ones.
    equal = day_count is DayCount.EQUAL
    first_end = dates.unadjusted[0] if equal else bounds[1 if not advance else 0]
    odd_rate = Fraction(0)
    if advance:
        # Days before the first payment: their interest is capitalised or separate.
        odd_rate = rules.rate(start, first_end)
    else:
        regular_begin = start if anchored else rules.back(dates.unadjusted[0])
        if start < regular_begin and odd_days is not OddDays.ACCRUE:
            if equal:
                # Count the stub's periods back from the first due date itself.
                odd_rate = rules.rate(start, dates.unadjusted[0]) - periodic_rate
            else:
                odd_rate = rules.rate(start, regular_begin)
            rates[0] = rules.regular_rate(regular_begin, bounds[1])
            days[0] = rules.days(regular_begin, bounds[1])
        elif start != regular_begin:
            # A long first period that accrues, or a short one: its own length.
            rates[0] = rules.rate(start, first_end)
    return DatedPlan(
        due=tuple(dates.adjusted[:periods]),
        bounds=bounds,
        days=tuple(days),
        rates=tuple(rates),
        odd_rate=odd_rate,
        odd_days=odd_days,
    )
