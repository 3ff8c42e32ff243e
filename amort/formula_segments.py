"""A structured loan's closed form, segment by segment, checked against its cent schedule.

A structured loan (interest-only periods, equal principal, bullet, graduated
payments, listed or seasonal payments, events) is the one recurrence
``B_n = a_n B_{n-1} - P_n`` (``a_n (B_{n-1} - P_n)`` in advance) whose payment
rule changes from time to time. :func:`segmented_formula_for` splits its
schedule into maximal runs of periods with one payment rule and solves each
run in closed form with the derivations of :mod:`amort.symbolic` (sympy's
rsolve, or the summation factor where rates differ by period):

- ``interest-only``: each payment is the period's interest, ``B_n = B_s``;
- ``equal-principal``: the payment is ``C`` plus the interest, ``B_n = B_s - C m``;
- ``level``: one payment ``P`` (``P = 0``: no payment, the interest is
  capitalised, ``B_n = a^m B_s``), with its fixed point ``B* = P / i``;
- ``level-varying-rate``: one payment, a rate for each period;
- ``geometric`` / ``geometric-resonance`` / ``arithmetic``: a graduated
  payment growing every period (the resonance case when ``g = 1 + i``);
- ``scheduled``: payments as listed with a rate for each period, in the
  summation-factor form ``B_n = (B_s - sum_k P_k w_k) / v_n``.

Each segment opens with the cent balance ``B_s`` the schedule has reached
(``s`` is the period before its first, ``m = n - s`` counts its periods), as
the engine does. The final period, which pays what is left, closes the
schedule and is described apart. :func:`check_segments` evaluates each closed
form exactly at each of its periods and compares it with the cent balances:
within a segment the gap obeys ``e_m = a_m e_{m-1} + d_m`` with ``|d_m|``
at most the interest rounding ``u`` (half a cent for the half modes, a cent
for up/down) plus, for geometric payments, the payment's own rounding to the
cent ``r`` (likewise), so ``|e_m| <= (u + r) s_m`` with ``s_m`` the segment's
accumulation factor; periods whose payment covers the interest
(``interest-only``, ``equal-principal``) move the balance by exact cents and
must show no gap at all.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from amort.conventions import Timing
from amort.errors import InvalidTerms
from amort.money import Rounding
from amort.symbolic import (
    _TIMING_WORDS,
    ARITHMETIC,
    EQUAL_PRINCIPAL,
    GEOMETRIC,
    INTEREST_ONLY,
    LEVEL,
    NEGATIVE_AMORTISATION,
    PAYS_OFF,
    RESONANCE,
    VARYING_RATE,
    Derivation,
    _plain,
    _tex,
    derive,
    symbols,
)

if TYPE_CHECKING:
    from amort.loan import Loan

#: A sympy expression (sympy ships no type information).
Expr = Any

INTEREST_ONLY_KIND = "interest-only"
SCHEDULED = "scheduled"
#: Segments longer than this are evaluated with mpmath at 40 digits beyond their
#: scale (exact far below a cent) instead of in exact rationals.
EXACT_ROWS = 1200

_WORDS = {
    INTEREST_ONLY_KIND: "interest only: each payment is the period's interest",
    EQUAL_PRINCIPAL: "equal principal C each period, plus the period's interest",
    LEVEL: "level payment P",
    VARYING_RATE: "level payment P, a rate for each period",
    GEOMETRIC: "geometric payments P_n = P_1 g^(m-1)",
    RESONANCE: "geometric payments growing at the loan's own factor, g = 1 + i (resonance)",
    ARITHMETIC: "arithmetic payments P_n = P_1 + (m - 1) h",
    SCHEDULED: "payments as scheduled, a rate for each period",
}


@dataclass(frozen=True)
class Segment:
    """One run of periods with one payment rule, and its closed form.

    Money in currency units as exact fractions; rates as exact fractions per period.

    first, last: the periods it covers (1-based, inclusive); ``m = n - (first - 1)``.
    kind: what the payments do (see the module notes); derivation: the
        :class:`~amort.symbolic.Derivation` its closed form comes from.
    opening: ``B_s``, the cent balance it opens with.
    rates: each period's rate (all equal when the rate is constant).
    payments: the payments of its periods (for ``interest-only`` and
        ``equal-principal``, the principal part ``C`` of each).
    parameters: the numbers put into the closed form (``P``, ``P_1`` with ``g`` or
        ``h``, ``C``, ``i``).
    balance: ``B_n`` as a sympy expression in ``m`` with the numbers substituted
        (None where the rate differs by period: see :meth:`balance_after`).
    fixed_point: ``B*`` for a level segment at a constant positive rate, else None.
    outcome: for a level segment, what ``B_s`` against ``B*`` says
        (``"pays off"``, ``"interest-only forever"``, ``"negative amortisation"``);
        for the others, whether the balance falls, stays or rises.
    """

    first: int
    last: int
    kind: str
    derivation: Derivation
    opening: Fraction
    rates: tuple[Fraction, ...]
    payments: tuple[Fraction, ...]
    parameters: dict[str, Fraction]
    balance: Expr | None
    fixed_point: Fraction | None
    outcome: str

    @property
    def length(self) -> int:
        """How many periods the segment covers."""
        return self.last - self.first + 1

    @property
    def constant_rate(self) -> Fraction | None:
        """The segment's one periodic rate, or None when it differs by period."""
        return self.rates[0] if len(set(self.rates)) == 1 else None

    def balance_after(self, m: int) -> Any:
        """Return the closed form's balance after ``m`` of the segment's periods (exact).

        A Fraction for segments of up to :data:`EXACT_ROWS` periods, an mpmath
        number (exact far below a cent) beyond.
        """
        if not 0 <= m <= self.length:
            raise InvalidTerms(f"'m' must be from 0 to {self.length} (got {m})")
        return self.balances()[m]

    def balances(self) -> list[Any]:
        """Return the closed form's balances after m = 0..length periods."""
        if self.balance is None:
            return _summation_balances(self)
        m = _m()
        if self.length <= EXACT_ROWS:
            return [_fraction(self.balance.subs(m, j)) for j in range(self.length + 1)]
        import mpmath as mp
        import sympy as sp

        with mp.workdps(_digits(self)):
            at = sp.lambdify(m, self.balance, modules="mpmath")
            return [at(j) for j in range(self.length + 1)]


