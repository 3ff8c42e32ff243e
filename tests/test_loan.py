"""Loan: validation, immutability, the schedule frame, the summary and the reconciliation."""

from __future__ import annotations

import dataclasses
from decimal import Decimal
from fractions import Fraction

import numpy as np
import numpy_financial as npf
import pandas as pd
import pytest

from amort import Frequency, InvalidTerms, Loan, NoSolution, Reconciliation, Rounding, Timing
from amort.frames import SCHEDULE_COLUMNS

BASE = {"principal": 250_000, "annual_rate": "6.5%", "periods": 360}


def make(**changes: object) -> Loan:
    return Loan(**{**BASE, **changes})


# -- the payment against outside sources -------------------------------------------------------


def test_payment_of_the_design_example() -> None:
    """DESIGN.md: 250,000 at 6.5 % over 360 months pays 1,580.17.

    numpy-financial's pmt gives 1580.1700587... for the same terms.
    """
    loan = make()
    assert loan.payment == Decimal("1580.17")
    assert isinstance(loan.payment, Decimal)
    assert abs(-npf.pmt(0.065 / 12, 360, 250_000) - 1580.17) < 0.005


def test_payment_of_the_loan_estimate_sample() -> None:
    """CFPB form H-24(B) [text, REFERENCES.md]: 162,000 at 3.875 % for 30 years pays 761.78."""
    assert Loan(principal=162_000, annual_rate="3.875%", periods=360).payment == Decimal("761.78")


def test_payment_from_the_annuity_table() -> None:
    """REFERENCES.md annuity tables: a(360, 0.5 %) = 166.791614392, so 100,000 pays 599.55.

    (textbook attribution from memory; also numpy-financial pmt = 599.5505...)
    """
    loan = Loan(principal=100_000, annual_rate="6%", periods=360)
    assert loan.periodic_rate == Fraction(1, 200)
    assert loan.payment == Decimal("599.55")
    assert round(100_000 / 166.791614392, 2) == 599.55


# -- validation ---------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("changes", "message"),
    [
        ({"principal": -1000}, r"'principal' must be > 0 \(got -1000\)"),
        ({"principal": 0}, r"'principal' must be > 0 \(got 0\)"),
        ({"principal": "lots"}, r"'principal' must be a number \(got 'lots'\)"),
        ({"principal": float("nan")}, r"'principal' must be a finite number \(got nan\)"),
        ({"principal": float("inf")}, r"'principal' must be a finite number \(got inf\)"),
        ({"principal": 100.005}, r"'principal' must be a whole number of cents \(got 100.005\)"),
        ({"principal": 10**13}, r"'principal' must be at most 1,000,000,000,000"),
        ({"annual_rate": -0.01}, r"'annual_rate' must be >= 0 \(got -0.01\)"),
        ({"annual_rate": "-2%"}, r"'annual_rate' must be >= 0 \(got '-2%'\)"),
        ({"annual_rate": "six"}, r"'annual_rate' must be a number \(got 'six'\)"),
        ({"annual_rate": float("nan")}, r"'annual_rate' must be a finite number \(got nan\)"),
        ({"annual_rate": float("inf")}, r"'annual_rate' must be a finite number \(got inf\)"),
        ({"annual_rate": 6.5}, r"'annual_rate' is a decimal fraction .* write '6.5%' or 0.065"),
        ({"annual_rate": "1300%"}, r"'annual_rate' must be at most 1200 % for monthly"),
        (
            {"periods": 0},
            r"'periods' must be a whole number of payments from 1 to 100,000 \(got 0\)",
        ),
        ({"periods": -12}, r"'periods' must be a whole number .* \(got -12\)"),
        ({"periods": 12.5}, r"'periods' .* a fraction of a payment is not a term \(got 12.5\)"),
        ({"periods": "12.5"}, r"'periods' .* a fraction of a payment is not a term"),
        ({"periods": 100_001}, r"'periods' .* longer terms are refused as absurd \(got 100001\)"),
        ({"periods": "ten"}, r"'periods' must be a whole number .* \(got 'ten'\)"),
        ({"periods": float("nan")}, r"'periods' must be a whole number .* \(got nan\)"),
        ({"periods": True}, r"'periods' must be a whole number .* \(got True\)"),
        ({"frequency": "daily"}, r"'frequency' must be one of 'weekly', .* \(got 'daily'\)"),
        ({"rounding": "nearest"}, r"'rounding' must be one of 'half-up', .* \(got 'nearest'\)"),
        ({"interest_rounding": "ceil"}, r"'interest_rounding' must be one of .* \(got 'ceil'\)"),
        ({"timing": "middle"}, r"'timing' must be 'arrears' or 'advance' \(got 'middle'\)"),
        ({"balloon": -5}, r"'balloon' must be >= 0 \(got -5\)"),
        ({"fixed_payment": 0}, r"'fixed_payment' must be > 0 \(got 0\)"),
    ],
)
def test_invalid_terms_name_field_value_and_rule(changes: dict[str, object], message: str) -> None:
    with pytest.raises(InvalidTerms, match=message):
        make(**changes)


