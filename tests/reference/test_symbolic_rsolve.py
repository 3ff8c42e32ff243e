"""amort.symbolic's derivations checked against iteration, sympy rsolve and the float code.

Sources: sympy (``rsolve`` for linear recurrences with constant coefficients,
``limit``, ``summation``, ``simplify``); Python's fractions for exact
iteration of the recurrence; the float closed forms of amort.recurrence and
amort.variable. Identities marked "derived by hand" are worked out in the
test's docstring.
"""

from __future__ import annotations

import itertools
import random
from fractions import Fraction

import numpy as np
import pytest
import sympy as sp

from amort import exact, recurrence, symbolic, variable

S = symbolic.symbols()
n, N, i, a, B0 = S["n"], S["N"], S["i"], S["a"], S["B_0"]
P, P1, g, h, C, F = S["P"], S["P_1"], S["g"], S["h"], S["C"], S["F"]
B = S["B"]
TIMINGS = ["arrears", "advance"]
CONSTANT_RULES = [r for r in symbolic.RULES if r != symbolic.VARYING_RATE]


def _draw(rng: random.Random, rule: str) -> dict[str, Fraction]:
    """Random exact terms: rate 0.01 % to 25 % a period, payments of sensible size."""
    rate = Fraction(rng.randint(1, 2500), 10_000)
    values = {
        "i": rate,
        "B_0": Fraction(rng.randint(100_000, 50_000_000), 100),
        "P": Fraction(rng.randint(100, 900_000), 100),
        "P_1": Fraction(rng.randint(100, 900_000), 100),
        "g": Fraction(rng.randint(9_000, 11_000), 10_000),
        "h": Fraction(rng.randint(-5_000, 5_000), 100),
        "C": Fraction(rng.randint(100, 90_000), 100),
    }
    if rule == symbolic.GEOMETRIC and values["g"] == 1 + rate:
        values["g"] += Fraction(1, 10_000)  # keep clear of the resonance
    return values


def _iterate(rule: str, timing: str, v: dict[str, Fraction], periods: int) -> list[Fraction]:
    """Iterate B_k = a B_{k-1} - P_k (or a (B_{k-1} - P_k)) in exact fractions, k = 1..periods."""
    growth = 1 + v["i"]
    out = [v["B_0"]]
    for k in range(1, periods + 1):
        prev = out[-1]
        if rule == symbolic.LEVEL:
            pay = v["P"]
        elif rule == symbolic.GEOMETRIC:
            pay = v["P_1"] * v["g"] ** (k - 1)
        elif rule == symbolic.RESONANCE:
            pay = v["P_1"] * growth ** (k - 1)
        elif rule == symbolic.ARITHMETIC:
            pay = v["P_1"] + (k - 1) * v["h"]
        else:  # equal principal: the principal part C plus the period's interest
            pay = v["C"] + v["i"] * prev
            if timing == "advance":
                pay /= growth  # interest on B_{k-1} - P_k: P_k = C + i (B_{k-1} - P_k)
        out.append(growth * (prev - pay) if timing == "advance" else growth * prev - pay)
    return out


def _at(expr: sp.Expr, v: dict[str, Fraction]) -> sp.Expr:
    return expr.subs({S[name]: sp.Rational(x.numerator, x.denominator) for name, x in v.items()})


@pytest.mark.parametrize("timing", TIMINGS)
@pytest.mark.parametrize("rule", CONSTANT_RULES)
def test_closed_form_equals_exact_iteration(rule, timing):
    """sympy rsolve's solution (amort.symbolic) = exact iteration (Python fractions), n <= 30."""
    d = symbolic.derive(rule, timing=timing)
    rng = random.Random(f"{rule}-{timing}")
    for _ in range(2):
        v = _draw(rng, rule)
        walk = _iterate(rule, timing, v, 30)
        closed = _at(d.solution, v)
        for k in range(31):
            value = closed.subs(n, k)
            assert isinstance(value, sp.Rational), (k, value)
            assert Fraction(int(value.p), int(value.q)) == walk[k], (rule, timing, k)


