"""Payoff figures and rebates (amort.payoff): hand-computed cases, the schedule, refusals.

Every hand figure below is written out in a comment: the accrued interest is
balance x annual rate x (the day count's days / its year basis), rounded to
the cent half-up (the loans' default interest rounding). The rebate formulas
themselves are checked against published definitions in
tests/reference/test_payoff_published.py.
"""

from __future__ import annotations

import dataclasses
from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import pandas as pd
import pytest

from amort import Loan
from amort.daycount import DayCount
from amort.errors import InvalidTerms
from amort.payoff import PAYOFF_NOTE, PayoffQuote, payoff_quote
from amort.rebates import REBATE_CAUTION, RebateMethod, rebate, rebates, rebates_for

# 10,000 at 7.3 % a year, Actual/365: one day's interest is 10,000 x 0.073 / 365 = 2.00.
ACT365 = {
    "principal": "10000",
    "annual_rate": "7.3%",
    "periods": 12,
    "start": "2027-01-15",
    "day_count": "actual/365",
}
DATED_COUNTS = [c.value for c in DayCount]


def loan(**terms: Any) -> Loan:
    return Loan(**{**ACT365, **terms})


def money(value: Any) -> Decimal:
    """Return a float64 money cell (exact cents) as a Decimal to the cent."""
    return Decimal(repr(float(value))).quantize(Decimal("0.01"))


def cents(value: Decimal) -> int:
    return int(value * 100)


def refusal(call: Any, *args: Any, **kwargs: Any) -> str:
    with pytest.raises(InvalidTerms) as caught:
        call(*args, **kwargs)
    message = str(caught.value)
    assert "\n" not in message
    return message


# -- hand-computed payoffs ---------------------------------------------------------------


def test_actual_365_per_diem_and_accrued_before_the_first_payment() -> None:
    quote = payoff_quote(loan(), "2027-01-25")
    # per diem 10,000 x 0.073 / 365 = 2.00; 10 days from 15 January: 20.00.
    assert quote.per_diem == Decimal("2.00")
    assert quote.accrued_interest == Decimal("20.00")
    assert quote.balance == Decimal("10000.00")
    assert quote.payoff == Decimal("10020.00")
    assert quote.last_due_date is None
    assert quote.payments_made == 0
    assert quote.interest_from == date(2027, 1, 15)
    assert quote.day_count == "actual/365"
    assert all(
        isinstance(v, Decimal)
        for v in (quote.payoff, quote.balance, quote.accrued_interest, quote.per_diem)
    )


def test_actual_365_after_the_first_payment() -> None:
    quote = payoff_quote(loan(), date(2027, 3, 1))
    # Period 1: 31 days x 2.00 = 62.00 interest; payment 866.51; 10,000 + 62 - 866.51 = 9,195.49.
    assert quote.balance == Decimal("9195.49")
    assert quote.last_due_date == date(2027, 2, 15)
    assert quote.payments_made == 1
    # 14 days from 15 February: 9,195.49 x 0.073 x 14 / 365 = 9,195.49 x 0.0028 = 25.747372.
    assert quote.accrued_interest == Decimal("25.75")
    # per diem 9,195.49 x 0.0002 = 1.839098.
    assert quote.per_diem == Decimal("1.84")
    assert quote.payoff == Decimal("9221.24")


def test_interest_rounding_applies_to_the_accrued_interest() -> None:
    # 25.747372 rounded down is 25.74; the per diem 1.839098 down is 1.83.
    quote = payoff_quote(loan(interest_rounding="down"), "2027-03-01")
    assert quote.accrued_interest == Decimal("25.74")
    assert quote.per_diem == Decimal("1.83")


def test_actual_360_per_diem() -> None:
    terms = {"principal": "36000", "start": "2027-03-01", "day_count": "actual/360"}
    quote = payoff_quote(loan(**terms, annual_rate="6%"), "2027-03-11")
    # 36,000 x 0.06 / 360 = 6.00 a day; 10 days = 60.00.
    assert quote.per_diem == Decimal("6.00")
    assert quote.payoff == Decimal("36060.00")


