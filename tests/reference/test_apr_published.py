"""Disclosure rates against the published worked examples and independent references.

Sources, with the sourcing marks of /work/shared/REFERENCES.md:

- US Regulation Z, 12 CFR 1026, Appendix J (c)(1) worked examples
  [memory/secondary; "reproduce exactly"]: (i) 5,000.00 by 24 monthly payments of
  230.00 from 1978-01-10, first payment 1978-02-10: 9.69 %; (ii) 6,000.00 by 36
  monthly 200.00 from 1978-02-10, first payment 1978-04-01 (t_j = j, f = 19/30):
  11.82 %; (iv) 10,000.00 by 40 quarterly 385.00 from 1978-05-23, first payment
  1978-10-01 (t_j = j, f = 39/90): 8.97 %.
- Appendix J (b) [text]: APR = unit-period rate x unit-periods a year; all
  months equal; (a)(3) the US Rule method (interest never added to principal).
- The general equation [memory, confirmed by the examples], solved here a
  second time with mpmath at 50 digits as an independent reference.
- 12 CFR 1026.22(a)(2)/(3) [text]: 1/8 of a percentage point for regular
  transactions, 1/4 for irregular ones (multiple advances, irregular periods or
  amounts other than an irregular first period or first/final payment).
- EU: Directive 2008/48/EC Annex I [text] (equation, 365-day years, rounding
  half-up to at least one decimal); the Directive 98/7/EC proposal's Annex III
  examples: +1,000 on day 0, -1,200 after 546 days (year 365) -> 12.96 %, shown
  13.0 % [text]; the same with 50 retained for fees -> 16.9 % [memory].
- numpy-financial's ``rate`` and ``irr`` (the round trips of level loans), and
  OASIS OpenDocument Formula EFFECT(r, m) = (1 + r/m)^m - 1 [text].
"""

from __future__ import annotations

from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction

import mpmath
import numpy_financial as npf
import pytest

from amort import Frequency, Loan
from amort.apr import UnitPeriod, eu_aprc, regz_apr
from amort.calendar import add_months
from amort.disclosure import Fee, disclose, disclose_flows, rate_on_periods
from amort.flows import Flows


def monthly(first: date, count: int, every: int = 1) -> list[date]:
    return [add_months(first, every * k) for k in range(count)]


def flows(start: str, amount: str, dates: list[date], payment: str) -> Flows:
    return Flows.of([(start, amount, "advance"), *((d, payment, "payment") for d in dates)])


def mp_apr(amount: str, payment: str, count: int, f: Fraction, per_year: int) -> mpmath.mpf:
    """The general equation solved by mpmath: A = sum_j P / ((1 + f i)(1 + i)^j), j = 1..n."""
    with mpmath.workdps(50):
        fm = mpmath.mpf(f.numerator) / f.denominator

        def gap(i: mpmath.mpf) -> mpmath.mpf:
            return sum(
                mpmath.mpf(payment) / ((1 + fm * i) * (1 + i) ** j) for j in range(1, count + 1)
            ) - mpmath.mpf(amount)

        return mpmath.findroot(gap, mpmath.mpf("0.01")) * per_year * 100


# -- Appendix J (c)(1) ----------------------------------------------------------------------------

EXAMPLES = [
    # (case, advance date, amount, first payment, count, every months, payment, f, per year, APR)
    ("(c)(1)(i)", "1978-01-10", "5000", date(1978, 2, 10), 24, 1, "230", Fraction(0), 12, "9.69"),
    ("(c)(1)(ii)", "1978-02-10", "6000", date(1978, 4, 1), 36, 1, "200", Fraction(19, 30), 12,
     "11.82"),
    ("(c)(1)(iv)", "1978-05-23", "10000", date(1978, 10, 1), 40, 3, "385", Fraction(39, 90), 4,
     "8.97"),
]  # fmt: skip


@pytest.mark.parametrize(
    ("case", "start", "amount", "first", "count", "every", "payment", "f", "per_year", "apr"),
    EXAMPLES,
    ids=[e[0] for e in EXAMPLES],
)
def test_appendix_j_worked_examples(
    case: str,
    start: str,
    amount: str,
    first: date,
    count: int,
    every: int,
    payment: str,
    f: Fraction,
    per_year: int,
    apr: str,
) -> None:
    # Appendix J (c)(1) [memory/secondary]: the published APR, to two decimals.
    result = regz_apr(flows(start, amount, monthly(first, count, every), payment))
    assert result.apr == Decimal(apr)
    assert result.unit_period is not None and result.unit_period.per_year == per_year
    # REFERENCES.md: t_j = j whole unit-periods and the fraction f for every payment.
    paid = [t for t in result.flows if t.kind.value == "payment"]
    assert [(t.whole, t.fraction) for t in paid] == [(j, f) for j in range(1, count + 1)]
    # The same equation solved by mpmath at 50 digits (independent reference).
    assert result.apr_unrounded == pytest.approx(
        float(mp_apr(amount, payment, count, f, per_year)), rel=1e-12
    )
    assert result.classification is not None and result.classification.regular


