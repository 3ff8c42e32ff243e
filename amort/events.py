"""Events on a level-payment schedule: extra principal, payment holidays, rate resets.

Events turn a level loan into per-period rules for the engine (one payment
and one rate a period), solved in segments of the one recurrence:

- :class:`ExtraPrincipal`: ``amount`` paid on top of the payment in ``period``
  (and every ``every`` periods after, up to ``until``). By default the payment
  stays and the term shortens; with ``recast=True`` the payment is solved again
  over the remaining periods from the balance the extra payment leaves.
- :class:`PaymentHoliday`: no payment for ``count`` periods from ``period``;
  their interest is capitalised (added to the balance). The level payment is
  solved knowing the holidays, so the loan still ends at its term.
- :class:`RateReset`: the annual rate becomes ``annual_rate`` from ``period``
  on. With ``reamortise=True`` (the default) the payment is solved again over
  the remaining periods from the balance before the reset; with ``False`` the
  payment stays and the term moves (the last payment takes what is left,
  or the schedule ends early).

Each re-solve knows the resets up to its own period only (a later reset is not
foreseen) and is the closed form ``P = (B T_0 - F) / sum m_k T_k`` over the
remaining periods (:func:`amort.graduated.weighted_payment_fraction`, holiday
periods weighted 0) from the exact cent balance the schedule has reached, so
every segment is exact and the whole schedule reconciles against the closed
form for its actual payments.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from amort import calendar, graduated
from amort.batch import BatchTerms
from amort.errors import InvalidTerms, describe
from amort.money import parse_amount, parse_rate, round_fraction, to_cents

if TYPE_CHECKING:
    from amort.loan import Loan


def _period(value: object, field: str) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise InvalidTerms(f"{field!r} must be a period number >= 1 (got {describe(value)})")
    return int(value)


def _when(event: object) -> None:
    """Read an event's ``period`` or ``on`` (a date): exactly one must be given."""
    on = getattr(event, "on", None)
    period = getattr(event, "period", None)
    if (on is None) == (period is None):
        raise InvalidTerms(
            f"{type(event).__name__} needs 'period' (a period number) or 'on' (a date), one of them"
        )
    if on is not None:
        object.__setattr__(event, "on", calendar.parse_date(on, "on"))
    else:
        object.__setattr__(event, "period", _period(period, "period"))


def _at(event: Event) -> int:
    """The period of an event whose date has been resolved."""
    assert event.period is not None, "resolve 'on' first (on_periods)"
    return event.period


def on_periods(events: tuple[Event, ...], due: tuple[date, ...]) -> tuple[Event, ...]:
    """Return ``events`` with each ``on`` date turned into the first period due on or after it."""
    out: list[Event] = []
    for event in events:
        if event.on is None:
            out.append(event)
            continue
        later = [k for k, d in enumerate(due, start=1) if d >= event.on]
        if not later:
            raise InvalidTerms(
                f"{type(event).__name__} on {event.on} is after maturity (the last due date "
                f"is {due[-1]})"
            )
        out.append(dataclasses.replace(event, period=later[0], on=None))
    return tuple(out)


@dataclass(frozen=True)
class ExtraPrincipal:
    """An extra principal payment in ``period`` (and every ``every`` periods up to ``until``)."""

    period: int | None = None
    amount: Decimal = Decimal(0)
    every: int | None = None
    until: int | None = None
    recast: bool = False
    on: date | None = None

    def __post_init__(self) -> None:
        _when(self)
        object.__setattr__(self, "amount", parse_amount(self.amount, "amount"))
        if self.every is not None:
            object.__setattr__(self, "every", _period(self.every, "every"))
        if self.until is not None:
            object.__setattr__(self, "until", _period(self.until, "until"))
            if self.period is not None and self.until < self.period:
                raise InvalidTerms(
                    f"'until' {self.until} is before the extra payment's first period {self.period}"
                )

    def periods(self, last: int) -> list[int]:
        """The periods it falls in, up to ``last``."""
        assert self.period is not None, "resolve 'on' first (on_periods)"
        if self.every is None:
            return [self.period] if self.period <= last else []
        stop = min(last, self.until or last)
        return list(range(self.period, stop + 1, self.every))


@dataclass(frozen=True)
class PaymentHoliday:
    """No payment for ``count`` periods from ``period``; the interest is capitalised."""

    period: int | None = None
    count: int = 1
    on: date | None = None

    def __post_init__(self) -> None:
        _when(self)
        object.__setattr__(self, "count", _period(self.count, "count"))

    def periods(self) -> list[int]:
        """The periods without a payment."""
        assert self.period is not None, "resolve 'on' first (on_periods)"
        return list(range(self.period, self.period + self.count))


@dataclass(frozen=True)
class RateReset:
    """The annual rate becomes ``annual_rate`` from ``period`` on."""

    period: int | None = None
    annual_rate: Decimal = Decimal(0)
    reamortise: bool = True
    on: date | None = None

    def __post_init__(self) -> None:
        _when(self)
        object.__setattr__(self, "annual_rate", parse_rate(self.annual_rate, "annual_rate"))


Event = ExtraPrincipal | PaymentHoliday | RateReset


@dataclass(frozen=True)
class EventRules:
    """Per-period rules the events give (cents and exact rates, one element a period)."""

    payments: list[int]
    extras: list[int]
    holidays: set[int]
    rates: list[Fraction]