@pytest.mark.parametrize("timing", TIMINGS)
@pytest.mark.parametrize("rule", CONSTANT_RULES)
def test_solution_satisfies_its_recurrence_symbolically(rule, timing):
    """sympy simplify: B_0 at n = 0, and B_n - rhs(B_{n-1}) = 0 for every n."""
    d = symbolic.derive(rule, timing=timing)
    assert sp.simplify(d.solution.subs(n, 0) - B0) == 0
    rhs = d.recurrence.rhs.subs(B(n - 1), d.solution.subs(n, n - 1))
    assert sp.simplify(d.recurrence.lhs.subs(B(n), d.solution) - rhs) == 0


def test_payments_are_the_stated_rules():
    """Each derivation's P_n is the rule it was built from (equal principal: C + i B_{n-1})."""
    assert symbolic.derive("level").payment == P
    assert sp.simplify(symbolic.derive("geometric").payment - P1 * g ** (n - 1)) == 0
    assert (
        sp.simplify(symbolic.derive("geometric-resonance").payment - P1 * (1 + i) ** (n - 1)) == 0
    )
    assert sp.simplify(symbolic.derive("arithmetic").payment - (P1 + (n - 1) * h)) == 0
    equal = symbolic.derive("equal-principal")
    assert sp.simplify(equal.payment - (C + i * (B0 - (n - 1) * C))) == 0
    equal_adv = symbolic.derive("equal-principal", timing="advance")
    assert sp.simplify(equal_adv.payment - (C + i * (B0 - (n - 1) * C)) / (1 + i)) == 0


@pytest.mark.parametrize("timing", TIMINGS)
def test_level_solution_is_the_design_closed_form(timing):
    """sympy simplify: the level solution is a^n B_0 - P' (a^n - 1) / i, P' = P or a P."""
    sol = symbolic.derive("level", timing=timing).solution
    pay = (1 + i) * P if timing == "advance" else P
    assert sp.simplify(sol - ((1 + i) ** n * B0 - pay * ((1 + i) ** n - 1) / i)) == 0


@pytest.mark.parametrize("timing", TIMINGS)
def test_level_closed_form_matches_the_float_code(timing):
    """amort.recurrence.balance (float64) = the sympy closed form at exact float values, 1e-12."""
    sol = symbolic.derive("level", timing=timing).solution
    rng = np.random.default_rng(7)
    advance = timing == "advance"
    for _ in range(20):
        rate = float(rng.uniform(1e-6, 0.2))
        b0 = float(rng.uniform(1_000, 1_000_000))
        pay = float(recurrence.payment(b0, rate, 40, 0.0, advance))
        exact_at = sol.subs({i: sp.Rational(rate), B0: sp.Rational(b0), P: sp.Rational(pay)})
        for k in (0, 1, 7, 20, 39, 40):
            ref = float(exact_at.subs(n, k))
            got = float(recurrence.balance(b0, rate, pay, k, advance))
            scale = float(recurrence.balance_scale(b0, rate, pay, k, advance))
            assert abs(got - ref) <= 1e-12 * scale, (rate, k)


def test_resonance_is_rsolve_of_the_specialised_recurrence():
    """sympy rsolve on B(n+1) = a B(n) - P_1 a^n (solved in a, then a = 1 + i) and the limit
    g -> a of the geometric solution both give B_0 a^n - P_1 n a^(n-1) (DESIGN.md)."""
    own = sp.rsolve(B(n + 1) - (a * B(n) - P1 * a**n), B(n), {B(0): B0}).subs(a, 1 + i)
    res = symbolic.derive("geometric-resonance").solution
    assert sp.simplify(res - own) == 0
    geometric = symbolic.derive("geometric").solution
    assert sp.simplify(sp.limit(geometric, g, 1 + i) - res) == 0
    assert sp.simplify(res - (B0 * (1 + i) ** n - P1 * n * (1 + i) ** (n - 1))) == 0
    own_adv = sp.rsolve(B(n + 1) - a * (B(n) - P1 * a**n), B(n), {B(0): B0}).subs(a, 1 + i)
    res_adv = symbolic.derive("geometric-resonance", timing="advance").solution
    assert sp.simplify(res_adv - own_adv) == 0
    assert sp.simplify(res_adv - (1 + i) ** n * (B0 - n * P1)) == 0


