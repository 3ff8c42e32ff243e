"""Rebates of precomputed interest against published definitions and outside references.

Sources, with the sourcing marks of /work/shared/REFERENCES.md ("Rule of 78s
and 15 U.S.C. 1615"):

- Rule of 78s (sum of the digits): with n instalments and precomputed finance
  charge F, month k earns F (n - k + 1) / (n (n + 1) / 2); with k instalments
  unmatured the rebate is F k (k + 1) / (n (n + 1)). REFERENCES.md gives this
  definition without a sourcing mark; it is the trade's published method
  (common practice), so it is checked here both in its closed form and by
  summing its month-by-month earnings.
- 15 U.S.C. 1615 [text]: for precomputed consumer credit of more than 61
  months consummated after 30 September 1993 the refund must be at least as
  favourable as the actuarial method. The Rule of 78s front-loads the interest,
  so for a positive rate its rebate is never above the actuarial one; checked
  across a grid, and exactly with Python's fractions.
- The actuarial method: the unearned interest is the remaining instalments
  less their present value at the contract rate, k P - P a_k(i), checked
  against Python's fractions (exact), numpy-financial's pv, and the interest
  column of amort's own cent schedules.
- US Regulation Z, 12 CFR 1026, Appendix J (c)(1)(i) [memory/secondary]:
  5,000.00 repaid by 24 monthly payments of 230.00 has an APR of 9.69 %.
"""

from __future__ import annotations

import itertools
from decimal import Decimal
from fractions import Fraction

import numpy_financial as npf
import pytest

from amort import Loan
from amort.money import Rounding, round_fraction
from amort.rebates import rebate, rebates

CENT = Decimal("0.01")


def cents(value: Decimal) -> int:
    return int(value * 100)


def annuity(k: int, i: Fraction) -> Fraction:
    """a_k(i) = (1 - (1 + i)^-k) / i, exactly (Python fractions); k at i = 0."""
    if i == 0:
        return Fraction(k)
    return (1 - (1 + i) ** -k) / i


# -- Rule of 78s (sum of the digits; REFERENCES.md, no sourcing mark: common practice) ----


