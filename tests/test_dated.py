"""Dated loans (amort.dated through Loan): validation, columns, due dates, business days.

The exact cents of dated schedules are checked against an independent
reference in tests/reference/test_dated_cents.py; this module checks the
surface: refusals, the frame's columns and dtypes, the due dates, business-day
adjustment and the summary's dates.
"""

from __future__ import annotations

import dataclasses
from datetime import date
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

from amort import Loan
from amort.daycount import DayCount
from amort.errors import InvalidTerms

BASE = {"principal": "10000", "annual_rate": "6%", "periods": 12}
DATED_COUNTS = [c.value for c in DayCount]


def refusal(**terms: object) -> str:
    """Return the message of the InvalidTerms that Loan(**BASE, **terms) raises."""
    with pytest.raises(InvalidTerms) as caught:
        Loan(**{**BASE, **terms})
    return str(caught.value)


def assert_one_sentence(message: str, *words: str) -> None:
    """One line, one sentence (no second sentence after a full stop), naming ``words``."""
    assert "\n" not in message and "Traceback" not in message
    assert not any(f". {c}" in message for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZ"), message
    for word in words:
        assert word in message, (word, message)


# -- bad input -----------------------------------------------------------------------------


@pytest.mark.parametrize("field", ["start", "first_payment"])
def test_an_impossible_date_is_refused_naming_the_field(field: str) -> None:
    terms = {"start": "2027-01-15", field: "2027-02-30"}
    assert_one_sentence(refusal(**terms), f"'{field}'", "2027-02-30", "not a valid date")


@pytest.mark.parametrize("first", ["2027-01-15", "2027-01-10"])
def test_first_payment_on_or_before_the_start_is_refused_in_arrears(first: str) -> None:
    message = refusal(start="2027-01-15", first_payment=first)
    assert_one_sentence(message, "'first_payment'", first, "'start'", "2027-01-15", "after")


def test_first_payment_before_the_start_is_refused_in_advance() -> None:
    message = refusal(start="2027-01-15", first_payment="2027-01-14", timing="advance")
    assert_one_sentence(message, "'first_payment'", "2027-01-14", "on or after", "advance")
    # ... but on the start itself it is the ordinary annuity-due.
    loan = Loan(**BASE, start="2027-01-15", first_payment="2027-01-15", timing="advance")
    assert loan.schedule()["due_date"].iloc[0] == pd.Timestamp("2027-01-15")


def test_an_unknown_day_count_is_refused_with_the_valid_ones() -> None:
    message = refusal(start="2027-01-15", day_count="actual/364")
    assert_one_sentence(message, "'day_count'", "'actual/364'", "'actual/365'", "'30/360'")


@pytest.mark.parametrize(("calendar", "shown"), [("XX", "'XX'"), ("US-ZZ", "'US-ZZ'")])
def test_an_unknown_holiday_calendar_is_refused(calendar: str, shown: str) -> None:
    message = refusal(start="2027-01-15", business_days="following", holidays=calendar)
    assert_one_sentence(message, "'holidays'", shown)


@pytest.mark.parametrize("pair", [(15, 15), (15,), (0, 15), (1, 32), (1, 15, 28), "1,1"])
def test_semimonthly_days_must_be_two_different_days(pair: object) -> None:
    message = refusal(start="2027-01-15", frequency="semimonthly", semimonthly_days=pair)
    assert_one_sentence(message, "'semimonthly_days'", "two different days", repr(pair))


@pytest.mark.parametrize("compounding", [0, -12, 2.5, "sometimes", True])
def test_compounding_must_be_a_positive_whole_number_of_times_a_year(compounding: object) -> None:
    message = refusal(start="2027-01-15", compounding=compounding)
    assert_one_sentence(message, "'compounding'", "whole number of times a year")
    assert repr(compounding) in message or str(compounding) in message


@pytest.mark.parametrize("day_count", [c for c in DATED_COUNTS if c != "equal"])
def test_a_day_count_needs_dates(day_count: str) -> None:
    message = refusal(day_count=day_count)
    assert_one_sentence(message, "'day_count'", repr(day_count), "'start'")


def test_business_days_need_dates() -> None:
    assert_one_sentence(refusal(business_days="following"), "'start'")


@pytest.mark.parametrize("day_count", [c for c in DATED_COUNTS if c != "equal"])
def test_compounding_goes_only_with_the_equal_rule(day_count: str) -> None:
    message = refusal(start="2027-01-15", day_count=day_count, compounding="monthly")
    assert_one_sentence(message, "'compounding'", "'equal'", repr(day_count))
    # Under 'equal' the same compounding is accepted: i = (1 + j/12)^1 - 1 = j/12.
    loan = Loan(**BASE, start="2027-01-15", compounding="monthly")
    assert loan.periodic_rate == Fraction(1, 200)


@pytest.mark.parametrize(
    ("field", "value"),
    [("odd_days", "ignore"), ("interest_dates", "both"), ("business_days", "sometimes")],
)
def test_unknown_options_are_refused(field: str, value: str) -> None:
    assert_one_sentence(refusal(start="2027-01-15", **{field: value}), f"'{field}'", repr(value))


def test_a_semimonthly_start_off_the_payment_days_names_the_start() -> None:
    message = refusal(start="2027-01-20", frequency="semimonthly")
    assert_one_sentence(message, "'start'", "2027-01-20")


# -- the frame -----------------------------------------------------------------------------


def test_dated_schedule_columns_and_dtypes() -> None:
    loan = Loan(**BASE, start="2027-01-10", first_payment="2027-03-01", day_count="actual/365")
    frame = loan.schedule()
    assert list(frame.columns) == [
        "period",
        "due_date",
        "opening_balance",
        "payment",
        "interest",
        "principal",
        "closing_balance",
        "days",
        "rate",
    ]
    assert frame["due_date"].dtype == np.dtype("datetime64[ns]")
    assert not frame["due_date"].isna().any()
    assert frame["days"].dtype == np.int64
    assert frame["rate"].dtype == np.float64
    for column in ("opening_balance", "payment", "interest", "principal", "closing_balance"):
        assert frame[column].dtype == np.float64
    # Jan 10 -> Mar 1 is 50 days; then calendar months (Actual/365 Fixed, ISDA 2006 4.16(d)).
    assert frame["days"].tolist()[:4] == [50, 31, 30, 31]
    assert frame["rate"].iloc[0] == float(Fraction(6, 100) * Fraction(50, 365))


def test_undated_schedule_keeps_nat_due_dates_and_no_dated_columns() -> None:
    frame = Loan(**BASE).schedule()
    assert frame["due_date"].isna().all()
    assert "days" not in frame and "rate" not in frame


@pytest.mark.parametrize(
    ("odd_days", "column"), [("separate", "odd_days_interest"), ("capitalise", "capitalised")]
)
def test_odd_days_columns(odd_days: str, column: str) -> None:
    # 10,000 at 7.3 % Actual/365 is 2.00 a day; Jan 10 -> Feb 1 is 22 odd days: 44.00.
    loan = Loan(
        principal="10000",
        annual_rate="7.3%",
        periods=12,
        start="2027-01-10",
        first_payment="2027-03-01",
        day_count="actual/365",
        odd_days=odd_days,
    )
    frame = loan.schedule()
    assert frame.columns[-1] == column
    assert frame[column].tolist() == [44.0] + [0.0] * 11
    assert frame["opening_balance"].iloc[0] == 10000.0
    assert loan.summary()["odd_days_interest"] == Decimal("44.00")
    assert frame["days"].iloc[0] == 28  # period 1 is the regular month Feb 1 -> Mar 1


# -- due dates -----------------------------------------------------------------------------


def due(frame: pd.DataFrame) -> list[date]:
    return [d.date() for d in frame["due_date"]]


def test_a_start_on_the_31st_is_due_on_the_31st_in_long_months() -> None:
    loan = Loan(**{**BASE, "periods": 4}, start="2027-01-31", day_count="actual/365")
    assert due(loan.schedule()) == [
        date(2027, 2, 28),
        date(2027, 3, 31),
        date(2027, 4, 30),
        date(2027, 5, 31),
    ]
    assert loan.schedule()["days"].tolist() == [28, 31, 30, 31]


def test_a_first_payment_on_the_31st_steps_from_itself() -> None:
    loan = Loan(**{**BASE, "periods": 3}, start="2027-02-10", first_payment="2027-03-31")
    assert due(loan.schedule()) == [date(2027, 3, 31), date(2027, 4, 30), date(2027, 5, 31)]


def test_end_of_month_keeps_a_february_start_at_month_ends() -> None:
    loan = Loan(**{**BASE, "periods": 3}, start="2027-02-28", end_of_month=True)
    assert due(loan.schedule()) == [date(2027, 3, 31), date(2027, 4, 30), date(2027, 5, 31)]
    plain = Loan(**{**BASE, "periods": 3}, start="2027-02-28")
    assert due(plain.schedule()) == [date(2027, 3, 28), date(2027, 4, 28), date(2027, 5, 28)]


@pytest.mark.parametrize(
    ("pair", "first", "expected"),
    [
        ((1, 15), "2027-02-01", ["2027-02-01", "2027-02-15", "2027-03-01", "2027-03-15"]),
        ((15, 31), "2027-02-15", ["2027-02-15", "2027-02-28", "2027-03-15", "2027-03-31"]),
    ],
)
def test_semimonthly_due_dates(pair: tuple[int, int], first: str, expected: list[str]) -> None:
    loan = Loan(
        **{**BASE, "periods": 4},
        frequency="semimonthly",
        semimonthly_days=pair,
        start="2027-01-20",
        first_payment=first,
        day_count="actual/365",
    )
    assert due(loan.schedule()) == [date.fromisoformat(d) for d in expected]


@pytest.mark.parametrize(
    ("rule", "moved"),
    [
        ("following", date(2027, 5, 17)),  # Saturday 15 May -> Monday
        ("preceding", date(2027, 5, 14)),  # -> Friday
        ("modified-following", date(2027, 5, 17)),
    ],
)
def test_business_day_adjustment_moves_a_saturday_due_date(rule: str, moved: date) -> None:
    terms = {**BASE, "periods": 6, "start": "2027-01-15", "day_count": "actual/365"}
    plain = due(Loan(**terms).schedule())
    adjusted = due(Loan(**terms, business_days=rule).schedule())
    assert plain[3] == date(2027, 5, 15) and plain[3].weekday() == 5
    assert adjusted[3] == moved
    assert [a for a, b in zip(adjusted, plain, strict=True) if a != b] == [moved]


def test_modified_following_stays_in_the_month() -> None:
    # Saturday 31 July 2027: following would cross into August.
    terms = {**BASE, "periods": 8, "start": "2026-12-31"}
    assert due(Loan(**terms, business_days="following").schedule())[6] == date(2027, 8, 2)
    assert due(Loan(**terms, business_days="modified-following").schedule())[6] == date(2027, 7, 30)


def test_a_holiday_calendar_moves_a_holiday_due_date() -> None:
    # 5 July 2027 is Independence Day (observed) in the US calendar of the holidays package.
    terms = {**BASE, "periods": 8, "start": "2027-01-05", "business_days": "following"}
    assert due(Loan(**terms).schedule())[5] == date(2027, 7, 5)
    assert due(Loan(**terms, holidays="US").schedule())[5] == date(2027, 7, 6)


def test_interest_dates_adjusted_changes_the_interest_unadjusted_does_not() -> None:
    terms = {
        "principal": "100000",
        "annual_rate": "7.3%",
        "periods": 6,
        "start": "2027-01-15",
        "day_count": "actual/365",
    }
    none = Loan(**terms).schedule()
    unadjusted = Loan(**terms, business_days="following").schedule()
    adjusted = Loan(**terms, business_days="following", interest_dates="adjusted").schedule()
    assert unadjusted["interest"].tolist() == none["interest"].tolist()
    assert unadjusted["days"].tolist() == none["days"].tolist()
    assert due(unadjusted) == due(adjusted) != due(none)
    # 15 May 2027 is a Saturday: period 4 runs two days longer, period 5 two days shorter.
    assert adjusted["days"].tolist() == [31, 28, 31, 32, 29, 30]
    assert none["days"].tolist() == [31, 28, 31, 30, 31, 30]
    assert adjusted["interest"].tolist() != none["interest"].tolist()
    # 7.3 % / 365 = 0.0002 a day: period 4's interest on its opening balance, exactly.
    opening = Decimal(str(adjusted["opening_balance"].iloc[3]))
    assert Decimal(str(adjusted["interest"].iloc[3])) == (opening * 32 / 5000).quantize(
        Decimal("0.01")
    )


# -- the summary ---------------------------------------------------------------------------


def test_summary_dates() -> None:
    loan = Loan(**BASE, start="2027-01-10", first_payment="2027-03-01", day_count="actual/360")
    summary = loan.summary()
    assert summary["start"] == date(2027, 1, 10)
    assert summary["first_payment_date"] == date(2027, 3, 1)
    assert summary["maturity_date"] == date(2028, 2, 1)
    assert summary["day_count"] == "actual/360"
    undated = Loan(**BASE).summary()
    assert undated["maturity_date"] is None and undated["first_payment_date"] is None


def test_summary_dates_are_business_day_adjusted() -> None:
    # Due on the 15th; 15 January 2028 is a Saturday.
    loan = Loan(**BASE, start="2027-01-15", business_days="following")
    assert loan.summary()["maturity_date"] == date(2028, 1, 17)


def test_summary_dates_in_advance() -> None:
    loan = Loan(**BASE, start="2027-01-15", timing="advance")
    summary = loan.summary()
    assert summary["first_payment_date"] == date(2027, 1, 15)
    assert summary["maturity_date"] == date(2027, 12, 15)


@pytest.mark.parametrize(
    ("odd_days", "timing"),
    [("accrue", "arrears"), ("separate", "arrears"), ("separate", "advance")],
)
def test_summary_totals_add_up(odd_days: str, timing: str) -> None:
    summary = odd_days_loan(odd_days, timing).summary()
    assert summary["total_paid"] == (
        summary["total_interest"] + summary["total_principal"] + summary["balloon"]
    )
    assert summary["total_principal"] + summary["balloon"] == Decimal("10000.00")


@pytest.mark.parametrize(
    ("odd_days", "timing"),
    [("capitalise", "arrears"), ("capitalise", "advance"), ("accrue", "advance")],
)
def test_summary_totals_add_up_with_capitalised_odd_days(odd_days: str, timing: str) -> None:
    # In advance the odd days before the first payment are capitalised under 'accrue' too.
    summary = odd_days_loan(odd_days, timing).summary()
    assert summary["odd_days_interest"] > 0
    assert summary["total_paid"] == (
        summary["total_interest"] + summary["total_principal"] + summary["balloon"]
    )


def odd_days_loan(odd_days: str, timing: str) -> Loan:
    return Loan(
        principal="10000",
        annual_rate="7.3%",
        periods=24,
        balloon="1500",
        start="2027-01-10",
        first_payment="2027-03-01" if timing == "arrears" else "2027-02-01",
        day_count="actual/365",
        odd_days=odd_days,
        timing=timing,
    )


# -- open terms and replace ----------------------------------------------------------------


@pytest.mark.parametrize("day_count", DATED_COUNTS)
@pytest.mark.parametrize("timing", ["arrears", "advance"])
def test_a_fixed_payment_with_an_open_dated_term_ends_on_a_smaller_payment(
    day_count: str, timing: str
) -> None:
    loan = Loan(
        principal="25000",
        annual_rate="8.25%",
        fixed_payment="600",
        start="2027-01-31",
        first_payment="2027-03-15" if timing == "arrears" else "2027-02-15",
        day_count=day_count,
        timing=timing,
    )
    frame = loan.schedule()
    summary = loan.summary()
    assert 40 <= len(frame) <= 55
    assert (frame["payment"].iloc[:-1] == 600.0).all()
    assert 0 < frame["payment"].iloc[-1] <= 600.0
    assert frame["closing_balance"].iloc[-1] == 0.0
    assert (frame["closing_balance"].iloc[:-1] > 0).all()
    assert summary["number_of_payments"] == len(frame)
    assert summary["maturity_date"] == frame["due_date"].iloc[-1].date()
    assert loan.reconciliation().passed


def test_replace_on_a_dated_loan() -> None:
    loan = Loan(
        **BASE,
        start="2027-01-10",
        first_payment="2027-03-01",
        day_count="actual/365",
        business_days="following",
        odd_days="separate",
    )
    longer = dataclasses.replace(loan, periods=24)
    assert longer.start == date(2027, 1, 10) and longer.first_payment == date(2027, 3, 1)
    assert longer.day_count is DayCount.ACT_365F
    assert len(longer.schedule()) == 24
    assert due(longer.schedule())[:12] == due(loan.schedule())
    other = dataclasses.replace(loan, day_count="actual/360")
    assert other.day_count is DayCount.ACT_360
    assert other.schedule()["interest"].iloc[0] > loan.schedule()["interest"].iloc[0]
    moved = dataclasses.replace(loan, start="2027-02-01", first_payment="2027-03-01")
    assert "odd_days_interest" not in moved.schedule()  # now a regular first period
    assert moved.summary()["odd_days_interest"] == 0
    # A replace is validated again.
    with pytest.raises(InvalidTerms, match="'first_payment'"):
        dataclasses.replace(loan, start="2027-03-01")
    # The original is untouched, and replace with no changes gives an equal loan.
    assert loan.periods == 12 and dataclasses.replace(loan) == loan


# -- known problems, as reproducers ----------------------------------------------------------


def test_a_30_year_loan_with_a_long_first_period_is_accepted() -> None:
    # Disbursed 10 January, first payment 1 March (50 days): common practice for mortgages.
    loan = Loan(
        principal="10000",
        annual_rate="7.3%",
        periods=360,
        start="2027-01-10",
        first_payment="2027-03-01",
        day_count="actual/365",
    )
    frame = loan.schedule()
    assert frame["interest"].iloc[0] == 100.00  # 50 days at 2.00
    assert frame["closing_balance"].iloc[-1] == 0.0
    assert loan.reconciliation().passed


def test_due_dates_past_2262_are_refused_in_one_sentence() -> None:
    # pandas datetime64[ns] ends on 2262-04-11: a schedule past it is refused, clearly.
    with pytest.raises(InvalidTerms, match="past 2262-04-11"):
        Loan(principal=1000, annual_rate="5%", periods=300, frequency="annual", start="2027-01-15")


def test_equal_rule_a_start_on_the_31st_has_a_regular_first_period() -> None:
    # Jan 31 -> Feb 28 is a whole month (calendar.is_regular_first_period says so too).
    dated = Loan(**BASE, start="2027-01-31")
    assert dated.schedule()["rate"].iloc[0] == 0.005
    undated = Loan(**BASE)
    assert dated.payment == undated.payment
    assert dated.schedule()["interest"].tolist() == undated.schedule()["interest"].tolist()


def test_equal_rule_counts_whole_months_back_without_drift() -> None:
    # From 15 Jan to 31 Mar: whole months back from 31 Mar are 28 Feb and 31 Jan, then
    # 16 days of the 31-day month 31 Dec -> 31 Jan: 2 + 16/31 periods of 1 % each.
    loan = Loan(
        principal="10000",
        annual_rate="12%",
        periods=12,
        start="2027-01-15",
        first_payment="2027-03-31",
    )
    assert loan.schedule()["rate"].iloc[0] == float(Fraction(1, 100) * (2 + Fraction(16, 31)))


def test_a_first_payment_one_year_after_a_leap_february_start_is_regular() -> None:
    loan = Loan(
        principal="10000",
        annual_rate="7.3%",
        periods=3,
        frequency="annual",
        start="2028-02-28",
        end_of_month=True,
        day_count="actual/365",
        odd_days="capitalise",
    )
    assert loan.first_payment_date == date(2029, 2, 28)  # amort's own default: one year on
    assert loan.summary()["odd_days_interest"] == 0
    assert "capitalised" not in loan.schedule()


def test_30e_360_isda_open_term_ends_at_its_own_termination_date() -> None:
    # ISDA 2006 4.16(h): a last day of February is kept when it is the termination date.
    terms = {
        "principal": "9800",
        "annual_rate": "12%",
        "fixed_payment": "800",
        "start": "2026-12-31",
        "day_count": "30e/360-isda",
    }
    open_term = Loan(**terms).schedule()
    assert open_term["due_date"].iloc[-1] == pd.Timestamp("2028-02-29")
    fixed_term = Loan(**terms, periods=len(open_term)).schedule()
    assert fixed_term["days"].iloc[-1] == 29  # 30 Jan -> 29 Feb, D2 kept at 29
    assert open_term["days"].tolist() == fixed_term["days"].tolist()
    assert open_term["interest"].tolist() == fixed_term["interest"].tolist()


def test_equal_rule_with_adjusted_interest_dates_on_a_semimonthly_loan() -> None:
    # 15 May 2027 is a Saturday: the first payment moves to Monday 17 May.
    loan = Loan(
        principal="1000",
        annual_rate="6%",
        periods=6,
        frequency="semimonthly",
        start="2027-05-03",
        first_payment="2027-05-15",
        business_days="following",
        interest_dates="adjusted",
    )
    assert due(loan.schedule())[0] == date(2027, 5, 17)