def test_thirty_e_360_counts_no_day_for_the_31st() -> None:
    terms = {"principal": "36000", "annual_rate": "6%", "start": "2027-03-01"}
    quote = payoff_quote(loan(**terms, day_count="30e/360"), "2027-03-29", days=2)
    # 30E/360 sends D2 = 31 to 30: 1 -> 29 March is 28 days, -> 30 March 29, -> 31 March 29.
    # 36,000 x 0.06 / 360 = 6.00 a day.
    assert quote.per_diem == Decimal("6.00")
    assert [r.accrued_interest for r in quote.table] == [
        Decimal("168.00"),
        Decimal("174.00"),
        Decimal("174.00"),
    ]


def test_thirty_360_us_counts_the_31st_after_a_first_of_the_month() -> None:
    terms = {"principal": "36000", "annual_rate": "6%", "start": "2027-03-01"}
    quote = payoff_quote(loan(**terms, day_count="30/360"), "2027-03-30", days=1)
    # 30/360 US keeps D2 = 31 when D1 < 30: 1 -> 30 March 29 days, -> 31 March 30 days.
    assert [r.accrued_interest for r in quote.table] == [Decimal("174.00"), Decimal("180.00")]


def test_actual_actual_isda_splits_at_the_year_end() -> None:
    terms = {"principal": "36600", "annual_rate": "5%", "start": "2027-12-15"}
    dated = loan(**terms, day_count="actual/actual-isda")
    quote = payoff_quote(dated, "2028-01-10")
    # 15 Dec 2027 -> 1 Jan 2028 is 17 days over 365, 1 -> 10 Jan 2028 9 days over 366:
    # 36,600 x 0.05 x (17/365 + 9/366) = 1,830 x 17/365 + 1,830 x 9/366 = 85.232877 + 45.00.
    assert quote.accrued_interest == Decimal("130.23")
    # per diem in 2028 (a leap year): 1,830 / 366 = 5.00.
    assert quote.per_diem == Decimal("5.00")
    earlier = payoff_quote(dated, "2027-12-20")
    # In 2027: 1,830 / 365 = 5.013699 a day; 5 days = 25.068493.
    assert earlier.per_diem == Decimal("5.01")
    assert earlier.accrued_interest == Decimal("25.07")


def test_equal_rule_spreads_the_period_rate_over_its_actual_days() -> None:
    monthly = Loan(principal="12000", annual_rate="12%", periods=12, start="2027-01-15")
    assert monthly.day_count is DayCount.EQUAL
    quote = payoff_quote(monthly, "2027-01-25")
    # 1 % for the 31 days 15 Jan -> 15 Feb: 12,000 x 0.01 x 10 / 31 = 38.709677.
    assert quote.accrued_interest == Decimal("38.71")
    # per diem 12,000 x 0.01 / 31 = 3.870968.
    assert quote.per_diem == Decimal("3.87")
    february = payoff_quote(monthly, "2027-02-25")
    # Payment 1,066.19: 12,000 + 120 - 1,066.19 = 11,053.81; February's 28 days:
    # 11,053.81 x 0.01 x 10 / 28 = 39.477893; per diem 110.5381 / 28 = 3.947789.
    assert february.balance == Decimal("11053.81")
    assert february.accrued_interest == Decimal("39.48")
    assert february.per_diem == Decimal("3.95")


# -- against the schedule ----------------------------------------------------------------


def _loans() -> list[Loan]:
    out = []
    for count in DATED_COUNTS:
        for timing in ("arrears", "advance"):
            out.append(loan(day_count=count, timing=timing, periods=8))
    out.append(loan(balloon="3000", periods=6))
    out.append(loan(balloon="3000", periods=6, timing="advance"))
    return out


@pytest.mark.parametrize("dated", _loans(), ids=lambda x: f"{x.day_count.value}-{x.timing.value}")
def test_on_each_due_date_the_accrued_interest_is_zero(dated: Loan) -> None:
    frame = dated.schedule()
    for row in frame.itertuples():
        quote = payoff_quote(dated, row.due_date.date())
        assert quote.accrued_interest == 0
        assert quote.last_due_date == row.due_date.date()
        assert quote.payments_made == row.period
        # The payment due that day counts as made: arrears leaves the closing
        # balance; in advance the balance just after the payment, opening - payment.
        after = (
            money(row.opening_balance) - money(row.payment)
            if dated.advance
            else money(row.closing_balance)
        )
        if row.period == 1 and "capitalised" in frame:
            after += money(row.capitalised)
        assert quote.balance == after.quantize(Decimal("0.01"))
        assert quote.payoff == quote.balance


