"""One loan's closed form, in words and LaTeX, checked against its cent schedule.

:func:`formula_for` puts a loan's numbers into the derivations of
:mod:`amort.symbolic` (sympy's rsolve of the recurrence) and says what the
characteristic root and the fixed point ``B*`` mean for it;
:func:`check_against_schedule` evaluates the closed form at every period and
returns its largest gap to the cent balances.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from amort.conventions import Timing
from amort.errors import InvalidTerms
from amort.symbolic import (  # the derivations this module fills in
    _TIMING_WORDS,
    EXACT_ROWS,
    INTEREST_ONLY,
    LEVEL,
    NEGATIVE_AMORTISATION,
    PAYS_OFF,
    RISES,
    VARYING_RATE,
    Derivation,
    _level_at_zero_rate,
    _level_payment,
    _level_payment_at_zero_rate,
    _payment_function,
    _plain,
    _plain_eq,
    _tex,
    derive,
    symbols,
)

if TYPE_CHECKING:
    from amort.loan import Loan

#: A sympy expression (sympy ships no type information).
Expr = Any

# -- one loan ------------------------------------------------------------------------------


@dataclass(frozen=True)
class LoanFormula:
    """The closed form behind one loan's schedule, with the loan's numbers substituted.

    Money in currency units as exact fractions; rates as exact decimal
    fractions per period.

    derivation: the level-payment :class:`Derivation` for the loan's timing
        (rule ``level``, or ``level-varying-rate`` when its periods earn different rates).
    periods: N, the number of payments the schedule makes.
    rate: the periodic rate i (None when the rates vary); rates: each period's
        rate when they vary (else None).
    principal: B_0, the opening balance (with any capitalised odd-days interest).
    payment: P, the level payment (rounded to the cent, or the fixed payment).
    balloon: F; closed_form_payment: the exact level payment before rounding
        (None when the payment was fixed by the user).
    balance: B_n with the numbers substituted (a sympy expression in n; with
        per-period rates the symbolic form, evaluated by :meth:`balance_at`).
    characteristic_root: 1 + i; fixed_point: B* (None at i = 0 or when rates vary).
    outcome: ``"pays off"``, ``"interest-only forever"``, ``"negative amortisation"``,
        or with per-period rates ``"pays off"`` / ``"balance rises in some periods"``.
    text, latex: the formula for reading and for typesetting.
    """

    derivation: Derivation
    timing: str
    periods: int
    rate: Fraction | None
    rates: tuple[Fraction, ...] | None
    principal: Fraction
    payment: Fraction
    balloon: Fraction
    closed_form_payment: Fraction | None
    balance: Expr
    characteristic_root: Fraction | None
    fixed_point: Fraction | None
    outcome: str
    text: str
    latex: str

    def balance_at(self, k: int) -> Fraction:
        """Return the closed form's exact balance after k payments (currency units)."""
        if not 0 <= k <= self.periods:
            raise InvalidTerms(f"'k' must be from 0 to {self.periods} (got {k})")
        if self.rates is not None:
            return _varying_exact(self, k)[-1]
        return _fraction(self.balance.subs(symbols()["n"], k))


def formula_for(loan: Loan) -> LoanFormula:
    """Return the closed form of ``loan``'s balance with its numbers substituted.

    Undated loans and dated loans whose periods all earn the periodic rate
    get the constant-rate level derivation; dated loans with day counts or
    odd periods get the per-period (summation factor) form.

    >>> from amort import Loan
    >>> f = formula_for(Loan(principal=250_000, annual_rate="6.5%", periods=360))
    >>> f.rate, f.characteristic_root, f.outcome
    (Fraction(13, 2400), Fraction(2413, 2400), 'pays off')
    """
    if loan.structured:
        raise InvalidTerms(
            "formula_for covers loans with one level payment throughout "
            f"(got {_structure_words(loan)}); use "
            "amort.formula_segments.segmented_formula_for for a closed form in segments"
        )
    terms = loan.batch_terms()
    rows = loan.number_of_payments
    b0 = Fraction(int(terms.principal[0]), 100)
    pay = Fraction(loan.payment)
    balloon = Fraction(loan.balloon)
    timing = loan.timing
    if terms.period_rate_num is not None and terms.period_rate_den is not None:
        rates = tuple(
            Fraction(int(terms.period_rate_num[k, 0]), int(terms.period_rate_den[k, 0]))
            for k in range(terms.period_rate_num.shape[0])  # the horizon: >= rows and periods
        )
        return _varying_formula(loan, rows, b0, pay, balloon, rates)
    return _constant_formula(loan, rows, b0, pay, balloon, timing)


