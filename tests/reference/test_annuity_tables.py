"""Annuity closed forms against table values, mpmath at 50 digits and numpy-financial.

Table values and their sourcing mark come from /work/shared/REFERENCES.md,
"Annuity tables (actuarial notation; textbook attribution from memory)":
a(n,i) = (1 - v^n)/i, s(n,i) = ((1+i)^n - 1)/i, due versions x (1+i),
(Ia)(n,i) = (a-due(n,i) - n v^n)/i, (Da)(n,i) = (n - a(n,i))/i. Each printed
figure is compared at the number of decimals it is printed with. The mpmath
references are the same textbook formulas (or the plain sums) at 50 digits,
held to 1e-13 relative as DESIGN.md asks of every closed form.
"""

from __future__ import annotations

from decimal import Decimal

import mpmath
import numpy as np
import numpy_financial as npf
import pytest

from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_forms import accumulated_value, factors, present_value

mpmath.mp.dps = 50

RATES = [0.0, 1e-12, 1e-6, 0.005, 0.05, 0.5, 1.0]
TERMS = [1, 12, 360, 100_000]


def assert_printed(got: float, printed: str) -> None:
    """Assert that ``got`` agrees with a figure printed as ``printed`` to its last digit."""
    exponent = Decimal(printed).as_tuple().exponent
    assert isinstance(exponent, int)
    half_unit = Decimal(5) * Decimal(10) ** (exponent - 1)
    assert abs(Decimal(repr(float(got))) - Decimal(printed)) <= half_unit, (got, printed)


def close(got: float, want: mpmath.mpf, rel: float = 1e-13) -> None:
    if want == 0:
        assert got == 0
        return
    assert abs((mpmath.mpf(got) - want) / want) <= rel, (got, want)


def a_ref(i: float, n: int) -> mpmath.mpf:
    """a(n, i) = (1 - v^n) / i at 50 digits (n at i = 0)."""
    i_ = mpmath.mpf(i)
    return mpmath.mpf(n) if i == 0 else (1 - (1 + i_) ** -n) / i_


# -- table values [memory] -------------------------------------------------------------------


@pytest.mark.parametrize(
    ("n", "printed"), [(10, "7.721734929"), (20, "12.46221034"), (30, "15.37245103")]
)
def test_table_annuity_immediate_at_5_percent(n: int, printed: str) -> None:
    # Annuity table (textbook attribution from memory) [memory]: a(n, 5 %).
    assert_printed(float(present_value(0.05, n)), printed)


def test_table_accumulation_and_due_values_at_5_percent() -> None:
    # Annuity table (textbook attribution from memory) [memory]: s(10) = 12.57789254,
    # a-due(10) = 8.107821676; s-due(10) is s(10) x 1.05 (the "due versions x (1+i)").
    assert_printed(float(accumulated_value(0.05, 10)), "12.57789254")
    assert_printed(float(present_value(0.05, 10, advance=True)), "8.107821676")
    assert_printed(float(accumulated_value(0.05, 10, advance=True)) / 1.05, "12.57789254")


def test_table_increasing_and_decreasing_annuities_at_5_percent() -> None:
    # Annuity table (textbook attribution from memory) [memory]: (Ia)(10) = 39.3737828,
    # (Da)(10) = 45.56530142. Payments 1, 2, ..., 10 are a first payment of 1 with a
    # step of 1; payments 10, 9, ..., 1 a first payment of 10 with a step of -1.
    assert_printed(float(present_value(0.05, 10, 1, step=1)), "39.3737828")
    assert_printed(float(present_value(0.05, 10, 10, step=-1)), "45.56530142")


def test_table_half_percent_360_months_and_the_payout_it_implies() -> None:
    # Annuity table (textbook attribution from memory) [memory]: a(360, 0.5 %) =
    # 166.791614392, so 100,000 pays 599.55 a month: a fund of 100,000 paid out over
    # 360 months at 6 % a year pays the same.
    assert_printed(float(present_value(0.005, 360)), "166.791614392")
    assert Payout(fund=100_000, annual_rate="6%", periods=360).payment == Decimal("599.55")


def test_odf_pv_and_fv() -> None:
    # OASIS ODF Formula [text, equation]: PV(0.05; 10; -100) = 772.173492918,
    # FV(0.05; 10; -100) = 1257.78925355 (REFERENCES.md computed values).
    assert_printed(float(present_value(0.05, 10, 100)), "772.173492918")
    assert_printed(float(accumulated_value(0.05, 10, 100)), "1257.78925355")


def test_the_issue_example_pays_12950_46() -> None:
    # Issue 6: 100,000 over 10 years at 5 % pays 12,950.46 a year; the same as
    # 100,000 / a(10, 5 %) with the table's a(10) = 7.721734929 [memory].
    payout = Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual")
    assert payout.payment == Decimal("12950.46")
    assert round(100_000 / 7.721734929, 2) == 12950.46


# -- mpmath at 50 digits ------------------------------------------------------------------------