def test_appendix_j_example_i_with_its_odd_first_period_removed_is_the_same_rate() -> None:
    # (c)(1)(i) [memory/secondary] again, as an undated equal-period list.
    items = [(0, "advance", Decimal(5000))] + [(k, "payment", Decimal(230)) for k in range(1, 25)]
    assert rate_on_periods(items, "monthly").apr == Decimal("9.69")


def test_us_rule_equals_actuarial_when_every_period_is_whole_and_covered() -> None:
    # Appendix J (a)(2)/(a)(3) [text]: with whole unit-periods and payments above the
    # interest, neither method adds interest to principal differently.
    data = flows("1978-01-10", "5000", monthly(date(1978, 2, 10), 24), "230")
    actuarial = regz_apr(data)
    us_rule = regz_apr(data, method="us-rule")
    assert us_rule.apr_unrounded == pytest.approx(actuarial.apr_unrounded, rel=1e-12)


def test_us_rule_long_first_period_earns_simple_interest() -> None:
    # Appendix J (a)(3) [text]: the first payment period of (c)(1)(ii) runs 1 19/30 months
    # and earns simple interest over all of it; the balance left at the found rate, run
    # again in exact Python fractions, is nil (to float precision of the rate).
    data = flows("1978-02-10", "6000", monthly(date(1978, 4, 1), 36), "200")
    result = regz_apr(data, method="us-rule")
    i = Fraction(result.unit_period_rate or 0.0)
    owed = Fraction(6000) * (1 + i * Fraction(49, 30)) - 200
    for _ in range(35):
        owed = owed * (1 + i) - 200
    assert abs(owed) < Fraction(1, 10**6)
    # Simple interest over the long first period costs less than compound growth, so the
    # US Rule rate is a little above the actuarial 11.82 % (11.8165...).
    assert result.apr_unrounded > regz_apr(data).apr_unrounded


# -- 12 CFR 1026.22(a): tolerance ------------------------------------------------------------------


def test_regular_transaction_tolerance_is_an_eighth_of_a_point() -> None:
    # 12 CFR 1026.22(a)(2) [text]; an irregular first period and final payment stay regular.
    data = Flows.of(
        [("2027-01-10", "5000", "advance")]
        + [(d, "230", "payment") for d in monthly(date(2027, 3, 1), 23)]
        + [(date(2029, 2, 1), "180.15", "payment")]
    )
    rules = regz_apr(data).classification
    assert rules is not None
    assert rules.regular and rules.tolerance == Decimal("0.125")
    assert rules.rule == "12 CFR 1026.22(a)(2)"


@pytest.mark.parametrize(
    ("rows", "feature"),
    [
        (
            [("2027-01-01", "3000", "advance"), ("2027-02-01", "2000", "advance")]
            + [(d, "450", "payment") for d in monthly(date(2027, 3, 1), 12)],
            "multiple advances",
        ),
        (
            [("2027-01-01", "5000", "advance")]
            + [(d, "450", "payment") for d in monthly(date(2027, 2, 1), 6)]
            + [(d, "450", "payment") for d in monthly(date(2027, 9, 1), 6)],
            "irregular payment periods",
        ),
        (
            [("2027-01-01", "5000", "advance")]
            + [(d, "300", "payment") for d in monthly(date(2027, 2, 1), 6)]
            + [(d, "600", "payment") for d in monthly(date(2027, 8, 1), 6)],
            "irregular payment amounts",
        ),
    ],
)
def test_irregular_transaction_tolerance_is_a_quarter_point(rows: list, feature: str) -> None:
    # 12 CFR 1026.22(a)(3) [text]: multiple advances, irregular periods or amounts.
    rules = regz_apr(Flows.of(rows)).classification
    assert rules is not None
    assert not rules.regular and rules.tolerance == Decimal("0.25")
    assert feature in rules.features


# -- EU Annex I ------------------------------------------------------------------------------------

