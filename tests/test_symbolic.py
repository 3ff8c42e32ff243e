"""amort.symbolic: derivations as text and LaTeX, and the formula view of one loan."""

from __future__ import annotations

import subprocess
import sys
from fractions import Fraction

import pytest

from amort import InvalidTerms, Loan, formula, symbolic

MORTGAGE = {"principal": 250_000, "annual_rate": "6.5%", "periods": 360}

LOANS = {
    "mortgage": MORTGAGE,
    "advance-balloon": {
        "principal": 30_000,
        "annual_rate": "7.2%",
        "periods": 60,
        "balloon": 10_000,
        "timing": "advance",
    },
    "fixed-payment": {"principal": 30_000, "annual_rate": "7.2%", "fixed_payment": 700},
    "zero-rate": {"principal": 12_000, "annual_rate": "0%", "periods": 12},
    "compounded": {
        "principal": 30_000,
        "annual_rate": "6%",
        "periods": 48,
        "frequency": "quarterly",
        "compounding": "monthly",
    },
    "continuous": {
        "principal": 30_000,
        "annual_rate": "6%",
        "periods": 36,
        "compounding": "continuous",
    },
    "dated-equal": {"principal": 10_000, "annual_rate": "6%", "periods": 12, "start": "2027-01-15"},
    "dated-odd-first": {
        "principal": 10_000,
        "annual_rate": "6%",
        "periods": 12,
        "start": "2027-01-10",
        "first_payment": "2027-03-01",
        "day_count": "actual/365",
    },
    "dated-advance": {
        "principal": 10_000,
        "annual_rate": "6%",
        "periods": 12,
        "start": "2027-01-15",
        "day_count": "actual/365",
        "timing": "advance",
    },
    # more rows than symbolic.EXACT_ROWS: the mpmath path
    "long-weekly": {
        "principal": 100_000,
        "annual_rate": "5%",
        "periods": 1_500,
        "frequency": "weekly",
    },
}


@pytest.fixture(scope="module")
def mortgage() -> formula.LoanFormula:
    return formula.formula_for(Loan(**MORTGAGE))


def test_mortgage_numbers(mortgage):
    assert mortgage.rate == Fraction(13, 2400)  # 6.5 % / 12, exact
    assert mortgage.characteristic_root == Fraction(2413, 2400)
    assert mortgage.payment == Fraction("1580.17")
    assert mortgage.principal == 250_000
    assert mortgage.periods == 360
    # B* = P / i = 158017/100 * 2400/13
    assert mortgage.fixed_point == Fraction(158017, 100) / Fraction(13, 2400)
    assert mortgage.outcome == symbolic.PAYS_OFF
    assert round(mortgage.closed_form_payment, 2) == Fraction("1580.17")
    assert mortgage.balance_at(0) == 250_000
    assert mortgage.derivation.rule == "level"


def test_mortgage_text_names_root_fixed_point_and_outcome(mortgage):
    text = mortgage.text
    assert "2413/2400" in text  # the characteristic root 1 + i
    assert "13/2400" in text  # the periodic rate
    assert "B* = P/i = 291,723.6923" in text
    assert "pays off" in text
    assert "1,580.17" in text
    assert "rsolve" in text
    assert all(len(line) < 200 for line in text.splitlines())


def test_mortgage_latex_is_balanced(mortgage):
    latex = mortgage.latex
    assert latex.startswith("\\begin{aligned}") and latex.endswith("\\end{aligned}")
    depth = 0
    for ch in latex:
        depth += {"{": 1, "}": -1}.get(ch, 0)
        assert depth >= 0
    assert depth == 0
    assert "\\frac{13}{2400}" in latex
    assert "B^{*}" in latex
    assert "\\text{pays off}" in latex


@pytest.mark.parametrize("name", sorted(LOANS))
def test_closed_form_against_schedule_within_reconciliation_bound(name):
    """The exact closed form vs the cent schedule: within the bound amort.reconcile documents,
    and the same gap the float reconciliation measures (to 1e-6 currency units)."""
    loan = Loan(**LOANS[name])
    gap = formula.check_against_schedule(loan)
    rec = loan.reconciliation()
    assert gap <= rec.gap_bound
    assert abs(gap - rec.largest_gap) <= 1e-6


@pytest.mark.parametrize("name", sorted(LOANS))
def test_formula_fields_hold_together(name):
    loan = Loan(**LOANS[name])
    f = formula.formula_for(loan)
    assert f.text and f.latex.endswith("\\end{aligned}")
    assert f.outcome == symbolic.PAYS_OFF
    assert f.periods == loan.number_of_payments
    assert f.balance_at(0) == f.principal
    if loan.fixed_payment is None:
        # the closed-form payment, rounded half-up to the cent, is the loan's payment
        assert abs(f.closed_form_payment - f.payment) <= Fraction(1, 200)
    else:
        assert f.closed_form_payment is None
    if f.rates is None:
        assert f.characteristic_root == 1 + f.rate
        assert "a rate for each period" not in f.text
    else:
        assert f.derivation.rule == symbolic.VARYING_RATE
        assert f.fixed_point is None and f.characteristic_root is None
        assert "a rate for each period" in f.text