@pytest.mark.parametrize("i", RATES)
@pytest.mark.parametrize("n", TERMS)
@pytest.mark.parametrize("advance", [False, True])
def test_present_and_accumulated_values_match_mpmath(i: float, n: int, advance: bool) -> None:
    # mpmath at 50 digits: a(n) and s(n) = a(n) (1+i)^n, times (1+i) for annuities-due.
    due = (1 + mpmath.mpf(i)) if advance else 1
    close(float(present_value(i, n, advance=advance)), a_ref(i, n) * due)
    want = a_ref(i, n) * (1 + mpmath.mpf(i)) ** n * due
    got = float(accumulated_value(i, n, advance=advance))
    if want > np.finfo(float).max:
        assert got == np.inf  # beyond float64: reported as infinite, never wrapped
    else:
        close(got, want)


@pytest.mark.parametrize("i", [r for r in RATES if r > 0])
@pytest.mark.parametrize("n", TERMS)
def test_increasing_annuity_matches_the_standard_formula(i: float, n: int) -> None:
    # mpmath at 50 digits: (Ia)_n = (a-due_n - n v^n) / i, the standard formula, and
    # (Da)_n = (n - a_n) / i; the stable forms must hold even where they cancel.
    i_ = mpmath.mpf(i)
    a_due = a_ref(i, n) * (1 + i_)
    ia = (a_due - n * (1 + i_) ** -n) / i_
    da = (n - a_ref(i, n)) / i_
    close(float(present_value(i, n, 1, step=1)), ia)
    close(float(present_value(i, n, n, step=-1)), da)


@pytest.mark.parametrize("n", TERMS)
def test_increasing_annuity_at_a_zero_rate_is_the_triangle_number(n: int) -> None:
    # At i = 0 the payments 1..n are worth n (n + 1) / 2 (the limit of (Ia)_n).
    assert float(present_value(0.0, n, 1, step=1)) == n * (n + 1) / 2


@pytest.mark.parametrize("i", [1e-6, 0.005, 0.05, 0.5])
@pytest.mark.parametrize("g", [0.0, 0.02, -0.3, 0.07])
@pytest.mark.parametrize("n", [1, 12, 360, 10_000])
def test_geometric_annuity_matches_its_closed_form(i: float, g: float, n: int) -> None:
    # mpmath at 50 digits: payments (1 + g)^(k-1) in arrears are worth
    # (1 - ((1 + g) / (1 + i))^n) / (i - g) (the textbook geometric annuity).
    i_, g_ = mpmath.mpf(i), mpmath.mpf(g)
    want = (1 - ((1 + g_) / (1 + i_)) ** n) / (i_ - g_)
    close(float(present_value(i, n, growth=g)), want)


@pytest.mark.parametrize("i", [1e-12, 1e-6, 0.005, 0.05, 1.0])
@pytest.mark.parametrize("n", [1, 12, 360, 100_000])
def test_geometric_resonance_growth_equal_to_the_rate(i: float, n: int) -> None:
    # DESIGN.md's resonance case: with g = 1 + i every payment is worth v, so the
    # annuity is n v in arrears and n in advance (mpmath at 50 digits).
    close(float(present_value(i, n, growth=i)), n / (1 + mpmath.mpf(i)))
    close(float(present_value(i, n, growth=i, advance=True)), mpmath.mpf(n), rel=1e-12)