def _structure_words(loan: Loan) -> str:
    """Name what makes a loan's payments other than one level payment."""
    words = []
    if loan.structure.value != LEVEL:
        words.append(f"structure {loan.structure.value!r}")
    if loan.interest_only_periods:
        words.append(f"{loan.interest_only_periods} interest-only periods")
    if getattr(loan, "graduated", False):
        words.append("a graduated payment")
    return " and ".join(words) or "a structured payment"


def _constant_formula(
    loan: Loan, rows: int, b0: Fraction, pay: Fraction, balloon: Fraction, timing: Timing
) -> LoanFormula:
    import sympy as sp

    s = symbols()
    i = s["i"]
    rate = loan.periodic_rate
    derivation = derive(LEVEL, timing=timing)
    values = {s["B_0"]: _rational(b0), s["P"]: _rational(pay)}
    fixed: Fraction | None = None
    outcome = PAYS_OFF  # at i = 0 the balance falls by P each period
    if rate == 0:
        balance = _level_at_zero_rate(timing).subs(values)
    else:
        values[i] = _rational(rate)
        balance = derivation.solution.subs(values)
        assert derivation.fixed_point is not None
        fixed = _fraction(derivation.fixed_point.subs(values))
        if b0 == fixed:
            outcome = INTEREST_ONLY
        elif b0 > fixed:
            outcome = NEGATIVE_AMORTISATION
    closed = None
    if loan.fixed_payment is None:
        assert loan.periods is not None
        if rate == 0:
            closed = (b0 - balloon) / loan.periods
        else:
            closed = Fraction(_payment_function(timing)(b0, balloon, loan.periods, rate))
    root = 1 + rate
    formula = LoanFormula(
        derivation=derivation,
        timing=timing.value,
        periods=rows,
        rate=rate,
        rates=None,
        principal=b0,
        payment=pay,
        balloon=balloon,
        closed_form_payment=closed,
        balance=sp.sympify(balance),
        characteristic_root=root,
        fixed_point=fixed,
        outcome=outcome,
        text="",
        latex="",
    )
    return dataclasses.replace(
        formula, text=_constant_text(loan, formula), latex=_constant_latex(formula)
    )


def _varying_formula(
    loan: Loan,
    rows: int,
    b0: Fraction,
    pay: Fraction,
    balloon: Fraction,
    rates: tuple[Fraction, ...],
) -> LoanFormula:
    timing = loan.timing
    advance = timing is Timing.ADVANCE
    derivation = derive(VARYING_RATE, timing=timing)
    closed = None
    if loan.fixed_payment is None:
        assert loan.periods is not None
        v = Fraction(1)
        weights = Fraction(0)
        for rate in rates[: loan.periods]:
            if advance:
                weights += v
            v /= 1 + rate
            if not advance:
                weights += v
        closed = (b0 - balloon * v) / weights
    formula = LoanFormula(
        derivation=derivation,
        timing=timing.value,
        periods=rows,
        rate=None,
        rates=rates[:rows],
        principal=b0,
        payment=pay,
        balloon=balloon,
        closed_form_payment=closed,
        balance=derivation.solution,
        characteristic_root=None,
        fixed_point=None,
        outcome=PAYS_OFF,
        text="",
        latex="",
    )
    balances = _balances(formula)
    rises = [
        k
        for k in range(1, rows)
        if balances[k] >= balances[k - 1]  # the period's payment did not cover its interest
    ]
    formula = dataclasses.replace(formula, outcome=RISES if rises else PAYS_OFF)
    return dataclasses.replace(
        formula, text=_varying_text(loan, formula, rises), latex=_varying_latex(formula)
    )


# -- evaluation ----------------------------------------------------------------------------


