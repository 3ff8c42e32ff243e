"""Validation of a Loan's dates and payment rules (called once, on construction).

Each function reads the raw fields of a :class:`~amort.loan.Loan` being built,
turns them into their normal form through ``set_`` (the frozen dataclass's
``object.__setattr__``) and raises :class:`~amort.errors.InvalidTerms` with
one sentence naming the field, the value and what would be valid.
"""

from __future__ import annotations

from decimal import Decimal
from typing import TYPE_CHECKING, Any

import numpy as np

from amort import calendar, solve
from amort import events as events_
from amort.calendar import BusinessDay
from amort.conventions import Frequency, Structure
from amort.dated import InterestDates, OddDays
from amort.daycount import DayCount
from amort.errors import InvalidTerms, describe
from amort.money import parse_amount, parse_number, parse_rate
from amort.rates import Compounding

if TYPE_CHECKING:
    from amort.loan import Loan


def parse_periods(value: object, field: str = "periods") -> int:
    """Return a number of payments: a whole number from 1 to 100,000.

    >>> parse_periods("360")
    360
    """
    limit = solve.MAX_PERIODS
    rule = f"{field!r} must be a whole number of payments from 1 to {limit:,}"
    if isinstance(value, bool):
        raise InvalidTerms(f"{rule} (got {describe(value)})")
    if isinstance(value, (int, np.integer)):
        number = int(value)
    else:
        try:
            exact = parse_number(value, field)
        except InvalidTerms:
            raise InvalidTerms(f"{rule} (got {describe(value)})") from None
        if exact != exact.to_integral_value():
            raise InvalidTerms(
                f"{rule}; a fraction of a payment is not a term (got {describe(value)})"
            )
        number = int(exact)
    if number < 1:
        raise InvalidTerms(f"{rule} (got {describe(value)})")
    if number > limit:
        raise InvalidTerms(f"{rule}; longer terms are refused as absurd (got {describe(value)})")
    return number


def normalise_structure(loan: Loan, set_: Any) -> None:
    set_("structure", Structure.parse(loan.structure))
    only = loan.interest_only_periods
    if isinstance(only, bool) or not isinstance(only, (int, np.integer)) or only < 0:
        raise InvalidTerms(
            f"'interest_only_periods' must be a whole number >= 0 (got {describe(only)})"
        )
    set_("interest_only_periods", int(only))
    if loan.payment_growth is not None:
        set_("payment_growth", parse_rate(loan.payment_growth, "payment_growth"))
    if loan.payment_step is not None:
        set_("payment_step", parse_amount(loan.payment_step, "payment_step"))
    if loan.payment_growth is not None and loan.payment_step is not None:
        raise InvalidTerms(
            "give 'payment_growth' (geometric) or 'payment_step' (arithmetic), not both"
        )
    if loan.growth_every is None:
        set_("growth_every", loan.frequency.per_year)
    elif (
        isinstance(loan.growth_every, bool)
        or not isinstance(loan.growth_every, (int, np.integer))
        or loan.growth_every < 1
    ):
        raise InvalidTerms(
            "'growth_every' must be a whole number of periods >= 1 "
            f"(got {describe(loan.growth_every)})"
        )
    normalise_custom(loan, set_)
    normalise_events(loan, set_)
    normalise_cap(loan, set_)
    if loan.graduated and loan.structure is not Structure.LEVEL:
        raise InvalidTerms(
            f"graduated payments apply to the 'level' structure (got {loan.structure.value!r})"
        )
    if not loan.structured:
        return
    if loan.periods is None or loan.fixed_payment is not None:
        raise InvalidTerms(
            f"structure {loan.structure.value!r} with interest-only periods needs 'periods' "
            "and no 'fixed_payment'"
            if loan.structure is Structure.LEVEL
            else f"structure {loan.structure.value!r} needs 'periods' and no 'fixed_payment'"
        )
    if loan.advance:
        raise InvalidTerms(
            f"structure {loan.structure.value!r} and interest-only periods are for "
            "payments in arrears in this version"
        )
    if loan.structure is Structure.BULLET and loan.balloon > 0:
        raise InvalidTerms(
            "a bullet loan repays all its principal with the last payment; give no 'balloon'"
        )
    if loan.structure is not Structure.BULLET and loan.interest_only_periods >= loan.periods:
        raise InvalidTerms(
            f"'interest_only_periods' must be fewer than the {loan.periods:,} payments "
            f"(got {loan.interest_only_periods:,}); for interest only to the end use "
            "structure 'bullet'"
        )


def normalise_cap(loan: Loan, set_: Any) -> None:
    """Read the negative-amortisation cap: an amount, or a percent of the principal."""
    cap = loan.negative_amortisation_cap
    if cap is None:
        return
    if isinstance(cap, str) and cap.strip().endswith("%"):
        share = parse_rate(cap, "negative_amortisation_cap")
        amount = (loan.principal * share).quantize(Decimal("0.01"))
    else:
        amount = parse_amount(cap, "negative_amortisation_cap")
    if not loan.graduated and loan.custom_payments is None:
        raise InvalidTerms(
            "'negative_amortisation_cap' applies to payments that may not cover the interest: "
            "graduated payments (payment_growth or payment_step) or listed custom_payments"
        )
    if amount < loan.principal:
        raise InvalidTerms(
            f"'negative_amortisation_cap' {amount:,} must be at least the principal "
            f"{loan.principal:,} (or a percent of it, such as '110%')"
        )
    set_("negative_amortisation_cap", amount)


