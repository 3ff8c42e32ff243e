"""Graduated payments against exact references: the closed form, iteration and mpmath.

The first payment solves B_N = F for payments P_1 g^s (geometric) or P_1 + s h
(arithmetic), s the whole growth steps before the period (amort/graduated.py).
"""

from __future__ import annotations

import random
from decimal import Decimal
from fractions import Fraction

import mpmath
import pytest

from amort import InvalidTerms, Loan
from amort.graduated import first_payment_fraction


def iterate(b0: Fraction, i: Fraction, payments: list[Fraction]) -> Fraction:
    balance = b0
    for p in payments:
        balance = balance * (1 + i) - p
    return balance


@pytest.mark.parametrize("seed", range(40))
def test_first_payment_brings_the_iterated_balance_to_the_balloon(seed: int) -> None:
    # Source: exact iteration of B_k = (1 + i) B_{k-1} - P_k in Python fractions.
    rng = random.Random(seed)
    n = rng.randint(2, 80)
    m = rng.randint(0, min(6, n - 1))
    every = rng.choice([1, 3, 12])
    i = Fraction(rng.randint(0, 200), 20_000)
    b0 = Fraction(rng.randint(10_000, 10_000_000))
    f = Fraction(rng.randint(0, int(b0) // 3)) if rng.random() < 0.4 else Fraction(0)
    geometric = rng.random() < 0.5
    g = Fraction(rng.randint(1, 80), 1000) if geometric else None
    h = None if geometric else rng.randint(0, 5_000)
    p1 = first_payment_fraction(
        int(b0), [i] * n, interest_only=m, every=every, growth=g, step_cents=h, balloon_cents=int(f)
    )
    payments = [b0 * i] * m + [
        p1 * (1 + g) ** ((k - m - 1) // every) if g is not None else p1 + ((k - m - 1) // every) * h
        for k in range(m + 1, n + 1)
    ]
    assert iterate(b0, i, payments) == f


def test_resonance_growth_equal_to_the_rate() -> None:
    # DESIGN.md: with g = a the geometric term is P_1 n a^(n-1); B_N = 0 gives
    # P_1 = B_0 a / N. 100,000 at 0.5 % a month, 24 payments: 100,000 x 1.005 / 24.
    loan = Loan(
        principal=100_000, annual_rate="6%", periods=24, payment_growth="0.5%", growth_every=1
    )
    assert loan.payment == Decimal("4187.50")
    assert loan.reconciliation().passed


def test_first_payment_matches_mpmath_for_a_yearly_growth() -> None:
    # Source: mpmath at 50 digits, the annuity of a payment growing 5 % each year.
    mpmath.mp.dps = 50
    i, n, b0 = mpmath.mpf(6) / 1200, 360, mpmath.mpf(250_000)
    weights = mpmath.fsum(
        mpmath.power(mpmath.mpf("1.05"), (k - 1) // 12) / mpmath.power(1 + i, k)
        for k in range(1, n + 1)
    )
    want = b0 / weights
    got = first_payment_fraction(
        25_000_000, [Fraction(1, 200)] * n, interest_only=0, every=12,
        growth=Fraction(1, 20), step_cents=None,
    )  # fmt: skip
    assert abs(mpmath.mpf(got.numerator) / got.denominator / 100 - want) / want < 1e-30


@pytest.mark.parametrize(
    "terms",
    [
        {"payment_growth": "3%"},
        {"payment_growth": "2%", "interest_only_periods": 6, "balloon": 20_000},
        {"payment_step": "25"},
        {"payment_step": "10", "growth_every": 6, "rounding": "up"},
    ],
)
def test_graduated_schedules_reconcile_and_close(terms: dict) -> None:
    loan = Loan(principal=150_000, annual_rate="7.25%", periods=120, **terms)
    frame = loan.schedule()
    assert frame["closing_balance"].iloc[-1] == 0
    assert loan.reconciliation().passed
    # Payments rise exactly at each step (before the final adjustment).
    amortising = frame["payment"].iloc[terms.get("interest_only_periods", 0) : -1]
    assert amortising.is_monotonic_increasing


def test_negative_amortisation_is_refused_with_the_figures() -> None:
    with pytest.raises(InvalidTerms, match=r"first graduated payment .*negative amortisation"):
        Loan(principal=100_000, annual_rate="12%", periods=360, payment_growth="7.5%")


def test_growth_and_step_together_are_refused() -> None:
    with pytest.raises(InvalidTerms, match="not both"):
        Loan(principal=1000, annual_rate="5%", periods=12, payment_growth="1%", payment_step=1)


@pytest.mark.parametrize("cap", ["105%", "150%", 120_000])
def test_negative_amortisation_stops_at_the_cap(cap: object) -> None:
    # A graduated payment below the interest lets the balance grow; from the first
    # period whose closing would pass the cap, a level payment amortises the balance
    # it opens with: P = B i / (1 - (1 + i)^-n) over the n periods left (exact fractions).
    loan = Loan(
        principal=100_000, annual_rate="12%", periods=360, payment_growth="7.5%",
        negative_amortisation_cap=cap,
    )  # fmt: skip
    frame = loan.schedule()
    summary = loan.summary()
    limit = float(summary["negative_amortisation_cap"])
    assert summary["negative_amortisation"] is True
    assert frame["closing_balance"].max() <= limit
    k = summary["cap_reached_period"]
    assert k is not None
    opening = Fraction(Decimal(repr(float(frame["opening_balance"].iloc[k - 1]))))
    i, n = Fraction(1, 100), 360 - k + 1
    exact = opening * i / (1 - (1 + i) ** -n)
    assert (
        Decimal(repr(float(frame["payment"].iloc[k - 1]))) == Decimal(round(exact * 100)) / 100
    )  # half-up and round() agree here: no exact half-cent tie
    assert (frame["payment"].iloc[k - 1 : -1] == frame["payment"].iloc[k - 1]).all()
    assert loan.reconciliation().passed


def test_a_cap_below_the_principal_is_refused() -> None:
    with pytest.raises(InvalidTerms, match="at least the principal"):
        Loan(
            principal=100_000, annual_rate="12%", periods=360, payment_growth="7.5%",
            negative_amortisation_cap=90_000,
        )  # fmt: skip