def check_against_schedule(loan: Loan, *, formula: LoanFormula | None = None) -> float:
    """Return the largest ``|B_k (closed form) - closing balance k|`` over k < N, currency units.

    The closed form of :func:`formula_for` is evaluated exactly (sympy
    Rational, or Python fractions for per-period rates) for schedules of up to
    :data:`EXACT_ROWS` rows, and with mpmath at enough digits to be exact far
    below a cent beyond; it is compared with the schedule's cents for every
    period but the last (whose payment absorbs the rounding). The gap must
    stay within ``loan.reconciliation().gap_bound`` (the interest roundings,
    compounded; :mod:`amort.reconcile`). Pass ``formula`` (the loan's
    :func:`formula_for`) to save deriving it again.

    >>> from amort import Loan
    >>> loan = Loan(principal=250_000, annual_rate="6.5%", periods=360)
    >>> check_against_schedule(loan) <= loan.reconciliation().gap_bound
    True
    """
    formula = formula_for(loan) if formula is None else formula
    closing = loan.schedule()["closing_balance"].to_numpy()
    cents = [round(float(x) * 100) for x in closing]
    exact = _balances(formula)
    if formula.periods <= EXACT_ROWS:
        gaps = [abs(exact[k] * 100 - cents[k - 1]) for k in range(1, formula.periods)]
        return float(max(gaps, default=0)) / 100
    import mpmath as mp

    with mp.workdps(_digits(formula)):  # B_k * 100 - cents at the balances' own precision
        gaps = [abs(exact[k] * 100 - cents[k - 1]) for k in range(1, formula.periods)]
        return float(max(gaps, default=0)) / 100


def _balances(formula: LoanFormula) -> list[Any]:
    """Return the closed form's balances for k = 0..N (Fractions, or mpmath numbers)."""
    rows = formula.periods
    if rows <= EXACT_ROWS:
        if formula.rates is not None:
            return _varying_exact(formula, rows)
        n = symbols()["n"]
        return [_fraction(formula.balance.subs(n, k)) for k in range(rows + 1)]
    return _balances_mpmath(formula)


def _varying_exact(formula: LoanFormula, upto: int) -> list[Fraction]:
    """``B_k = (B_0 - P sum_{m<=k} w_m) / v_k`` for k = 0..upto, in exact fractions."""
    assert formula.rates is not None
    advance = formula.timing == Timing.ADVANCE.value
    out = [formula.principal]
    v, weights = Fraction(1), Fraction(0)
    for rate in formula.rates[:upto]:
        if advance:
            weights += v
        v /= 1 + rate
        if not advance:
            weights += v
        out.append((formula.principal - formula.payment * weights) / v)
    return out


def _digits(formula: LoanFormula) -> int:
    """Decimal digits that keep ``B_k`` exact far below a cent: 40 beyond ``B a_1 ... a_N``.

    ``B`` is the largest of ``B_0``, ``P`` and ``B* = P / i``; the closed form
    ``B* + (B_0 - B*) a^n`` is a difference of terms of that size at most.
    """
    rates = formula.rates or (formula.rate or Fraction(0),) * formula.periods
    growth = sum(math.log10(1 + float(r)) for r in rates)
    star = Fraction(0) if formula.fixed_point is None else formula.fixed_point
    largest = max(formula.principal, formula.payment, star, Fraction(1))
    return 40 + math.ceil(growth + math.log10(float(largest)))


def _balances_mpmath(formula: LoanFormula) -> list[Any]:
    """The closed form's balances at mpmath precision (:func:`_digits`), k = 0..N."""
    import mpmath as mp
    import sympy as sp

    rows = formula.periods
    with mp.workdps(_digits(formula)):
        b0 = mp.mpf(formula.principal.numerator) / formula.principal.denominator
        pay = mp.mpf(formula.payment.numerator) / formula.payment.denominator
        if formula.rates is None:
            at = sp.lambdify(symbols()["n"], formula.balance, modules="mpmath")
            return [at(k) for k in range(rows + 1)]
        advance = formula.timing == Timing.ADVANCE.value
        out = [b0]
        v, weights = mp.mpf(1), mp.mpf(0)
        for rate in formula.rates:
            if advance:
                weights += v
            v /= 1 + mp.mpf(rate.numerator) / rate.denominator
            if not advance:
                weights += v
            out.append((b0 - pay * weights) / v)
        return out


def _rational(value: Fraction) -> Expr:
    import sympy as sp

    return sp.Rational(value.numerator, value.denominator)


def _fraction(value: Expr) -> Fraction:
    """Return a sympy Rational as a Fraction (refuses anything inexact)."""
    import sympy as sp

    if not isinstance(value, sp.Rational):  # pragma: no cover - rational inputs stay rational
        raise ArithmeticError(f"expected an exact rational, got {value}")
    return Fraction(int(value.p), int(value.q))