@pytest.mark.parametrize("count", DATED_COUNTS)
def test_the_day_before_a_due_date_is_about_one_day_short_of_the_scheduled_amount(
    count: str,
) -> None:
    dated = loan(day_count=count, periods=6)
    for row in dated.schedule().itertuples():
        eve = payoff_quote(dated, row.due_date.date() - timedelta(days=1))
        # What the next day's payment clears: the payment plus the balance it leaves.
        owed = money(row.payment) + money(row.closing_balance)
        # Short by one day's interest (none for a 31st under the 30-day rules), give or
        # take a cent of rounding.
        gap = owed - eve.payoff
        assert -Decimal("0.01") <= gap <= eve.per_diem + Decimal("0.01"), (row.period, gap)


def test_the_table_grows_by_the_per_diem_each_day() -> None:
    # 16 February to 8 March: no due date in between (the next one is 15 March).
    quote = payoff_quote(loan(), "2027-02-16", days=20)
    assert len(quote.table) == 21
    assert [r.on for r in quote.table] == [date(2027, 2, 16) + timedelta(days=d) for d in range(21)]
    assert quote.table[0].payoff == quote.payoff
    balance = quote.balance
    exact = balance * Decimal("0.073") / 365  # the exact per diem, 1.839098
    for days, row in enumerate(quote.table, start=1):
        assert row.balance == balance
        # accrued on day d is d x the exact per diem, rounded once (half-up)
        assert row.accrued_interest == (days * exact).quantize(Decimal("0.01"), "ROUND_HALF_UP")
    steps = [b.payoff - a.payoff for a, b in zip(quote.table, quote.table[1:], strict=False)]
    assert all(abs(step - quote.per_diem) <= Decimal("0.01") for step in steps)


def test_the_table_drops_by_the_payment_on_a_due_date() -> None:
    quote = payoff_quote(loan(), "2027-02-14", days=1)
    before, on_due = quote.table
    assert on_due.payoff == Decimal("9195.49")  # the closing balance of period 1
    # 14 February: 30 days x 2.00 = 60.00 on 10,000.
    assert before.payoff == Decimal("10060.00")


def test_payoff_on_the_maturity_date_is_zero() -> None:
    for dated in _loans():
        maturity = payoff_quote(dated, dated.start_date).maturity_date
        quote = payoff_quote(dated, maturity)
        assert quote.payoff == 0 and quote.balance == 0 and quote.per_diem == 0


def test_advance_balloon_falls_due_at_the_end_of_the_last_period() -> None:
    dated = loan(balloon="3000", periods=6, timing="advance")
    frame = dated.schedule()
    last = frame.iloc[-1]
    quote = payoff_quote(dated, last.due_date.date())
    # After the last payment the remainder y earns one more period: y + round(y i) = 3,000.
    remainder = Decimal("3000.00") - money(last.interest)
    assert quote.payoff == remainder
    assert quote.maturity_date == date(2027, 7, 15)  # the end of the sixth period
    assert payoff_quote(dated, "2027-07-15").payoff == 0


def test_payments_in_advance_count_from_the_start() -> None:
    dated = loan(timing="advance", periods=6)
    first = dated.schedule().iloc[0]
    quote = payoff_quote(dated, dated.start_date)
    assert quote.payments_made == 1
    assert quote.balance == Decimal("10000.00") - money(first.payment)
    later = payoff_quote(dated, "2027-01-25")
    # 10 days on the balance after the first payment, 8,308.25 x 0.0002 x 10 = 16.6165.
    assert later.balance == Decimal("8308.25")
    assert later.accrued_interest == Decimal("16.62")


# -- a long first period: odd days accrued, capitalised or charged apart -----------------

LONG = {"first_payment": "2027-03-01", "periods": 6}


@pytest.mark.parametrize("odd_days", ["accrue", "capitalise", "separate"])
def test_before_the_first_regular_period_every_rule_gives_simple_interest(odd_days: str) -> None:
    quote = payoff_quote(loan(**LONG, odd_days=odd_days), "2027-01-25")
    # 10 days x 2.00 on the principal, whatever happens to the odd days later.
    assert quote.payoff == Decimal("10020.00")