def test_neither_periods_nor_fixed_payment() -> None:
    with pytest.raises(InvalidTerms, match=r"give 'periods' .* or 'fixed_payment'"):
        Loan(principal=1000, annual_rate="5%")


def test_payment_that_does_not_cover_interest_names_the_interest() -> None:
    # 250,000 x 6.5 % / 12 = 1,354.1666... -> 1,354.17 of interest in the first month
    with pytest.raises(NoSolution, match=r"100\.00 does not cover .* interest of 1,354\.17"):
        Loan(principal=250_000, annual_rate="6.5%", fixed_payment=100)
    with pytest.raises(InvalidTerms, match=r"100\.00 does not cover .* interest of 1,354\.17"):
        make(fixed_payment=100)
    # open term: a payment equal to the interest never repays the balance
    with pytest.raises(NoSolution, match=r"1,354\.17 does not cover .* of 1,354\.17"):
        Loan(principal=250_000, annual_rate="6.5%", fixed_payment="1354.17")
    # with a term, interest-only then a bullet is allowed
    bullet = make(fixed_payment="1354.17", periods=12)
    assert bullet.summary()["final_payment"] == Decimal("251354.17")


def test_balloon_that_would_need_a_negative_payment() -> None:
    with pytest.raises(InvalidTerms, match=r"'balloon' 1,000 would need a payment of zero or less"):
        Loan(principal=1000, annual_rate=0, periods=12, balloon=1000)
    # 1,000 at 1 % a month grows to 1,126.83 over 12 months
    with pytest.raises(InvalidTerms, match=r"'balloon' 2,000 would need .* below 1,126\.83"):
        Loan(principal=1000, annual_rate="12%", periods=12, balloon=2000)
    # just under that: the payment (0.07) does not cover the first interest (10.00)
    with pytest.raises(InvalidTerms, match=r"level payment 0\.07 does not cover .* of 10\.00"):
        Loan(principal=1000, annual_rate="12%", periods=12, balloon=1126)


def test_tiny_principal_that_cents_cannot_repay_is_refused() -> None:
    # 0.01 at 20 % a period with interest rounded up: a 0.2-cent payment, a 1-cent interest
    with pytest.raises(InvalidTerms, match=r"rounds to 0\.00"):
        Loan(principal="0.01", annual_rate="240%", periods=120, interest_rounding="up")


def test_a_payment_that_takes_too_many_periods() -> None:
    loan = Loan(principal=10_000, annual_rate=0, fixed_payment="0.01")
    with pytest.raises(NoSolution, match=r"1,000,000 periods, more than the 100,000"):
        loan.schedule()


def test_errors_are_value_and_arithmetic_errors() -> None:
    with pytest.raises(ValueError):
        make(periods=0)
    with pytest.raises(ArithmeticError):
        Loan(principal=250_000, annual_rate="6.5%", fixed_payment=100)


def test_inputs_are_normalised() -> None:
    loan = Loan(
        principal="250,000",
        annual_rate=0.065,
        periods="360",
        frequency="Monthly",
        timing="due",
        rounding="half_even",
        interest_rounding=Rounding.DOWN,
        balloon=np.float64(1000.5),
    )
    assert loan.principal == Decimal(250_000)
    assert loan.annual_rate == Decimal("0.065")
    assert loan.periods == 360
    assert loan.frequency is Frequency.MONTHLY
    assert loan.timing is Timing.ADVANCE
    assert loan.rounding is Rounding.HALF_EVEN
    assert loan.interest_rounding is Rounding.DOWN
    assert loan.balloon == Decimal("1000.5")
    assert loan.periodic_rate == Fraction(65, 12_000)


