"""``Loan``: the terms of one level-payment loan, validated, and what follows from them.

A :class:`Loan` is a frozen value object. Its inputs are normalised once, on
construction: amounts to exact :class:`~decimal.Decimal`, rates to decimal
fractions, conventions to enums. Change a loan with :func:`dataclasses.replace`
(which validates again). Its figures come from the closed form (the payment)
and from the exact-cent schedule engine (everything else), which is the same
engine a book of a million loans runs on.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import pandas as pd

from amort import events as events_
from amort import graduated, solve, variable
from amort.calendar import BusinessDay
from amort.conventions import Frequency, Structure, Timing
from amort.dated import DatedPlan, InterestDates, OddDays, plan
from amort.daycount import DayCount
from amort.errors import InvalidTerms, NoSolution
from amort.events import Event
from amort.exact import level_payment_cents, level_payment_cents_variable
from amort.frames import schedule_frame
from amort.money import (
    Rounding,
    from_cents,
    parse_amount,
    parse_rate,
    round_fraction,
    round_ratio,
    to_cents,
)
from amort.rates import Compounding, periodic_rate
from amort.reconcile import Reconciliation, reconcile
from amort.schedule import BatchTerms, CentsTable, run
from amort.validate import normalise_dates, normalise_structure, parse_periods


class AnnualRate(Decimal):
    """A rate already read as a decimal fraction (0.065 for 6.5 %), taken by Loan as is.

    Wrap a rate in it when it comes from :func:`amort.money.parse_rate` (the CLI,
    a terms file), so that a rate above 100 % a year is not refused as a slip.

    It compares, hashes and prints as the :class:`~decimal.Decimal` it is. A
    Loan keeps its rate in this form so that :func:`dataclasses.replace`,
    which builds a new Loan from the stored fields, does not refuse a rate
    above 100 % a year (stored as, say, 6.5) as a slip for 6.5 %.
    """

    __slots__ = ()


@dataclass(frozen=True)
class Loan:
    """One level-payment loan, undated: periodic rate = annual rate / payments a year.

    principal: amount lent, currency units (exact decimal; floats read through their repr).
    annual_rate: nominal rate per year as a decimal fraction (0.065 = 6.5 %) or a
        string such as ``"6.5%"``.
    periods: number of payments. Leave out and give ``fixed_payment`` to let the
        term follow from the payment.
    frequency: ``"monthly"`` (default), ``"weekly"``, ``"biweekly"``, ``"semimonthly"``,
        ``"bimonthly"``, ``"quarterly"``, ``"semiannual"`` or ``"annual"``.
    balloon: balance left to pay with the last payment, currency units (default 0).
    timing: ``"arrears"`` (payments at period end, default) or ``"advance"`` (annuity-due).
    fixed_payment: a level payment set by the user instead of the closed form.
    rounding: how the level payment is rounded to the cent (``"half-up"`` default,
        ``"half-even"``, ``"up"``, ``"down"``).
    interest_rounding: how each period's interest is rounded (default ``"half-up"``).

    >>> loan = Loan(principal=250_000, annual_rate="6.5%", periods=360)
    >>> loan.payment
    Decimal('1580.17')
    >>> loan.summary()["final_payment"]
    Decimal('1580.55')
    """

    principal: Decimal
    annual_rate: Decimal
    periods: int | None = None
    frequency: Frequency = Frequency.MONTHLY
    balloon: Decimal = Decimal(0)
    timing: Timing = Timing.ARREARS
    fixed_payment: Decimal | None = None
    rounding: Rounding = Rounding.HALF_UP
    interest_rounding: Rounding = Rounding.HALF_UP
    start: date | None = None
    first_payment: date | None = None
    day_count: DayCount = DayCount.EQUAL
    compounding: Compounding | None = None
    business_days: BusinessDay = BusinessDay.NONE
    holidays: str | tuple[str, ...] | None = None
    end_of_month: bool = False
    semimonthly_days: tuple[int, int] = (1, 15)
    odd_days: OddDays = OddDays.ACCRUE
    interest_dates: InterestDates = InterestDates.UNADJUSTED
    structure: Structure = Structure.LEVEL
    interest_only_periods: int = 0
    payment_growth: Decimal | None = None
    payment_step: Decimal | None = None
    growth_every: int | None = None
    custom_payments: tuple[Decimal, ...] | None = None
    payment_months: tuple[int, ...] | None = None
    events: tuple[Event, ...] = ()
    negative_amortisation_cap: Decimal | None = None

    def __post_init__(self) -> None:
        set_ = functools.partial(object.__setattr__, self)
        set_("principal", parse_amount(self.principal, "principal"))
        rate = self.annual_rate
        if type(rate) is not AnnualRate:
            rate = AnnualRate(parse_rate(rate, "annual_rate"))
        set_("annual_rate", rate)
        set_("frequency", Frequency.parse(self.frequency))
        set_("timing", Timing.parse(self.timing))
        set_("balloon", parse_amount(self.balloon, "balloon", allow_zero=True))
        set_("rounding", Rounding.parse(self.rounding, "rounding"))
        set_("interest_rounding", Rounding.parse(self.interest_rounding, "interest_rounding"))
        if self.fixed_payment is not None:
            set_("fixed_payment", parse_amount(self.fixed_payment, "fixed_payment"))
        if self.periods is not None:
            set_("periods", parse_periods(self.periods))
        elif self.fixed_payment is None and self.custom_payments is None:
            raise InvalidTerms("give 'periods' (the number of payments) or 'fixed_payment'")
        normalise_dates(self, set_)
        normalise_structure(self, set_)
        per_year = self.frequency.per_year
        if self.annual_rate > per_year:
            raise InvalidTerms(
                f"'annual_rate' must be at most {per_year * 100} % for {self.frequency.value} "
                f"payments (100 % a period) (got {self.annual_rate * 100:f} %)"
            )
        if self.periods is not None and self.balloon > 0:
            self._check_balloon()
        self._check_payment_covers_interest()

    # -- derived terms -----------------------------------------------------------------

    @property
    def seasonal(self) -> bool:
        """True when payments fall only in the months of ``payment_months``."""
        return self.payment_months is not None

    def _paying(self, horizon: int) -> list[int]:
        """1 for each period whose due date falls in a paying month, else 0."""
        assert self.payment_months is not None
        due = self._plan_for(horizon).due
        return [1 if d.month in self.payment_months else 0 for d in due[:horizon]]

    @property
    def graduated(self) -> bool:
        """True when the payment grows (``payment_growth``) or steps (``payment_step``)."""
        return self.payment_growth is not None or self.payment_step is not None

    @property
    def structured(self) -> bool:
        """True when payments follow a rule other than one level payment throughout."""
        return (
            self.structure is not Structure.LEVEL
            or self.interest_only_periods > 0
            or self.graduated
            or self.custom_payments is not None
            or self.seasonal
            or bool(self.events)
        )

    @functools.cached_property
    def _event_rules(self) -> events_.EventRules:
        assert self.periods is not None
        rates = self._base_rates(self.periods)
        return events_.rules(
            self, rates if rates is not None else [self.periodic_rate] * self.periods
        )

    def _payment_path(self, horizon: int) -> list[int]:
        """Each period's scheduled payment (graduated loans), cents, capped (:meth:`_capped`)."""
        return self._capped(self._growth_path(horizon), horizon)

    def _capped(self, path: list[int], horizon: int) -> list[int]:
        """Return the payments ``path`` with the negative-amortisation cap applied, cents.

        The first period whose closing balance would pass the cap starts a level
        payment that amortises the balance it opens with over the periods left
        (the closed form, exact): the cap stops the growth, and the schedule says
        so in :meth:`summary`.
        """
        cap = self._cap_cents
        if cap is None:
            return path
        rates = self._rates_for(horizon) or [self.periodic_rate] * horizon
        owed = to_cents(self.principal) + self._capitalised_cents
        terms = events_.engine_terms(owed, path, [0] * horizon, rates, to_cents(self.balloon))
        table = run(terms, self.interest_rounding)
        over = np.flatnonzero(table.closing[:-1] > cap)
        if over.size == 0:
            return path
        k = int(over[0])  # 0-based row whose closing would pass the cap
        level = round_fraction(
            graduated.weighted_payment_fraction(
                int(table.opening[k]), rates[k:], [1] * (horizon - k), to_cents(self.balloon)
            ),
            self.rounding,
        )
        self.__dict__["_cap_period"] = k + 1
        return path[:k] + [level] * (horizon - k)

    @property
    def _cap_cents(self) -> int | None:
        cap = self.negative_amortisation_cap
        if cap is None:
            return None
        return to_cents(cap)

    def _growth_path(self, horizon: int) -> list[int]:
        return graduated.payment_path(
            self._level_cents,
            horizon,
            interest_only=self.interest_only_periods,
            every=int(self.growth_every or 1),
            growth=None if self.payment_growth is None else Fraction(self.payment_growth),
            step_cents=None if self.payment_step is None else to_cents(self.payment_step),
            mode=self.rounding,
        )

    @property
    def dated(self) -> bool:
        """True when the loan has dates (a disbursement and a first payment date)."""
        return self.start_date is not None

    @property
    def start_date(self) -> date | None:
        """The disbursement date: ``start``, or one regular period before ``first_payment``."""
        start: date | None = self.__dict__["_dates"][0]
        return start

    @property
    def first_payment_date(self) -> date | None:
        """The first due date before any business-day move: ``first_payment``, or one
        regular period after ``start`` (the start itself in advance)."""
        first: date | None = self.__dict__["_dates"][1]
        return first

    @property
    def periodic_rate(self) -> Fraction:
        """The exact rate of a regular period: annual rate / payments a year, or the
        compounded equivalent ``(1 + j/m)^(m/p) - 1`` (:func:`amort.rates.periodic_rate`;
        an irrational rate is the nearest double, taken exactly)."""
        return periodic_rate(Fraction(self.annual_rate), self.frequency, self.compounding).fraction

    def _plan_for(self, periods: int) -> DatedPlan:
        cache = self.__dict__.setdefault("_plans", {})
        if periods not in cache:
            assert self.start_date is not None and self.first_payment_date is not None
            cache[periods] = plan(
                start=self.start_date,
                first_payment=self.first_payment_date,
                periods=periods,
                frequency=self.frequency,
                annual_rate=Fraction(self.annual_rate),
                periodic_rate=self.periodic_rate,
                day_count=self.day_count,
                advance=self.advance,
                odd_days=self.odd_days,
                end_of_month=self.end_of_month,
                semimonthly_days=self.semimonthly_days,
                business_days=self.business_days,
                holidays=self.holidays,
                interest_dates=self.interest_dates,
            )
        plan_: DatedPlan = cache[periods]
        return plan_

    def dated_plan(self) -> DatedPlan:
        """Return the dated plan of the schedule: due dates, interest dates, days and rates.

        Raises :class:`~amort.errors.InvalidTerms` for an undated loan.
        """
        if not self.dated:
            raise InvalidTerms("the loan has no dates: give 'start' or 'first_payment'")
        return self._plan_for(self._engine_horizon)

    @property
    def _odd_cents(self) -> int:
        """Odd-days interest of a long first period that is capitalised or paid separately."""
        if not self.dated:
            return 0
        odd = self._plan_for(1).odd_rate
        if odd == 0:
            return 0
        return round_ratio(
            to_cents(self.principal) * odd.numerator, odd.denominator, self.interest_rounding
        )

    @property
    def _capitalised_cents(self) -> int:
        separate = self.odd_days is OddDays.SEPARATE
        return 0 if separate else self._odd_cents

    @property
    def _separate_cents(self) -> int:
        return self._odd_cents if self.odd_days is OddDays.SEPARATE else 0

    def _rates_for(self, periods: int) -> list[Fraction] | None:
        """Each period's exact rate, or None when every period earns the periodic rate."""
        if self.events and periods == self.periods:
            rates = self._event_rules.rates
            regular = self.periodic_rate
            return None if all(r == regular for r in rates) else list(rates)
        return self._base_rates(periods)

    def _base_rates(self, periods: int) -> list[Fraction] | None:
        """Each period's exact rate before any rate reset (None: all the periodic rate)."""
        if not self.dated:
            return None
        rates = list(self._plan_for(periods).rates)
        regular = self.periodic_rate
        return None if all(r == regular for r in rates) else rates

    @property
    def advance(self) -> bool:
        """True when payments fall at the start of each period (annuity-due)."""
        return self.timing is Timing.ADVANCE

    def _check_balloon(self) -> None:
        assert self.periods is not None
        rate = self.periodic_rate
        log_growth = self.periods * math.log1p(float(rate))
        if log_growth > 700:
            # (1 + i)^N passes the float range; no balloon up to 10**12 comes near
            # it, and the exact check of the first interest still applies.
            return
        most = self.principal * Decimal(math.exp(log_growth))
        if self.fixed_payment is None and rate == 0 and self.balloon >= self.principal:
            raise InvalidTerms(
                f"'balloon' {self.balloon:,} would need a payment of zero or less at a 0 % "
                f"rate; it must be below the principal {self.principal:,}"
            )
        if self.fixed_payment is None and float(self.balloon) >= float(most) * (1 - 1e-12):
            raise InvalidTerms(
                f"'balloon' {self.balloon:,} would need a payment of zero or less; it must be "
                f"below {most:,.2f}, what the principal grows to over the term"
            )

    def _first_interest_cents(self, payment_cents: int) -> int:
        """Interest on the opening balance at the highest rate a regular period earns.

        Undated: the periodic rate. Dated: the highest rate of periods 2 to 13
        (a long first period may exceed the payment once; the closed form
        still repays the loan, and the engine lets period 1 grow the balance).
        """
        rate = self.periodic_rate
        base = to_cents(self.principal) + self._capitalised_cents
        if self.dated:
            span = self._plan_for(13).rates
            if self.periods is None or self.periods > 1:
                rate = max(span[1:])
                # A long first period may leave more owing than was lent.
                first = span[0]
                owed = base - (payment_cents if self.advance else 0)
                grown = owed + round_ratio(
                    max(owed, 0) * first.numerator, first.denominator, self.interest_rounding
                )
                base = max(base, grown - (0 if self.advance else payment_cents))
            else:
                rate = span[0]
        base -= payment_cents if self.advance else 0
        return round_ratio(max(base, 0) * rate.numerator, rate.denominator, self.interest_rounding)

    @property
    def _which_period(self) -> str:
        return "first period's" if not self.dated else "highest regular period's"

    def _check_payment_covers_interest(self) -> None:
        pay = self._level_cents
        if self.structure is Structure.BULLET or self.custom_payments is not None:
            return  # interest only, or every payment set by the user
        if self.events:
            return  # each segment is solved from its balance by the closed form
        if self.seasonal:
            return  # skipped months add interest; the closed form repays by maturity
        if self.structure is Structure.EQUAL_PRINCIPAL:
            if pay <= 0:
                raise InvalidTerms(
                    f"the principal part of {self.principal:,} over the amortising payments "
                    f"rounds to {from_cents(pay):,}; use fewer payments"
                )
            return
        if pay <= 0 and self.graduated:
            field = "payment_growth" if self.payment_growth is not None else "payment_step"
            raise InvalidTerms(
                f"{field!r} {getattr(self, field)} is too large for the term: the first payment "
                f"would be {from_cents(pay):,}; lower it or shorten the term"
            )
        if pay <= 0:
            raise InvalidTerms(
                f"the level payment of {self.principal:,} over {self.periods:,} payments "
                f"rounds to {from_cents(pay):,} under {self.rounding.value!r} rounding; "
                "use fewer payments or 'up' rounding"
            )
        interest = self._first_interest_cents(pay)
        open_term = self.periods is None
        if self.graduated and self.negative_amortisation_cap is not None:
            return  # the balance may grow, up to the cap (see _payment_path)
        if pay < interest or (open_term and pay <= interest):
            what = "the payment" if self.fixed_payment is not None else "the level payment"
            if self.graduated:
                what = "the first graduated payment"
            if self.fixed_payment is not None:
                extra = "; the balance would never be repaid"
            elif self.graduated:
                extra = (
                    "; the balance would grow at first (negative amortisation): give "
                    "'negative_amortisation_cap' to allow it, or lower the growth"
                )
            elif self.balloon > 0:
                extra = "; the balloon is too large for the term (the balance would grow)"
            else:
                # e.g. 0.01 at 20 % a period: 0.2 cents of payment, a cent of interest
                extra = "; the principal is too small to repay in whole cents at this rate"
            error = NoSolution if open_term else InvalidTerms
            raise error(
                f"{what} {from_cents(pay):,} does not cover the {self._which_period} interest of "
                f"{from_cents(interest):,}{extra}"
            )

    @functools.cached_property
    def _level_cents(self) -> int:
        """The regular amount: the level payment, the equal principal part, or 0 (bullet)."""
        if self.fixed_payment is not None:
            return to_cents(self.fixed_payment)
        assert self.periods is not None
        owed = to_cents(self.principal) + self._capitalised_cents
        amortising = self.periods - self.interest_only_periods
        if self.structure is Structure.BULLET:
            return 0
        if self.structure is Structure.EQUAL_PRINCIPAL:
            return round_ratio(owed - to_cents(self.balloon), amortising, self.rounding)
        if self.custom_payments is not None:
            return to_cents(self.custom_payments[0])
        if self.events:
            return next((p for p in self._event_rules.payments if p), 0)
        rates = self._rates_for(self.periods)
        if self.seasonal:
            paying = self._paying(self.periods)
            if not any(paying[:-1]) and self.periods > 1:
                raise InvalidTerms(
                    f"no due date before maturity falls in 'payment_months' {self.payment_months}"
                )
            exact = graduated.weighted_payment_fraction(
                owed,
                rates if rates is not None else [self.periodic_rate] * self.periods,
                paying,
                to_cents(self.balloon),
            )
            return round_fraction(exact, self.rounding)
        if self.graduated:
            return graduated.first_payment_cents(
                owed,
                rates if rates is not None else [self.periodic_rate] * self.periods,
                interest_only=self.interest_only_periods,
                every=int(self.growth_every or 1),
                growth=None if self.payment_growth is None else Fraction(self.payment_growth),
                step_cents=None if self.payment_step is None else to_cents(self.payment_step),
                balloon_cents=to_cents(self.balloon),
                mode=self.rounding,
            )
        if rates is not None:
            return level_payment_cents_variable(
                owed,
                rates[self.interest_only_periods :],
                to_cents(self.balloon),
                self.advance,
                self.rounding,
            )
        rate = self.periodic_rate
        one = lambda v: np.array([v], dtype=object if rate.denominator >= 2**62 else np.int64)  # noqa: E731
        return int(
            level_payment_cents(
                one(owed),
                one(rate.numerator),
                one(rate.denominator),
                one(amortising),
                one(to_cents(self.balloon)),
                np.array([self.advance]),
                self.rounding,
            )[0]
        )

    @property
    def payment(self) -> Decimal:
        """The level payment per period in currency units (the closed form rounded to the cent).

        After interest-only periods it is the level payment that follows them.
        For an equal-principal loan it is the first amortising payment
        (principal part plus that period's interest), for a bullet loan the first
        period's interest payment; they fall from there.
        """
        if self.structure is Structure.LEVEL:
            return from_cents(self._level_cents)
        row = min(self.interest_only_periods, self.number_of_payments - 1)
        if self.structure is Structure.BULLET:
            row = 0
        return from_cents(int(self._table.payment[row]))

    def payment_factors(self) -> tuple[float, float]:
        """Return ``(W, v_N)``: the level payment's closed form is ``P = (B - F v_N) / W``.

        ``B`` is the principal plus any capitalised odd-days interest, ``W`` the
        sum of the payments' discount factors (``v_k`` in arrears, ``v_{k-1}``
        in advance) over the loan's ``periods``; float64.
        """
        if self.periods is None:
            raise InvalidTerms("the payment factors need 'periods'")
        rates = self._rates_for(self.periods)
        if rates is None:
            rates = [self.periodic_rate] * self.periods
        column = np.asarray([float(r) for r in rates], dtype=np.float64)[:, None]
        v = variable.discount_factors(column)[:, 0]
        weights = np.concatenate([[1.0], v[:-1]]) if self.advance else v
        return float(weights.sum()), float(v[-1])

    @property
    def exact_payment(self) -> float:
        """The level payment before rounding to the cent, in currency units (float64)."""
        if self.periods is None:
            return float(self._level_cents) / 100
        weight, v_n = self.payment_factors()
        owed = (to_cents(self.principal) + self._capitalised_cents) / 100
        return (owed - float(self.balloon) * v_n) / weight

    @functools.cached_property
    def _horizon(self) -> int:
        """The period whose payment is the last one (or a safe cap for an open term)."""
        if self.periods is not None:
            return self.periods
        pay = self._level_cents
        rate = float(self.periodic_rate)
        balloon = float(self.balloon)
        # Refuses a payment whose exact term passes MAX_PERIODS, with the figure.
        solve.whole_periods(
            float(self.principal), rate, pay / 100, balloon=balloon, advance=self.advance
        )
        # The cap must never end the schedule before its balance closes: the
        # engine stops where it closes, and the cap only forces a last payment.
        # The balance is non-increasing, so each period's interest is at most
        # the first one's and each period before the last repays at least
        # step = pay - first interest (>= 1 cent, checked on construction).
        b0 = to_cents(self.principal)
        step = pay - self._first_interest_cents(pay)
        horizon = (b0 - (0 if self.advance else to_cents(self.balloon))) // step + 2
        # Tighter: each interest rounding adds at most a cent, so the cent
        # balance stays at or below the exact balance under a payment one cent
        # smaller (one more for the advance remainder's rounding); two periods
        # spare absorb the float term's error.
        slower = pay - 2
        if slower > 0:
            try:
                term = solve.whole_periods(
                    float(self.principal),
                    rate,
                    slower / 100,
                    balloon=balloon,
                    advance=self.advance,
                )
            except (InvalidTerms, NoSolution):
                pass
            else:
                horizon = min(horizon, int(term.periods) + 2)
        return min(horizon, solve.MAX_PERIODS + 1)

    def batch_terms(self, horizon: int | None = None) -> BatchTerms:
        """Return this loan as a batch of one for the schedule engine.

        The engine's principal includes capitalised odd-days interest; a dated
        loan whose periods earn different rates carries one rate a period.
        """
        horizon = self._engine_horizon if horizon is None else horizon
        rate = self.periodic_rate
        rates = self._rates_for(horizon)
        big = rate.denominator >= 2**62 or rate.numerator >= 2**62
        one = lambda v: np.array([v], dtype=object if big else np.int64)  # noqa: E731
        per_num = per_den = None
        if rates is not None:
            wide = max(max(r.numerator, r.denominator) for r in rates) >= 2**62
            kind: Any = object if wide else np.int64
            per_num = np.array([[r.numerator] for r in rates], dtype=kind)
            per_den = np.array([[r.denominator] for r in rates], dtype=kind)
        rule_payment = rule_covers = None
        if self.structured:
            ks = np.arange(1, horizon + 1)
            only = ks <= self.interest_only_periods
            if self.events:
                ev = self._event_rules
                path = [p + x for p, x in zip(ev.payments, ev.extras, strict=True)]
                rule_payment = np.asarray(path, dtype=np.int64)[:, None]
                rule_covers = np.zeros((horizon, 1), dtype=bool)
            elif self.custom_payments is not None:
                path = self._capped([to_cents(v) for v in self.custom_payments], horizon)
                rule_payment = np.asarray(path, dtype=np.int64)[:, None]
                rule_covers = np.zeros((horizon, 1), dtype=bool)
            elif self.seasonal:
                paying = np.asarray(self._paying(horizon), dtype=np.int64)
                rule_payment = (paying * self._level_cents)[:, None]
                rule_covers = np.zeros((horizon, 1), dtype=bool)
            elif self.graduated:
                path = self._payment_path(horizon)
                rule_payment = np.asarray(path, dtype=np.int64)[:, None]
                rule_covers = only[:, None]
            elif self.structure is Structure.LEVEL:
                rule_payment = np.where(only, 0, self._level_cents)[:, None].astype(np.int64)
                rule_covers = only[:, None]
            elif self.structure is Structure.EQUAL_PRINCIPAL:
                rule_payment = np.where(only, 0, self._level_cents)[:, None].astype(np.int64)
                rule_covers = np.ones((horizon, 1), dtype=bool)
            else:
                rule_payment = np.zeros((horizon, 1), dtype=np.int64)
                rule_covers = np.ones((horizon, 1), dtype=bool)
        return BatchTerms(
            period_payment=rule_payment,
            period_covers_interest=rule_covers,
            principal=np.array([to_cents(self.principal) + self._capitalised_cents]),
            rate_num=one(rate.numerator),
            rate_den=one(rate.denominator),
            payment=np.array([self._level_cents]),
            periods=np.array([horizon]),
            balloon=np.array([to_cents(self.balloon)]),
            advance=np.array([self.advance]),
            period_rate_num=per_num,
            period_rate_den=per_den,
        )

    @functools.cached_property
    def _engine_horizon(self) -> int:
        """The horizon the schedule runs to; an open dated term doubles until it closes."""
        horizon = self._horizon
        if self.periods is not None or not self.dated:
            return horizon
        while True:
            table = run(self.batch_terms(horizon), self.interest_rounding)
            closed_early = int(table.rows[0]) < horizon
            if closed_early or int(table.final_payment[0]) <= self._level_cents:
                # Plan exactly the periods it ran, so that a day count that looks at
                # the termination date (30E/360 ISDA) sees the real maturity.
                return int(table.rows[0])
            if horizon > solve.MAX_PERIODS:
                return horizon
            horizon = min(2 * horizon, solve.MAX_PERIODS + 1)

    @functools.cached_property
    def _table(self) -> CentsTable:
        table = run(self.batch_terms(), self.interest_rounding)
        if self.periods is None and int(table.rows[0]) > solve.MAX_PERIODS:
            raise NoSolution(
                f"'fixed_payment' {self.fixed_payment:,} would take {int(table.rows[0]):,} "
                f"payments, more than the {solve.MAX_PERIODS:,} amort accepts"
            )
        return table

    # -- results -----------------------------------------------------------------------

    @property
    def number_of_payments(self) -> int:
        """How many payments the schedule has (fewer than ``periods`` if it closes early)."""
        return int(self._table.rows[0])

    def schedule(self) -> pd.DataFrame:
        """Return the schedule, one row a period, money as float64 holding exact cents.

        Columns: ``period, due_date, opening_balance, payment, interest, principal,
        closing_balance``, then ``balloon`` when the loan has one.
        """
        frame = schedule_frame(self._table)
        if self.events:
            self._event_columns(frame)
        if not self.dated:
            return frame
        rows = len(frame)
        plan_ = self._plan_for(self._engine_horizon)
        frame["due_date"] = pd.to_datetime(pd.Series(plan_.due[:rows])).astype("datetime64[ns]")
        frame["days"] = np.asarray(plan_.days[:rows], dtype=np.int64)
        applied = self._rates_for(self._engine_horizon) or list(plan_.rates)  # with any reset
        frame["rate"] = np.asarray([float(r) for r in applied[:rows]], dtype=np.float64)
        if self._capitalised_cents:
            capitalised = np.zeros(rows)
            capitalised[0] = self._capitalised_cents / 100
            frame["capitalised"] = capitalised
            frame.loc[0, "opening_balance"] = to_cents(self.principal) / 100
        if self._separate_cents:
            separate = np.zeros(rows)
            separate[0] = self._separate_cents / 100
            frame["odd_days_interest"] = separate
        return frame

    def _event_columns(self, frame: pd.DataFrame) -> None:
        """Split extra principal out of the payment; show capitalised holiday interest."""
        ev = self._event_rules
        rows = len(frame)
        regular = np.asarray(ev.payments[:rows], dtype=np.int64)
        paid = np.rint(frame["payment"].to_numpy() * 100).astype(np.int64)
        extra = np.clip(paid - regular, 0, np.asarray(ev.extras[:rows], dtype=np.int64))
        if extra.any():
            frame["payment"] = (paid - extra) / 100
            frame["principal"] = frame["principal"] - extra / 100
            frame["extra_principal"] = extra / 100
        holiday = np.asarray([k in ev.holidays for k in range(1, rows + 1)])
        if holiday.any():
            capitalised = np.where(holiday, frame["interest"].to_numpy(), 0.0)
            frame["principal"] = np.where(holiday, 0.0, frame["principal"])
            frame["capitalised"] = capitalised
        if any(isinstance(e, events_.RateReset) for e in self.events) and "rate" not in frame:
            frame["rate"] = [float(r) for r in ev.rates[:rows]]

    def summary(self) -> dict[str, Any]:
        """Return the key figures: payment, number of payments, final payment, totals, maturity.

        Money values are :class:`~decimal.Decimal` in currency units.
        """
        table = self._table
        total_payments = from_cents(int(table.payment.sum()))
        balloon_paid = from_cents(int(table.balloon_paid[0]))
        odd = from_cents(self._odd_cents)
        separate = from_cents(self._separate_cents)
        maturity = None
        first_due = None
        if self.dated:
            plan_ = self._plan_for(self._engine_horizon)
            maturity = plan_.due[self.number_of_payments - 1]
            if self.advance and int(table.balloon_paid[0]) > 0:
                # In advance the balloon falls due at the end of the last period.
                maturity = plan_.bounds[self.number_of_payments]
            first_due = plan_.due[0]
        return {
            "principal": self.principal,
            "annual_rate": self.annual_rate,
            "periodic_rate": self.periodic_rate,
            "frequency": self.frequency.value,
            "timing": self.timing.value,
            "payment": self.payment,
            "number_of_payments": self.number_of_payments,
            "final_payment": from_cents(int(table.final_payment[0])),
            "balloon": balloon_paid,
            "total_interest": from_cents(int(table.interest.sum())) + odd,
            "total_principal": from_cents(int(table.principal.sum()) - self._capitalised_cents),
            "total_paid": total_payments + balloon_paid + separate,
            "odd_days_interest": odd,
            "maturity_period": self.number_of_payments,
            "maturity_date": maturity,
            "start": self.start_date,
            "first_payment_date": first_due,
            "day_count": self.day_count.value,
            "compounding": None if self.compounding is None else self.compounding.name,
            "structure": self.structure.value,
            "interest_only_periods": self.interest_only_periods,
            "custom_payments": self.custom_payments is not None,
            "payment_months": self.payment_months,
            "negative_amortisation": bool((table.principal < 0).any()),
            "negative_amortisation_cap": self.negative_amortisation_cap,
            "cap_reached_period": self.__dict__.get("_cap_period"),
            "payment_growth": self.payment_growth,
            "payment_step": self.payment_step,
            "growth_every": self.growth_every if self.graduated else None,
            "principal_part": (
                from_cents(self._level_cents)
                if self.structure is Structure.EQUAL_PRINCIPAL
                else None
            ),
            "rounding": self.rounding.value,
            "interest_rounding": self.interest_rounding.value,
        }

    def reconciliation(self) -> Reconciliation:
        """Return the schedule's checks against the closed form (see :mod:`amort.reconcile`)."""
        row = reconcile(self.batch_terms(), self._table, self.interest_rounding).iloc[0]
        return Reconciliation(
            largest_gap=float(row["largest_gap"]),
            gap_bound=float(row["gap_bound"]),
            final_adjustment=float(row["final_adjustment"]),
            expected_adjustment=float(row["expected_adjustment"]),
            adjustment_bound=float(row["adjustment_bound"]),
            balloon_paid=from_cents(int(self._table.balloon_paid[0])),
            balloon_adjustment=from_cents(
                int(self._table.balloon_paid[0]) - to_cents(self.balloon)
            ),
            principal_identity=bool(row["principal_identity"]),
            payment_identity=bool(row["payment_identity"]),
            chain_identity=bool(row["chain_identity"]),
            closes_at_zero=bool(row["closes_at_zero"]),
            passed=bool(row["passed"]),
            gap_within_bound=bool(row["gap_within_bound"]),
        )