@dataclass(frozen=True)
class SegmentedFormula:
    """A structured loan's closed form in segments, with the loan's numbers substituted.

    timing: ``"arrears"`` or ``"advance"``; periods: N, the schedule's payments.
    segments: the runs of periods 1..N-1; final_payment and balloon: what
    period N pays and leaves (currency units); text and latex: for reading and
    for typesetting.
    """

    timing: str
    periods: int
    segments: tuple[Segment, ...]
    final_payment: Fraction
    balloon: Fraction
    text: str
    latex: str


def _m() -> Expr:
    import sympy as sp

    return sp.Symbol("m", integer=True, nonnegative=True)


def segmented_formula_for(loan: Loan) -> SegmentedFormula:
    """Return a structured loan's closed form, one segment per run of one payment rule.

    >>> from amort import Loan
    >>> loan = Loan(principal=12_000, annual_rate="6%", periods=24, interest_only_periods=6)
    >>> f = segmented_formula_for(loan)
    >>> [(s.first, s.last, s.kind) for s in f.segments]
    [(1, 6, 'interest-only'), (7, 23, 'level')]
    >>> f.segments[1].outcome
    'pays off'
    """
    terms = loan.batch_terms()
    frame = loan.schedule()
    rows = loan.number_of_payments
    cents = _closing_cents(frame)
    opening0 = int(terms.principal[0])
    balances = [opening0, *cents]  # B_0 .. B_N in cents
    rates = _rates(loan, terms, rows)
    if terms.period_payment is not None and terms.period_covers_interest is not None:
        pays = [int(v) for v in terms.period_payment[:rows, 0]]
        covers = [bool(v) for v in terms.period_covers_interest[:rows, 0]]
    else:
        pays = [int(terms.payment[0])] * rows
        covers = [False] * rows
    runs = _runs(loan, pays, covers, rates, rows)
    segments = tuple(
        _segment(loan, first, last, kind, balances, pays, rates) for first, last, kind in runs
    )
    paid = frame["payment"].to_numpy()
    final = Fraction(round(float(paid[-1]) * 100), 100)
    if "extra_principal" in frame:
        final += Fraction(round(float(frame["extra_principal"].to_numpy()[-1]) * 100), 100)
    balloon = Fraction(loan.balloon)
    text = _text(loan, segments, rows, final, balloon)
    latex = _latex(segments)
    return SegmentedFormula(
        timing=loan.timing.value,
        periods=rows,
        segments=segments,
        final_payment=final,
        balloon=balloon,
        text=text,
        latex=latex,
    )


