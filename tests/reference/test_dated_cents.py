"""Every cent of amort's dated schedules against an exact reference in decimal and fractions.

The reference below re-implements the rules of :mod:`amort.dated` (its module
docstring) and of DESIGN.md ("Money and rounding"). It takes from amort only
the due dates (:func:`amort.calendar.due_dates`, for the business-day
adjustment) and the day counts (:func:`amort.daycount.year_fraction`,
:func:`amort.daycount.day_count_days`), which are tested on their own against
published values (tests/reference/test_daycount_published.py). The stepping of
the due dates, forwards and backwards, is written here again from the rule of
:mod:`amort.calendar` (k whole steps from one anchor date, never drifting) and
checked against ``due_dates``. All money arithmetic is Python's ``decimal``
(amounts, rounding with :meth:`~decimal.Decimal.quantize`) and ``fractions``
(rates, the closed form).

- Due dates ``d_1 .. d_N`` step from the first payment date; in arrears a first
  payment one step after the start keeps the start's day of the month (a loan
  made on the 31st is due on the 31st in long months). In arrears period k
  runs from ``d_{k-1}`` to ``d_k`` (``d_0 = start``); in advance from ``d_k``
  to ``d_{k+1}`` (the first payment on or after the start).
- Rate of period k: ``j x yearfrac(b_{k-1}, b_k)`` under a day count (the
  30E/360 (ISDA) termination date is the last bound); under ``equal`` the
  periodic rate ``i`` (``j/p``, or ``(1 + j/m)^(m/p) - 1`` for m
  compoundings a year, exact here since p divides m), and an odd first period
  ``i x (w + s)``: w whole regular periods counted back from the first payment
  date, s the stub's actual days over the days of the regular period it falls in.
- A long first period (start before one regular period ahead of the first due
  date): ``accrue`` - period 1 earns the whole first period; ``separate`` - the
  stub's interest ``round(B_0 x stub rate)`` is due on its own and period 1
  earns one regular period; ``capitalise`` - that interest is added to the
  balance before period 1. In advance the stub before the first payment is
  capitalised (``accrue``, ``capitalise``) or separate (``separate``).
- Level payment: ``P = (B_0 - F v_N) / sum_k w_k`` exactly (``v_k = 1 / prod
  (1 + i_m)``, ``w_k = v_k`` in arrears, ``v_{k-1}`` in advance; ``B_0``
  includes capitalised interest), rounded to the cent under the rounding mode.
- The period loop is that of tests/reference/test_exact_cents.py, with each
  period's own rate.

Source of the check: Python's ``decimal`` and ``fractions`` modules (exact
decimal and rational arithmetic), on the rules above.
"""

from __future__ import annotations

import calendar as stdcalendar
import dataclasses
import decimal
import itertools
import random
from datetime import date, timedelta
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal
from fractions import Fraction

import numpy as np
import pytest

from amort import Loan
from amort.calendar import due_dates, regular_period_start
from amort.daycount import day_count_days, year_fraction
from amort.errors import InvalidTerms, NoSolution

CENT = Decimal("0.01")

#: amort's rounding names -> the decimal module's modes.
MODES = {
    "half-up": ROUND_HALF_UP,
    "half-even": ROUND_HALF_EVEN,
    "up": ROUND_UP,
    "down": ROUND_DOWN,
}

#: Payments a year of each frequency (common practice: 52 weeks, 26 fortnights, ...).
PER_YEAR = {
    "weekly": 52,
    "biweekly": 26,
    "semimonthly": 24,
    "monthly": 12,
    "bimonthly": 6,
    "quarterly": 4,
    "semiannual": 2,
    "annual": 1,
}
STEP_MONTHS = {"monthly": 1, "bimonthly": 2, "quarterly": 3, "semiannual": 6, "annual": 12}
STEP_DAYS = {"weekly": 7, "biweekly": 14}

DAY_COUNTS = [
    "30/360",
    "30/360-bond",
    "30e/360",
    "30e/360-isda",
    "actual/360",
    "actual/365",
    "actual/actual-isda",
    "equal",
]
ODD_DAYS = ["accrue", "separate", "capitalise"]

ROUNDING = decimal.Context(prec=400)


def quantize_ratio(numerator: int, denominator: int, mode: str) -> tuple[Decimal, str]:
    """Return ``numerator / denominator`` (an amount >= 0, currency units) rounded to the cent.

    The
    quotient is truncated at 80 significant digits; when that is inexact a
    sticky 5 one digit below stands for the rest (no cent or half-cent boundary
    lies between the truncation and the next ulp). Returns the amount and
    "tie" (exactly half a cent), "whole" (exactly whole cents) or "".
    """
    context = decimal.Context(prec=80, rounding=ROUND_DOWN)
    quotient = context.divide(Decimal(numerator), Decimal(denominator))
    kind = ""
    if context.flags[decimal.Inexact]:
        sticky = Decimal((0, (5,), quotient.as_tuple().exponent - 1))
        quotient = ROUNDING.add(quotient, sticky)
    else:
        in_cents = quotient * 100
        fraction = in_cents - in_cents.to_integral_value(rounding=ROUND_DOWN)
        kind = "whole" if fraction == 0 else "tie" if fraction == Decimal("0.5") else ""
    return quotient.quantize(CENT, rounding=MODES[mode], context=ROUNDING), kind


def quantize_fraction(value: Fraction, mode: str) -> tuple[Decimal, str]:
    """Return a non-negative exact rational amount (currency units) rounded to the cent."""
    return quantize_ratio(value.numerator, value.denominator, mode)