def test_resonance_vs_iteration_at_g_equal_to_a():
    """At g = a exactly the geometric formula divides by zero; the resonance form iterates."""
    v = {"i": Fraction(3, 400), "B_0": Fraction(120_000), "P_1": Fraction(2_500)}
    walk = _iterate("geometric-resonance", "arrears", v, 30)
    closed = _at(symbolic.derive("geometric-resonance").solution, v)
    assert all(closed.subs(n, k) == sp.Rational(walk[k]) for k in range(31))
    geometric = symbolic.derive("geometric").solution
    blown = _at(geometric, {**v, "g": 1 + v["i"]}).subs(n, 5)
    assert blown.has(sp.zoo) or blown is sp.nan  # the collision, seen numerically


@pytest.mark.parametrize("timing", TIMINGS)
def test_equal_principal_interest_sum(timing):
    """Total interest over N periods with C = B_0 / N, derived by hand:

    arrears: sum_k i B_{k-1} = i sum_k (B_0 - (k-1) B_0/N) = i B_0 (N + 1) / 2;
    advance: interest_k = P_k - C = (C + i B_{k-1})/a - C, summing to
    (B_0 + i B_0 (N + 1)/2)/a - B_0 = i B_0 (N - 1) / (2 (1 + i)).
    Checked by sympy summation of the derived payments and by exact iteration.
    """
    d = symbolic.derive("equal-principal", timing=timing)
    interest = sp.summation((d.payment - C).subs(C, B0 / N), (n, 1, N))
    by_hand = i * B0 * (N + 1) / 2 if timing == "arrears" else i * B0 * (N - 1) / (2 * (1 + i))
    assert sp.simplify(interest - by_hand) == 0
    v = {"i": Fraction(1, 120), "B_0": Fraction(36_000), "C": Fraction(36_000, 24)}
    walk = _iterate("equal-principal", timing, v, 24)
    assert walk[-1] == 0
    # each payment: B_{k-1} - B_k (arrears: + i B_{k-1}; advance: B_{k-1} - B_k / a)
    if timing == "advance":
        payments = [walk[k - 1] - walk[k] / (1 + v["i"]) for k in range(1, 25)]
    else:
        payments = [(1 + v["i"]) * walk[k - 1] - walk[k] for k in range(1, 25)]
    total_interest = sum(payments) - v["B_0"]  # the principal parts sum to B_0
    assert total_interest == _at(by_hand, v).subs(N, 24)


@pytest.mark.parametrize("timing", TIMINGS)
def test_fixed_point_separates_payoff_stay_and_growth(timing):
    """B* = P / i (arrears), (1 + i) P / i (advance): below it the balance falls, at it stays,
    above it grows; and B_n - B* = (B_0 - B*) a^n (sympy simplify), iterated exactly."""
    d = symbolic.derive("level", timing=timing)
    star = P / i if timing == "arrears" else (1 + i) * P / i
    assert sp.simplify(d.fixed_point - star) == 0
    assert sp.simplify(d.solution - d.fixed_point - (B0 - d.fixed_point) * (1 + i) ** n) == 0
    assert d.characteristic_root == 1 + i
    rng = random.Random(timing)
    for _ in range(3):
        v = _draw(rng, "level")
        fixed = Fraction(str(_at(d.fixed_point, v)))
        for offset, trend in ((-fixed / 3, -1), (Fraction(0), 0), (fixed / 5, 1)):
            walk = _iterate("level", timing, {**v, "B_0": fixed + offset}, 30)
            steps = {(b - a_) > 0 for a_, b in itertools.pairwise(walk)}
            if trend == 0:
                assert set(walk) == {fixed}
            else:
                assert steps == {trend > 0}


def test_no_fixed_point_where_the_payment_moves():
    """Geometric, resonance and arithmetic payments change with n; equal principal has root 1."""
    for rule in ("geometric", "geometric-resonance", "arithmetic"):
        assert symbolic.derive(rule).fixed_point is None
        assert symbolic.derive(rule).characteristic_root == 1 + i
    assert symbolic.derive("equal-principal").fixed_point is None
    assert symbolic.derive("equal-principal").characteristic_root == 1
    assert symbolic.derive("equal-principal", timing="advance").characteristic_root == 1