# -- words ---------------------------------------------------------------------------------


def _count(payments: int) -> str:
    return f"{payments} payment" + ("" if payments == 1 else "s")


def _money(value: Fraction, places: int = 2) -> str:
    return f"{float(value):,.{places}f}"


def _ratio(value: Fraction) -> str:
    """An exact fraction when it is short, else its decimal value to 15 figures."""
    if value.denominator == 1:
        return str(value.numerator)
    if value.denominator < 10**12:
        return f"{value.numerator}/{value.denominator} = {float(value):.10g}"
    return f"{float(value):.15g} (an exact binary fraction)"


def _rate_source(loan: Loan) -> str:
    per_year = loan.frequency.per_year
    nominal = f"{loan.annual_rate * 100:f}"
    if "." in nominal:
        nominal = nominal.rstrip("0").rstrip(".")
    if loan.compounding is not None:
        return (
            f"{nominal} % a year compounded {loan.compounding.name.lower()}, "
            f"{loan.frequency.value} payments"
        )
    return f"{nominal} % a year / {per_year} payments a year"


def _payment_line(loan: Loan, f: LoanFormula) -> str:
    if f.closed_form_payment is None:
        return f"  P   = {_money(f.payment)} (the payment set for this loan)"
    exact = float(f.closed_form_payment)
    return (
        f"  P   = {_money(f.payment)} (the closed form gives {exact:,.6f}, "
        f"rounded {loan.rounding.value} to the cent)"
    )


def _constant_text(loan: Loan, f: LoanFormula) -> str:
    import sympy as sp

    d = f.derivation
    timing = Timing.parse(f.timing)
    n_sym = symbols()["n"]
    assert f.rate is not None
    lines = [
        f"Closed form of this loan: level payment, {_TIMING_WORDS[timing]}, one periodic rate",
        f"  recurrence   {_plain_eq(d.recurrence)},  n = 1..{f.periods},  a = 1 + i",
        f"  closed form  B_n = {_plain(d.solution)}    ({d.method})",
    ]
    if f.closed_form_payment is not None:
        lines.append(
            f"  payment      P = {_plain(_level_payment(timing, False))}    "
            "(sympy solve of B_N = F)"
        )
    if f.rate == 0:
        lines.append(
            f"  at i = 0     B_n = {_plain(_level_at_zero_rate(timing))}"
            + (
                f",  P = {_plain(_level_payment_at_zero_rate(timing))}"
                if f.closed_form_payment is not None
                else ""
            )
            + "    (sympy limit i -> 0)"
        )
    lines += [
        "Numbers",
        f"  i   = {_ratio(f.rate)} a period ({_rate_source(loan)})",
        f"  B_0 = {_money(f.principal)} opening balance,  F = {_money(f.balloon)} balloon,  "
        f"N = {_count(f.periods)}",
    ]
    lines.append(_payment_line(loan, f))
    exact = _plain(f.balance)
    if len(exact) <= 120:
        lines.append(f"  B_n = {exact}")
    lines.append(f"  B_n ~ {_plain(sp.N(f.balance, 12)).replace(str(n_sym), 'n')}")
    lines.append("Stability")
    if f.rate == 0:
        lines += [
            "  characteristic root 1 at a 0 % rate: no growth and no fixed point",
            f"  the balance falls by P = {_money(f.payment)} each period: the loan {PAYS_OFF}",
        ]
        return "\n".join(lines)
    assert f.fixed_point is not None and f.characteristic_root is not None
    lines += [
        f"  characteristic root a = 1 + i = {_ratio(f.characteristic_root)} > 1: the "
        "homogeneous part (B_0 - B*) a^n grows",
        f"  fixed point B* = {_plain(d.fixed_point)} = {_money(f.fixed_point, 4)}",
    ]
    b0, star = _money(f.principal), _money(f.fixed_point, 4)
    target = "the balloon F at N" if f.balloon else "zero at N"
    if f.outcome == PAYS_OFF:
        lines.append(
            f"  B_0 = {b0} < B* = {star}: the loan {PAYS_OFF}; the shortfall B* - B_n "
            f"grows by the factor a each period until the balance reaches {target}"
        )
    elif f.outcome == INTEREST_ONLY:
        lines.append(
            f"  B_0 = B* = {star}: {INTEREST_ONLY}; each payment covers exactly the "
            "period's interest and the balance never moves"
        )
    else:
        lines.append(
            f"  B_0 = {b0} > B* = {star}: {NEGATIVE_AMORTISATION}; the payment does not "
            "cover the interest and the excess B_n - B* grows by the factor a each period"
        )
    return "\n".join(lines)