DAY0 = date(2025, 1, 1)  # 546 days on is 2026-07-01, and no 29 February lies between


@pytest.mark.parametrize("basis", ["365-days", "days"])
def test_eu_example_twelve_point_nine_six_shown_thirteen(basis: str) -> None:
    # Directive 98/7/EC proposal, Annex III [text]: 12.96 %, shown 13.0 %.
    data = Flows.of([(DAY0, "1000", "advance"), (DAY0 + timedelta(546), "1200", "payment")])
    result = eu_aprc(data, basis=basis)
    assert result.apr == Decimal("13.0")
    assert round(result.apr_unrounded, 2) == 12.96
    # The closed form 1.2^(365/546) - 1 (Annex I with one drawdown and one repayment).
    with mpmath.workdps(50):
        closed = float((mpmath.mpf("1.2") ** (mpmath.mpf(365) / 546) - 1) * 100)
    assert result.apr_unrounded == pytest.approx(closed, rel=1e-13)


def test_eu_example_with_fifty_retained_is_sixteen_point_nine() -> None:
    # Directive 98/7/EC proposal, Annex III [memory]: 50 retained for fees -> 16.9 %.
    data = Flows.of([(DAY0, "1000", "advance"), (DAY0 + timedelta(546), "1200", "payment")])
    retained = disclose_flows(data, fees=[Fee("fees retained", 50)], standard="eu-ccd")
    assert retained.apr.apr == Decimal("16.9")
    assert retained.amount_financed == Decimal("950.00")
    direct = Flows.of([(DAY0, "950", "advance"), (DAY0 + timedelta(546), "1200", "payment")])
    assert eu_aprc(direct).apr == Decimal("16.9")


def test_eu_aprc_of_a_plain_monthly_loan_is_its_effective_rate() -> None:
    # Annex I [text] with 12 equal months, against EFFECT(0.079, 12) (OpenDocument [text]).
    loan = Loan(principal=18_500, annual_rate="7.9%", periods=60)
    effective = (1 + 0.079 / 12) ** 12 - 1
    result = disclose(loan, standard="eu-ccd", decimals=2).apr
    assert result.apr == Decimal(f"{effective * 100:.2f}")


# -- round trips against numpy-financial -----------------------------------------------------------


@pytest.mark.parametrize("frequency", list(Frequency))
def test_apr_of_a_plain_level_loan_is_its_note_rate(frequency: Frequency) -> None:
    # Appendix J (b)(1) [text]: APR = unit-period rate x unit-periods a year, so a plain
    # level loan without fees discloses its note rate; numpy-financial's rate on the same
    # cent payments is the outside check of the unrounded figure.
    per_year = frequency.per_year
    loan = Loan(principal=20_000, annual_rate="8.4%", periods=3 * per_year, frequency=frequency)
    result = disclose(loan).apr
    assert result.apr == Decimal("8.40")
    payments = [float(p) for p in loan.schedule()["payment"]]
    irr = npf.irr([-20_000.0, *payments])
    assert result.apr_unrounded == pytest.approx(irr * per_year * 100, rel=1e-9)


@pytest.mark.parametrize("frequency", ["weekly", "biweekly", "semimonthly", "monthly", "quarterly"])
def test_apr_of_a_dated_level_loan_is_its_note_rate(frequency: str) -> None:
    # The same round trip on dated schedules: the unit-period is found from the dates
    # (Appendix J (b)(4) [text/memory]) and equals the payment period.
    loan = Loan(
        principal=20_000,
        annual_rate="8.4%",
        periods=24,
        frequency=frequency,
        start="2027-01-01",
        semimonthly_days=(1, 16),
    )
    result = disclose(loan).apr
    assert result.apr == Decimal("8.40")
    assert result.unit_period == UnitPeriod.for_frequency(frequency)


def test_finance_charge_fee_raises_the_apr_above_the_note_rate() -> None:
    # Appendix J [text] applied to the amount financed (principal less the fee): the APR
    # is numpy-financial's irr of [-(5000 - 100), payments...] x 12.
    loan = Loan(principal=5_000, annual_rate="9%", periods=24)
    figures = disclose(loan, fees=[Fee("origination", 100)])
    payments = [float(p) for p in loan.schedule()["payment"]]
    expected = npf.irr([-4_900.0, *payments]) * 12 * 100
    assert figures.apr.apr_unrounded == pytest.approx(expected, rel=1e-9)
    assert figures.apr.apr == Decimal(f"{expected:.2f}") > Decimal("9.00")
