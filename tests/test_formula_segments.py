"""Structured loans' closed forms in segments: against iteration, mpmath, sympy and the schedule.

Outside references: exact iteration of the recurrence in Python fractions,
mpmath at 60 digits, and sympy's rsolve run here on the segment's own numbers.
"""

from __future__ import annotations

import dataclasses
import json
from datetime import date
from decimal import ROUND_HALF_UP, Decimal
from fractions import Fraction

import mpmath
import pytest
import sympy as sp
from typer.testing import CliRunner

from amort import InvalidTerms, Loan
from amort.cli import app
from amort.events import ExtraPrincipal, PaymentHoliday, RateReset
from amort.formula_segments import (
    EXACT_ROWS,
    check_segments,
    segmented_formula_for,
)

BASE = {"principal": 12_000, "annual_rate": "6%", "periods": 24}
START = {"start": date(2026, 1, 15)}

CASES = {
    "interest-only then level": {"interest_only_periods": 6},
    "equal principal": {"structure": "equal-principal"},
    "equal principal after interest only": {
        "structure": "equal-principal",
        "interest_only_periods": 4,
    },
    "bullet": {"structure": "bullet"},
    "geometric every period": {"payment_growth": "0.01", "growth_every": 1},
    "geometric resonance": {"payment_growth": "0.005", "growth_every": 1},
    "geometric yearly steps": {"payment_growth": "0.05", "growth_every": 12},
    "arithmetic every period": {"payment_step": "10", "growth_every": 1},
    "graduated after interest only": {
        "payment_growth": "0.02",
        "growth_every": 1,
        "interest_only_periods": 3,
    },
    "custom payments": {"custom_payments": tuple([600] * 12 + [450] * 12)},
    "seasonal": {"payment_months": (1, 2, 3, 4, 5, 6, 7, 8, 9), **START},
    "events": {
        "events": (
            ExtraPrincipal(period=5, amount="1000"),
            PaymentHoliday(period=10, count=2),
            RateReset(period=15, annual_rate="8%"),
        )
    },
    "reset keeping the payment": {
        "events": (RateReset(period=8, annual_rate="9%", reamortise=False),)
    },
    "dated interest only, actual/365": {
        "interest_only_periods": 3,
        "day_count": "actual/365",
        **START,
    },
    "dated geometric, actual/365": {
        "payment_growth": "0.01",
        "growth_every": 1,
        "day_count": "actual/365",
        **START,
    },
    "negative amortisation capped": {
        "payment_growth": "0.08",
        "negative_amortisation_cap": "103%",
    },
    "zero rate, interest only": {"annual_rate": "0%", "interest_only_periods": 2},
    "zero rate, arithmetic": {"annual_rate": "0%", "payment_step": "5", "growth_every": 1},
}


def loan_for(name: str) -> Loan:
    return Loan(**{**BASE, **CASES[name]})


@pytest.mark.parametrize("name", sorted(CASES))
def test_segments_cover_every_period_but_the_last_once_in_order(name: str) -> None:
    loan = loan_for(name)
    found = segmented_formula_for(loan)
    covered = [k for s in found.segments for k in range(s.first, s.last + 1)]
    assert covered == list(range(1, loan.number_of_payments))
    assert found.periods == loan.number_of_payments


@pytest.mark.parametrize("name", sorted(CASES))
def test_every_segment_is_within_its_derived_bound(name: str) -> None:
    loan = loan_for(name)
    checks = check_segments(loan)
    assert checks
    assert all(c.passed for c in checks), checks


def ideal_payments(seg, name: str) -> list[Fraction]:
    """The payments the segment's rule says, exactly (not the cents the engine paid)."""
    p = seg.parameters
    m = seg.length
    if seg.kind == "geometric":
        return [p["P_1"] * p["g"] ** j for j in range(m)]
    if seg.kind == "geometric-resonance":
        return [p["P_1"] * (1 + seg.rates[0]) ** j for j in range(m)]
    if seg.kind == "arithmetic":
        return [p["P_1"] + j * p["h"] for j in range(m)]
    return list(seg.payments)