def test_capitalised_odd_days_join_the_balance_at_the_regular_period() -> None:
    dated = loan(**LONG, odd_days="capitalise")
    # Odd days 15 Jan -> 1 Feb: 17 x 2.00 = 34.00, capitalised on 1 February.
    assert dated.summary()["odd_days_interest"] == Decimal("34.00")
    quote = payoff_quote(dated, "2027-02-11")
    assert quote.balance == Decimal("10034.00")
    assert quote.interest_from == date(2027, 2, 1)
    # 10 days on 10,034: 10,034 x 0.0002 x 10 = 20.068.
    assert quote.accrued_interest == Decimal("20.07")
    assert quote.payoff == Decimal("10054.07")


def test_separate_odd_days_interest_is_owed_until_the_first_due_date() -> None:
    dated = loan(**LONG, odd_days="separate")
    quote = payoff_quote(dated, "2027-02-11")
    assert quote.balance == Decimal("10000.00")
    assert quote.scheduled_unpaid == Decimal("34.00")
    assert quote.accrued_interest == Decimal("20.00")  # 10 days x 2.00 since 1 February
    assert quote.payoff == Decimal("10054.00")
    assert payoff_quote(dated, "2027-03-01").scheduled_unpaid == 0


def test_accrued_odd_days_run_from_the_start() -> None:
    quote = payoff_quote(loan(**LONG, odd_days="accrue"), "2027-02-11")
    assert quote.interest_from == date(2027, 1, 15)
    assert quote.accrued_interest == Decimal("54.00")  # 27 days x 2.00


# -- business days -----------------------------------------------------------------------


def test_a_payment_moved_later_is_owed_until_it_is_paid() -> None:
    # 15 May 2027 is a Saturday: the last payment moves to Monday 17 May.
    dated = loan(periods=4, business_days="following")
    last = dated.schedule().iloc[-1]
    assert last.due_date.date() == date(2027, 5, 17)
    quote = payoff_quote(dated, "2027-05-16")
    assert quote.balance == 0
    assert quote.scheduled_unpaid == money(last.payment)
    assert quote.payoff == money(last.payment)
    assert quote.maturity_date == date(2027, 5, 17)


def test_a_payment_moved_earlier_earns_no_interest_back() -> None:
    # 15 May 2027 (Saturday) moves back to Friday 14 May; interest runs to the 15th.
    dated = loan(periods=6, business_days="preceding")
    row = dated.schedule().iloc[3]
    assert row.due_date.date() == date(2027, 5, 14)
    quote = payoff_quote(dated, "2027-05-14")
    assert quote.balance == money(row.closing_balance)
    assert quote.accrued_interest == 0
    assert quote.interest_from == date(2027, 5, 15)


# -- refusals ----------------------------------------------------------------------------


def test_an_undated_loan_is_refused() -> None:
    undated = Loan(principal="10000", annual_rate="6%", periods=12)
    message = refusal(payoff_quote, undated, "2027-01-01")
    assert "dated" in message and "'start'" in message
    assert "dated" in refusal(rebates_for, undated, "2027-01-01")


def test_a_date_before_the_start_is_refused() -> None:
    message = refusal(payoff_quote, loan(), "2027-01-14")
    assert "'on'" in message and "2027-01-14" in message and "before" in message
    assert "2027-01-15" in message


def test_a_date_after_maturity_says_the_loan_is_paid_off() -> None:
    message = refusal(payoff_quote, loan(), "2028-01-16")
    assert "2028-01-16" in message and "maturity" in message and "paid off" in message
    assert "paid off" in refusal(rebates_for, loan(), "2028-01-16")


@pytest.mark.parametrize("days", [-1, 1.5, True, "3"])
def test_a_bad_number_of_days_is_refused(days: Any) -> None:
    assert "'days'" in refusal(payoff_quote, loan(), "2027-02-01", days=days)


def test_a_numpy_whole_number_of_days_is_accepted() -> None:
    assert len(payoff_quote(loan(), "2027-02-01", days=np.int64(2)).table) == 3


def test_a_table_past_maturity_is_refused_with_the_room_left() -> None:
    message = refusal(payoff_quote, loan(), "2028-01-10", days=10)
    assert "maturity" in message and "'days' <= 5" in message
    assert len(payoff_quote(loan(), "2028-01-10", days=5).table) == 6