@pytest.mark.parametrize("timing", TIMINGS)
def test_payment_formula_matches_exact_fractions(timing):
    """sympy solve of B_N = F against amort.exact.level_payment_fraction (Python fractions)."""
    formula = symbolic.level_payment_formula(timing=timing)
    design = (B0 * (1 + i) ** N - F) * i / ((1 + i) ** N - 1)
    assert sp.simplify(formula - (design / (1 + i) if timing == "advance" else design)) == 0
    rate = Fraction(13, 2400)
    ref = exact.level_payment_fraction(25_000_000, rate, 360, 5_000_000, timing == "advance")
    got = formula.subs({B0: 250_000, F: 50_000, N: 360, i: sp.Rational(13, 2400)})
    assert Fraction(int(got.p), int(got.q)) * 100 == ref


def _rates(count: int, seed: int) -> list[Fraction]:
    rng = random.Random(seed)
    return [Fraction(rng.randint(1, 300), 36_500) for _ in range(count)]


@pytest.mark.parametrize("timing", TIMINGS)
def test_varying_rate_form_equals_iteration(timing):
    """The summation-factor form, expanded by sympy doit for n <= 12, = exact iteration of
    B_n = a_n B_{n-1} - P (or a_n (B_{n-1} - P)) with per-period rates (Python fractions)."""
    d = symbolic.derive("level-varying-rate", timing=timing)
    rates = _rates(12, 3)
    b0, pay = Fraction(20_000), Fraction(1_750)
    walk = [b0]
    for r in rates:
        walk.append((1 + r) * (walk[-1] - pay) if timing == "advance" else (1 + r) * walk[-1] - pay)
    base = S["i_k"]
    values = {base[k + 1]: sp.Rational(r.numerator, r.denominator) for k, r in enumerate(rates)}
    for k in range(13):
        got = d.solution.subs({n: k, B0: 20_000, P: 1_750}).doit().subs(values)
        assert got == sp.Rational(walk[k]), k


@pytest.mark.parametrize("timing", TIMINGS)
def test_varying_rate_form_satisfies_its_recurrence(timing):
    """sympy simplify with symbolic rates i_1..i_5: B_0 at 0, B_n = rhs(B_{n-1}) for n = 1..5."""
    d = symbolic.derive("level-varying-rate", timing=timing)
    assert sp.simplify(d.solution.subs(n, 0).doit() - B0) == 0
    for m in range(1, 6):
        now = d.solution.subs(n, m).doit()
        before = d.solution.subs(n, m - 1).doit()
        rhs = d.recurrence.rhs.subs(B(n - 1), before).subs(n, m)
        assert sp.simplify(now - rhs) == 0, m


@pytest.mark.parametrize("timing", TIMINGS)
def test_varying_rate_form_matches_amort_variable(timing):
    """amort.variable.balances (float64) = the summation-factor form in exact fractions, 1e-12."""
    rates = _rates(30, 11)
    b0 = 50_000.0
    advance = timing == "advance"
    column = np.array([[float(r)] for r in rates])
    pay = float(variable.payment(b0, column, 0.0, advance)[0])
    floats = variable.balances(b0, column, pay, advance)[:, 0]
    scales = variable.balance_scales(b0, column, pay, advance)[:, 0]
    p_exact, v, weights = Fraction(pay), Fraction(1), Fraction(0)
    for k, r in enumerate(rates):
        if advance:
            weights += v
        v /= 1 + Fraction(float(r))  # the float rate, taken exactly
        if not advance:
            weights += v
        ref = (Fraction(b0) - p_exact * weights) / v
        assert abs(floats[k] - float(ref)) <= 1e-12 * scales[k], k


def test_varying_payment_formula_is_the_design_form():
    """sympy solve of B_N = F with per-period rates: P = (B_0 - F v_N) / sum_k v_k."""
    formula = symbolic.level_payment_formula(varying=True)
    rates = _rates(6, 5)
    base = S["i_k"]
    values = {base[k + 1]: sp.Rational(r.numerator, r.denominator) for k, r in enumerate(rates)}
    got = formula.subs({N: 6, B0: 9_000, F: 1_000}).doit().subs(values)
    ref = exact.level_payment_fraction_variable(900_000, rates, 100_000) / 100
    assert got == sp.Rational(ref.numerator, ref.denominator)