@pytest.mark.parametrize("name", sorted(CASES))
def test_closed_forms_equal_exact_iteration(name: str) -> None:
    # Source: the recurrence B_n = a_n B_(n-1) - P_n (a_n (B_(n-1) - P_n) in advance),
    # iterated in Python fractions from each segment's opening balance.
    loan = loan_for(name)
    advance = loan.timing.value == "advance"
    for seg in segmented_formula_for(loan).segments:
        balance = seg.opening
        expected = [balance]
        for rate, pay in zip(seg.rates, ideal_payments(seg, name), strict=True):
            if seg.kind in ("interest-only", "equal-principal"):
                balance -= pay  # the payment is C plus exactly the period's interest
            elif advance:
                balance = (1 + rate) * (balance - pay)
            else:
                balance = (1 + rate) * balance - pay
            expected.append(balance)
        assert seg.balances() == expected, (name, seg.first)


def test_equal_principal_balances_are_exact_in_cents() -> None:
    # Equal principal moves the balance by exactly C each period: no rounding gap at all.
    loan = loan_for("equal principal")
    (check,) = check_segments(loan)
    assert check.largest_gap == 0.0 and check.gap_bound == 0.0


def test_the_check_fails_when_a_segment_is_wrong_by_a_cent() -> None:
    loan = loan_for("interest-only then level")
    found = segmented_formula_for(loan)
    level = found.segments[1]
    wrong = dataclasses.replace(
        level, opening=level.opening + Fraction(1, 100), balance=None, rates=level.rates
    )
    broken = dataclasses.replace(found, segments=(found.segments[0], wrong))
    assert not all(c.passed for c in check_segments(loan, formula=broken))


def test_resonance_segment_matches_sympy_rsolve_on_its_numbers() -> None:
    # Source: sympy rsolve of B(n+1) = a B(n) - P_1 a^n with this loan's numbers put in first.
    loan = loan_for("geometric resonance")
    (seg,) = segmented_formula_for(loan).segments
    assert seg.kind == "geometric-resonance"
    n = sp.Symbol("n", integer=True, nonnegative=True)
    b = sp.Function("B")
    a = sp.Rational(1) + sp.Rational(seg.rates[0].numerator, seg.rates[0].denominator)
    p1 = sp.Rational(seg.parameters["P_1"].numerator, seg.parameters["P_1"].denominator)
    b0 = sp.Rational(seg.opening.numerator, seg.opening.denominator)
    solved = sp.rsolve(b(n + 1) - a * b(n) + p1 * a**n, b(n), {b(0): b0})
    for m in (0, 1, 7, seg.length):
        assert Fraction(str(sp.nsimplify(solved.subs(n, m)))) == seg.balances()[m]


def test_long_segment_against_mpmath() -> None:
    # Source: mpmath at 60 digits, iterating the recurrence; the segment is longer than
    # EXACT_ROWS, so amort evaluates it with mpmath through sympy's lambdify.
    loan = Loan(
        principal=300_000,
        annual_rate="5.2%",
        periods=1560,
        frequency="weekly",
        interest_only_periods=52,
    )
    found = segmented_formula_for(loan)
    seg = found.segments[1]
    assert seg.length > EXACT_ROWS
    with mpmath.workdps(60):
        rate = mpmath.mpf(seg.rates[0].numerator) / seg.rates[0].denominator
        pay = mpmath.mpf(seg.payments[0].numerator) / seg.payments[0].denominator
        balance = mpmath.mpf(seg.opening.numerator) / seg.opening.denominator
        values = seg.balances()
        for m in range(1, seg.length + 1):
            balance = balance * (1 + rate) - pay
            assert abs(values[m] - balance) < mpmath.mpf("1e-20")
    assert all(c.passed for c in check_segments(loan, formula=found))


def test_outcomes_name_the_fixed_point_relation() -> None:
    found = segmented_formula_for(loan_for("interest-only then level"))
    first, level = found.segments
    assert first.kind == "interest-only" and first.outcome == "the balance stays"
    assert level.fixed_point == level.payments[0] / level.rates[0]  # B* = P / i
    assert level.outcome == "pays off"
    # The README's capped graduated loan: the balance grows until the cap stops it.
    capped = segmented_formula_for(
        Loan(
            principal=100_000,
            annual_rate="12%",
            periods=360,
            payment_growth="0.075",
            negative_amortisation_cap="105%",
        )
    )
    grow, amortise = capped.segments
    assert grow.outcome == "negative amortisation" and (grow.first, grow.last) == (1, 10)
    assert amortise.outcome == "pays off" and amortise.first == 11


