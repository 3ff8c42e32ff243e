"""Payoff figures of a dated loan on a date, and rebates of precomputed interest.

**Payoff.** :func:`payoff_quote` answers "what closes this loan on date D?",
assuming every scheduled payment is made in full on its due date and nothing
else is paid. The payoff is

    payoff = balance + accrued interest [+ scheduled amounts earned but not yet due]

- *balance*: the cent schedule's balance after the last payment due on or
  before D (a payment due on D itself counts as made). In arrears that is the
  row's closing balance; in advance (annuity-due) the balance just after the
  payment, ``opening - payment``, on which the period's interest then runs.
  Before the first due date it is the principal; odd-days interest that the
  loan capitalises joins the balance on the date it is capitalised (the start
  of the first regular period), and odd-days interest the loan charges
  separately is owed from that date until the first due date.
- *accrued interest*: simple interest on that balance from the interest date
  the balance starts earning (the start, the first regular period's start or
  the period's interest date) to D, rounded to the cent with the loan's
  ``interest_rounding``: ``round(B x j x yearfrac(from, D))`` under a day count
  (:func:`amort.daycount.year_fraction`, the schedule's termination date passed
  for 30E/360 ISDA); under the ``equal`` rule the period's exact rate spread
  evenly over its actual days, ``round(B x i_k x elapsed days / days in the
  period)``. Over a whole period either gives the schedule's own interest, so
  the payoff the day before a due date is the scheduled payment plus the
  closing balance less about one day's interest.
- *per diem*: one day's interest on the balance, ``B x j / 360`` for the
  30-day family and Actual/360, ``/ 365`` for Actual/365 Fixed, ``/ 365`` or
  ``/ 366`` by the year D falls in for Actual/Actual ISDA, and ``B x i_k / days
  in the period`` under ``equal``; rounded to the cent. Under the 30-day
  family the accrued interest follows the 30-day count, so a day such as a
  31st may add nothing and the end of February two or three days' worth.

When a business-day rule moves a payment off its (unadjusted) interest date,
interest still runs between the interest dates: a payment moved earlier is
counted as made when it is paid and no interest is returned for the days
before its interest date; a payment moved later is owed, as scheduled, until
it is paid, and the balance it reduces starts earning on the interest date.

**Rebates.** A precomputed loan adds the finance charge ``F`` to the amount
financed ``A`` and collects ``n`` level instalments ``P = (A + F) / n``. Paid
off with ``k`` instalments unmatured, the borrower gets back the unearned part
of ``F``:

- Rule of 78s (sum of the digits): ``F k (k + 1) / (n (n + 1))``.
- Actuarial method: the balance after ``n - k`` instalments at the contract's
  periodic rate ``i`` is the present value of what is left, ``P a_k(i)``
  (``a_k(i) = (1 - (1 + i)^-k) / i``), so the unearned interest is
  ``k P - P a_k(i) = P (k - a_k(i))``. With ``F = P (n - a_n(i))`` this is
  ``F (k - a_k(i)) / (n - a_n(i))``. In advance (instalments at the start of
  each period) ``A = P ä_n(i)``, so ``F = P (n - ä_n(i)) = P ((n - 1) - a_(n-1)(i))``
  and the rebate is ``F (k - a_k(i)) / ((n - 1) - a_(n-1)(i))`` for ``k < n`` (all of
  ``F`` while no instalment has matured). As ``i -> 0``, ``k - a_k(i) ~ i k (k + 1) / 2``,
  so in arrears the Rule of 78s is the actuarial rebate's first-order
  approximation; for ``i > 0`` it refunds less, because it counts more of the
  charge as earned in the early months.

Money is :class:`~decimal.Decimal` in currency units; the arithmetic is exact
(integer cents and :class:`~fractions.Fraction` rates) except the actuarial
rebate's present values, which are taken in :mod:`decimal` at 60 or more
significant digits before the one rounding to the cent.

>>> from amort import Loan
>>> loan = Loan(principal=10_000, annual_rate="7.3%", periods=12, start="2027-01-15",
...             day_count="actual/365")
>>> quote = payoff_quote(loan, "2027-01-25")
>>> quote.per_diem, quote.accrued_interest, quote.payoff
(Decimal('2.00'), Decimal('20.00'), Decimal('10020.00'))
"""

from __future__ import annotations

import bisect
import calendar as _stdcalendar
import dataclasses
import operator
from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd

from amort import calendar
from amort.caution import CAUTION
from amort.dated import DatedPlan, OddDays
from amort.daycount import DayCount, year_fraction
from amort.errors import InvalidTerms, describe
from amort.loan import Loan
from amort.money import from_cents, round_fraction, to_cents