@pytest.mark.parametrize(
    ("i", "g", "every", "n", "defer", "step"),
    [
        (0.05 / 12, 0.02, 12, 300, 0, 0.0),
        (0.05 / 12, (1 + 0.05 / 12) ** 12 - 1, 12, 600, 24, 0.0),  # stepwise resonance
        (0.004, 0.0, 12, 250, 7, 25.0),
        (0.01, -0.05, 6, 123, 3, 0.0),
        (0.002, 0.0, 1, 480, 60, -0.5),
    ],
)
@pytest.mark.parametrize("advance", [False, True])
def test_stepped_and_deferred_annuities_match_the_plain_sum(
    i: float, g: float, every: int, n: int, defer: int, step: float, advance: bool
) -> None:
    # mpmath at 50 digits, the plain sum: payment k is 100 (1 + g)^s + s h with
    # s = floor((k - 1) / every), worth v^(defer + k) in arrears, v^(defer + k - 1) due.
    g_, v = mpmath.mpf(g), 1 / (1 + mpmath.mpf(i))
    shift = 1 if advance else 0
    want = mpmath.fsum(
        (100 * (1 + g_) ** ((k - 1) // every) + ((k - 1) // every) * mpmath.mpf(step))
        * v ** (defer + k - shift)
        for k in range(1, n + 1)
    )
    got = present_value(i, n, 100, every=every, growth=g, step=step, defer=defer, advance=advance)
    close(float(got), want)


@pytest.mark.parametrize("i", [0.0001, 0.004, 0.05, 0.9])
def test_perpetuities_match_their_limits(i: float) -> None:
    # mpmath at 50 digits: level perpetuity 1/i (due (1+i)/i), geometric 1/(i - g)
    # for g < i, increasing (Ia)_inf = (1 + i)/i^2 (the textbook limits).
    i_ = mpmath.mpf(i)
    close(float(present_value(i, np.inf)), 1 / i_)
    close(float(present_value(i, np.inf, advance=True)), (1 + i_) / i_)
    g = i / 2
    close(float(present_value(i, np.inf, growth=g)), 1 / (i_ - mpmath.mpf(g)))
    close(float(present_value(i, np.inf, 1, step=1)), (1 + i_) / i_**2)


def test_perpetuities_that_do_not_converge_are_infinite() -> None:
    # growth >= rate: the payments' values do not fall, the sum diverges.
    w, _ = factors(0.01, np.inf, growth=0.01)
    assert np.isinf(w)
    w, _ = factors(0.0, np.inf)
    assert np.isinf(w)


def test_factors_are_vectorised_over_annuities() -> None:
    # One element an annuity: the same values as one at a time (mpmath references above).
    rates = np.array([0.05, 0.005, 0.0])
    terms = np.array([10, 360, 7])
    w, _ = factors(rates, terms)
    assert w.shape == (3,)
    for k in range(3):
        close(float(w[k]), a_ref(float(rates[k]), int(terms[k])))


# -- numpy-financial (pv, fv, pmt, nper, rate; when = end or begin) ----------------------------


@pytest.mark.parametrize("advance", [False, True])
@pytest.mark.parametrize(("fund", "annual", "n", "residual"), [
    (100_000, 5, 10, 0), (250_000, 4, 300, 50_000), (18_000, 9, 36, 0), (1_000_000, 0.5, 480, 1),
])  # fmt: skip
def test_level_payout_payment_matches_numpy_financial(
    fund: int, annual: float, n: int, residual: int, advance: bool
) -> None:
    # numpy-financial pmt(rate, nper, pv, fv, when): the fund paid in (pv = -fund), the
    # payments and the residual taken out.
    frequency = "annual" if n == 10 else "monthly"
    i = annual / 100 / (1 if n == 10 else 12)
    payout = Payout(
        fund=fund, annual_rate=f"{annual}%", periods=n, frequency=frequency,
        residual=residual, timing="advance" if advance else "arrears",
    )  # fmt: skip
    want = npf.pmt(i, n, -fund, residual, when="begin" if advance else "end")
    assert float(payout.payment) == round(want, 2)
    assert payout.reconciliation().passed


@pytest.mark.parametrize("advance", [False, True])
def test_payout_horizon_matches_numpy_financial_nper(advance: bool) -> None:
    # numpy-financial nper: 250,000 at 4 % paying 1,500 a month lasts nper payments,
    # the last one smaller.
    payout = Payout(
        fund=250_000, annual_rate="4%", payment=1500, timing="advance" if advance else "arrears"
    )
    nper = float(npf.nper(0.04 / 12, 1500, -250_000, 0, when="begin" if advance else "end"))
    assert payout.number_of_payments == int(np.ceil(nper))
    assert payout.summary()["final_payment"] < Decimal(1500)


@pytest.mark.parametrize("advance", [False, True])
def test_payout_rate_matches_numpy_financial_rate(advance: bool) -> None:
    # numpy-financial rate: the periodic rate at which 240 payments of 1,500 pay out 250,000.
    payout = Payout(
        fund=250_000, payment=1500, periods=240, timing="advance" if advance else "arrears"
    )
    want = float(npf.rate(240, 1500, -250_000, 0, when="begin" if advance else "end"))
    assert abs(float(payout.annual_rate) / 12 - want) < 1e-11


@pytest.mark.parametrize("advance", [False, True])
@pytest.mark.parametrize(("target", "balance", "n"), [(60_000, 0, 60), (80_000, 5_000, 120)])
def test_level_deposit_matches_numpy_financial(
    target: int, balance: int, n: int, advance: bool
) -> None:
    # numpy-financial pmt with pv = -balance (paid in), fv = target (taken out at the end).
    fund = Accumulation(
        target=target, balance=balance, annual_rate="4%", periods=n,
        timing="advance" if advance else "arrears",
    )  # fmt: skip
    want = -npf.pmt(0.04 / 12, n, -balance, target, when="begin" if advance else "end")
    assert float(fund.deposit) == round(want, 2)
    assert fund.summary()["value_reached"] == Decimal(target)


@pytest.mark.parametrize("advance", [False, True])
def test_target_reached_and_rate_match_numpy_financial(advance: bool) -> None:
    # numpy-financial fv (500 a month for 120 months at 4 %) and rate (the rate at which
    # they reach 80,000).
    when = "begin" if advance else "end"
    timing = "advance" if advance else "arrears"
    reached = Accumulation(deposit=500, annual_rate="4%", periods=120, timing=timing)
    want = float(npf.fv(0.04 / 12, 120, -500, 0, when=when))
    assert abs(float(reached.target) - want) < 0.05  # the cent path drifts a few cents
    assert float(reached.summary()["closed_form_value"]) == pytest.approx(want, abs=1e-4)
    implied = Accumulation(deposit=500, target=80_000, periods=120, timing=timing)
    want_i = float(npf.rate(120, -500, 0, 80_000, when=when))
    assert abs(float(implied.annual_rate) / 12 - want_i) < 1e-11