@pytest.mark.parametrize("on", ["2027-02-30", "next week", 20270301])
def test_a_bad_date_is_refused(on: Any) -> None:
    assert "'on'" in refusal(payoff_quote, loan(), on)


def test_a_non_loan_is_refused() -> None:
    assert "Loan" in refusal(payoff_quote, {"principal": 1}, "2027-01-01")


# -- output forms ------------------------------------------------------------------------


def test_frame_and_dict() -> None:
    quote = payoff_quote(loan(), "2027-01-25", days=3)
    frame = quote.frame()
    assert list(frame.columns) == [
        "date",
        "balance",
        "accrued_interest",
        "scheduled_unpaid",
        "payoff",
    ]
    assert frame["date"].dtype == "datetime64[ns]"
    assert frame["payoff"].tolist() == [10020.0, 10022.0, 10024.0, 10026.0]
    figures = quote.as_dict()
    assert figures["payoff"] == Decimal("10020.00")
    assert figures["note"] == PAYOFF_NOTE and "as scheduled" in PAYOFF_NOTE
    assert len(figures["table"]) == 4 and figures["table"][1]["payoff"] == Decimal("10022.00")
    assert isinstance(quote, PayoffQuote)
    with pytest.raises(dataclasses.FrozenInstanceError):
        quote.payoff = Decimal(0)  # type: ignore[misc]
    assert isinstance(frame, pd.DataFrame)


# -- rebates -----------------------------------------------------------------------------


def test_rebate_by_each_method() -> None:
    assert rebate("78", 12, 3, method="rule-of-78s") == Decimal("6.00")  # 78 x 3 x 4 / 156
    # Actuarial at 1 % a period: 78 x (3 - a_3) / (12 - a_12)
    #   = 78 x (3 - 2.940985) / (12 - 11.255077) = 78 x 0.059015 / 0.744923 = 6.1794.
    assert rebate("78", 12, 3, method="actuarial", periodic_rate="1%") == Decimal("6.18")
    both = rebates("78", 12, 3, periodic_rate=Fraction(1, 100))
    assert (both.rule_of_78s, both.actuarial, both.difference) == (
        Decimal("6.00"),
        Decimal("6.18"),
        Decimal("0.18"),
    )
    assert both.caution == REBATE_CAUTION
    assert "15 U.S.C. 1615" in REBATE_CAUTION and "61 months" in REBATE_CAUTION
    assert "loan agreement" in REBATE_CAUTION


def test_rebates_at_the_ends_of_the_term() -> None:
    for advance in (False, True):
        full = rebates("250.00", 24, 24, periodic_rate="1%", advance=advance)
        assert full.rule_of_78s == full.actuarial == Decimal("250.00")
        none = rebates("250.00", 24, 0, periodic_rate="1%", advance=advance)
        assert none.rule_of_78s == none.actuarial == 0


def test_in_advance_nothing_is_earned_until_the_second_instalment() -> None:
    # The first instalment falls on the day the loan is made: with n - 1 left, all of F
    # is still unearned by the actuarial method.
    assert rebates("100.00", 12, 11, periodic_rate="2%", advance=True).actuarial == Decimal(
        "100.00"
    )


def test_the_rate_solved_from_the_amount_financed_repays_it() -> None:
    # 10,000 repaid by 12 x 880.00: F = 560.00.
    both = rebates("560.00", 12, 12, amount_financed="10000")
    assert both.actuarial == Decimal("560.00")
    i = both.periodic_rate
    a_12 = (1 - (1 + i) ** -12) / i
    assert abs(880 * a_12 - 10_000) < Decimal("1e-20")


