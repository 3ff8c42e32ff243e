"""The closed forms of amort.recurrence derived independently by sympy's rsolve.

Source: sympy (``rsolve`` solves linear recurrences with constant coefficients
symbolically; ``solve`` and ``limit`` do the rest). Each closed form the
library evaluates is checked to be the same expression as sympy's solution,
then the float code is checked against that expression at 40 digits.
"""

from __future__ import annotations

import functools

import mpmath as mp
import numpy as np
import pytest
import sympy as sp

from amort import recurrence

n = sp.Symbol("n", integer=True, nonnegative=True)
N = sp.Symbol("N", integer=True, positive=True)
T = sp.Symbol("T", positive=True)  # a term that need not be whole
i, B0, P, F = sp.symbols("i B_0 P F", positive=True)
a = 1 + i
B = sp.Function("B")


@functools.cache
def arrears_solution() -> sp.Expr:
    """sympy rsolve: B(n+1) = a B(n) - P, B(0) = B_0."""
    return sp.rsolve(B(n + 1) - a * B(n) + P, B(n), {B(0): B0})


@functools.cache
def advance_solution() -> sp.Expr:
    """sympy rsolve: B(n+1) = a (B(n) - P), B(0) = B_0 (payments in advance)."""
    return sp.rsolve(B(n + 1) - a * (B(n) - P), B(n), {B(0): B0})


def same(x: sp.Expr, y: sp.Expr) -> bool:
    return sp.simplify(x - y) == 0


def test_rsolve_arrears_is_the_closed_form():
    """sympy rsolve: the arrears solution is a^n B_0 - P (a^n - 1) / i (DESIGN.md)."""
    sol = arrears_solution()
    assert same(sol, a**n * B0 - P * (a**n - 1) / i)
    # and the rearrangement recurrence.balance evaluates: B_0 + (i B_0 - P) s_n
    assert same(sol, B0 + (i * B0 - P) * ((1 + i) ** n - 1) / i)
    # it does satisfy the recurrence and the start (rsolve's answer, re-checked)
    assert same(sol.subs(n, n + 1), a * sol - P)
    assert same(sol.subs(n, 0), B0)


def test_rsolve_advance_is_arrears_with_payment_times_a():
    """sympy rsolve: B(n+1) = a (B(n) - P) solves to a^n B_0 - a P (a^n - 1) / i."""
    sol = advance_solution()
    assert same(sol, a**n * B0 - a * P * (a**n - 1) / i)
    assert same(sol, arrears_solution().subs(P, a * P))
    assert same(sol.subs(n, n + 1), a * (sol - P))


def test_payment_formula_solves_balance_equals_balloon():
    """sympy solve B(N) = F for P: P = (B_0 a^N - F) i / (a^N - 1), in every form amort uses."""
    (pay,) = sp.solve(sp.Eq(arrears_solution().subs(n, N), F), P)
    assert same(pay, (B0 * a**N - F) * i / (a**N - 1))  # DESIGN.md
    assert same(pay, (B0 - F * a**-N) * i / (1 - a**-N))  # (B_0 - F v^N) / a_N
    assert same(pay, (B0 - F) * i / (1 - a**-N) + i * F)  # sinking-fund form
    assert sp.limit(pay, i, 0) == (B0 - F) / N  # the limit at rate 0

    (pay_adv,) = sp.solve(sp.Eq(advance_solution().subs(n, N), F), P)
    assert same(pay_adv, pay / a)


def test_term_formula_solves_balance_equals_balloon():
    """sympy solve B(T) = F for T: T = log((P - i F) / (P - i B_0)) / log(1 + i)."""
    (term,) = sp.solve(sp.Eq(arrears_solution().subs(n, T), F), T)
    assert same(sp.exp(term * sp.log(a)), (P - i * F) / (P - i * B0))


def _at(expr: sp.Expr, values: dict[sp.Symbol, float]) -> mp.mpf:
    """Evaluate at the exact float values, 40 digits."""
    exact = {s: sp.Rational(v) for s, v in values.items()}
    return mp.mpf(sp.N(expr.subs(exact), 40))


@pytest.mark.parametrize("rate", [1e-9, 1e-4, 0.005, 0.05, 0.5])
@pytest.mark.parametrize("advance", [False, True])
def test_float_code_matches_rsolve_solution(rate, advance):
    """sympy rsolve at 40 digits: recurrence.payment and recurrence.balance on its solution."""
    sol = advance_solution() if advance else arrears_solution()
    (pay,) = sp.solve(sp.Eq(sol.subs(n, N), F), P)
    values = {B0: 180_000.0, F: 30_000.0, i: rate, N: 240}
    ours = float(recurrence.payment(180_000.0, rate, 240, 30_000.0, advance))
    ref = _at(pay, values)
    assert abs(ours - ref) <= 1e-13 * ref
    for k in (0, 1, 120, 239, 240):
        got = float(recurrence.balance(180_000.0, rate, ours, k, advance))
        ref = _at(sol, {B0: 180_000.0, P: ours, i: rate, n: k})
        scale = float(recurrence.balance_scale(180_000.0, rate, ours, k, advance))
        assert abs(got - ref) <= 1e-13 * scale, k
    if rate < 0.1:  # at 50 % the float payment is i B_0 to the last bit: interest only
        closing = float(recurrence.balance(180_000.0, rate, ours, 240, advance))
        assert np.isclose(closing, 30_000.0, rtol=1e-9)