__all__ = ["PAYOFF_NOTE", "PayoffDay", "PayoffQuote", "payoff_quote"]

PAYOFF_NOTE = (
    "Assumes payments are made as scheduled, each in full on its due date, and nothing "
    "else is paid; a payment due on the payoff date counts as made. Interest accrues as simple "
    "interest on the balance from its interest date to the payoff date under the loan's "
    "day count."
)

# -- the payoff ----------------------------------------------------------------------


@dataclasses.dataclass(frozen=True)
class PayoffDay:
    """One row of a payoff table: the figures that close the loan on ``on`` (currency units)."""

    on: date
    balance: Decimal
    accrued_interest: Decimal
    scheduled_unpaid: Decimal
    payoff: Decimal


@dataclasses.dataclass(frozen=True)
class PayoffQuote:
    """What closes a dated loan on a date, assuming payments are made as scheduled.

    on: the payoff date.
    payoff: balance + accrued_interest + scheduled_unpaid, currency units.
    balance: the schedule's balance after the last payment due on or before ``on``
        (the principal, or the principal plus capitalised odd-days interest, before
        the first one).
    accrued_interest: interest on ``balance`` from ``interest_from`` to ``on``, to the cent.
    scheduled_unpaid: amounts earned but not yet due on ``on``: a separate odd-days
        interest charge before the first due date, or a payment a business-day rule
        moved past its interest date (usually 0).
    per_diem: one day's interest on ``balance`` under the day count, to the cent.
    last_due_date: the due date of the last payment counted as made (None before the first).
    payments_made: how many scheduled payments are counted as made by ``on``.
    interest_from: the date from which interest on ``balance`` runs.
    maturity_date: the date the last scheduled amount falls due (the payoff is 0 on it).
    day_count: the loan's day-count convention (its name).
    table: the figures for ``on`` and each of the next ``days`` days (at least ``on``).
    note: the assumptions behind the figures.
    caution: the caution every report carries.
    """

    on: date
    payoff: Decimal
    balance: Decimal
    accrued_interest: Decimal
    scheduled_unpaid: Decimal
    per_diem: Decimal
    last_due_date: date | None
    payments_made: int
    interest_from: date
    maturity_date: date
    day_count: str
    table: tuple[PayoffDay, ...]
    note: str = PAYOFF_NOTE
    caution: str = CAUTION

    def frame(self) -> pd.DataFrame:
        """Return the table as a DataFrame: ``date`` (datetime64), then money as float64 cents."""
        rows = self.table
        return pd.DataFrame(
            {
                "date": pd.to_datetime(pd.Series([r.on for r in rows], dtype="object")).astype(
                    "datetime64[ns]"
                ),
                "balance": [float(r.balance) for r in rows],
                "accrued_interest": [float(r.accrued_interest) for r in rows],
                "scheduled_unpaid": [float(r.scheduled_unpaid) for r in rows],
                "payoff": [float(r.payoff) for r in rows],
            }
        )

    def as_dict(self) -> dict[str, Any]:
        """Return the figures as a plain dict (Decimal money, dates), the table as a list."""
        out: dict[str, Any] = {
            name: getattr(self, name) for name in self.__dataclass_fields__ if name != "table"
        }
        out["table"] = [
            {
                "date": r.on,
                "balance": r.balance,
                "accrued_interest": r.accrued_interest,
                "scheduled_unpaid": r.scheduled_unpaid,
                "payoff": r.payoff,
            }
            for r in self.table
        ]
        return out


@dataclasses.dataclass(frozen=True)
class _Span:
    """A stretch of time over which a balance earns interest: ``start`` to ``end`` at ``rate``."""

    start: date
    end: date
    rate: Fraction  # the exact rate of the whole stretch (used under the equal rule)
    balance: int  # cents
    unpaid: int = 0  # cents earned but not yet due while the stretch runs


@dataclasses.dataclass(frozen=True)
class _Event:
    """An amount that falls due: paid on ``due``, credited for interest at ``span.start``."""

    due: date
    amount: int  # cents
    span: _Span  # the balance after the amount is credited, and where it earns
    instalment: bool


@dataclasses.dataclass(frozen=True)
class _Track:
    """A dated loan as a timeline of amounts due and the balances between them."""

    loan: Loan
    start: date
    stub: tuple[_Span, ...]  # before the first amount is credited (may be empty in advance)
    events: tuple[_Event, ...]
    due: tuple[date, ...]
    credit: tuple[date, ...]
    termination: date
    maturity: date