def check(events: tuple[Event, ...], periods: int) -> None:
    """Refuse events after maturity, overlapping holidays and two resets in one period."""
    seen_holidays: set[int] = set()
    resets: set[int] = set()
    for event in events:
        if not isinstance(event, (ExtraPrincipal, PaymentHoliday, RateReset)):
            raise InvalidTerms(
                "'events' must be ExtraPrincipal, PaymentHoliday or RateReset "
                f"(got {describe(event)})"
            )
        if event.period is None:
            raise InvalidTerms(
                f"{type(event).__name__} on {event.on} needs a dated loan: give 'start'"
            )
        if event.period > periods:
            raise InvalidTerms(
                f"{type(event).__name__} in period {event.period} is after maturity "
                f"(period {periods})"
            )
        if isinstance(event, PaymentHoliday):
            days = set(event.periods())
            if max(days) >= periods:
                raise InvalidTerms(
                    f"the payment holiday from period {event.period} reaches the last period "
                    f"{periods}; the last payment settles the loan"
                )
            if days & seen_holidays:
                raise InvalidTerms(
                    f"payment holidays overlap in period {min(days & seen_holidays)}"
                )
            seen_holidays |= days
        if isinstance(event, RateReset):
            if event.period in resets:
                raise InvalidTerms(f"two rate resets in period {event.period}")
            resets.add(event.period)


def rules(loan: Loan, base_rates: list[Fraction]) -> EventRules:
    """Return the per-period payments, extras and rates the loan's events give."""
    from amort.schedule import run  # the engine, to reach each re-solve's balance

    n = loan.periods
    assert n is not None
    events = loan.events
    resets = sorted((e for e in events if isinstance(e, RateReset)), key=_at)
    under = {_at(reset): _rates_under(loan, reset.annual_rate) for reset in resets}

    def rates_known_at(period: int) -> list[Fraction]:
        """The rates as they stand once the resets up to ``period`` are known."""
        known = list(base_rates)
        for reset in resets:
            if _at(reset) <= period:
                known[_at(reset) - 1 :] = under[_at(reset)][_at(reset) - 1 :]
        return known

    rates = rates_known_at(n)
    holidays = {p for e in events if isinstance(e, PaymentHoliday) for p in e.periods()}
    extras = [0] * n
    for extra in (e for e in events if isinstance(e, ExtraPrincipal)):
        for p in extra.periods(n):
            extras[p - 1] += to_cents(extra.amount)
    weights = [0 if k in holidays else 1 for k in range(1, n + 1)]
    owed = to_cents(loan.principal) + loan._capitalised_cents
    balloon = to_cents(loan.balloon)
    first = _solve(owed, base_rates, weights, balloon, loan)
    payments = [0 if w == 0 else first for w in weights]

    # Change points: a reset that re-amortises from its period; a recast after its period.
    points = sorted(
        {_at(e) for e in events if isinstance(e, RateReset) and e.reamortise}
        | {
            p + 1
            for e in events
            if isinstance(e, ExtraPrincipal) and e.recast
            for p in e.periods(n)
            if p < n
        }
    )
    for start in points:
        terms = engine_terms(owed, payments, extras, rates, balloon)
        table = run(terms, loan.interest_rounding)
        if int(table.rows[0]) < start:
            break  # the loan is already paid off before the change
        balance = int(table.opening[start - 1])
        # A re-solve knows the resets up to its period, not the ones still to come.
        known = rates_known_at(start)
        again = _solve(balance, known[start - 1 :], weights[start - 1 :], balloon, loan)
        for k in range(start, n + 1):
            if weights[k - 1]:
                payments[k - 1] = again
    return EventRules(payments=payments, extras=extras, holidays=holidays, rates=rates)


def engine_terms(
    owed: int, payments: list[int], extras: list[int], rates: list[Fraction], balloon: int
) -> BatchTerms:
    """Return a batch of one that pays ``payments + extras`` at ``rates`` (arrears)."""
    n = len(payments)
    wide = max(max(r.numerator, r.denominator) for r in rates) >= 2**62
    kind: Any = object if wide else np.int64
    one = lambda v: np.array([v], dtype=np.int64)  # noqa: E731
    return BatchTerms(
        principal=one(owed),
        rate_num=one(0),
        rate_den=one(1),
        payment=one(payments[0]),
        periods=one(n),
        balloon=one(balloon),
        advance=np.array([False]),
        period_payment=np.asarray([p + x for p, x in zip(payments, extras, strict=True)])[
            :, None
        ].astype(np.int64),
        period_covers_interest=np.zeros((n, 1), dtype=bool),
        period_rate_num=np.asarray([[r.numerator] for r in rates], dtype=kind),
        period_rate_den=np.asarray([[r.denominator] for r in rates], dtype=kind),
    )


def _solve(owed: int, rates: list[Fraction], weights: list[int], balloon: int, loan: Loan) -> int:
    if not any(weights):
        raise InvalidTerms("every remaining period is a payment holiday; nothing repays the loan")
    exact = graduated.weighted_payment_fraction(owed, rates, weights, balloon)
    if exact <= 0:
        raise InvalidTerms(
            "an extra payment or reset leaves no positive payment to solve for; "
            "the balloon is more than the balance can grow to"
        )
    return round_fraction(exact, loan.rounding)


def _rates_under(loan: Loan, annual: Decimal) -> list[Fraction]:
    """Each period's exact rate had the loan been made at ``annual``."""
    assert loan.periods is not None
    # The loan keeps its rate in its own Decimal type, which replace() takes as read.
    twin = dataclasses.replace(loan, annual_rate=type(loan.annual_rate)(annual), events=())
    rates = twin._rates_for(loan.periods)
    return rates if rates is not None else [twin.periodic_rate] * loan.periods
