"""amort.disclosure: fees, the Regulation Z figures and their identities, payment runs, CSV.

Sources: 12 CFR 1026.18 [text] for the definitions (amount financed = principal
less prepaid finance charges; total of payments = amount financed + finance
charge); numpy-financial's ``irr`` as the outside check of the APR of a cash-flow
vector; Python's decimal for the exact sums.
"""

from __future__ import annotations

import csv
import dataclasses
import io
from decimal import Decimal

import numpy_financial as npf
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from amort import CAUTION, InvalidTerms, Loan
from amort.apr import Standard
from amort.disclosure import Fee, PaymentRun, disclose, disclose_flows
from amort.flows import Flows

LOAN = Loan(principal=12_000, annual_rate="8.25%", periods=24)


# -- fees ------------------------------------------------------------------------------------------


def test_a_fee_is_a_finance_charge_paid_at_closing_unless_marked() -> None:
    fee = Fee("origination", "240.00")
    assert (fee.finance_charge, fee.financed, fee.at_closing) == (True, False, True)
    assert Fee("title", 30, finance_charge=False, financed=True).at_closing is False


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"financed": True, "at_closing": True}, "marked both financed and paid at closing"),
        ({"financed": False, "at_closing": False}, "marked neither financed nor paid at closing"),
        ({"amount": "-5"}, r"fee 'origination': 'amount' must be > 0 \(got '-5'\)"),
        ({"amount": "1.005"}, "'amount' must be a whole number of cents"),
        ({"name": "  "}, "a fee's 'name' must be non-empty text"),
        ({"finance_charge": "yes"}, "'finance_charge' must be true or false"),
    ],
)
def test_bad_fees_are_refused(kwargs: dict, message: str) -> None:
    args = {"name": "origination", "amount": 100, **kwargs}
    with pytest.raises(InvalidTerms, match=message):
        Fee(**args)


def test_fee_names_must_be_unique() -> None:
    with pytest.raises(InvalidTerms, match="given twice"):
        disclose(LOAN, fees=[Fee("Origination", 10), Fee("origination", 20)])


def test_finance_charge_fees_must_leave_an_amount_financed() -> None:
    with pytest.raises(InvalidTerms, match="leaves no amount financed"):
        disclose(LOAN, fees=[Fee("points", 12_000)])


# -- the figures -----------------------------------------------------------------------------------


def test_a_loan_without_fees_finance_charge_is_its_interest() -> None:
    figures = disclose(LOAN)
    summary = LOAN.summary()
    assert figures.finance_charge == summary["total_interest"] == figures.interest
    assert figures.amount_financed == LOAN.principal == figures.note_amount
    assert figures.total_of_payments == summary["total_paid"]
    assert figures.apr.apr == Decimal("8.25")


def test_a_closing_finance_charge_fee_lowers_the_amount_financed_and_raises_the_apr() -> None:
    # 12 CFR 1026.18(b) [text]: a prepaid finance charge comes off the amount financed.
    figures = disclose(
        LOAN, fees=[Fee("origination", 240), Fee("appraisal", 400, finance_charge=False)]
    )
    assert figures.prepaid_finance_charge == Decimal("240.00")
    assert figures.amount_financed == Decimal("11760.00")
    assert figures.finance_charge == LOAN.summary()["total_interest"] + 240
    # APR on the amount financed: numpy-financial irr of [-11,760, payments...] x 12.
    payments = [float(p) for p in LOAN.schedule()["payment"]]
    assert figures.apr.apr_unrounded == pytest.approx(
        npf.irr([-11_760.0, *payments]) * 1200, rel=1e-9
    )
    assert figures.apr.apr > Decimal("8.25")


def test_a_fee_that_is_not_a_finance_charge_leaves_the_apr_at_the_note_rate() -> None:
    figures = disclose(LOAN, fees=[Fee("appraisal", 400, finance_charge=False)])
    assert figures.apr.apr == Decimal("8.25") and figures.prepaid_finance_charge == 0


def test_a_financed_fee_is_added_to_the_principal() -> None:
    figures = disclose(LOAN, fees=[Fee("origination", 240, financed=True)])
    bigger = dataclasses.replace(LOAN, principal=Decimal(12_240))
    assert figures.note_amount == Decimal("12240.00")
    assert figures.amount_financed == Decimal("12000.00")
    assert figures.payment_schedule[0].amount == bigger.payment
    assert figures.interest == bigger.summary()["total_interest"]
    # The APR is that of 12,000 advanced against the larger note's payments (numpy-financial
    # irr as the outside check), above the note rate.
    payments = [float(p) for p in bigger.schedule()["payment"]]
    expected = npf.irr([-12_000.0, *payments]) * 1200
    assert figures.apr.apr_unrounded == pytest.approx(expected, rel=1e-9)
    assert figures.apr.apr > Decimal("8.25")


def test_a_financed_fee_outside_the_finance_charge_is_credit_too() -> None:
    figures = disclose(LOAN, fees=[Fee("title", 60, finance_charge=False, financed=True)])
    assert figures.amount_financed == figures.note_amount == Decimal("12060.00")
    assert figures.apr.apr == Decimal("8.25")


def test_payment_schedule_runs() -> None:
    figures = disclose(LOAN)
    schedule = LOAN.schedule()
    assert sum(run.count for run in figures.payment_schedule) == len(schedule)
    assert figures.payment_schedule[0] == PaymentRun(23, LOAN.payment, 1, None, None)
    assert figures.payment_schedule[-1].amount == Decimal(f"{schedule['payment'].iloc[-1]:.2f}")