def test_rebate_methods_parse() -> None:
    for name in ("78s", "Rule of 78s", "sum of the digits", "rule-of-78s"):
        assert RebateMethod.parse(name) is RebateMethod.RULE_OF_78S
    assert RebateMethod.parse("Actuarial") is RebateMethod.ACTUARIAL
    assert "'method'" in refusal(rebate, "78", 12, 3, method="straight-line")


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"unmatured": 13}, "'unmatured'"),
        ({"unmatured": -1}, "'unmatured'"),
        ({"unmatured": True}, "'unmatured'"),
        ({"instalments": 0}, "'instalments'"),
        ({"finance_charge": "-1"}, "'finance_charge'"),
        ({"finance_charge": "1.005"}, "'finance_charge'"),
        ({"periodic_rate": "1%", "amount_financed": "1000"}, "not both"),
        ({"periodic_rate": None}, "'periodic_rate'"),
        ({"periodic_rate": "150%"}, "'periodic_rate'"),
        ({"periodic_rate": Fraction(-1, 100)}, "'periodic_rate'"),
        ({"advance": "yes"}, "'advance'"),
    ],
)
def test_bad_rebate_input_is_refused(kwargs: dict[str, Any], words: str) -> None:
    terms: dict[str, Any] = {
        "finance_charge": "78",
        "instalments": 12,
        "unmatured": 3,
        "periodic_rate": "1%",
    }
    terms.update(kwargs)
    assert words in refusal(rebates, **terms)


def test_the_rule_of_78s_alone_needs_no_rate() -> None:
    assert rebate("78", 12, 1, method="78s") == Decimal("1.00")


# -- rebates of a loan -------------------------------------------------------------------


def _remaining(dated: Loan, on: date) -> Decimal:
    """Scheduled amounts due after ``on`` (payments, a balloon, separate odd-days interest)."""
    frame = dated.schedule()
    later = frame[frame["due_date"].dt.date > on]
    total = money(later["payment"].sum()).quantize(Decimal("0.01"))
    if "balloon" in frame:
        balloon = money(frame["balloon"].iloc[-1]).quantize(Decimal("0.01"))
        end = payoff_quote(dated, dated.start_date).maturity_date
        total += balloon if end > on else 0
    if "odd_days_interest" in frame and frame["due_date"].iloc[0].date() > on:
        total += money(frame["odd_days_interest"].iloc[0])
    return total


@pytest.mark.parametrize(
    "dated",
    [
        loan(),
        loan(timing="advance"),
        loan(balloon="3000"),
        loan(balloon="3000", timing="advance"),
        loan(**LONG, odd_days="separate"),
        loan(**LONG, odd_days="capitalise"),
        loan(day_count="30/360"),
    ],
    ids=["arrears", "advance", "balloon", "advance-balloon", "separate", "capitalise", "30/360"],
)
def test_payoff_on_a_due_date_is_what_remains_less_the_unearned_interest(dated: Loan) -> None:
    for due in dated.schedule()["due_date"].dt.date:
        figures = rebates_for(dated, due)
        assert figures.schedule_unearned is not None
        quote = payoff_quote(dated, due)
        assert _remaining(dated, due) - figures.schedule_unearned == quote.payoff, due


def test_rebates_for_a_loan() -> None:
    dated = loan(day_count="equal")
    total = dated.summary()["total_interest"]
    start = rebates_for(dated, dated.start_date)
    assert start.finance_charge == total
    assert start.instalments == 12 and start.unmatured == 12
    assert start.rule_of_78s == start.actuarial == start.schedule_unearned == total
    assert start.on == date(2027, 1, 15) and start.last_due_date is None
    # Between due dates: k counts the instalments after the date.
    mid = rebates_for(dated, "2027-04-20")
    assert mid.unmatured == 9 and mid.last_due_date == date(2027, 4, 15)
    assert mid.rule_of_78s == rebate(total, 12, 9, method="78s")
    assert mid.actuarial == rebate(
        total, 12, 9, method="actuarial", periodic_rate=dated.periodic_rate
    )
    assert mid.actuarial >= mid.rule_of_78s
    # Over equal periods the schedule's own unearned interest agrees to within cents.
    assert mid.schedule_unearned is not None
    assert abs(mid.schedule_unearned - mid.actuarial) <= Decimal("0.02")
    assert rebates_for(dated, "2028-01-15").unmatured == 0


def test_rebate_results_are_exact_cents() -> None:
    both = rebates("1234.56", 36, 17, periodic_rate="0.75%")
    for value in (both.rule_of_78s, both.actuarial, both.difference):
        assert isinstance(value, Decimal) and value == value.quantize(Decimal("0.01"))
    assert cents(both.rule_of_78s) == round(Fraction(123456 * 17 * 18, 36 * 37))
