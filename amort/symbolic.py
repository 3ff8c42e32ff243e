"""Symbolic derivations of the balance recurrence's closed forms (sympy).

Every product in amort is the first-order linear recurrence (DESIGN.md, "One
equation")

    B_n = a B_{n-1} - P_n           payments in arrears (end of period)
    B_n = a (B_{n-1} - P_n)         payments in advance (annuity-due)

with ``a = 1 + i`` the growth factor of a period and ``i`` the periodic rate
(a decimal fraction). This module derives its closed forms with sympy's
``rsolve`` (linear recurrences with constant coefficients, solved from the
initial value ``B_0``; no z-transform is used) for the payment rules

- ``level``: ``P_n = P``;
- ``geometric``: ``P_n = P_1 g^(n-1)``;
- ``geometric-resonance``: ``g = a``, where the geometric case's particular
  solution ``P_1 g^n / (a - g)`` collides with the homogeneous one ``a^n``;
  rsolve is run on the recurrence specialised to ``g = a``;
- ``arithmetic``: ``P_n = P_1 + (n - 1) h``;
- ``equal-principal``: ``P_n = C + i B_{n-1}`` (in advance
  ``(C + i B_{n-1}) / (1 + i)``), i.e. ``B_n = B_{n-1} - C``;
- ``level-varying-rate``: a level payment when period n earns its own rate
  ``i_n``: the summation factor ``v_n = 1 / ((1 + i_1) ... (1 + i_n))`` gives
  ``B_n = (B_0 - P sum_{k<=n} w_k) / v_n`` with ``w_k = v_k`` in arrears and
  ``v_{k-1}`` in advance (stated by telescoping; rsolve does not solve
  symbolic variable coefficients, so the tests check it against iteration).

sympy 1.14's rsolve fails (an AttributeError inside ``rsolve_hyper``) on
``B(n+1) = (1 + i) (B(n) - P_1 g^n)``, so each recurrence is solved in the
growth factor ``a`` as a symbol and ``a = 1 + i`` is substituted afterwards.

:func:`formula_for` applies the level-payment derivation to a
:class:`~amort.loan.Loan`: the numbers substituted exactly (``i`` as the exact
rational periodic rate), the characteristic root, the fixed point and what it
says about the loan; :func:`check_against_schedule` compares the closed form,
evaluated exactly, with the schedule's cent balances. sympy (and mpmath) are
imported inside the functions that use them, never when amort is imported.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from amort.conventions import Timing
from amort.errors import InvalidTerms

if TYPE_CHECKING:
    pass

#: A sympy expression (sympy ships no type information).
Expr = Any

LEVEL = "level"
GEOMETRIC = "geometric"
RESONANCE = "geometric-resonance"
ARITHMETIC = "arithmetic"
EQUAL_PRINCIPAL = "equal-principal"
VARYING_RATE = "level-varying-rate"
#: Every payment rule :func:`derive` knows.
RULES = (LEVEL, GEOMETRIC, RESONANCE, ARITHMETIC, EQUAL_PRINCIPAL, VARYING_RATE)

PAYS_OFF = "pays off"
INTEREST_ONLY = "interest-only forever"
NEGATIVE_AMORTISATION = "negative amortisation"
RISES = "balance rises in some periods"

#: Up to this many schedule rows the closed form is evaluated in exact rationals;
#: beyond, with mpmath at enough digits that the result is exact to far below a cent.
EXACT_ROWS = 1200

_TITLES = {
    LEVEL: "level payment P",
    GEOMETRIC: "geometric payments P_n = P_1 g^(n-1)",
    RESONANCE: "geometric payments growing at the loan's own factor, g = a = 1 + i (resonance)",
    ARITHMETIC: "arithmetic payments P_n = P_1 + (n - 1) h",
    EQUAL_PRINCIPAL: "equal principal C each period, plus the period's interest",
    VARYING_RATE: "level payment P, period n earning its own rate i_n",
}
_TIMING_WORDS = {
    Timing.ARREARS: "payments in arrears (end of each period)",
    Timing.ADVANCE: "payments in advance (start of each period, annuity-due)",
}


@functools.cache
def symbols() -> dict[str, Any]:
    """Return the sympy symbols the derivations use, by name.

    ``n`` (period, integer >= 0), ``k`` and ``j`` (summation indices), ``N``
    (term), ``i`` (periodic rate > 0), ``a`` (growth factor, used while
    solving), ``B_0`` (opening balance), ``P``, ``P_1``, ``g``, ``h``, ``C``
    (payment parameters), ``F`` (balloon), ``B`` (the balance, a function of
    n) and ``i_k`` (an indexed base: the rate of period k).
    """
    import sympy as sp

    names: dict[str, Any] = {
        "n": sp.Symbol("n", integer=True, nonnegative=True),
        "k": sp.Symbol("k", integer=True, positive=True),
        "j": sp.Symbol("j", integer=True, positive=True),
        "N": sp.Symbol("N", integer=True, positive=True),
        "h": sp.Symbol("h", real=True),
        "F": sp.Symbol("F", nonnegative=True),
        "B": sp.Function("B"),
        "i_k": sp.IndexedBase("i"),
    }
    for name in ("i", "a", "B_0", "P", "P_1", "g", "C"):
        names[name] = sp.Symbol(name, positive=True)
    return names


@dataclass(frozen=True)
class Derivation:
    """A closed form of the balance recurrence for one payment rule, derived by sympy.

    rule: one of :data:`RULES`; timing: ``"arrears"`` or ``"advance"``.
    recurrence: ``Eq(B(n), ...)`` for n >= 1, in ``i`` (``a = 1 + i``).
    payment: the n-th payment ``P_n`` as an expression in n.
    solution: ``B_n`` in terms of n, ``B_0``, ``i`` and the payment parameters.
    characteristic_root: the coefficient of ``B_{n-1}`` (``1 + i``; 1 for equal
        principal; ``1 + i_n`` when the rate varies).
    fixed_point: the balance ``B*`` the recurrence maps to itself (``P / i`` for a
        level payment in arrears, ``(1 + i) P / i`` in advance); None where the
        payment changes with n or no balance repeats.
    method: how the solution was obtained.
    text, latex: the derivation for reading (plain text) and for typesetting.
    """

    rule: str
    timing: str
    recurrence: Expr
    payment: Expr
    solution: Expr
    characteristic_root: Expr
    fixed_point: Expr | None
    method: str
    text: str
    latex: str


def derive(rule: str, *, timing: Timing | str = "arrears") -> Derivation:
    """Return the closed form of the balance recurrence for a payment rule (cached).

    >>> d = derive("level")
    >>> d.solution
    P/i + (B_0 - P/i)*(i + 1)**n
    >>> d.fixed_point
    P/i
    >>> derive("level", timing="advance").fixed_point
    P*(i + 1)/i
    """
    if rule not in RULES:
        raise InvalidTerms(f"'rule' must be one of {', '.join(RULES)} (got {rule!r})")
    return _derive(rule, Timing.parse(timing))


@functools.cache
def _derive(rule: str, timing: Timing) -> Derivation:
    import sympy as sp

    if rule == VARYING_RATE:
        return _derive_varying(timing)
    s = symbols()
    n, i, a, b0, bal = s["n"], s["i"], s["a"], s["B_0"], s["B"]
    advance = timing is Timing.ADVANCE
    # The payment of period n + 1, in the growth factor a (see the module notes).
    pay_next = {
        LEVEL: s["P"],
        GEOMETRIC: s["P_1"] * s["g"] ** n,
        RESONANCE: s["P_1"] * a**n,
        ARITHMETIC: s["P_1"] + n * s["h"],
        EQUAL_PRINCIPAL: s["C"] + (a - 1) * bal(n),
    }[rule]
    if rule == EQUAL_PRINCIPAL and advance:
        # B_n = a (B_{n-1} - P_n) = B_{n-1} - C  <=>  P_n = (C + i B_{n-1}) / a
        pay_next = pay_next / a
    rhs_next = a * (bal(n) - pay_next) if advance else a * bal(n) - pay_next
    solved = sp.rsolve(bal(n + 1) - sp.expand(rhs_next), bal(n), {bal(0): b0})
    if solved is None:  # pragma: no cover - rsolve solves every rule above
        raise RuntimeError(f"sympy rsolve found no closed form for the {rule} rule")
    root = sp.expand(rhs_next).coeff(bal(n))
    fixed = None
    if not pay_next.subs(bal(n), 0).has(n):
        x = sp.Dummy("x")
        found = sp.solve(sp.Eq(x, rhs_next.subs(bal(n), x)), x)
        fixed = found[0].subs(a, 1 + i) if found else None
    to_i = {a: 1 + i}
    solution = _tidy(solved.subs(to_i))
    payment = pay_next.subs(n, n - 1).subs(bal(n - 1), solution.subs(n, n - 1)).subs(to_i)
    recurrence = sp.Eq(bal(n), rhs_next.subs(n, n - 1).subs(to_i))
    method = "sympy rsolve with the initial value B_0, solved in a, then a = 1 + i"
    if rule == RESONANCE:
        method = (
            "sympy rsolve on the recurrence specialised to g = a (the geometric "
            "solution's limit g -> a gives the same), then a = 1 + i"
        )
    if rule == EQUAL_PRINCIPAL:
        payment = sp.simplify(payment)
    return _Parts(
        rule=rule,
        timing=timing,
        recurrence=recurrence,
        payment=payment,
        solution=solution,
        root=root.subs(to_i),
        fixed=fixed,
        method=method,
    ).derivation()


def _derive_varying(timing: Timing) -> Derivation:
    import sympy as sp

    s = symbols()
    n, k, j, b0, pay, bal, rate = s["n"], s["k"], s["j"], s["B_0"], s["P"], s["B"], s["i_k"]
    advance = timing is Timing.ADVANCE

    def v(m: Expr) -> Expr:
        return sp.Product(1 / (1 + rate[j]), (j, 1, m))

    # Multiply B_k = a_k B_{k-1} - P by v_k: v_k B_k - v_{k-1} B_{k-1} = -P v_k
    # (in advance -P v_{k-1}); summing k = 1..n telescopes to v_n B_n - B_0.
    weight = v(k - 1) if advance else v(k)
    solution = (b0 - pay * sp.Sum(weight, (k, 1, n))) / v(n)
    growth = 1 + rate[n]
    rhs = growth * (bal(n - 1) - pay) if advance else growth * bal(n - 1) - pay
    method = (
        "summation factor v_n = 1/((1 + i_1)...(1 + i_n)): v_k B_k - v_(k-1) B_(k-1) "
        f"= -P v_{'(k-1)' if advance else 'k'}, summed over k = 1..n (telescoping)"
    )
    return _Parts(
        rule=VARYING_RATE,
        timing=timing,
        recurrence=sp.Eq(bal(n), rhs),
        payment=pay,
        solution=solution,
        root=growth,
        fixed=None,
        method=method,
    ).derivation()


def _tidy(expr: Expr) -> Expr:
    """Return ``expr`` grouped by the powers ``(1 + i)^n`` and ``g^n``, ``B_0`` split out."""
    import sympy as sp

    s = symbols()
    n, i, g, b0 = s["n"], s["i"], s["g"], s["B_0"]
    powers = [(1 + i) ** n, g**n]
    total = sp.Integer(0)
    for key, coeff in sp.collect(sp.expand(expr), powers, evaluate=False).items():
        c = sp.expand(coeff)
        with_b0 = sp.simplify(c.coeff(b0))
        total += key * (with_b0 * b0 + sp.factor(c - with_b0 * b0))
    return total


@dataclass(frozen=True)
class _Parts:
    """The pieces of a derivation, and how they are written out."""

    rule: str
    timing: Timing
    recurrence: Expr
    payment: Expr
    solution: Expr
    root: Expr
    fixed: Expr | None
    method: str

    def derivation(self) -> Derivation:
        return Derivation(
            rule=self.rule,
            timing=self.timing.value,
            recurrence=self.recurrence,
            payment=self.payment,
            solution=self.solution,
            characteristic_root=self.root,
            fixed_point=self.fixed,
            method=self.method,
            text=self.text(),
            latex=self.latex(),
        )

    def text(self) -> str:
        lines = [
            f"Balance recurrence: {_TITLES[self.rule]}, {_TIMING_WORDS[self.timing]}",
            f"  {_plain_eq(self.recurrence)}    for n >= 1, with B_0 the opening balance"
            + ("" if self.rule == VARYING_RATE else " and a = 1 + i"),
            f"  payment P_n = {_plain(self.payment)}",
        ]
        if self.rule == EQUAL_PRINCIPAL:
            lines.append("  which simplifies to B_n = B_(n-1) - C")
        lines += [f"Closed form ({self.method}):", f"  B_n = {_plain(self.solution)}"]
        if self.rule == VARYING_RATE:
            lines.append(
                "Characteristic root: 1 + i_n, one for each period (the homogeneous "
                "solution is B_0/v_n); no single fixed point"
            )
            return "\n".join(lines)
        if self.rule == RESONANCE:
            lines.append(
                "  (the geometric trial solution P_1 g^n/(a - g) would repeat the "
                "homogeneous a^n; here the particular part carries the factor n)"
            )
        if self.root == 1:
            lines.append(
                "Characteristic root: 1 (the balance falls by the same principal each "
                "period; it does not grow)"
            )
        else:
            lines.append(
                f"Characteristic root: a = {_root_words(self.root)} (> 1 when "
                "i > 0: the homogeneous part grows like a^n)"
            )
        if self.fixed is None:
            why = (
                "no balance repeats: B = B - C has no solution"
                if self.rule == EQUAL_PRINCIPAL
                else "the payment changes with n"
            )
            lines.append(f"Fixed point: none ({why})")
        else:
            lines.append(
                f"Fixed point: B* = {_plain(self.fixed)} (a balance the payment holds level; "
                "B_0 below it pays off, at it stays, above it grows)"
            )
        return "\n".join(lines)

    def latex(self) -> str:
        import sympy as sp

        rows = [
            f"{_tex(self.recurrence.lhs)} &= {_tex(self.recurrence.rhs)}",
            rf"P_{{n}} &= {_tex(self.payment)}",
            rf"B_{{n}} &= {_tex(self.solution)}",
            rf"\text{{characteristic root}} &= {_tex(self.root, keep_rate=True)}",
        ]
        if self.fixed is not None:
            rows.append(rf"B^{{*}} &= {_tex(self.fixed)}")
        if self.rule != VARYING_RATE:
            rows.append(rf"a &= {sp.latex(1 + symbols()['i'])}")
        return "\\begin{aligned}\n" + " \\\\\n".join(rows) + "\n\\end{aligned}"


def _display(expr: Expr, previous: str, keep_rate: bool) -> Expr:
    """Return ``expr`` with ``1 + i`` written ``a`` and ``B(n - 1)`` as a subscripted name."""
    import sympy as sp

    s = symbols()
    n, i = s["n"], s["i"]
    shown = expr.subs(s["B"](n - 1), sp.Symbol(previous)).subs(s["B"](n), sp.Symbol("B_n"))
    return shown if keep_rate else shown.subs(1 + i, s["a"])


def _plain(expr: Expr, *, keep_rate: bool = False) -> str:
    """Return ``expr`` as one line of plain text (``^`` for powers)."""
    import sympy as sp

    return str(sp.sstr(_display(expr, "B_(n-1)", keep_rate))).replace("**", "^")


def _root_words(root: Expr) -> str:
    return "1 + i" if root == 1 + symbols()["i"] else _plain(root, keep_rate=True)


def _plain_eq(equation: Expr) -> str:
    return f"{_plain(equation.lhs)} = {_plain(equation.rhs)}"


def _tex(expr: Expr, *, keep_rate: bool = False) -> str:
    import sympy as sp

    return str(sp.latex(_display(expr, "B_{n-1}", keep_rate)))


def level_payment_formula(*, timing: Timing | str = "arrears", varying: bool = False) -> Expr:
    """Return the level payment that brings the balance to ``F`` at ``N``, solved by sympy.

    ``P = (B_0 a^N - F) i / (a^N - 1)`` in arrears (divided by ``a = 1 + i`` in
    advance); with per-period rates ``P = (B_0 - F v_N) / sum_k w_k``.

    >>> level_payment_formula()
    i*(B_0*(i + 1)**N - F)/((i + 1)**N - 1)
    """
    return _level_payment(Timing.parse(timing), varying)


@functools.cache
def _level_payment(timing: Timing, varying: bool) -> Expr:
    import sympy as sp

    s = symbols()
    solution = derive(VARYING_RATE if varying else LEVEL, timing=timing).solution
    (found,) = sp.solve(sp.Eq(solution.subs(s["n"], s["N"]), s["F"]), s["P"])
    return found if varying else sp.factor(found)


@functools.cache
def _payment_function(timing: Timing) -> Any:
    """The sympy payment formula as a Python function of ``(B_0, F, N, i)``.

    Called with Fractions it evaluates exactly, and far faster than sympy's
    own substitution for long terms (``(1 + i)^N`` of 100,000 periods).
    """
    import sympy as sp

    s = symbols()
    args = (s["B_0"], s["F"], s["N"], s["i"])
    return sp.lambdify(args, _level_payment(timing, False), modules=[{}])


@functools.cache
def _level_at_zero_rate(timing: Timing) -> Expr:
    """Return the level solution's limit at ``i = 0`` (``B_0 - n P`` in either timing)."""
    import sympy as sp

    return sp.limit(derive(LEVEL, timing=timing).solution, symbols()["i"], 0)


@functools.cache
def _level_payment_at_zero_rate(timing: Timing) -> Expr:
    """Return the level payment's limit at ``i = 0`` (``(B_0 - F) / N``)."""
    import sympy as sp

    return sp.limit(_level_payment(timing, False), symbols()["i"], 0)