def _plan(loan: Loan) -> DatedPlan:
    # The plan the schedule itself was built from (same horizon, so the same
    # termination date for 30E/360 ISDA). Loan keeps it private; see the report.
    return loan.dated_plan()


def _cents(values: Any) -> list[int]:
    return [round(float(v) * 100) for v in values]


def _track(loan: Loan) -> _Track:
    if not isinstance(loan, Loan):
        raise InvalidTerms(f"'loan' must be an amort Loan (got {type(loan).__name__})")
    if not loan.dated:
        raise InvalidTerms(
            "a payoff needs a dated loan: give the loan 'start' (the disbursement date) "
            "or 'first_payment'"
        )
    frame = loan.schedule()
    rows = len(frame)
    plan = _plan(loan)
    start = loan.start_date
    assert start is not None
    bounds, rates = plan.bounds, plan.rates
    payment = _cents(frame["payment"])
    interest = _cents(frame["interest"])
    closing = _cents(frame["closing_balance"])
    balloon = _cents(frame["balloon"]) if "balloon" in frame else [0] * rows
    principal = to_cents(loan.principal)
    odd = to_cents(loan.summary()["odd_days_interest"])
    separate = odd if loan.odd_days is OddDays.SEPARATE else 0
    capitalised = odd - separate
    stub: list[_Span] = []
    events: list[_Event] = []
    if not loan.advance:
        # Period k runs bounds[k-1] -> bounds[k]; payment k is credited at bounds[k].
        if plan.odd_rate:
            # A long first period whose odd days are capitalised or charged apart: the
            # stub runs to the start of the first regular period, as in amort.dated.
            first = loan.first_payment_date
            assert first is not None
            regular = calendar.regular_period_start(
                first,
                loan.frequency,
                end_of_month=loan.end_of_month,
                semimonthly_days=loan.semimonthly_days,
            )
            stub.append(_Span(start, regular, plan.odd_rate, principal))
            stub.append(_Span(regular, bounds[1], rates[0], principal + capitalised, separate))
        else:
            stub.append(_Span(start, bounds[1], rates[0], principal))
        for k in range(rows):
            last = k + 1 == rows
            end = bounds[k + 2] if not last else bounds[k + 1]
            rate = rates[k + 1] if not last else Fraction(0)
            span = _Span(bounds[k + 1], end, rate, closing[k])
            amount = payment[k] + balloon[k] + (separate if k == 0 else 0)
            events.append(_Event(plan.due[k], amount, span, instalment=True))
    else:
        # Period k runs bounds[k-1] -> bounds[k]; payment k is credited at its start,
        # and a balloon is the remainder grown by the last period's interest, due at its end.
        if start < bounds[0]:
            stub.append(_Span(start, bounds[0], plan.odd_rate, principal))
        for k in range(rows):
            after = closing[k] + balloon[k] - interest[k]
            span = _Span(bounds[k], bounds[k + 1], rates[k], after)
            amount = payment[k] + (separate if k == 0 else 0)
            events.append(_Event(plan.due[k], amount, span, instalment=True))
        if balloon[-1]:
            end = bounds[rows]
            events.append(
                _Event(end, balloon[-1], _Span(end, end, Fraction(0), 0), instalment=False)
            )
    return _Track(
        loan=loan,
        start=start,
        stub=tuple(stub),
        events=tuple(events),
        due=tuple(e.due for e in events),
        credit=tuple(e.span.start for e in events),
        termination=bounds[-1],
        maturity=max(e.due for e in events),
    )


def _accrued_rate(track: _Track, span: _Span, on: date) -> Fraction:
    """Return the exact rate earned over ``span`` from its start to ``on`` (0 before it)."""
    if on <= span.start or span.balance == 0:
        return Fraction(0)
    loan = track.loan
    if loan.day_count is DayCount.EQUAL:
        return span.rate * Fraction((on - span.start).days, (span.end - span.start).days)
    fraction = year_fraction(span.start, on, loan.day_count, termination=track.termination)
    return Fraction(loan.annual_rate) * fraction


def _per_diem_cents(track: _Track, span: _Span, on: date) -> Fraction:
    """Return one day's interest on the span's balance, in exact cents (see the module notes)."""
    loan = track.loan
    rule = loan.day_count
    if span.balance == 0:
        return Fraction(0)
    if rule is DayCount.EQUAL:
        return span.balance * span.rate / (span.end - span.start).days
    if rule.is_thirty_day or rule is DayCount.ACT_360:
        basis = 360
    elif rule is DayCount.ACT_365F:
        basis = 365
    else:  # Actual/Actual ISDA: the day from `on` to the next falls in on's year
        basis = 366 if _stdcalendar.isleap(on.year) else 365
    return span.balance * Fraction(loan.annual_rate) / basis


