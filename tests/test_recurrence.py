"""amort.recurrence: limits, broadcasting, timing, round trips, and the recurrence itself."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from amort import recurrence as rc

EPS = float(np.finfo(float).eps)


# -- rate 0: every formula takes its limit ---------------------------------------------


@pytest.mark.parametrize("n", [0, 1, 12, 360, 100_000])
def test_factors_at_rate_zero(n):
    assert float(rc.growth(0.0, n)) == 1.0
    assert float(rc.discount(0.0, n)) == 1.0
    assert float(rc.annuity_factor(0.0, n)) == n
    assert float(rc.accumulation_factor(0.0, n)) == n
    assert float(rc.annuity_factor_derivative(0.0, n)) == -n * (n + 1) / 2


@pytest.mark.parametrize("adv", [False, True])
def test_loan_formulas_at_rate_zero(adv):
    assert float(rc.payment(1200.0, 0.0, 12, 300.0, adv)) == 900.0 / 12
    assert float(rc.principal(75.0, 0.0, 12, 300.0, adv)) == 1200.0
    assert float(rc.balance(1200.0, 0.0, 75.0, 4, adv)) == 900.0
    assert float(rc.periods(1200.0, 0.0, 75.0, 300.0, adv)) == 12.0
    assert float(rc.present_value_gap(0.0, 75.0, 12, 1000.0, 300.0, adv)) == 200.0


@pytest.mark.parametrize("n", [1, 12, 360, 100_000])
def test_factors_are_continuous_at_rate_zero(n):
    """At i = 1e-12 each factor is its limit to first order: a_n ~ n (1 - (n+1) i / 2)."""
    i = 1e-12
    second_order = 1e-15 + (n * i) ** 2  # the terms the first-order forms leave out
    assert float(rc.annuity_factor(i, n)) == pytest.approx(
        n * (1 - (n + 1) * i / 2), rel=second_order
    )
    assert float(rc.accumulation_factor(i, n)) == pytest.approx(
        n * (1 + (n - 1) * i / 2), rel=second_order
    )
    assert float(rc.payment(1e5, i, n)) == pytest.approx(
        1e5 / n * (1 + (n + 1) * i / 2), rel=second_order
    )


def test_derivative_series_meets_general_form():
    """annuity_factor_derivative switches to its series at |n i| = 1e-5; both sides agree.

    d a_n / d i = -n (n+1) / 2 + n (n+1) (n+2) / 3 i - O(n^4 i^2), from a_n = sum v^k.
    """
    n = 1000.0
    for i in (0.99e-8, 1.01e-8):
        expected = -n * (n + 1) / 2 + n * (n + 1) * (n + 2) / 3 * i
        assert float(rc.annuity_factor_derivative(i, n)) == pytest.approx(expected, rel=1e-10)


@pytest.mark.parametrize("i", [1e-6, 0.005, 0.3])
@pytest.mark.parametrize("adv", [False, True])
def test_present_value_derivative_matches_a_difference_quotient(i, adv):
    h = i * 1e-6
    up = float(rc.present_value(i + h, 600.0, 360, 5000.0, adv))
    down = float(rc.present_value(i - h, 600.0, 360, 5000.0, adv))
    slope = float(rc.present_value_derivative(i, 600.0, 360, 5000.0, adv))
    assert slope == pytest.approx((up - down) / (2 * h), rel=1e-6)


# -- broadcasting -----------------------------------------------------------------------


def test_every_function_broadcasts():
    b0 = np.array([[1e4], [2e5], [3e6]])  # (3, 1)
    i = np.array([0.0, 1e-9, 0.004, 0.5])  # (4,)
    n = 240.0
    p = rc.payment(b0, i, n)
    shapes = {
        "payment": p,
        "growth": rc.growth(i, np.array([[1.0], [2.0], [3.0]])),
        "discount": rc.discount(i[:, None], np.arange(5)),
        "annuity_factor": rc.annuity_factor(i, np.ones((3, 1))),
        "accumulation_factor": rc.accumulation_factor(i, np.ones((3, 1))),
        "principal": rc.principal(p, i, n),
        "balance": rc.balance(b0, i, p, np.ones((3, 1))),
        "balance_scale": rc.balance_scale(b0, i, p, np.ones((3, 1))),
        "periods": rc.periods(b0, i, p),
        "present_value_gap": rc.present_value_gap(i, p, n, b0),
        "present_value_derivative": rc.present_value_derivative(i, p, n, np.zeros((3, 1))),
        "annuity_factor_derivative": rc.annuity_factor_derivative(i, np.ones((3, 1))),
    }
    for name, value in shapes.items():
        expected = (4, 5) if name == "discount" else (3, 4)
        assert np.shape(value) == expected, name
        assert np.asarray(value).dtype == np.float64, name


def test_advance_flag_broadcasts_per_loan():
    adv = np.array([False, True])
    p = rc.payment(1e5, 0.01, 12, 0.0, adv)
    assert p[0] == float(rc.payment(1e5, 0.01, 12))
    assert p[1] == float(rc.payment(1e5, 0.01, 12, 0.0, True))
    assert p[1] == pytest.approx(p[0] / 1.01, rel=1e-15)


# -- payments in advance are arrears with payment (1 + i) P -----------------------------


@pytest.mark.parametrize("i", [1e-9, 0.004, 0.08, 1.0])
def test_advance_is_arrears_with_payment_times_growth(i):
    b0, n, f, p = 50_000.0, 60, 8000.0, 900.0
    a = 1 + i
    assert float(rc.payment(b0, i, n, f, True)) * a == pytest.approx(
        float(rc.payment(b0, i, n, f)), rel=1e-15
    )
    assert float(rc.principal(p, i, n, f, True)) == pytest.approx(
        float(rc.principal(p * a, i, n, f)), rel=1e-15
    )
    for k in (0, 1, 30, 60):
        adv = float(rc.balance(b0, i, p, k, True))
        arr = float(rc.balance(b0, i, p * a, k))
        scale = float(rc.balance_scale(b0, i, p, k, True))
        assert abs(adv - arr) <= 4 * EPS * scale
    big = 1.2 * float(rc.payment(b0, i, n, f))  # covers interest in both timings
    assert float(rc.periods(b0, i, big, f, True)) == pytest.approx(
        float(rc.periods(b0, i, big * a, f)), rel=1e-13
    )


# -- round trips ------------------------------------------------------------------------


@pytest.mark.parametrize("i", [0.0, 1e-12, 1e-6, 0.005, 0.05, 0.5])
@pytest.mark.parametrize("n", [1, 12, 360, 5000])
@pytest.mark.parametrize("adv", [False, True])
def test_payment_principal_periods_balance_round_trip(i, n, adv):
    b0, f = 120_000.0, 20_000.0
    p = float(rc.payment(b0, i, n, f, adv))
    assert float(rc.principal(p, i, n, f, adv)) == pytest.approx(b0, rel=1e-14)
    closing = float(rc.balance(b0, i, p, n, adv))
    assert abs(closing - f) <= 1e-14 * float(rc.balance_scale(b0, i, p, n, adv))
    # The term's sensitivity to the payment's last bit grows like (1+i)^n; where that
    # swamps the answer (the float payment is i B_0 to the last bit) there is no check.
    slack = 8 * EPS * float(rc.growth(i, n))
    if slack < 1e-6:
        assert float(rc.periods(b0, i, p, f, adv)) == pytest.approx(n, rel=1e-13 + slack)


@settings(max_examples=300, deadline=None)
@given(
    b0=st.floats(100, 1e7),
    i=st.one_of(st.just(0.0), st.floats(1e-12, 1.0)),
    n=st.integers(1, 100_000),
    share=st.floats(0, 1),
    adv=st.booleans(),
)
def test_round_trip_property(b0, i, n, share, adv):
    f = share * b0
    p = float(rc.payment(b0, i, n, f, adv))
    assert float(rc.principal(p, i, n, f, adv)) == pytest.approx(b0, rel=1e-13)
    scale = float(rc.balance_scale(b0, i, p, n, adv))
    if np.isfinite(scale):
        assert abs(float(rc.balance(b0, i, p, n, adv)) - f) <= 1e-13 * scale
    if p > 0 and i > 0:
        assert float(rc.present_value_gap(i, p, n, b0, f, adv)) == pytest.approx(
            0.0, abs=1e-12 * b0
        )


# -- the closed-form balance is the recurrence ------------------------------------------


def exact_balances(b0: float, i: float, p: float, k: int, adv: bool) -> list[Fraction]:
    """B_0 .. B_k by the recurrence in exact rationals on the float inputs."""
    a, pay = 1 + Fraction(i), Fraction(p)
    out = [Fraction(b0)]
    for _ in range(k):
        out.append(a * (out[-1] - pay) if adv else a * out[-1] - pay)
    return out


@pytest.mark.parametrize(
    ("b0", "i", "p", "adv"),
    [
        (250_000.0, 0.065 / 12, 1580.17, False),
        (250_000.0, 0.065 / 12, 1580.17, True),
        (5_000.0, 0.02, 50.0, False),  # payment below interest: negative amortisation
        (5_000.0, 0.02, 100.0, False),  # interest only
        (9_000.0, 1e-9, 900.0, True),
    ],
)
def test_balance_is_the_recurrence(b0, i, p, adv):
    k = np.arange(0, 121)
    got = rc.balance(b0, i, p, k, adv)
    scale = rc.balance_scale(b0, i, p, k, adv)
    exact = exact_balances(b0, i, p, 120, adv)
    err = np.array([abs(Fraction(float(g)) - e) for g, e in zip(got, exact, strict=True)], float)
    assert np.all(err <= 4 * EPS * scale)
    assert np.all(scale >= np.abs(got))


def test_interest_only_balance_stays_put_even_past_overflow():
    """P = i B_0 exactly: the balance never moves, even where s_k overflows a float."""
    assert float(rc.balance(1000.0, 0.5, 500.0, 5000)) == 1000.0
    assert float(rc.balance(1000.0, 0.5, 500.0, 0)) == 1000.0


def test_overflow_is_quiet_inf():
    """(1 + 1)^100000 is no float: inf, without a warning (warnings are errors in tests)."""
    assert float(rc.growth(1.0, 100_000)) == np.inf
    assert float(rc.accumulation_factor(1.0, 100_000)) == np.inf
    assert float(rc.discount(1.0, 100_000)) == 0.0
    assert float(rc.annuity_factor(1.0, 100_000)) == 1.0
    assert float(rc.payment(1e5, 1.0, 100_000)) == 1e5


# -- periods: the payment must cover interest -------------------------------------------


def test_periods_is_inf_when_payment_does_not_cover_interest():
    assert float(rc.periods(100_000.0, 0.005, 499.99)) == np.inf
    assert float(rc.periods(100_000.0, 0.005, 500.0)) == np.inf  # interest only
    assert np.isfinite(rc.periods(100_000.0, 0.005, 500.01))
    # in advance the first period earns interest on B_0 - P
    assert float(rc.periods(100_000.0, 0.005, 497.51, 0.0, True)) == np.inf
    assert np.isfinite(rc.periods(100_000.0, 0.005, 497.52, 0.0, True))


def test_periods_resolves_a_payment_one_ulp_above_interest():
    """P = i B_0 + 1 ulp: the margin is exact, so the term is log(P / margin) / log(1 + i)."""
    b0, i = 100_000.0, 0.5  # i B_0 = 50,000 exactly
    p = np.nextafter(50_000.0, np.inf)
    expected = np.log(p / (p - 50_000.0)) / np.log1p(i)
    assert float(rc.periods(b0, i, p)) == pytest.approx(expected, rel=1e-14)


# -- the rate equation's gap ------------------------------------------------------------


@pytest.mark.parametrize("adv", [False, True])
def test_present_value_gap_is_decreasing_and_zero_at_the_rate(adv):
    p = float(rc.payment(1e5, 0.004, 360, 1e4, adv))
    rates = np.array([0.0, 1e-9, 1e-6, 1e-3, 0.0039, 0.004, 0.0041, 0.1, 1.0])
    gap = rc.present_value_gap(rates, p, 360, 1e5, 1e4, adv)
    assert np.all(np.diff(gap) < 0)
    assert abs(gap[5]) <= 1e-10 * 1e5
    pv = rc.present_value(rates, p, 360, 1e4, adv) - 1e5
    assert np.allclose(gap, pv, rtol=1e-10, atol=1e-7)


def exact_gap(i: float, p: float, n: int, b0: float, f: float, adv: bool) -> Fraction:
    """PV(i) - B_0 in exact rationals on the float inputs (sum of the discounted payments)."""
    v = 1 / (1 + Fraction(i))
    first = 0 if adv else 1
    pv = sum(Fraction(p) * v ** (k + first) for k in range(n)) + Fraction(f) * v**n
    return pv - Fraction(b0)


@pytest.mark.parametrize("i", [1e-12, 1e-9, 1e-6, 1e-3])
@pytest.mark.parametrize(("n", "f"), [(1, 5e4), (2, 0.0), (12, 0.0), (12, 2e4)])
@pytest.mark.parametrize("adv", [False, True])
def test_present_value_gap_is_exact_where_the_direct_form_cancels(i, n, f, adv):
    """Near a small rate PV - B_0 is lost in PV's rounding; the gap keeps it (Fraction check)."""
    b0 = 100_000.0
    p = float(rc.payment(b0, i, n, f, adv))
    for d in (0.0, 0.5, 1.0, 2.0):
        exact = exact_gap(d * i, p, n, b0, f, adv)
        got = float(rc.present_value_gap(d * i, p, n, b0, f, adv))
        # relative to the excess N P + F - B_0 that the gap is a part of
        excess = abs(Fraction(p) * n + Fraction(f) - Fraction(b0))
        assert abs(Fraction(got) - exact) <= 8 * EPS * max(excess, abs(exact)), d