# -- immutability --------------------------------------------------------------------------------


def test_loan_is_frozen() -> None:
    loan = make()
    with pytest.raises(dataclasses.FrozenInstanceError):
        loan.principal = Decimal(1)  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        loan.periods = 12  # type: ignore[misc]
    assert hash(loan) == hash(make())
    assert loan == make()


def test_replace_validates_again() -> None:
    loan = make()
    shorter = dataclasses.replace(loan, periods=180)
    assert shorter.periods == 180
    assert shorter.payment > loan.payment
    assert loan.payment == Decimal("1580.17")  # the original is untouched
    assert dataclasses.replace(loan, annual_rate="7%").annual_rate == Decimal("0.07")
    with pytest.raises(InvalidTerms, match=r"'periods' must be a whole number .* \(got 0\)"):
        dataclasses.replace(loan, periods=0)
    with pytest.raises(InvalidTerms, match=r"'annual_rate' is a decimal fraction"):
        dataclasses.replace(loan, annual_rate=6.5)
    assert dataclasses.replace(loan) == loan


def test_replace_keeps_a_rate_above_one_hundred_percent() -> None:
    """A weekly loan at 650 % a year (stored as 6.5) survives replace (a bug fixed here)."""
    loan = Loan(principal=1000, annual_rate="650%", frequency="weekly", periods=10)
    assert loan.annual_rate == Decimal("6.5")
    again = dataclasses.replace(loan, periods=12)
    assert again.annual_rate == Decimal("6.5")
    assert again.periodic_rate == Fraction(1, 8)


# -- schedule, summary, reconciliation -----------------------------------------------------------


def test_schedule_columns_dtypes_and_order() -> None:
    frame = make().schedule()
    assert list(frame.columns) == SCHEDULE_COLUMNS
    assert SCHEDULE_COLUMNS == [
        "period",
        "due_date",
        "opening_balance",
        "payment",
        "interest",
        "principal",
        "closing_balance",
    ]
    assert frame["period"].dtype == np.int64
    assert frame["due_date"].dtype == np.dtype("datetime64[ns]")
    assert frame["due_date"].isna().all()
    assert frame["due_date"].iloc[0] is pd.NaT
    for column in SCHEDULE_COLUMNS[2:]:
        assert frame[column].dtype == np.float64, column
    assert frame["period"].tolist() == list(range(1, 361))
    assert frame["payment"].iloc[0] == 1580.17
    assert frame["interest"].iloc[0] == 1354.17
    assert frame["principal"].iloc[0] == 226.00
    assert frame["closing_balance"].iloc[-1] == 0.0
    assert frame["payment"].iloc[-1] == 1580.55


def test_schedule_with_a_balloon_adds_the_balloon_column() -> None:
    frame = make(balloon=50_000).schedule()
    assert list(frame.columns) == [*SCHEDULE_COLUMNS, "balloon"]
    assert frame["balloon"].dtype == np.float64
    assert frame["balloon"].iloc[-1] == 50_000.0
    assert (frame["balloon"].iloc[:-1] == 0).all()
    assert frame["closing_balance"].iloc[-1] == 0.0
    assert frame["closing_balance"].iloc[-2] == frame["opening_balance"].iloc[-1]


def test_summary_keys_and_values() -> None:
    summary = make().summary()
    assert list(summary) == [
        "principal",
        "annual_rate",
        "periodic_rate",
        "frequency",
        "timing",
        "payment",
        "number_of_payments",
        "final_payment",
        "balloon",
        "total_interest",
        "total_principal",
        "total_paid",
        "odd_days_interest",
        "maturity_period",
        "maturity_date",
        "start",
        "first_payment_date",
        "day_count",
        "compounding",
        "structure",
        "interest_only_periods",
        "custom_payments",
        "payment_months",
        "negative_amortisation",
        "negative_amortisation_cap",
        "cap_reached_period",
        "payment_growth",
        "payment_step",
        "growth_every",
        "principal_part",
        "rounding",
        "interest_rounding",
    ]
    assert summary["payment"] == Decimal("1580.17")
    assert summary["number_of_payments"] == 360
    assert summary["final_payment"] == Decimal("1580.55")
    assert summary["total_principal"] == Decimal("250000.00")
    # 359 x 1,580.17 + 1,580.55 = 568,861.58
    assert summary["total_paid"] == Decimal("568861.58")
    assert summary["total_interest"] == summary["total_paid"] - Decimal(250_000)
    assert summary["maturity_date"] is None
    for key in ("payment", "final_payment", "balloon", "total_interest", "total_paid"):
        assert isinstance(summary[key], Decimal), key