def test_text_and_latex_name_each_segment() -> None:
    found = segmented_formula_for(loan_for("events"))
    assert found.text.count("Segment ") == len(found.segments)
    assert "no payment: the interest is capitalised" in found.text
    assert found.latex.startswith("\\begin{aligned}") and found.latex.endswith("\\end{aligned}")


# -- the negative-amortisation cap on listed payments ---------------------------------------


def cents_half_up(x: Fraction) -> int:
    """Round an amount in cents half-up to a whole cent (Python decimal, ROUND_HALF_UP)."""
    q = Decimal(x.numerator) / Decimal(x.denominator)
    return int(q.quantize(Decimal(1), rounding=ROUND_HALF_UP))


def test_cap_on_listed_payments_against_a_decimal_reference() -> None:
    # Independent reference (Python fractions and decimal): pay the listed payments with
    # half-up interest until a closing balance would pass the cap, then recast to the level
    # payment P = B i / (1 - (1 + i)^-m) over the m periods left, rounded half-up.
    listed = [50] * 6 + [400] * 18
    loan = Loan(
        principal=10_000,
        annual_rate="12%",
        custom_payments=tuple(listed),
        negative_amortisation_cap="102%",
    )
    i = Fraction(1, 100)
    cap = 1_020_000
    balance = 1_000_000
    payments = [p * 100 for p in listed]
    closings = []
    k = 0
    while k < len(payments):
        interest = cents_half_up(balance * i)
        closing = balance + interest - payments[k]
        if closing > cap and k < len(payments) - 1:
            left = len(payments) - k
            level = cents_half_up(balance * i / (1 - (1 + i) ** -left))
            payments[k:] = [level] * left
            continue
        if k == len(payments) - 1:
            closing = 0
        closings.append(closing)
        balance = closing
        k += 1
    frame = loan.schedule()
    assert [round(x * 100) for x in frame["closing_balance"]] == closings
    assert max(closings) <= cap
    assert loan.summary()["cap_reached_period"] == 4
    assert loan.reconciliation().passed


def test_cap_needs_a_payment_rule_that_can_fall_short() -> None:
    with pytest.raises(InvalidTerms, match=r"graduated payments .* or listed custom_payments"):
        Loan(**BASE, negative_amortisation_cap="110%")


# -- the command line -----------------------------------------------------------------------

runner = CliRunner()
LOAN_ARGS = ["formula", "--principal", "12000", "--rate", "6", "--periods", "24"]


def test_cli_formula_prints_segments_and_the_check() -> None:
    result = runner.invoke(
        app,
        [*LOAN_ARGS, "--interest-only", "6", "--latex"],
    )
    assert result.exit_code == 0, result.stderr
    assert "Segment 1: periods 1-6, interest only" in result.stdout
    assert "Segment 2: periods 7-23, level payment P" in result.stdout
    assert "\\begin{aligned}" in result.stdout
    assert "segment by segment" in result.stdout and "FAIL" not in result.stdout
    assert "computed estimates" in result.stdout


def test_cli_formula_json_lists_segments() -> None:
    result = runner.invoke(
        app,
        [*LOAN_ARGS, "--structure", "equal-principal", "--json"],
    )
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    (seg,) = data["segments"]
    assert seg["kind"] == "equal-principal" and seg["parameters"]["C"] == "500"
    assert data["passed"] is True and data["largest_gap_to_schedule"] == 0.0
    assert data["final_payment"] == 502.5


def test_cli_formula_reads_a_terms_file() -> None:
    result = runner.invoke(app, ["formula", "examples/tallowmere_graduated.toml"])
    assert result.exit_code == 0, result.stderr
    assert "Segment 1" in result.stdout


def test_cli_formula_refuses_a_file_and_options_at_once() -> None:
    result = runner.invoke(
        app, ["formula", "examples/tallowmere_graduated.toml", "--principal", "1000"]
    )
    assert result.exit_code == 2
    assert "not both" in result.stderr