@pytest.mark.parametrize("k", range(13))
def test_rule_of_78s_twelve_months_of_78(k: int) -> None:
    # n = 12, F = 78 = 1 + 2 + ... + 12: the rebate is 78 k (k + 1) / (12 x 13) = k (k + 1) / 2,
    # so k = 12 gives 78, k = 1 gives 1, k = 0 gives 0.
    assert rebate(78, 12, k, method="rule-of-78s") == Decimal(k * (k + 1) // 2)


@pytest.mark.parametrize(
    ("charge", "n"), [("78.00", 12), ("520.00", 24), ("1234.57", 36), ("9999.99", 61)]
)
def test_rule_of_78s_equals_the_charge_less_the_months_earned(charge: str, n: int) -> None:
    # Month j earns F (n - j + 1) / (n (n + 1) / 2); after m months the rebate is F less
    # what months 1..m earned, which the closed form F k (k + 1) / (n (n + 1)), k = n - m, gives.
    f = Fraction(Decimal(charge)) * 100  # cents
    for m in range(n + 1):
        earned = sum(f * (n - j + 1) / Fraction(n * (n + 1), 2) for j in range(1, m + 1))
        expected = round_fraction(f - earned, Rounding.HALF_UP)
        assert cents(rebate(charge, n, n - m, method="78s")) == expected, m


# -- 15 U.S.C. 1615 [text]: at least as favourable as the actuarial method ---------------

GRID_TERMS = [2, 3, 12, 24, 36, 48, 60, 61, 62, 72, 84, 120]
GRID_RATES = ["0.01%", "0.5%", "1%", "1.5%", "2%", "5%"]


@pytest.mark.parametrize(("n", "rate"), list(itertools.product(GRID_TERMS, GRID_RATES)))
def test_actuarial_rebate_is_never_below_the_rule_of_78s(n: int, rate: str) -> None:
    # 15 U.S.C. 1615 [text] asks for a refund at least as favourable as the actuarial
    # method on long precomputed consumer credit: the Rule of 78s never reaches it.
    i = Decimal(rate.rstrip("%")) / 100
    charge = (Decimal(1_000_000) * i * n / 2).quantize(CENT)  # in proportion to rate and term
    strictly = 0
    for k in range(n + 1):
        both = rebates(charge, n, k, periodic_rate=rate)
        assert both.actuarial >= both.rule_of_78s, k
        assert both.difference == both.actuarial - both.rule_of_78s
        strictly += both.actuarial > both.rule_of_78s
    if n >= 12 and i >= Decimal("0.005"):
        assert strictly > 0  # the gap is real, not only rounding


@pytest.mark.parametrize("n", [2, 5, 12, 24, 61])
@pytest.mark.parametrize("i", [Fraction(1, 10_000), Fraction(1, 100), Fraction(3, 100)])
def test_the_actuarial_share_exceeds_the_sum_of_the_digits_share_exactly(
    n: int, i: Fraction
) -> None:
    # Python fractions: (k - a_k(i)) / (n - a_n(i)) >= k (k + 1) / (n (n + 1)), with equality
    # only at k = 0 and k = n (15 U.S.C. 1615 [text] comparison, exact).
    whole = n - annuity(n, i)
    for k in range(1, n):
        actuarial = (k - annuity(k, i)) / whole
        digits = Fraction(k * (k + 1), n * (n + 1))
        assert actuarial > digits, k


def test_the_two_methods_meet_as_the_rate_falls_to_zero() -> None:
    # k - a_k(i) ~ i k (k + 1) / 2: the Rule of 78s is the actuarial rebate to first order in i.
    for k in range(25):
        tiny = rebates("5000.00", 24, k, periodic_rate="0.0000001%")
        assert tiny.actuarial == tiny.rule_of_78s, k
        zero = rebates("5000.00", 24, k, periodic_rate="0")
        assert zero.actuarial == zero.rule_of_78s, k


# -- the actuarial method -----------------------------------------------------------------


@pytest.mark.parametrize("advance", [False, True])
@pytest.mark.parametrize(("n", "i"), [(12, Fraction(1, 100)), (36, Fraction(73, 12_000))])
def test_actuarial_rebate_is_k_p_less_p_a_k_in_fractions(
    n: int, i: Fraction, advance: bool
) -> None:
    # Python fractions: a level precomputed loan of A = 10,000 at i, instalment
    # P = A / a_n (in advance A / ä_n, ä_n = (1 + i) a_n), F = n P - A. With k instalments
    # unmatured (k < n; in advance after at least one instalment) the actuarial balance
    # is P a_k(i), so the unearned interest is k P - P a_k(i).
    amount = Fraction(10_000)
    due = annuity(n, i) * ((1 + i) if advance else 1)
    p = amount / due
    f_exact = n * p - amount
    f = round_fraction(f_exact * 100, Rounding.HALF_UP)  # the charge to the cent, in cents
    charge = Decimal(f) / 100
    for k in range(n):
        exact = (k * p - p * annuity(k, i)) * Fraction(f) / (f_exact * 100)  # scaled to F
        expected = round_fraction(exact * 100, Rounding.HALF_UP)
        got = rebate(charge, n, k, method="actuarial", periodic_rate=i, advance=advance)
        assert cents(got) == expected, k


def test_actuarial_rebate_against_numpy_financial_pv() -> None:
    # numpy-financial: the present value of the k remaining instalments, -pv(i, k, P) = P a_k(i).
    n, i = 48, 0.0075
    amount = 20_000.0
    p = -float(npf.pmt(i, n, amount))
    charge = Decimal(repr(round(n * p - amount, 2)))
    p_charge = float(charge) / (n - (-float(npf.pv(i, n, 1.0))))  # P from F: F / (n - a_n)
    for k in range(n + 1):
        unearned = k * p_charge - (-float(npf.pv(i, k, p_charge)))
        got = rebate(charge, n, k, method="actuarial", periodic_rate="0.75%")
        assert abs(float(got) - unearned) <= 0.005 + 1e-9, k


def test_reg_z_appendix_j_example_rate_solved_from_the_amount_financed() -> None:
    # 12 CFR 1026 Appendix J (c)(1)(i) [memory/secondary]: 5,000.00 repaid by 24 x 230.00
    # has an APR of 9.69 %. F = 24 x 230 - 5,000 = 520.00.
    both = rebates("520.00", 24, 12, amount_financed="5000.00")
    apr = both.periodic_rate * 12 * 100
    assert apr.quantize(CENT) == Decimal("9.69")
    # The solved rate makes the 24 instalments repay 5,000 (to 20 digits).
    i = both.periodic_rate
    a_24 = (1 - (1 + i) ** -24) / i
    assert abs(230 * a_24 - 5000) < Decimal("1e-20")
    # With 12 of 24 unmatured: 230 x 12 - 230 a_12(i).
    a_12 = (1 - (1 + i) ** -12) / i
    assert both.actuarial == (230 * 12 - 230 * a_12).quantize(CENT)


def _whole_cent_loan(payment: str, annual: str, n: int, advance: bool) -> Loan:
    """A loan whose exact level payment is within a hair of ``payment`` (A = P a_n, to the cent)."""
    i = Fraction(Decimal(annual.rstrip("%"))) / 1200
    factor = annuity(n, i) * ((1 + i) if advance else 1)
    principal = Decimal(round_fraction(Fraction(Decimal(payment)) * factor * 100, Rounding.HALF_UP))
    timing = "advance" if advance else "arrears"
    loan = Loan(principal=principal / 100, annual_rate=annual, periods=n, timing=timing)
    assert loan.payment == Decimal(payment)
    return loan


@pytest.mark.parametrize("advance", [False, True])
@pytest.mark.parametrize(
    ("payment", "annual", "n"),
    [("250.00", "6.5%", 12), ("1234.56", "12%", 60), ("28.77", "24%", 36), ("877.11", "3%", 120)],
)
def test_actuarial_rebate_is_the_interest_left_in_the_schedule(
    payment: str, annual: str, n: int, advance: bool
) -> None:
    # For a level loan the actuarial rebate with k instalments unmatured equals the interest
    # column of the schedule's remaining rows (rows n-k+1..n in arrears; in advance the
    # period that has just begun is unearned too, rows n-k..n), up to cents: each period's
    # interest is rounded by at most half a cent, and that error grows by at most u s_n(i)
    # (amort.reconcile's documented bound), plus one cent for rounding the rebate.
    loan = _whole_cent_loan(payment, annual, n, advance)
    frame = loan.schedule()
    interest = [round(float(x) * 100) for x in frame["interest"]]
    charge = loan.summary()["total_interest"]
    assert cents(charge) == sum(interest)
    i = loan.periodic_rate
    s_n = float(((1 + i) ** n - 1) / i)
    tolerance = 0.5 * s_n + 1  # cents
    for m in range(1, n):
        k = n - m
        left = sum(interest[m - 1 :]) if advance else sum(interest[m:])
        got = rebate(charge, n, k, method="actuarial", periodic_rate=i, advance=advance)
        assert abs(cents(got) - left) <= tolerance, (m, cents(got), left)