def test_a_dated_loan_with_an_odd_first_period_and_a_balloon() -> None:
    loan = Loan(
        principal=40_000,
        annual_rate="6%",
        periods=36,
        balloon=15_000,
        start="2027-01-15",
        first_payment="2027-03-01",
        day_count="actual/365",
    )
    figures = disclose(loan, fees=[Fee("documentation", 350)])
    runs = figures.payment_schedule
    assert runs[0].first_due is not None and f"{runs[0].first_due}" == "2027-03-01"
    assert runs[-1].amount > 15_000  # the balloon rides on the last payment
    rules = figures.apr.classification
    # An odd first period and a final payment that differs keep the loan regular
    # (12 CFR 1026.22(a)(3) [text]).
    assert rules is not None and rules.regular
    assert figures.total_of_payments == figures.amount_financed + figures.finance_charge


def test_graduated_payments_are_an_irregular_transaction() -> None:
    loan = Loan(
        principal=30_000, annual_rate="7%", periods=48, payment_growth="3%", growth_every=12
    )
    rules = disclose(loan).apr.classification
    assert rules is not None and rules.features == ("irregular payment amounts",)
    assert rules.tolerance == Decimal("0.25")


def test_payments_in_advance_start_on_the_day_of_the_advance() -> None:
    loan = Loan(principal=9_000, annual_rate="6%", periods=12, timing="advance")
    figures = disclose(loan)
    assert figures.apr.flows[1].whole == 0  # the first payment falls with the advance
    assert figures.apr.apr == Decimal("6.00")


def test_eu_standard_uses_one_decimal_by_default() -> None:
    figures = disclose(LOAN, standard="eu-ccd")
    assert figures.standard is Standard.EU_CCD and figures.apr.decimals == 1
    assert figures.tolerance_range is None and figures.apr.classification is None
    # EFFECT(8.25 %, 12) = 8.57 % (OpenDocument [text]), to one decimal 8.6.
    assert figures.apr.apr == Decimal("8.6")


def test_flows_fees_come_off_the_first_advance() -> None:
    flows = Flows.of(
        [("2027-01-01", 1000, "advance"), ("2027-02-01", 500, "advance")]
        + [(f"2027-{m:02d}-01", 260, "payment") for m in range(3, 9)]
    )
    figures = disclose_flows(flows, fees=[Fee("arrangement", 30)])
    assert figures.amount_financed == Decimal("1470.00") and figures.note_amount == 1500
    assert figures.total_of_payments == Decimal("1560.00")
    assert figures.finance_charge == Decimal("90.00") and figures.interest == Decimal("60.00")
    assert figures.apr.classification is not None
    assert "multiple advances" in figures.apr.classification.features
    with pytest.raises(InvalidTerms, match="not less than the first advance"):
        disclose_flows(flows, fees=[Fee("arrangement", 1000)])


def test_as_dict_and_csv_carry_the_figures_and_the_caution() -> None:
    figures = disclose(LOAN, fees=[Fee("origination", 240)])
    data = figures.as_dict()
    assert list(data)[:2] == ["apr", "apr_unrounded"]
    assert data["transaction"] == "regular" and data["tolerance_points"] == Decimal("0.125")
    text = figures.csv_text()
    assert text.startswith(f"# {CAUTION}\n")
    rows = list(csv.DictReader(io.StringIO(text.split("\n", 1)[1])))
    assert len(rows) == 25 and rows[0]["kind"] == "advance" and rows[0]["amount"] == "11760.00"
    # The present values at the unrounded rate balance (the equation's root).
    assert abs(sum(float(r["present_value"]) for r in rows)) < 1e-6


@settings(max_examples=30, deadline=None)
@given(
    principal=st.integers(1_000_00, 500_000_00),
    rate=st.integers(0, 2_400),  # hundredths of a percent
    periods=st.integers(2, 120),
    fees=st.lists(st.tuples(st.integers(1, 50_000), st.booleans(), st.booleans()), max_size=4),
)
def test_identities_hold_for_any_loan_and_fees(
    principal: int, rate: int, periods: int, fees: list[tuple[int, bool, bool]]
) -> None:
    # 12 CFR 1026.18 [text], in Python decimals: total of payments = amount financed +
    # finance charge; amount financed = note - prepaid finance charges.
    loan = Loan(principal=Decimal(principal) / 100, annual_rate=f"{rate / 100}%", periods=periods)
    listed = [
        Fee(f"fee {k}", Decimal(cents) / 100, finance_charge=charge, financed=financed)
        for k, (cents, charge, financed) in enumerate(fees)
    ]
    prepaid = sum((f.amount for f in listed if f.finance_charge), Decimal(0))
    if prepaid >= loan.principal:
        return
    figures = disclose(loan, fees=listed)
    assert figures.total_of_payments == figures.amount_financed + figures.finance_charge
    assert figures.amount_financed == figures.note_amount - prepaid
    financed = sum((f.amount for f in listed if f.financed), Decimal(0))
    assert figures.note_amount == loan.principal + financed
    if prepaid == 0 and financed == 0:
        assert abs(figures.apr.apr_unrounded - rate / 100) < 0.01
    elif prepaid > 0:
        assert figures.apr.apr_unrounded > rate / 100