@dataclasses.dataclass(frozen=True)
class _Position:
    span: _Span
    accrued: int
    unpaid: int
    made: int  # events counted as made
    instalments_made: int


def _position(track: _Track, on: date) -> _Position:
    made = bisect.bisect_right(track.due, on)
    credited = bisect.bisect_right(track.credit, on)
    unpaid = 0
    if made == 0 and credited == 0:
        span = next(s for s in reversed(track.stub) if s.start <= on)
        unpaid = span.unpaid
    elif made >= credited:
        span = track.events[made - 1].span
    else:
        # Payments credited for interest but moved to a later due date: still owed.
        span = track.events[credited - 1].span
        unpaid = sum(e.amount for e in track.events[made:credited])
    rate = _accrued_rate(track, span, on)
    accrued = round_fraction(span.balance * rate, track.loan.interest_rounding)
    instalments = sum(1 for e in track.events[:made] if e.instalment)
    return _Position(span, accrued, unpaid, made, instalments)


def _check_on(track: _Track, on: object, field: str = "on") -> date:
    day = calendar.parse_date(on, field)
    if day < track.start:
        raise InvalidTerms(
            f"{field!r} {day} is before the loan's start {track.start} (the disbursement "
            f"date); give a date from {track.start} to {track.maturity}"
        )
    if day > track.maturity:
        raise InvalidTerms(
            f"{field!r} {day} is after the maturity date {track.maturity}: with every payment "
            f"made as scheduled the loan is paid off by then; give a date from {track.start} "
            f"to {track.maturity}"
        )
    return day


def _check_days(days: object) -> int:
    rule = "'days' must be a whole number of days >= 0 (the table's length after 'on')"
    try:
        count = operator.index(days)  # type: ignore[arg-type]
    except TypeError:
        raise InvalidTerms(f"{rule} (got {describe(days)})") from None
    if isinstance(days, bool) or count < 0:
        raise InvalidTerms(f"{rule} (got {describe(days)})")
    return count


def payoff_quote(loan: Loan, on: date | str, *, days: int = 0) -> PayoffQuote:
    """Return the amount that closes a dated ``loan`` on ``on``, with its parts and per diem.

    ``on`` is a date or "YYYY-MM-DD", from the loan's start to its maturity.
    The figures assume every scheduled payment is made in full on its due
    date and nothing else is paid; a payment due on ``on`` counts as made
    (so the accrued interest on a due date is 0, and the payoff on the
    maturity date is 0). ``days`` (>= 0) adds a table of the payoff on ``on``
    and each of the next ``days`` days; it may not run past maturity. The
    rules (balance, accrued interest, per diem, odd days, business days) are
    in the module notes. An undated loan, a date before the start or after
    maturity, and a bad ``days`` are refused with
    :class:`~amort.errors.InvalidTerms`.

    >>> from amort import Loan
    >>> loan = Loan(principal=36_000, annual_rate="6%", periods=12, start="2027-03-01",
    ...             day_count="actual/360")
    >>> payoff_quote(loan, "2027-03-11").payoff  # 10 days x 36,000 x 6 % / 360 = 60.00
    Decimal('36060.00')
    """
    track = _track(loan)
    day = _check_on(track, on)
    count = _check_days(days)
    last_day = day + timedelta(days=count)
    if last_day > track.maturity:
        room = (track.maturity - day).days
        raise InvalidTerms(
            f"'days' {count} runs the table to {last_day}, past the maturity date "
            f"{track.maturity} when the loan is paid off; use 'days' <= {room}"
        )
    table = []
    for offset in range(count + 1):
        when = day + timedelta(days=offset)
        where = _position(track, when)
        total = where.span.balance + where.accrued + where.unpaid
        table.append(
            PayoffDay(
                on=when,
                balance=from_cents(where.span.balance),
                accrued_interest=from_cents(where.accrued),
                scheduled_unpaid=from_cents(where.unpaid),
                payoff=from_cents(total),
            )
        )
    here = _position(track, day)
    per_diem = round_fraction(_per_diem_cents(track, here.span, day), loan.interest_rounding)
    return PayoffQuote(
        on=day,
        payoff=table[0].payoff,
        balance=table[0].balance,
        accrued_interest=table[0].accrued_interest,
        scheduled_unpaid=table[0].scheduled_unpaid,
        per_diem=from_cents(per_diem),
        last_due_date=track.due[here.made - 1] if here.made else None,
        payments_made=here.instalments_made,
        interest_from=here.span.start,
        maturity_date=track.maturity,
        day_count=loan.day_count.value,
        table=tuple(table),
    )