def _closing_cents(frame: Any) -> list[int]:
    return [round(float(x) * 100) for x in frame["closing_balance"].to_numpy()]


def _rates(loan: Loan, terms: Any, rows: int) -> list[Fraction]:
    if terms.period_rate_num is not None and terms.period_rate_den is not None:
        return [
            Fraction(int(terms.period_rate_num[k, 0]), int(terms.period_rate_den[k, 0]))
            for k in range(rows)
        ]
    return [loan.periodic_rate] * rows


def _runs(
    loan: Loan, pays: list[int], covers: list[bool], rates: list[Fraction], rows: int
) -> list[tuple[int, int, str]]:
    """Split periods 1..rows-1 into (first, last, kind) runs of one payment rule."""
    growing = _growing_periods(loan, rows)
    runs: list[tuple[int, int, str]] = []
    k = 1
    while k < rows:
        if covers[k - 1]:
            c = pays[k - 1]
            last = k
            while last + 1 < rows and covers[last] and pays[last] == c:
                last += 1
            runs.append((k, last, INTEREST_ONLY_KIND if c == 0 else EQUAL_PRINCIPAL))
        elif k in growing and k + 1 in growing and k + 1 < rows:
            last = k
            while last + 1 < rows and last + 1 in growing:
                last += 1
            runs.append((k, last, _growth_kind(loan, rates[k - 1 : last])))
        else:
            p = pays[k - 1]
            last = k
            while (
                last + 1 < rows and not covers[last] and pays[last] == p and last + 1 not in growing
            ):
                last += 1
            constant = len(set(rates[k - 1 : last])) == 1
            runs.append((k, last, LEVEL if constant else VARYING_RATE))
        k = last + 1
    return runs


def _growing_periods(loan: Loan, rows: int) -> set[int]:
    """Periods whose payment follows a graduated path growing every period, else empty."""
    if (
        not loan.graduated
        or loan.events
        or loan.custom_payments is not None
        or loan.seasonal
        or int(loan.growth_every or 1) != 1
    ):
        return set()
    first = loan.interest_only_periods + 1
    # A negative-amortisation cap ends the growth: from its period the payment is level.
    stop = getattr(loan, "_cap_period", None) or rows
    return set(range(first, min(stop, rows)))


def _growth_kind(loan: Loan, rates: list[Fraction]) -> str:
    if len(set(rates)) != 1:
        return SCHEDULED
    if loan.payment_step is not None:
        return ARITHMETIC
    assert loan.payment_growth is not None
    return RESONANCE if Fraction(loan.payment_growth) == rates[0] else GEOMETRIC


def _segment(
    loan: Loan,
    first: int,
    last: int,
    kind: str,
    balances: list[int],
    pays: list[int],
    rates: list[Fraction],
) -> Segment:
    import sympy as sp

    s = symbols()
    m = _m()
    opening = Fraction(balances[first - 1], 100)
    seg_rates = tuple(rates[first - 1 : last])
    payments = tuple(Fraction(p, 100) for p in pays[first - 1 : last])
    rule = {
        INTEREST_ONLY_KIND: EQUAL_PRINCIPAL,
        SCHEDULED: VARYING_RATE,
    }.get(kind, kind)
    derivation = derive(rule, timing=loan.timing)
    rate = seg_rates[0]
    params: dict[str, Fraction] = {}
    if kind in (INTEREST_ONLY_KIND, EQUAL_PRINCIPAL):
        params["C"] = payments[0]
    elif kind in (LEVEL, VARYING_RATE):
        params["P"] = payments[0]
    elif kind == GEOMETRIC:
        assert loan.payment_growth is not None
        params["P_1"] = payments[0]
        params["g"] = 1 + Fraction(loan.payment_growth)
    elif kind == RESONANCE:
        params["P_1"] = payments[0]
    elif kind == ARITHMETIC:
        assert loan.payment_step is not None
        params["P_1"] = payments[0]
        params["h"] = Fraction(loan.payment_step)
    balance = None
    fixed = None
    constant = len(set(seg_rates)) == 1
    covered = kind in (INTEREST_ONLY_KIND, EQUAL_PRINCIPAL)  # B_n = B_s - C m, any rates
    if covered or (kind not in (VARYING_RATE, SCHEDULED) and constant):
        values = {s["B_0"]: _rational(opening), s["n"]: m}
        values.update({s[name]: _rational(v) for name, v in params.items()})
        if covered:
            balance = sp.sympify(derivation.solution.subs(values))
        elif rate == 0:
            balance = sp.sympify(_zero_rate_balance(kind, loan.timing, opening, params, m))
        else:
            params["i"] = rate
            values[s["i"]] = _rational(rate)
            balance = sp.sympify(derivation.solution.subs(values))
        if kind == LEVEL and rate > 0 and params["P"] > 0 and derivation.fixed_point is not None:
            fixed = _fraction(derivation.fixed_point.subs(values))
    outcome = _outcome(kind, opening, fixed, balances[first - 1 : last + 1])
    return Segment(
        first=first,
        last=last,
        kind=kind,
        derivation=derivation,
        opening=opening,
        rates=seg_rates,
        payments=payments,
        parameters=params,
        balance=balance,
        fixed_point=fixed,
        outcome=outcome,
    )