def _constant_latex(f: LoanFormula) -> str:
    import sympy as sp

    d = f.derivation
    timing = Timing.parse(f.timing)
    assert f.rate is not None
    rows = [
        f"{_tex(d.recurrence.lhs)} &= {_tex(d.recurrence.rhs)}, \\quad a = 1 + i",
        rf"B_{{n}} &= {_tex(d.solution)}",
    ]
    if f.closed_form_payment is not None:
        rows.append(rf"P &= {_tex(_level_payment(timing, False))}")
    rows += [
        rf"i &= {sp.latex(_rational(f.rate))}, \quad B_{{0}} = {sp.latex(_rational(f.principal))}"
        rf", \quad P = {sp.latex(_rational(f.payment))}, \quad N = {f.periods}",
        rf"B_{{n}} &= {sp.latex(f.balance)}",
    ]
    if f.fixed_point is not None and d.fixed_point is not None:
        rows += [
            rf"a &= 1 + i = {sp.latex(_rational(1 + f.rate))}",
            rf"B^{{*}} &= {_tex(d.fixed_point)} = {sp.latex(_rational(f.fixed_point))}",
        ]
    rows.append(rf"&\text{{{f.outcome}}}")
    return "\\begin{aligned}\n" + " \\\\\n".join(rows) + "\n\\end{aligned}"


def _varying_text(loan: Loan, f: LoanFormula, rises: list[int]) -> str:
    d = f.derivation
    timing = Timing.parse(f.timing)
    assert f.rates is not None
    weight = "v_(k-1)" if timing is Timing.ADVANCE else "v_k"
    lo, hi = min(f.rates), max(f.rates)
    lines = [
        f"Closed form of this loan: level payment, {_TIMING_WORDS[timing]}, "
        f"a rate for each period (day count {loan.day_count.value})",
        f"  recurrence   {_plain_eq(d.recurrence)},  n = 1..{f.periods}",
        f"  closed form  B_n = (B_0 - P*sum_(k=1..n) {weight})/v_n,  "
        "v_k = 1/((1 + i_1)...(1 + i_k))",
        f"               ({d.method})",
        f"  payment      P = (B_0 - F*v_N)/sum_(k=1..N) {weight}",
        "Numbers",
        f"  i_1 = {_ratio(f.rates[0])} (first period); rates from {float(lo):.10g} "
        f"to {float(hi):.10g} a period",
        f"  B_0 = {_money(f.principal)} opening balance,  F = {_money(f.balloon)} balloon,  "
        f"N = {_count(f.periods)}",
    ]
    lines.append(_payment_line(loan, f))
    lines += [
        "Stability",
        f"  each period has its own root 1 + i_k (from {float(1 + lo):.10g} to "
        f"{float(1 + hi):.10g}) and its own fixed point; there is no single B*",
    ]
    if rises:
        lines.append(
            f"  the closed-form balance rises in period {rises[0]} "
            f"({len(rises)} period(s) in all): the payment does not cover that period's interest"
        )
    else:
        lines.append(f"  the closed-form balance falls in every period: the loan {PAYS_OFF}")
    return "\n".join(lines)


def _varying_latex(f: LoanFormula) -> str:
    import sympy as sp

    d = f.derivation
    assert f.rates is not None
    rows = [
        f"{_tex(d.recurrence.lhs)} &= {_tex(d.recurrence.rhs)}",
        rf"B_{{n}} &= {_tex(d.solution)}",
        rf"i_{{1}} &= {sp.latex(_rational(f.rates[0]))}, \quad B_{{0}} = "
        rf"{sp.latex(_rational(f.principal))}, \quad P = {sp.latex(_rational(f.payment))}"
        rf", \quad N = {f.periods}",
        rf"&\text{{{f.outcome}}}",
    ]
    return "\\begin{aligned}\n" + " \\\\\n".join(rows) + "\n\\end{aligned}"