def normalise_events(loan: Loan, set_: Any) -> None:
    """Check the loan's events: a level loan in arrears with a fixed number of payments."""
    events = tuple(loan.events or ())
    set_("events", events)
    if not events:
        return
    plain = (
        loan.structure is Structure.LEVEL
        and loan.interest_only_periods == 0
        and loan.payment_growth is None
        and loan.payment_step is None
        and loan.custom_payments is None
        and loan.payment_months is None
        and loan.fixed_payment is None
        and loan.periods is not None
        and not loan.advance
    )
    if not plain:
        raise InvalidTerms(
            "'events' apply to a level loan in arrears with 'periods' and no other payment rule, "
            "in this version"
        )
    assert loan.periods is not None
    if loan.dated and any(e.on is not None for e in events):
        due = loan._plan_for(loan.periods).due
        events = events_.on_periods(events, due)
        set_("events", events)
    events_.check(events, loan.periods)


def normalise_custom(loan: Loan, set_: Any) -> None:
    others = (
        loan.structure is not Structure.LEVEL
        or loan.interest_only_periods > 0
        or loan.payment_growth is not None
        or loan.payment_step is not None
        or loan.fixed_payment is not None
    )
    if loan.custom_payments is not None:
        amounts = tuple(
            parse_amount(v, f"custom_payments[{k}]", allow_zero=True)
            for k, v in enumerate(loan.custom_payments)
        )
        if not amounts:
            raise InvalidTerms("'custom_payments' must list at least one payment")
        if loan.periods is None:
            set_("periods", parse_periods(len(amounts)))
        if len(amounts) != loan.periods:
            raise InvalidTerms(
                f"'custom_payments' lists {len(amounts):,} payments for {loan.periods:,} "
                "periods; give one a period (the last one pays what is left)"
            )
        if others or loan.payment_months is not None:
            raise InvalidTerms(
                "'custom_payments' set every payment; give no other payment rule with them"
            )
        set_("custom_payments", amounts)
    if loan.payment_months is not None:
        months = tuple(sorted(set(int(m) for m in loan.payment_months)))
        if not months or any(m < 1 or m > 12 for m in months):
            raise InvalidTerms(
                f"'payment_months' must be months 1 to 12 (got {describe(loan.payment_months)})"
            )
        if loan.frequency is not Frequency.MONTHLY or (
            loan.start is None and (loan.first_payment is None)
        ):
            raise InvalidTerms(
                "'payment_months' (a seasonal loan) needs monthly payments and dates: "
                "give 'start' or 'first_payment'"
            )
        if others:
            raise InvalidTerms(
                "'payment_months' combines with the level structure only, in this version"
            )
        set_("payment_months", months)


def normalise_dates(loan: Loan, set_: Any) -> None:
    set_("day_count", DayCount.parse(loan.day_count))
    set_("business_days", BusinessDay.parse(loan.business_days, "business_days"))
    set_("odd_days", OddDays.parse(loan.odd_days))
    set_("interest_dates", InterestDates.parse(loan.interest_dates))
    set_("semimonthly_days", calendar.parse_semimonthly_days(loan.semimonthly_days))
    if not isinstance(loan.end_of_month, bool):
        raise InvalidTerms(f"'end_of_month' must be true or false (got {loan.end_of_month!r})")
    if loan.compounding is not None:
        set_("compounding", Compounding.parse(loan.compounding))
    if loan.holidays is not None:
        calendar.parse_holiday_calendar(loan.holidays, "holidays")
    start = None if loan.start is None else calendar.parse_date(loan.start, "start")
    first = (
        None
        if loan.first_payment is None
        else calendar.parse_date(loan.first_payment, "first_payment")
    )
    set_("start", start)
    set_("first_payment", first)
    # Derived dates are kept apart from the fields, so that replace() with a
    # new start derives a new first payment instead of keeping the old one.
    eom, pair = loan.end_of_month, loan.semimonthly_days
    if start is not None and first is None:
        if loan.advance:
            first = start
        else:
            try:
                first = calendar.due_dates(
                    start, 2, loan.frequency, end_of_month=eom, semimonthly_days=pair
                ).unadjusted[1]
            except InvalidTerms as exc:
                raise InvalidTerms(str(exc).replace("'first_payment'", "'start'")) from None
    elif first is not None and start is None:
        start = (
            first
            if loan.advance
            else calendar.regular_period_start(
                first, loan.frequency, end_of_month=eom, semimonthly_days=pair
            )
        )
    loan.__dict__["_dates"] = (start, first)
    if start is None:
        if loan.day_count is not DayCount.EQUAL:
            raise InvalidTerms(
                f"'day_count' {loan.day_count.value!r} needs dates: give 'start' "
                "(the disbursement date) and 'first_payment'"
            )
        if loan.business_days is not BusinessDay.NONE:
            raise InvalidTerms(
                f"'business_days' {loan.business_days.value!r} needs dates: give 'start'"
            )
        if loan.holidays is not None:
            raise InvalidTerms(f"'holidays' {loan.holidays!r} needs dates: give 'start'")
    if loan.compounding is not None and loan.day_count is not DayCount.EQUAL:
        raise InvalidTerms(
            f"'compounding' applies under the 'equal' day count; under "
            f"{loan.day_count.value!r} each period earns simple interest for its days"
        )