def _zero_rate_balance(
    kind: str, timing: Timing, opening: Fraction, params: dict[str, Fraction], m: Expr
) -> Expr:
    """The limit i -> 0 of each payment rule's closed form: the payments simply add up."""

    b = _rational(opening)
    if kind == LEVEL:
        return b - _rational(params["P"]) * m
    if kind == ARITHMETIC:
        p1, h = _rational(params["P_1"]), _rational(params["h"])
        return b - p1 * m - h * m * (m - 1) / 2
    # geometric at i = 0: B_s - P_1 (g^m - 1) / (g - 1); resonance means g = 1 here
    p1 = _rational(params["P_1"])
    if kind == RESONANCE:
        return b - p1 * m
    g = _rational(params["g"])
    return b - p1 * (g**m - 1) / (g - 1) if g != 1 else b - p1 * m


def _outcome(kind: str, opening: Fraction, fixed: Fraction | None, cents: list[int]) -> str:
    if fixed is not None:
        if opening < fixed:
            return PAYS_OFF
        return INTEREST_ONLY if opening == fixed else NEGATIVE_AMORTISATION
    if kind == INTEREST_ONLY_KIND:
        return "the balance stays"
    if kind == LEVEL and cents[-1] > cents[0]:
        return "the balance rises by its interest each period"
    if cents[-1] > cents[0]:
        return "the balance rises"
    return "the balance stays" if cents[-1] == cents[0] else "the balance falls"


# -- evaluation ----------------------------------------------------------------------------


def _summation_balances(seg: Segment) -> list[Fraction]:
    """``B_m = (B_s - sum_k P_k w_k) / v_m``, exactly: ``w_k = v_k`` (arrears) or ``v_{k-1}``."""
    advance = seg.derivation.timing == Timing.ADVANCE.value
    out = [seg.opening]
    v, owed = Fraction(1), Fraction(0)
    for rate, pay in zip(seg.rates, seg.payments, strict=True):
        if advance:
            owed += pay * v
        v /= 1 + rate
        if not advance:
            owed += pay * v
        out.append((seg.opening - owed) / v)
    return out


def _digits(seg: Segment) -> int:
    import math

    growth = sum(math.log10(1 + float(r)) for r in seg.rates)
    largest = max([seg.opening, *seg.payments, Fraction(1)])
    if seg.fixed_point is not None:
        largest = max(largest, seg.fixed_point)
    return 40 + math.ceil(growth + math.log10(float(largest)))


def _accumulation(rates: tuple[Fraction, ...]) -> list[float]:
    """``s_m`` for m = 0..len(rates): ``s_m = a_m s_{m-1} + 1``, float (a bound, not money)."""
    out = [0.0]
    for rate in rates:
        out.append(out[-1] * (1 + float(rate)) + 1)
    return out


def _unit(mode: Rounding) -> float:
    """The most one rounding to the cent moves an amount by, in currency units."""
    return 0.005 if mode in (Rounding.HALF_UP, Rounding.HALF_EVEN) else 0.01


@dataclass(frozen=True)
class SegmentCheck:
    """One segment's largest gap to the cent schedule and the bound it must stay within."""

    first: int
    last: int
    largest_gap: float
    gap_bound: float

    @property
    def passed(self) -> bool:
        """True when the gap stays within the bound."""
        return self.largest_gap <= self.gap_bound