def test_open_term_from_a_fixed_payment() -> None:
    """250,000 at 6.5 % paying 2,000 a month: 210 payments, the last one smaller.

    The fractional term, log(P / (P - i B)) / log(1 + i), is 209.3 months.
    """
    loan = Loan(principal=250_000, annual_rate="6.5%", fixed_payment=2000)
    summary = loan.summary()
    assert summary["number_of_payments"] == 210
    assert Decimal(0) < summary["final_payment"] < Decimal(2000)
    frame = loan.schedule()
    assert len(frame) == 210
    assert frame["closing_balance"].iloc[-1] == 0.0
    assert loan.reconciliation().passed


def test_open_term_runs_until_the_balance_closes() -> None:
    """Interest rounded up on a tiny payment adds a period a cent at a time (a bug fixed here).

    The cap on an open term once stopped this loan at 183 payments with a last
    payment of 0.44, above the fixed 0.37; it closes at 184 with 0.08.
    """
    loan = Loan(
        principal="56.32",
        annual_rate="10%",
        frequency="weekly",
        fixed_payment="0.37",
        interest_rounding="up",
    )
    summary = loan.summary()
    assert summary["number_of_payments"] == 184
    assert summary["final_payment"] == Decimal("0.08")
    assert loan.reconciliation().passed


def test_long_high_rate_term_with_a_balloon() -> None:
    """100 % a period over 2,000 periods: (1 + i)^N passes the float range (a bug fixed here)."""
    loan = Loan(principal=1000, annual_rate="1200%", periods=2000, balloon=10)
    assert loan.payment == Decimal("1000.00")
    check = loan.reconciliation()
    assert check.passed
    assert check.balloon_paid == Decimal("10.00")


def test_early_close_when_the_payment_rounds_up() -> None:
    # 100.00 over 3 periods at 0 % rounded up pays 33.34, 33.34, 33.32
    frame = Loan(principal=100, annual_rate=0, periods=3, rounding="up").schedule()
    assert frame["payment"].tolist() == [33.34, 33.34, 33.32]


def test_reconciliation_of_the_design_example() -> None:
    check = make().reconciliation()
    assert isinstance(check, Reconciliation)
    assert check.passed
    assert check.principal_identity and check.payment_identity and check.chain_identity
    assert check.closes_at_zero
    assert 0 < check.largest_gap <= check.gap_bound
    assert check.final_adjustment == pytest.approx(0.38)
    assert abs(check.final_adjustment - check.expected_adjustment) <= check.adjustment_bound
    assert all(ok for _, _, ok in check.checks)
    assert check.as_dict()["passed"] is True
    assert len(check.checks) == 6


def test_a_level_payment_that_rounds_to_zero_is_refused() -> None:
    # 0.01 over 100,000 payments at 0 % is a payment of 0.00001: no schedule can pay that.
    with pytest.raises(InvalidTerms, match=r"rounds to 0\.00"):
        Loan(principal="0.01", annual_rate=0, periods=100_000)
    assert Loan(principal="0.01", annual_rate=0, periods=100_000, rounding="up").payment == Decimal(
        "0.01"
    )


def test_a_payment_of_just_the_interest_with_a_balloon_runs_to_maturity() -> None:
    # 1,000 at 1 % a month paying 10.00 (the interest) with a 1,000 balloon: the balance
    # stays at the balloon and the loan runs its 3 periods (hand-derived).
    loan = Loan(principal=1000, annual_rate="12%", periods=3, fixed_payment="10", balloon=1000)
    frame = loan.schedule()
    assert len(frame) == 3
    assert frame["payment"].tolist() == [10.0, 10.0, 10.0]
    assert frame["balloon"].tolist() == [0.0, 0.0, 1000.0]
    assert loan.reconciliation().passed