def test_zero_rate_uses_the_limit():
    f = formula.formula_for(Loan(**LOANS["zero-rate"]))
    assert f.fixed_point is None
    assert f.characteristic_root == 1
    assert f.balance_at(3) == 12_000 - 3 * 1_000
    assert "B_n = B_0 - P*n" in f.text
    assert "(B_0 - F)/N" in f.text
    assert "0 % a year" in f.text


def test_advance_fixed_point_is_a_p_over_i():
    f = formula.formula_for(Loan(**LOANS["advance-balloon"]))
    assert f.fixed_point == (1 + f.rate) * f.payment / f.rate
    assert "B* = P*a/i" in f.text
    assert "balloon F at N" in f.text


def test_interest_only_forever():
    """P = i B_0 exactly: B_0 is the fixed point."""
    loan = Loan(principal=1_000, annual_rate="12%", periods=3, fixed_payment="10", balloon=1_000)
    f = formula.formula_for(loan)
    assert f.fixed_point == 1_000
    assert f.outcome == symbolic.INTEREST_ONLY
    assert "interest-only forever" in f.text


def test_negative_amortisation():
    """Interest 10.001 exactly against a payment of 10.00: B_0 is above B* = 1,000."""
    loan = Loan(
        principal="1000.10", annual_rate="12%", periods=3, fixed_payment="10", balloon="1000.10"
    )
    f = formula.formula_for(loan)
    assert f.fixed_point == 1_000
    assert f.outcome == symbolic.NEGATIVE_AMORTISATION
    assert "negative amortisation" in f.text


def test_check_takes_a_formula_already_derived(mortgage):
    loan = Loan(**MORTGAGE)
    gap = formula.check_against_schedule(loan, formula=mortgage)
    assert gap == formula.check_against_schedule(loan)
    assert 0 < gap <= loan.reconciliation().gap_bound


def test_long_first_period_that_outgrows_the_payment():
    """73 days at 18 % (Actual/365) earn 360.00 against a payment of 259.41: period 1 rises."""
    loan = Loan(
        principal=10_000,
        annual_rate="18%",
        periods=60,
        start="2027-01-01",
        first_payment="2027-03-15",
        day_count="actual/365",
    )
    f = formula.formula_for(loan)
    assert f.rates is not None and f.rates[0] == Fraction(18, 100) * Fraction(73, 365)
    assert f.outcome == symbolic.RISES
    assert f.balance_at(1) > f.principal > f.balance_at(2)
    assert "rises in period 1 (1 period(s) in all)" in f.text
    assert formula.check_against_schedule(loan, formula=f) <= loan.reconciliation().gap_bound


def test_balance_at_refuses_periods_outside_the_term(mortgage):
    with pytest.raises(InvalidTerms, match="'k' must be from 0 to 360"):
        mortgage.balance_at(361)


def test_structured_loans_are_refused_in_one_sentence():
    loan = Loan(**MORTGAGE, structure="equal-principal")
    with pytest.raises(InvalidTerms, match=r"one level payment throughout.*'equal-principal'"):
        formula.formula_for(loan)
    loan = Loan(**MORTGAGE, interest_only_periods=12)
    with pytest.raises(InvalidTerms, match=r"\(got 12 interest-only periods\)"):
        formula.formula_for(loan)


def test_unknown_rule_is_refused():
    with pytest.raises(InvalidTerms, match="'rule' must be one of"):
        symbolic.derive("balloon-only")


@pytest.mark.parametrize("rule", symbolic.RULES)
def test_every_derivation_reads_and_typesets(rule):
    for timing in ("arrears", "advance"):
        d = symbolic.derive(rule, timing=timing)
        assert d.rule == rule and d.timing == timing
        assert d.text.startswith("Balance recurrence:")
        assert "B_n = " in d.text
        assert d.latex.count("{") == d.latex.count("}")
        assert symbolic.derive(rule, timing=timing) is d  # cached


def test_resonance_text_states_the_factor_n():
    d = symbolic.derive("geometric-resonance")
    assert "B_n = a^n*(B_0 - P_1*n/a)" in d.text
    assert "g = a" in d.text


def test_importing_symbolic_does_not_import_sympy():
    code = (
        "import sys, amort.symbolic as s; "
        "before = 'sympy' in sys.modules; "
        "s.derive('level'); "
        "print(before, 'sympy' in sys.modules)"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.split() == ["False", "True"]