def check_segments(
    loan: Loan, *, formula: SegmentedFormula | None = None
) -> tuple[SegmentCheck, ...]:
    """Return each segment's largest ``|B_n (closed form) - closing balance n|``, currency units.

    Each closed form is evaluated exactly (sympy Rational or Python fractions;
    mpmath at 40 digits beyond the scale for segments longer than
    :data:`EXACT_ROWS`) at every period of its segment and compared with the
    schedule's cents, row by row against ``(u + r) s_m`` (module notes).

    >>> from amort import Loan
    >>> loan = Loan(principal=12_000, annual_rate="6%", periods=24, interest_only_periods=6)
    >>> [c.passed for c in check_segments(loan)]
    [True, True]
    """
    formula = segmented_formula_for(loan) if formula is None else formula
    cents = _closing_cents(loan.schedule())
    u = _unit(loan.interest_rounding)
    r = _unit(loan.rounding)
    out = []
    for seg in formula.segments:
        exact = seg.balances()
        covered = seg.kind in (INTEREST_ONLY_KIND, EQUAL_PRINCIPAL)
        rounded_payments = seg.kind in (GEOMETRIC, RESONANCE)
        grow = _accumulation(seg.rates)
        gap, bound, within = 0.0, 0.0, True
        for m in range(1, seg.length + 1):
            row_gap = float(abs(exact[m] * 100 - cents[seg.first + m - 2])) / 100
            row_bound = 0.0 if covered else (u + (r if rounded_payments else 0.0)) * grow[m]
            row_bound *= 1 + 1e-12  # the float accumulation factor's own rounding
            within = within and row_gap <= row_bound
            gap, bound = max(gap, row_gap), max(bound, row_bound)
        if not within:  # report the failing row's excess, not a hidden one
            bound = min(bound, gap / 2)
        out.append(SegmentCheck(seg.first, seg.last, gap, bound))
    return tuple(out)


# -- words ---------------------------------------------------------------------------------


def _rational(value: Fraction) -> Expr:
    import sympy as sp

    return sp.Rational(value.numerator, value.denominator)


def _fraction(value: Expr) -> Fraction:
    import sympy as sp

    if not isinstance(value, sp.Rational):  # pragma: no cover - rational inputs stay rational
        raise ArithmeticError(f"expected an exact rational, got {value}")
    return Fraction(int(value.p), int(value.q))


def _money(value: Fraction, places: int = 2) -> str:
    return f"{float(value):,.{places}f}"


def _ratio(value: Fraction) -> str:
    if value.denominator == 1:
        return str(value.numerator)
    if value.denominator < 10**12:
        return f"{value.numerator}/{value.denominator} = {float(value):.10g}"
    return f"{float(value):.15g}"


def _local(start: int) -> str:
    return "m = n" if start == 0 else f"m = n - {start}"


def _periods(seg: Segment) -> str:
    if seg.length == 1:
        return f"period {seg.first}"
    return f"periods {seg.first}-{seg.last}"


def _shown(expr: Expr, start: int) -> str:
    """The derivation's solution with B_0 written B_s and n written m."""
    import sympy as sp

    s = symbols()
    renamed = expr.subs({s["B_0"]: sp.Symbol(f"B_{start}"), s["n"]: sp.Symbol("m")})
    return _plain(renamed)


def _parameter_words(seg: Segment) -> str:
    names = {"C": "C", "P": "P", "P_1": "P_1", "g": "g", "h": "h"}
    parts = []
    for name, value in seg.parameters.items():
        if name == "i":
            continue
        shown = _ratio(value) if name == "g" else _money(value)
        parts.append(f"{names[name]} = {shown}")
    return ",  ".join(parts)


