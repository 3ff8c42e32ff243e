"""Closed forms against published definitions, tables and disclosure samples.

Values and their sourcing marks come from /work/shared/REFERENCES.md:
[text] read in a copy of the official text, [secondary] read in a page that
reproduces it, [memory] recalled from the named document and not re-read.
Each published figure is compared at the number of decimals it is printed
with (half a unit in its last place).
"""

from __future__ import annotations

from decimal import Decimal

import pytest

from amort import Loan, recurrence, solve


def assert_printed(got: float, printed: str) -> None:
    """Assert that ``got`` agrees with a figure printed as ``printed`` to its last digit."""
    exponent = Decimal(printed).as_tuple().exponent
    assert isinstance(exponent, int)
    half_unit = Decimal(5) * Decimal(10) ** (exponent - 1)
    assert abs(Decimal(repr(float(got))) - Decimal(printed)) <= half_unit, (got, printed)


# -- OASIS OpenDocument Formula (ODF 1.2 part 2; 1.3/1.4 part 4) ------------------------
# [text] PV, FV, PMT, NPER, RATE solve 0 = pv (1+r)^n + pmt (1 + r t) ((1+r)^n - 1)/r + fv,
# t = 0 end of period, 1 beginning; money out is negative, money in positive. The standard
# prints no values: the figures below were computed from those equations (REFERENCES.md).


def test_odf_pmt_in_arrears():
    """OASIS ODF Formula PMT(0.005; 360; 100000) = -599.550525153 [text, equation]."""
    # ODF's sign: the 100,000 received is +pv, the payment made comes out negative.
    pmt = -float(solve.payment(100_000, 0.005, 360))
    assert_printed(pmt, "-599.550525153")


def test_odf_pmt_in_advance():
    """OASIS ODF Formula PMT(0.005; 360; 100000; 0; 1) = -596.567686719 [text, equation]."""
    pmt = -float(solve.payment(100_000, 0.005, 360, advance=True))
    assert_printed(pmt, "-596.567686719")


def test_odf_pv():
    """OASIS ODF Formula PV(0.05; 10; -100) = 772.173492918 [text, equation]."""
    assert_printed(float(solve.principal(100, 0.05, 10)), "772.173492918")


def test_odf_fv():
    """OASIS ODF Formula FV(0.05; 10; -100) = 1257.78925355 [text, equation]: 100 s_10."""
    assert_printed(100 * float(recurrence.accumulation_factor(0.05, 10)), "1257.78925355")


def test_odf_effect():
    """OASIS ODF Formula EFFECT(0.06; 12) = 0.06167781186 [text, equation]: (1 + j/m)^m - 1."""
    # (1 + i)^12 - 1 = i s_12(i), formed without cancellation.
    assert_printed(0.005 * float(recurrence.accumulation_factor(0.005, 12)), "0.06167781186")


def test_odf_rate_recovers_the_rate():
    """OASIS ODF Formula RATE inverts PMT: the payments above give back 0.005 [text, equation]."""
    assert float(solve.rate(100_000, 599.550525153, 360)) == pytest.approx(0.005, rel=1e-11)
    back = float(solve.rate(100_000, 596.567686719, 360, advance=True))
    assert back == pytest.approx(0.005, rel=1e-11)


def test_odf_nper_recovers_the_term():
    """OASIS ODF Formula NPER inverts PMT: 599.550525153 a month repays 100,000 in 360 [text]."""
    assert float(solve.periods(100_000, 0.005, 599.550525153)) == pytest.approx(360, rel=1e-9)


# -- Annuity tables (actuarial notation; textbook attribution from memory) ---------------
# [memory] a(n,i) = (1 - v^n)/i, s(n,i) = ((1+i)^n - 1)/i, due versions x (1+i),
# (Ia)(n,i) = (a-due(n,i) - n v^n)/i, (Da)(n,i) = (n - a(n,i))/i.


@pytest.mark.parametrize(
    ("n", "printed"),
    [(10, "7.721734929"), (20, "12.46221034"), (30, "15.37245103")],
)
def test_table_annuity_immediate_at_5_percent(n, printed):
    """Annuity table [memory]: a(10, 5 %) = 7.721734929, a(20) = 12.46221034, a(30) = 15.37245103.

    (Printed to 10 significant digits, as the tables give them.)
    """
    assert_printed(float(recurrence.annuity_factor(0.05, n)), printed)


def test_table_accumulation_and_annuity_due_at_5_percent():
    """Annuity table [memory]: s(10, 5 %) = 12.57789254, a-due(10, 5 %) = 8.107821676."""
    assert_printed(float(recurrence.accumulation_factor(0.05, 10)), "12.57789254")
    # A payment of 1 in advance is the arrears principal times (1 + i).
    assert_printed(float(recurrence.principal(1.0, 0.05, 10, advance=True)), "8.107821676")


def test_table_increasing_and_decreasing_annuities_at_5_percent():
    """Annuity table [memory]: (Ia)(10, 5 %) = 39.3737828, (Da)(10, 5 %) = 45.56530142."""
    i, n = 0.05, 10
    a_n = float(recurrence.annuity_factor(i, n))
    a_due = float(recurrence.principal(1.0, i, n, advance=True))
    v_n = float(recurrence.discount(i, n))
    assert_printed((a_due - n * v_n) / i, "39.3737828")
    assert_printed((n - a_n) / i, "45.56530142")


def test_table_half_percent_360_months():
    """Annuity table [memory]: a(360, 0.5 %) = 166.791614392, so 100,000 borrowed pays 599.55."""
    a_n = float(recurrence.annuity_factor(0.005, 360))
    assert_printed(a_n, "166.791614392")
    assert_printed(100_000 / a_n, "599.55")
    assert Loan(principal=100_000, annual_rate="6%", periods=360).payment == Decimal("599.55")


# -- CFPB form H-24(B), Loan Estimate sample (12 CFR 1026, Appendix H) -------------------


def test_cfpb_loan_estimate_sample_payment():
    """CFPB form H-24(B) Loan Estimate [text]: 162,000 at 3.875 % for 30 years pays 761.78."""
    loan = Loan(principal=162_000, annual_rate="3.875%", periods=360)
    assert loan.payment == Decimal("761.78")
    assert round(float(solve.payment(162_000, 0.03875 / 12, 360)), 2) == 761.78


def test_cfpb_loan_estimate_sample_rate_and_term():
    """CFPB form H-24(B) Loan Estimate [text]: 761.78 a month on 162,000 is 3.875 %, 30 years."""
    annual = 12 * float(solve.rate(162_000, 761.78, 360))
    assert round(annual * 100, 3) == 3.875  # the cent rounding moves the rate by 4e-7
    # 761.78 is the exact 761.7841 rounded down, so 360 payments leave a sliver.
    term = float(solve.periods(162_000, 0.03875 / 12, 761.78))
    assert 360 < term < 360.01