# -- dates, stepped again from the rule of amort.calendar ---------------------------------


def month_length(year: int, month: int) -> int:
    return stdcalendar.monthrange(year, month)[1]


def is_month_end(d: date) -> bool:
    return d.day == month_length(d.year, d.month)


def shift_months(d: date, n: int, end_of_month: bool) -> date:
    """``d`` plus n whole months: the same day, or the last day of a shorter month."""
    year, month0 = divmod(d.year * 12 + d.month - 1 + n, 12)
    last = month_length(year, month0 + 1)
    day = last if end_of_month and is_month_end(d) else min(d.day, last)
    return date(year, month0 + 1, day)


def semimonthly_slot(d: date, pair: tuple[int, int]) -> int:
    last = month_length(d.year, d.month)
    for slot, day in enumerate(pair):
        if d.day == min(day, last):
            return slot
    raise AssertionError(f"{d} is not a semimonthly day {pair}")


@dataclasses.dataclass(frozen=True)
class DatedTerms:
    """Dated loan terms as the user gives them, for Loan and the reference."""

    principal: str
    annual_rate: str  # percent, e.g. "7.3"
    periods: int | None
    frequency: str
    start: date
    first_payment: date | None = None
    day_count: str = "equal"
    compounding: int | None = None
    timing: str = "arrears"
    balloon: str = "0"
    fixed_payment: str | None = None
    rounding: str = "half-up"
    interest_rounding: str = "half-up"
    odd_days: str = "accrue"
    end_of_month: bool = False
    semimonthly_days: tuple[int, int] = (1, 15)
    business_days: str = "none"
    interest_dates: str = "unadjusted"

    def loan(self) -> Loan:
        return Loan(
            principal=self.principal,
            annual_rate=self.annual_rate + "%",
            periods=self.periods,
            frequency=self.frequency,
            balloon=self.balloon,
            timing=self.timing,
            fixed_payment=self.fixed_payment,
            rounding=self.rounding,
            interest_rounding=self.interest_rounding,
            start=self.start,
            first_payment=self.first_payment,
            day_count=self.day_count,
            compounding=self.compounding,
            business_days=self.business_days,
            end_of_month=self.end_of_month,
            semimonthly_days=self.semimonthly_days,
            odd_days=self.odd_days,
            interest_dates=self.interest_dates,
        )

    @property
    def advance(self) -> bool:
        return self.timing == "advance"

    @property
    def per_year(self) -> int:
        return PER_YEAR[self.frequency]

    @property
    def nominal(self) -> Fraction:
        """The nominal annual rate j as an exact decimal fraction."""
        return Fraction(Decimal(self.annual_rate)) / 100

    @property
    def periodic(self) -> Fraction:
        """i = j/p, or (1 + j/m)^(m/p) - 1 (exact: the sample keeps m a multiple of p)."""
        p, m = self.per_year, self.compounding
        if m is None or m == p:
            return self.nominal / p
        assert m % p == 0
        return (1 + self.nominal / m) ** (m // p) - 1

    def step(self, anchor: date, k: int) -> date:
        """The due date k whole steps from ``anchor`` (k may be negative): no drift."""
        if self.frequency in STEP_DAYS:
            return anchor + timedelta(days=k * STEP_DAYS[self.frequency])
        if self.frequency == "semimonthly":
            pair = self.semimonthly_days
            months, slot = divmod(semimonthly_slot(anchor, pair) + k, 2)
            year, month0 = divmod(anchor.year * 12 + anchor.month - 1 + months, 12)
            return date(year, month0 + 1, min(pair[slot], month_length(year, month0 + 1)))
        return shift_months(anchor, k * STEP_MONTHS[self.frequency], self.end_of_month)


@dataclasses.dataclass(frozen=True)
class Plan:
    """The reference's dated facts, one element a period."""

    due: list[date]  # adjusted due dates (the due_date column)
    scheduled: list[date]  # the same before business-day adjustment
    bounds: list[date]  # the N + 1 interest dates
    rates: list[Fraction]
    days: list[int]
    odd_rate: Fraction  # the stub's rate, separated or capitalised (0 when none)
    first_kind: str  # "regular", "short", "long" (arrears) or "stub" (advance)


def series(terms: DatedTerms) -> tuple[date, int]:
    """Return the anchor of the due-date series and the index of d_1 in it.

    Due dates step from the first payment (index 0); in arrears a first
    payment exactly one monthly-type step after the start steps from the
    start instead (d_1 is index 1), so a start on the 31st keeps the 31st.
    """
    start = terms.start
    if terms.first_payment is None:
        return (start, 0) if terms.advance else (start, 1)
    first = terms.first_payment
    monthly = terms.frequency in STEP_MONTHS
    if not terms.advance and monthly and terms.step(start, 1) == first:
        return start, 1
    return first, 0


def plan(terms: DatedTerms, periods: int, *, stepwise: bool = False) -> Plan:
    """Return the reference plan of ``periods`` periods.

    ``stepwise`` counts the regular periods back from the first due date one
    step at a time (each from the last, as :func:`regular_period_start` steps),
    instead of k steps from the series' anchor; it only serves to find the
    loans where the two differ (test_first_period_counts_back_from_the_due_dates_anchor).
    """
    anchor, index = series(terms)
    count = periods + 1 if terms.advance else periods
    unadjusted = [terms.step(anchor, index + k) for k in range(count)]
    options = dict(
        end_of_month=terms.end_of_month,
        semimonthly_days=terms.semimonthly_days,
        adjustment=terms.business_days,
    )
    from_amort = due_dates(anchor, count + index, terms.frequency, **options)
    assert list(from_amort.unadjusted[index:]) == unadjusted, "date stepping differs"
    adjusted = list(from_amort.adjusted[index:])
    marks = adjusted if terms.interest_dates == "adjusted" else unadjusted
    start = terms.start
    bounds = marks[: periods + 1] if terms.advance else [start, *marks[:periods]]
    termination = bounds[-1]
    equal = terms.day_count == "equal"
    i, j = terms.periodic, terms.nominal
    d1 = unadjusted[0]

    def back(w: int) -> date:
        """The date w regular periods before d_1."""
        if not stepwise:
            return terms.step(anchor, index - w)
        day = d1
        for _ in range(w):
            day = regular_period_start(
                day,
                terms.frequency,
                end_of_month=terms.end_of_month,
                semimonthly_days=terms.semimonthly_days,
            )
        return day

    def periods_from_start() -> Fraction:
        """w + s: whole regular periods back from d_1, then the stub's share of its period."""
        w = 0
        while True:
            later, earlier = back(w), back(w + 1)
            if earlier <= start:
                return w + Fraction((later - start).days, (later - earlier).days)
            w += 1

    def rate(a: date, b: date) -> Fraction:
        if a == b:
            return Fraction(0)
        return j * year_fraction(a, b, terms.day_count, termination=termination)

    def regular(a: date, b: date) -> Fraction:
        return i if equal else rate(a, b)

    rates = [regular(a, b) for a, b in itertools.pairwise(bounds)]

    def count_days(a: date, b: date) -> int:
        if equal:
            return (b - a).days
        return day_count_days(a, b, terms.day_count, termination=termination)

    days = [count_days(a, b) for a, b in itertools.pairwise(bounds)]
    odd_rate = Fraction(0)
    begin = back(1)  # the start of the regular period ending on d_1
    kind = "regular" if begin == start else "short" if begin < start else "long"
    if terms.advance:
        # The stub runs from the start to the first payment's interest date.
        kind = "regular" if start == bounds[0] else "stub"
        if start < bounds[0]:
            odd_rate = i * periods_from_start() if equal else rate(start, bounds[0])
    elif kind == "long" and terms.odd_days != "accrue":
        odd_rate = i * (periods_from_start() - 1) if equal else rate(start, begin)
        rates[0] = regular(begin, bounds[1])
        days[0] = count_days(begin, bounds[1])  # period 1 is then one regular period
    elif kind != "regular":
        rates[0] = i * periods_from_start() if equal else rate(start, bounds[1])
    return Plan(adjusted[:periods], unadjusted[:periods], bounds, rates, days, odd_rate, kind)


# -- the schedule -------------------------------------------------------------------------


@dataclasses.dataclass
class Tally:
    """How often an exact half cent (a tie) or whole cent met the rounding."""

    interest_ties: dict[str, int] = dataclasses.field(
        default_factory=lambda: dict.fromkeys(MODES, 0)
    )
    payment_ties: int = 0
    payment_whole: int = 0


@dataclasses.dataclass(frozen=True)
class Expected:
    """The reference schedule: amounts are exact Decimals in currency units."""

    payment: Decimal
    opening: list[Decimal]  # as shown: before capitalised interest
    pay: list[Decimal]
    interest: list[Decimal]
    principal: list[Decimal]
    closing: list[Decimal]
    balloon: list[Decimal]
    odd_interest: Decimal  # round(B_0 x stub rate), capitalised or separate
    capitalised: Decimal
    separate: Decimal
    plan: Plan

    @property
    def rows(self) -> int:
        return len(self.pay)


def level_payment(principal: Fraction, rates: list[Fraction], balloon: Fraction, advance: bool):
    """The exact level payment P = (B_0 - F v_N) / sum_k w_k (DESIGN.md, variable a_k)."""
    v = [Fraction(1)]
    for r in rates:
        v.append(v[-1] / (1 + r))
    weights = v[:-1] if advance else v[1:]
    return (principal - balloon * v[-1]) / sum(weights, Fraction(0))


def reference(terms: DatedTerms, tally: Tally | None = None, *, stepwise: bool = False):
    """Return the :class:`Expected` schedule of ``terms`` (an open term runs until it closes)."""
    horizon = terms.periods or 64
    while True:
        want = reference_over(terms, horizon, stepwise=stepwise)
        if want is not None:
            break
        assert terms.periods is None and horizon < 8_192, "the reference schedule does not close"
        horizon *= 2
    if tally is not None:
        # Count again, on the schedule kept, the exact half cents the rounding met.
        reference_over(terms, horizon, stepwise=stepwise, tally=tally)
    return want


def reference_over(
    terms: DatedTerms, horizon: int, *, stepwise: bool = False, tally: Tally | None = None
) -> Expected | None:
    """Return the schedule over at most ``horizon`` periods, or None if it has not closed."""
    mode = terms.interest_rounding

    def interest(balance: Decimal, rate: Fraction) -> Decimal:
        amount, kind = quantize_ratio(
            int(balance * 100) * rate.numerator, 100 * rate.denominator, mode
        )
        if tally is not None and kind == "tie":
            tally.interest_ties[mode] += 1
        return amount

    dated = plan(terms, horizon, stepwise=stepwise)
    b0 = Decimal(terms.principal)
    odd = interest(b0, dated.odd_rate) if dated.odd_rate else Decimal(0)
    capitalised = Decimal(0) if terms.odd_days == "separate" else odd
    balloon = Decimal(terms.balloon)
    if terms.fixed_payment is not None:
        payment = Decimal(terms.fixed_payment)
    else:
        exact = level_payment(
            Fraction(b0 + capitalised), dated.rates, Fraction(balloon), terms.advance
        )
        payment, kind = quantize_fraction(exact, terms.rounding)
        if tally is not None:
            tally.payment_ties += kind == "tie"
            tally.payment_whole += kind == "whole"
    left = Decimal(0)
    if terms.advance and balloon:
        # y with y + round(y i_N) = F: at most one cent amount, within a cent of F / a_N.
        last = dated.rates[-1]
        near, _ = quantize_fraction(Fraction(balloon) / (1 + last), "down")
        fits = [
            y
            for y in (near + CENT * k for k in range(-2, 3))
            if y >= 0 and y + interest(y, last) == balloon
        ]
        assert len(fits) <= 1
        fallback = quantize_fraction(Fraction(balloon) / (1 + last), "half-up")[0]
        left = fits[0] if fits else fallback
    balance = b0 + capitalised
    rows: list[tuple[Decimal, Decimal, Decimal, Decimal]] = []  # opening, pay, interest, balloon
    for k in range(1, horizon + 1):
        rate = dated.rates[k - 1]
        final = k == terms.periods
        if terms.advance:
            if final or balance - left < payment or (balance - left == payment and left == 0):
                intr = interest(left, rate)
                rows.append((balance, balance - left, intr, left + intr))
                break
            intr = interest(balance - payment, rate)
            pay = payment
        else:
            intr = interest(balance, rate)
            due = balance + intr - balloon
            if final or due < payment or (due == payment and balloon == 0):
                rows.append((balance, due, intr, balloon))
                break
            pay = payment
        rows.append((balance, pay, intr, Decimal(0)))
        balance = balance - (pay - intr)
    else:
        return None
    opening = [r[0] for r in rows]
    if capitalised:
        opening[0] = b0  # shown before the capitalised interest
    return Expected(
        payment=payment,
        opening=opening,
        pay=[r[1] for r in rows],
        interest=[r[2] for r in rows],
        principal=[r[1] - r[2] for r in rows],
        closing=[r[0] - (r[1] - r[2]) - r[3] for r in rows],
        balloon=[r[3] for r in rows],
        odd_interest=odd,
        capitalised=capitalised,
        separate=odd - capitalised,
        plan=dated,
    )


# -- comparison ---------------------------------------------------------------------------

MONEY = {
    "opening_balance": "opening",
    "payment": "pay",
    "interest": "interest",
    "principal": "principal",
    "closing_balance": "closing",
}
BASE_COLUMNS = [
    "period",
    "due_date",
    "opening_balance",
    "payment",
    "interest",
    "principal",
    "closing_balance",
]


def expected_columns(want: Expected) -> list[str]:
    columns = list(BASE_COLUMNS)
    if any(want.balloon):
        columns.append("balloon")
    columns += ["days", "rate"]
    if want.capitalised:
        columns.append("capitalised")
    if want.separate:
        columns.append("odd_days_interest")
    return columns


def first_difference(loan: Loan, want: Expected) -> str | None:
    """Return the first way amort's schedule and summary differ from the reference, or None."""
    if loan.payment != want.payment:
        return f"payment {loan.payment}, reference {want.payment}"
    frame = loan.schedule()
    n = want.rows
    if len(frame) != n:
        return f"{len(frame)} rows, reference {n}"
    if list(frame.columns) != expected_columns(want):
        return f"columns {list(frame.columns)}, reference {expected_columns(want)}"
    if frame["period"].tolist() != list(range(1, n + 1)):
        return "period numbers"
    columns = dict(MONEY)
    if "balloon" in frame:
        columns["balloon"] = "balloon"
    for column, name in columns.items():
        # The frame holds the float64 nearest each exact decimal, as float(Decimal) gives.
        reference_values = np.array([float(v) for v in getattr(want, name)])
        values = frame[column].to_numpy()
        bad = np.flatnonzero(values != reference_values)
        if bad.size:
            at = int(bad[0])
            return f"{column} at period {at + 1}: {values[at]}, reference {reference_values[at]}"
    extra = {"capitalised": want.capitalised, "odd_days_interest": want.separate}
    for column, amount in extra.items():
        if column in frame:
            reference_values = np.array([float(amount)] + [0.0] * (n - 1))
            if not np.array_equal(frame[column].to_numpy(), reference_values):
                return f"{column}: {frame[column].tolist()[:2]}, reference {amount}"
    due = [d.date() for d in frame["due_date"]]
    if due != want.plan.due[:n]:
        return f"due dates {due[:3]}..., reference {want.plan.due[:3]}..."
    if frame["days"].tolist() != want.plan.days[:n]:
        return f"days {frame['days'].tolist()[:3]}..., reference {want.plan.days[:3]}..."
    rates = [float(r) for r in want.plan.rates[:n]]
    if frame["rate"].tolist() != rates:
        return f"rates {frame['rate'].tolist()[:3]}..., reference {rates[:3]}..."
    summary = loan.summary()
    figures = {
        "number_of_payments": n,
        "final_payment": want.pay[-1],
        "balloon": want.balloon[-1],
        "odd_days_interest": want.odd_interest,
        "total_paid": sum(want.pay) + want.balloon[-1] + want.separate,
        # In advance a balloon falls due at the end of the last period, a step after
        # the last instalment; otherwise the loan matures on its last due date.
        "maturity_date": (
            want.plan.bounds[n] if loan.advance and want.balloon[-1] > 0 else want.plan.due[n - 1]
        ),
        "first_payment_date": want.plan.due[0],
    }
    for name, value in figures.items():
        if summary[name] != value:
            return f"summary {name} {summary[name]}, reference {value}"
    if not loan.reconciliation().passed:
        return f"reconciliation failed: {loan.reconciliation()}"
    return None


def check(cases: list[DatedTerms], wants: list[Expected]) -> list[tuple[DatedTerms, str]]:
    failures = []
    for terms, want in zip(cases, wants, strict=True):
        problem = first_difference(terms.loan(), want)
        if problem:
            failures.append((terms, problem))
    return failures


# -- the sample ---------------------------------------------------------------------------

# Rates whose day or period rates have small denominators, so that interest lands on
# exact half cents: 7.3 % / 365 = 0.0002 a day, 7.2 % / 360 = 0.0002, 6 % / 12 = 1/200.
TIE_RATES = ["3.65", "7.3", "10.95", "3.6", "7.2", "10.8", "6", "12", "18", "4.8", "24", "9"]


def random_start(rng: random.Random) -> date:
    year = rng.randint(2021, 2034)
    month = rng.randint(1, 12)
    kind = rng.random()
    if kind < 0.30:
        return date(year, month, month_length(year, month))  # month ends: 31st, 30th, Feb 28
    if kind < 0.40:
        leap = rng.choice([2024, 2028, 2032])
        return rng.choice([date(leap, 2, 29), date(leap, 2, 28), date(year, 2, 28)])
    if kind < 0.50:
        return date(year, month, min(rng.choice([29, 30]), month_length(year, month)))
    return date(year, month, rng.randint(1, 28))


def random_first(rng: random.Random, start: date, terms: DatedTerms) -> date | None:
    """A first payment date: the default, one regular period ahead, or short/long."""
    advance = terms.advance
    earliest = start if advance else start + timedelta(days=1)
    if terms.frequency == "semimonthly":
        pair = terms.semimonthly_days
        choices = []
        for months in range(4):
            year, month0 = divmod(start.year * 12 + start.month - 1 + months, 12)
            for day in pair:
                choices.append(date(year, month0 + 1, min(day, month_length(year, month0 + 1))))
        choices = sorted(d for d in set(choices) if d >= earliest)
        if start in choices and rng.random() < 0.3:
            return None
        return choices[min(int(rng.expovariate(0.7)), 5)]
    if terms.frequency in STEP_DAYS:
        step = STEP_DAYS[terms.frequency]
        if rng.random() < 0.3:
            return None
        return start + timedelta(days=rng.randint(0 if advance else 1, 2 * step + step // 2))
    step = STEP_MONTHS[terms.frequency]
    kind = rng.random()
    if kind < 0.25:
        return None
    if kind < 0.40:
        return start if advance else terms.step(start, 1)
    while True:
        months = rng.randint(0, 2 * step + 1)
        year, month0 = divmod(start.year * 12 + start.month - 1 + months, 12)
        day = rng.choice([1, 5, 10, 15, 20, 25, 28, 29, 30, 31, rng.randint(1, 31)])
        first = date(year, month0 + 1, min(day, month_length(year, month0 + 1)))
        if first >= earliest:
            return first


def random_terms(rng: random.Random) -> DatedTerms:
    """One random dated loan; Loan may refuse it (the caller draws again)."""
    frequency = rng.choice(list(PER_YEAR))
    per_year = PER_YEAR[frequency]
    day_count = rng.choice([*DAY_COUNTS, "equal"])  # equal twice: it has the most rules
    timing = rng.choice(["arrears", "advance"])
    kind = rng.random()
    if kind < 0.07:
        rate = "0"
    elif kind < 0.27:
        rate = rng.choice(TIE_RATES)
    elif kind < 0.87:
        rate = f"{rng.uniform(0.5, 25):.{rng.choice([1, 2, 3])}f}"
    elif kind < 0.95:
        rate = f"{rng.uniform(0.5, 25):.{rng.choice([9, 12])}f}"  # rate num x den past 2**62
    else:
        rate = f"{rng.uniform(25, min(60 * per_year, 200)):.2f}"
    size = rng.random()
    if size < 0.12:
        principal_cents = rng.randint(100, 100_000)
    elif size < 0.9:
        principal_cents = rng.randint(100_000, 100_000_000)
    else:
        principal_cents = rng.randint(10**9, 10**13)
    periods: int | None = rng.choice([1, 2, 3, rng.randint(4, 24), rng.randint(4, 60)])
    if rng.random() < 0.04:
        periods = rng.randint(61, 360)
    balloon = "0"
    if rng.random() < 0.2:
        balloon = str(Decimal(rng.randint(0, principal_cents * 3 // 5)) / 100)
    compounding = None
    if day_count == "equal" and rng.random() < 0.3:
        compounding = per_year * rng.choice([1, 2, 3, 4])
    fixed_payment = None
    if rng.random() < 0.12:
        i = float(Fraction(Decimal(rate)) / 100 / per_year)
        n = rng.randint(1, 60)
        b0, f = principal_cents / 100, float(balloon)
        level = (b0 - f) / n if i == 0 else (b0 * (1 + i) ** n - f) * i / ((1 + i) ** n - 1)
        fixed_payment = f"{max(level * rng.uniform(1.0, 1.3), 0.01):.2f}"
        if rng.random() < 0.7:
            periods = None  # open term: runs until the balance closes
            if day_count == "30e/360-isda":
                day_count = "30e/360"  # its termination date would be the engine's horizon
            if timing == "advance":
                balloon = "0"  # the remainder y would be solved at the horizon's rate
    business_days = "none"
    interest_dates = "unadjusted"
    if rng.random() < 0.15:
        business_days = rng.choice(["following", "modified-following", "preceding"])
        if day_count != "equal" and rng.random() < 0.5:
            interest_dates = "adjusted"
    terms = DatedTerms(
        principal=str(Decimal(principal_cents) / 100),
        annual_rate=rate,
        periods=periods,
        frequency=frequency,
        start=random_start(rng),
        day_count=day_count,
        compounding=compounding,
        timing=timing,
        balloon=balloon,
        fixed_payment=fixed_payment,
        rounding=rng.choice(list(MODES)),
        interest_rounding=rng.choice(list(MODES)),
        odd_days=rng.choice(ODD_DAYS),
        end_of_month=frequency in STEP_MONTHS and rng.random() < 0.25,
        semimonthly_days=rng.choice([(1, 15), (15, 31)]) if frequency == "semimonthly" else (1, 15),
        business_days=business_days,
        interest_dates=interest_dates,
    )
    first = random_first(rng, terms.start, terms)
    if interest_dates == "adjusted" and first is not None and (first - terms.start).days < 5:
        first = None  # an adjustment could move the first due date onto the start
    return dataclasses.replace(terms, first_payment=first)


#: Month ends, February, long and short first periods, semimonthly pairs, advance stubs:
#: (principal, rate %, periods, frequency, start, first payment, other terms).
HANDPICKED: list[tuple[str, str, int, str, date, date | None, dict[str, object]]] = [
    # long first period (Jan 10 -> Mar 1) and short (Jan 20 -> Feb 1)
    ("10000", "7.3", 36, "monthly", date(2027, 1, 10), date(2027, 3, 1), {}),
    ("10000", "7.2", 36, "monthly", date(2027, 1, 20), date(2027, 2, 1), {}),
    # a loan made on the 31st (a regular first period), and one first due on the 31st
    ("25000", "6", 24, "monthly", date(2027, 1, 31), None, {}),
    ("25000", "6", 24, "monthly", date(2027, 1, 15), date(2027, 3, 31), {}),
    # February: a leap-day start, 28 Feb under the end-of-month rule, a leap-day due date
    ("5000", "9", 12, "monthly", date(2028, 2, 29), None, {}),
    ("5000", "9", 12, "monthly", date(2027, 2, 28), None, {"end_of_month": True}),
    ("5000", "9", 12, "quarterly", date(2027, 11, 30), date(2028, 2, 29), {}),
    # semimonthly (1, 15) and (15, end), biweekly
    ("3000", "12", 24, "semimonthly", date(2027, 1, 20), date(2027, 2, 15), {}),
    ("3000", "12", 24, "semimonthly", date(2027, 2, 3), date(2027, 2, 28),
     {"semimonthly_days": (15, 31)}),
    ("3000", "10.95", 26, "biweekly", date(2027, 3, 3), date(2027, 3, 24), {}),
    # advance with a stub before the first payment; a balloon after a long first period
    ("18000", "7.3", 36, "monthly", date(2027, 1, 10), date(2027, 2, 1), {"timing": "advance"}),
    ("18000", "7.3", 36, "monthly", date(2027, 1, 10), date(2027, 3, 1), {"balloon": "4000"}),
]  # fmt: skip


def handpicked() -> list[DatedTerms]:
    """Every HANDPICKED loan under every day count and odd-days option, and tie makers."""
    cases = []
    for day_count in DAY_COUNTS:
        for odd in ODD_DAYS:
            for principal, rate, periods, frequency, start, first, other in HANDPICKED:
                cases.append(
                    DatedTerms(
                        principal,
                        rate,
                        periods,
                        frequency,
                        start,
                        first,
                        day_count=day_count,
                        odd_days=odd,
                        **other,
                    )
                )
    # Small-denominator rates (1/100 a month under equal and 30/360; 1/2 a year) put
    # interest on exact half cents, where the four rounding modes part.
    for mode in MODES:
        for k in range(5):
            start = date(2027, 1 + k, 3 + k)
            for day_count in ("equal", "30/360"):
                cases.append(
                    DatedTerms(
                        f"{1234.5 + 77 * k:.2f}",
                        "12",
                        120,
                        "monthly",
                        start,
                        day_count=day_count,
                        interest_rounding=mode,
                        rounding=mode,
                    )
                )
            cases.append(
                DatedTerms(
                    f"{987.65 + 13 * k:.2f}",
                    "50",
                    8,
                    "annual",
                    start,
                    interest_rounding=mode,
                    timing=("arrears", "advance")[k % 2],
                )
            )
    return cases


SEED = 20_270_131
SAMPLE = 1_300


#: datetime64[ns], the due_date column's dtype, ends on 2262-04-11.
PANDAS_LAST_DAY = date(2262, 4, 11)


def last_due_date(terms: DatedTerms) -> date:
    """The last scheduled due date (open terms: the 120th, more than they run)."""
    anchor, index = series(terms)
    count = (terms.periods or 120) + (1 if terms.advance else 0)
    return terms.step(anchor, index + count - 1)


@dataclasses.dataclass
class Sample:
    cases: list[DatedTerms]
    wants: list[Expected]
    drift: list[bool]  # the reference and a step-by-step count back disagree
    tally: Tally
    refused: int

    def chosen(self, drift: bool) -> tuple[list[DatedTerms], list[Expected]]:
        pick = [k for k, d in enumerate(self.drift) if d == drift]
        return [self.cases[k] for k in pick], [self.wants[k] for k in pick]


def drifts(terms: DatedTerms, want: Expected) -> bool:
    """True when stepping back from d_1 (not from the series' anchor) changes period 1."""
    other = plan(terms, len(want.plan.rates), stepwise=True)
    mine = want.plan
    return (other.rates[0], other.odd_rate, other.days[0]) != (
        mine.rates[0],
        mine.odd_rate,
        mine.days[0],
    )


@pytest.fixture(scope="module")
def sample() -> Sample:
    rng = random.Random(SEED)
    cases = handpicked()
    refused = 0
    while len(cases) < SAMPLE:
        terms = random_terms(rng)
        if last_due_date(terms) > PANDAS_LAST_DAY:
            continue  # see test_dated.py::test_due_dates_past_2262_are_shown
        try:
            terms.loan()
        except (InvalidTerms, NoSolution):
            refused += 1
            continue
        cases.append(terms)
    tally = Tally()
    wants = [reference(t, tally) for t in cases]
    drift = [drifts(t, w) for t, w in zip(cases, wants, strict=True)]
    return Sample(cases, wants, drift, tally, refused)


def test_sample_is_large_and_varied(sample: Sample) -> None:
    cases, wants = sample.cases, sample.wants
    assert len(cases) >= 1_000
    assert {t.day_count for t in cases} == set(DAY_COUNTS)
    assert {t.frequency for t in cases} == set(PER_YEAR)
    assert {t.rounding for t in cases} == {t.interest_rounding for t in cases} == set(MODES)
    assert {t.timing for t in cases} == {"arrears", "advance"}
    semimonthly = {t.semimonthly_days for t in cases if t.frequency == "semimonthly"}
    assert semimonthly == {(1, 15), (15, 31)}
    assert sum(t.start.day == 31 for t in cases) >= 50
    assert sum(t.start.month == 2 and t.start.day == 29 for t in cases) >= 10
    assert sum(t.start.month == 2 and t.start.day == 28 for t in cases) >= 20
    kinds = [(w.plan.first_kind, t.timing, t.odd_days) for t, w in zip(cases, wants, strict=True)]
    for odd in ODD_DAYS:
        assert sum(k == ("long", "arrears", odd) for k in kinds) >= 40, odd
        assert sum(k == ("stub", "advance", odd) for k in kinds) >= 20, odd
    assert sum(k[0] == "short" for k in kinds) >= 100
    assert sum(k[0] == "regular" for k in kinds) >= 100
    assert sum(w.capitalised > 0 for w in wants) >= 50
    assert sum(w.separate > 0 for w in wants) >= 50
    assert sum(t.balloon != "0" for t in cases) >= 150
    assert sum(t.periods is None for t in cases) >= 50
    assert sum(t.compounding not in (None, PER_YEAR[t.frequency]) for t in cases) >= 30
    assert sum(t.end_of_month for t in cases) >= 50
    moved = sum(w.plan.due != w.plan.scheduled for w in wants)
    assert moved >= 50  # business-day adjustment moved some due dates
    assert sum(t.interest_dates == "adjusted" for t in cases) >= 30
    assert sum((t.periods or 0) > 120 for t in cases) >= 10  # a few long terms
    assert sample.refused < len(cases)


def test_ties_occurred(sample: Sample) -> None:
    # Exact half cents of interest under each mode, where half-up and half-even differ.
    for mode in MODES:
        assert sample.tally.interest_ties[mode] >= 20, sample.tally


def test_dated_loans_match_the_decimal_reference(sample: Sample) -> None:
    """Every cent, date, day count and rate of >= 1,000 dated loans equals the reference."""
    cases, wants = sample.chosen(drift=False)
    assert len(cases) >= 1_000
    failures = check(cases, wants)
    assert not failures, f"{len(failures)} of {len(cases)} differ; first: {failures[:3]}"


def test_first_period_counts_back_from_the_due_dates_anchor(sample: Sample) -> None:
    """Loans whose first period depends on counting back k steps from one anchor date.

    calendar.py's rule is that due dates step k whole periods from one date and
    never drift; Regulation Z Appendix J counts whole unit-periods back from
    the later date, month-end series running last day to last day [memory].
    """
    cases, wants = sample.chosen(drift=True)
    assert len(cases) >= 10
    failures = check(cases, wants)
    assert not failures, f"{len(failures)} of {len(cases)} differ; first: {failures[:3]}"


# -- the "done when" checks ------------------------------------------------------------


@pytest.mark.parametrize("rounding", list(MODES))
@pytest.mark.parametrize("timing", ["arrears", "advance"])
@pytest.mark.parametrize("balloon", ["0", "3000"])
def test_dated_30_360_monthly_loan_gives_the_undated_cents(
    rounding: str, timing: str, balloon: str
) -> None:
    """30/360 counts every month from a day <= 27 as 30 days, 1/12 of a year: the undated loan.

    (The 28th is left out: under US 30/360 a day count from the last day of
    February starts on the 30th, so 28 Feb -> 28 Mar is 28 days.)
    """
    for start, periods in [
        (date(2027, 1, 15), 360),
        (date(2028, 2, 27), 60),
        (date(2027, 12, 1), 7),
    ]:
        common = dict(
            principal="187654.32",
            annual_rate="6.875%",
            periods=periods,
            balloon=balloon,
            timing=timing,
            rounding=rounding,
            interest_rounding=rounding,
        )
        undated = Loan(**common).schedule()
        dated = Loan(**common, start=start, day_count="30/360")
        frame = dated.schedule()
        assert dated.payment == Loan(**common).payment
        for column in [*MONEY, *(["balloon"] if balloon != "0" else [])]:
            assert frame[column].tolist() == undated[column].tolist(), (start, column)
        assert (frame["days"] == 30).all()
        assert frame["due_date"].dt.day.eq(start.day).all()


def test_the_28th_differs_under_us_30_360_but_not_30e_360() -> None:
    """28 Feb -> 28 Mar: 28 days under 30/360 US (OpenDocument basis 0), 30 under 30E/360."""
    common = dict(principal="10000", annual_rate="6%", periods=12, start=date(2027, 1, 28))
    undated = Loan(principal="10000", annual_rate="6%", periods=12).schedule()
    assert Loan(**common, day_count="30e/360").schedule()["interest"].tolist() == (
        undated["interest"].tolist()
    )
    us = Loan(**common, day_count="30/360").schedule()
    assert us["days"].tolist()[:3] == [30, 28, 30]
    assert us["interest"].tolist() != undated["interest"].tolist()


def odd_period_cases(day_count: str, rate: str) -> list[DatedTerms]:
    """Long (Jan 10 -> Mar 1, 50 days) and short (Jan 20 -> Feb 1) first periods."""
    cases = []
    for odd in ODD_DAYS:
        for timing in ("arrears", "advance"):
            for start, first in [
                (date(2027, 1, 10), date(2027, 3, 1)),
                (date(2027, 1, 20), date(2027, 2, 1)),
            ]:
                cases.append(
                    DatedTerms(
                        "10000",
                        rate,
                        36,
                        "monthly",
                        start,
                        first,
                        day_count=day_count,
                        timing=timing,
                        odd_days=odd,
                    )
                )
    cases.append(
        DatedTerms(
            "10000",
            rate,
            48,
            "monthly",
            date(2027, 1, 10),
            date(2027, 3, 1),
            day_count=day_count,
            balloon="2500",
            rounding="up",
            interest_rounding="down",
        )
    )
    return cases


@pytest.mark.parametrize(("day_count", "rate"), [("actual/365", "7.3"), ("actual/360", "7.2")])
def test_actual_day_counts_with_odd_first_periods_match_the_reference(
    day_count: str, rate: str
) -> None:
    """Actual/365 Fixed and Actual/360 (ISDA 2006 4.16(d), (e)) odd first periods, every cent."""
    cases = odd_period_cases(day_count, rate)
    wants = [reference(t) for t in cases]
    assert not check(cases, wants)
    # By hand: 7.3 % / 365 = 7.2 % / 360 = 0.0002 a day on 10,000 is 2.00 a day.
    pairs = zip(cases[:-1], wants[:-1], strict=True)  # the balloon case last
    by_odd = {(t.odd_days, t.timing, t.start.day): w for t, w in pairs}
    long_accrue = by_odd["accrue", "arrears", 10]
    assert long_accrue.interest[0] == Decimal("100.00")  # 50 days, Jan 10 -> Mar 1
    separate = by_odd["separate", "arrears", 10]
    assert separate.separate == Decimal("44.00")  # 22 days, Jan 10 -> Feb 1
    assert separate.interest[0] == Decimal("56.00")  # 28 days, Feb 1 -> Mar 1
    capitalise = by_odd["capitalise", "arrears", 10]
    assert capitalise.capitalised == Decimal("44.00")
    assert capitalise.interest[0] == Decimal("56.25")  # 10,044.00 x 0.0002 x 28
    short = by_odd["accrue", "arrears", 20]
    assert short.interest[0] == Decimal("24.00")  # 12 days, Jan 20 -> Feb 1
    advance = by_odd["accrue", "advance", 10]
    assert advance.capitalised == Decimal("100.00")  # 50 days before the first payment
    loan = cases[0].loan()
    assert loan.schedule()["interest"].iloc[0] == 100.00


def test_reference_helpers_on_known_values() -> None:
    """The reference's own rounding and date stepping, on values worked by hand."""
    assert quantize_ratio(1, 8, "half-up") == (Decimal("0.13"), "tie")
    assert quantize_ratio(1, 8, "half-even") == (Decimal("0.12"), "tie")
    assert quantize_ratio(1, 3, "up") == (Decimal("0.34"), "")
    assert quantize_ratio(100, 8, "down") == (Decimal("12.50"), "whole")
    monthly = DatedTerms("1", "1", 1, "monthly", date(2027, 1, 31))
    assert [monthly.step(date(2027, 3, 31), k) for k in (-1, -2, 1)] == [
        date(2027, 2, 28),
        date(2027, 1, 31),
        date(2027, 4, 30),
    ]
    half = DatedTerms("1", "1", 1, "semimonthly", date(2027, 1, 1), semimonthly_days=(15, 31))
    assert [half.step(date(2027, 2, 28), k) for k in (-1, 1, 2)] == [
        date(2027, 2, 15),
        date(2027, 3, 15),
        date(2027, 3, 31),
    ]
    # 6 % a year, monthly: P = 1000 x 0.005 / (1 - 1.005^-12) = 86.0664...
    payment = level_payment(Fraction(1000), [Fraction(1, 200)] * 12, Fraction(0), False)
    assert quantize_fraction(payment, "half-up")[0] == Decimal("86.07")
    # A loan made on the 31st is due on the 31st in long months, its first period regular.
    dated = plan(DatedTerms("1", "6", 3, "monthly", date(2027, 1, 31)), 3)
    assert dated.due == [date(2027, 2, 28), date(2027, 3, 31), date(2027, 4, 30)]
    assert dated.first_kind == "regular" and dated.rates == [Fraction(1, 200)] * 3