def _segment_lines(seg: Segment, number: int) -> list[str]:
    import sympy as sp

    start = seg.first - 1
    d = seg.derivation
    title = _WORDS[seg.kind]
    if seg.kind == LEVEL and seg.parameters.get("P") == 0:
        title = "no payment: the interest is capitalised"
    elif seg.kind == LEVEL and seg.length == 1:
        title = "one payment P"
    lines = [f"Segment {number}: {_periods(seg)}, {title}"]
    if seg.kind == SCHEDULED:
        weight = "v_(k-1)" if d.timing == Timing.ADVANCE.value else "v_k"
        lines.append(
            f"  closed form  B_n = (B_{start} - sum_(k=1..m) P_k {weight})/v_m,  "
            f"v_k = 1/((1 + i_1)...(1 + i_k)),  {_local(start)}"
        )
    elif seg.kind == VARYING_RATE:
        weight = "v_(k-1)" if d.timing == Timing.ADVANCE.value else "v_k"
        lines.append(
            f"  closed form  B_n = (B_{start} - P*sum_(k=1..m) {weight})/v_m,  "
            f"v_k = 1/((1 + i_1)...(1 + i_k)),  {_local(start)}"
        )
    else:
        rate = seg.constant_rate
        shown = _shown(d.solution, start)
        if rate == 0 and seg.kind not in (INTEREST_ONLY_KIND, EQUAL_PRINCIPAL):
            assert seg.balance is not None  # one rate: the closed form is built
            shown = "the payments add up (i = 0): " + _plain(seg.balance)
        if seg.kind == INTEREST_ONLY_KIND:
            shown = f"B_{start}"
        lines.append(f"  closed form  B_n = {shown},  {_local(start)}")
    numbers = f"  numbers      B_{start} = {_money(seg.opening)}"
    words = _parameter_words(seg)
    if words:
        numbers += f",  {words}"
    elif seg.kind == SCHEDULED:
        numbers += (
            f",  P_k from {_money(min(seg.payments))} to {_money(max(seg.payments))} as scheduled"
        )
    rate = seg.constant_rate
    if rate is not None:
        numbers += f",  i = {_ratio(rate)}"
    else:
        lo, hi = min(seg.rates), max(seg.rates)
        numbers += f",  i_k from {float(lo):.10g} to {float(hi):.10g}"
    lines.append(numbers)
    if seg.balance is not None and seg.kind != INTEREST_ONLY_KIND and seg.length > 1:
        approx = _plain(sp.N(seg.balance, 12))
        if len(approx) <= 110:
            lines.append(f"  B_n ~ {approx}")
    if seg.fixed_point is not None:
        star = _money(seg.fixed_point, 4)
        b0 = _money(seg.opening)
        relation = {PAYS_OFF: "<", INTEREST_ONLY: "=", NEGATIVE_AMORTISATION: ">"}[seg.outcome]
        lines.append(
            f"  fixed point  B* = {_plain(d.fixed_point)} = {star}: "
            f"B_{start} = {b0} {relation} B*, {seg.outcome}"
        )
    else:
        lines.append(f"  outcome      {seg.outcome}")
    return lines


def _text(
    loan: Loan, segments: tuple[Segment, ...], rows: int, final: Fraction, balloon: Fraction
) -> str:
    count = len(segments)
    lines = [
        f"Closed form of this loan in {count} segment{'s' if count != 1 else ''} "
        f"and a final payment, {_TIMING_WORDS[loan.timing]}",
        (
            "  recurrence   B_n = a_n*B_(n-1) - P_n"
            if loan.timing is Timing.ARREARS
            else "  recurrence   B_n = a_n*(B_(n-1) - P_n)"
        )
        + ",  a_n = 1 + i_n",
        "  segments     each opens with the cent balance B_s the schedule has reached; m = n - s",
        "  solved by    sympy rsolve (one rate), or the summation factor (a rate each period)",
    ]
    for number, seg in enumerate(segments, start=1):
        lines += _segment_lines(seg, number)
    closing = "the balloon " + _money(balloon) if balloon else "0.00"
    lines.append(f"Final: period {rows} pays {_money(final)}, leaving {closing}")
    return "\n".join(lines)


def _latex(segments: tuple[Segment, ...]) -> str:
    import sympy as sp

    rows = []
    for seg in segments:
        start = seg.first - 1
        rows.append(rf"&\text{{{_periods(seg)}: {seg.kind}}}")
        if seg.balance is not None:
            rows.append(rf"B_{{n}} &= {sp.latex(seg.balance)}, \quad {_local(start)}")
        else:
            rows.append(
                rf"B_{{n}} &= \frac{{B_{{{start}}} - \sum_{{k=1}}^{{m}} P_k w_k}}{{v_m}}, "
                rf"\quad {_local(start)}"
            )
        if seg.fixed_point is not None:
            rows.append(
                rf"B^{{*}} &= {_tex(seg.derivation.fixed_point)} = "
                rf"{sp.latex(_rational(seg.fixed_point))}"
            )
    return "\\begin{aligned}\n" + " \\\\\n".join(rows) + "\n\\end{aligned}"
