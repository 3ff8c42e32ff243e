"""Annuity cents against an independent exact reference written here in decimal and fractions.

The reference follows the rules stated in DESIGN.md ("Money and rounding")
and the module docstrings of amort.annuity and amort.annuity_accumulation,
but computes everything its own way: the first payment or deposit from the
plain sum of discount factors in fractions (no closed form), each rounding
with Python's decimal module (ROUND_HALF_UP, ROUND_HALF_EVEN, ROUND_UP,
ROUND_DOWN), and the schedule by a plain loop over Decimal amounts.
"""

from __future__ import annotations

import dataclasses
import random
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal, localcontext
from fractions import Fraction

import numpy as np
import pytest

from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_cents import PathTerms, run_path
from amort.annuity_fast import run_fast
from amort.money import Rounding

CENT = Decimal("0.01")
MODES = {"half-up": ROUND_HALF_UP, "half-even": ROUND_HALF_EVEN, "up": ROUND_UP, "down": ROUND_DOWN}


def to_cent(value: Fraction, mode: str) -> Decimal:
    """Round an exact amount (currency units) to the cent with Python's decimal module."""
    exact = Decimal(value.numerator) / Decimal(value.denominator)  # 28 digits: ample here
    return exact.quantize(CENT, rounding=MODES[mode])


def interest(balance: Decimal, rate: Fraction, mode: str) -> Decimal:
    return to_cent(Fraction(balance) * rate, mode)


def steps(n: int, every: int) -> list[int]:
    return [(k - 1) // every for k in range(1, n + 1)]


def path(first: Decimal, n: int, every: int, growth: Fraction | None, step: Decimal, mode: str):
    """Each flow: the rounded first flow grown exactly and rounded again, or plus s steps."""
    if growth is not None:
        return [to_cent(Fraction(first) * (1 + growth) ** s, mode) for s in steps(n, every)]
    return [first + s * step for s in steps(n, every)]


def first_payment(fund, rate, n, defer, every, growth, step, residual, advance, mode):
    """P_1 = (V - R v^N - h sum s_k w_k) / sum g^s_k w_k, the sums taken term by term."""
    v = 1 / (1 + rate)
    shift = 1 if advance else 0
    g = 1 + (growth or 0)
    w = [v ** (defer + k - shift) for k in range(1, n + 1)]
    s = steps(n, every)
    weight = sum(g**sk * wk for sk, wk in zip(s, w, strict=True))
    stepped = sum(sk * wk for sk, wk in zip(s, w, strict=True))
    owed = Fraction(fund) - Fraction(residual) * v ** (defer + n) - Fraction(step) * stepped
    return to_cent(owed / weight, mode)


def payout_rows(fund, rate, flows, residual, advance, mode):
    """The payout loop: interest on the opening value (less the payment, in advance)."""
    rows, value = [], Decimal(fund)
    for k, pay in enumerate(flows, start=1):
        last = k == len(flows)
        if advance:
            if last:
                pay = value  # residual 0 in advance: the last payment empties the fund
            credited = interest(value - pay, rate, mode)
        else:
            credited = interest(value, rate, mode)
            if last:
                pay = value + credited - residual
        rows.append((value, pay, credited, value - pay + credited))
        value = value - pay + credited
    return rows


def deposit_rows(balance, rate, flows, target, advance, mode):
    """The accumulation loop; the last deposit is the smallest that reaches the target."""
    rows, value = [], Decimal(balance)
    for k, dep in enumerate(flows, start=1):
        last = k == len(flows)
        if advance:
            if last:
                dep = max(Decimal(0), target - value)
                # smallest cent amount y = value + dep with y + interest(y) >= target
                while (
                    dep > 0
                    and (value + dep - CENT) + interest(value + dep - CENT, rate, mode) >= target
                ):
                    dep -= CENT
                while (value + dep) + interest(value + dep, rate, mode) < target:
                    dep += CENT
            credited = interest(value + dep, rate, mode)
        else:
            credited = interest(value, rate, mode)
            if last:
                dep = max(Decimal(0), target - value - credited)
        rows.append((value, dep, credited, value + dep + credited))
        value = value + dep + credited
    return rows


def frame_rows(frame, flow: str) -> list[tuple[Decimal, ...]]:
    cols = ["opening_value", flow, "interest_credited", "closing_value"]
    return [
        tuple(Decimal(repr(float(x))).quantize(CENT) for x in row)
        for row in frame[cols].itertuples(index=False)
    ]


CASES = [
    # fund, annual %, periods, defer, growth, step, every, residual, advance
    (100_000, "5", 10, 0, None, "0", 1, 0, False),
    (250_000, "4", 300, 0, "0.02", "0", 12, 0, False),
    (250_000, "4", 300, 60, "0.02", "0", 12, 0, True),
    (250_000, "4", 300, 60, None, "10", 12, 50_000, False),
    (75_000, "6.25", 120, 12, None, "-15", 6, 0, True),
    (1_000_000, "0", 48, 0, "0.01", "0", 12, 0, False),
    (12_345.67, "11.9", 37, 5, None, "0", 12, 0, True),
    # 6 % a year is 1/200 a month: half-cent ties occur, so the half modes differ.
    (100_000, "6", 120, 0, None, "0", 12, 0, False),
    (100_000, "6", 120, 24, "0.03", "0", 12, 0, True),
]


@pytest.mark.parametrize("mode", list(MODES))
@pytest.mark.parametrize("case", CASES, ids=[str(c) for c in CASES])
def test_payout_cents_equal_the_decimal_reference(case, mode: str) -> None:
    # Independent exact reference: Python decimal / fractions (module docstring).
    fund, annual, n_total, defer, growth, step, every, residual, advance = case
    rate = Fraction(Decimal(annual)) / 100 / 12
    n = n_total - defer
    g = None if growth is None else Fraction(Decimal(growth))
    first = first_payment(
        Decimal(str(fund)), rate, n, defer, every, g, Decimal(step), residual, advance, mode
    )
    flows = [Decimal(0)] * defer + path(first, n, every, g, Decimal(step), mode)
    want = payout_rows(Decimal(str(fund)), rate, flows, Decimal(residual), advance, mode)
    payout = Payout(
        fund=fund, annual_rate=f"{annual}%", periods=n_total, defer=defer, growth=growth,
        step=None if step == "0" else step, growth_every=every, residual=residual,
        timing="advance" if advance else "arrears", rounding=mode, interest_rounding=mode,
    )  # fmt: skip
    assert payout.payment == first
    assert frame_rows(payout.schedule(), "payment") == want
    assert payout.reconciliation().passed


ACCUMULATIONS = [
    # target, balance, annual %, periods, growth, step, every, advance
    (60_000, 0, "4", 60, None, "0", 12, False),
    (60_000, 0, "4", 60, None, "0", 12, True),
    (60_000, 5_000, "4", 60, "0.03", "0", 12, False),
    (150_000, 1_000, "7.5", 240, None, "5", 12, True),
    (9_999.99, 0, "0", 36, None, "0", 12, False),
    (40_000, 250, "3.1", 97, "-0.02", "0", 4, True),
    (60_000, 0, "6", 120, None, "0", 12, False),
    (60_000, 100, "6", 120, "0.02", "0", 12, True),
]


@pytest.mark.parametrize("mode", list(MODES))
@pytest.mark.parametrize("case", ACCUMULATIONS, ids=[str(c) for c in ACCUMULATIONS])
def test_accumulation_cents_equal_the_decimal_reference(case, mode: str) -> None:
    # Independent exact reference: Python decimal / fractions (module docstring).
    target, balance, annual, n, growth, step, every, advance = case
    rate = Fraction(Decimal(annual)) / 100 / 12
    g = None if growth is None else Fraction(Decimal(growth))
    v = 1 / (1 + rate)
    shift = 1 if advance else 0
    w = [v ** (k - shift) for k in range(1, n + 1)]
    s = steps(n, every)
    weight = sum((1 + (g or 0)) ** sk * wk for sk, wk in zip(s, w, strict=True))
    stepped = sum(sk * wk for sk, wk in zip(s, w, strict=True))
    needed = Fraction(Decimal(str(target))) * v**n - balance - Fraction(Decimal(step)) * stepped
    first = to_cent(needed / weight, mode)
    flows = path(first, n, every, g, Decimal(step), mode)
    want = deposit_rows(
        Decimal(balance), rate, flows, Decimal(str(target)).quantize(CENT), advance, mode
    )
    fund = Accumulation(
        target=target, balance=balance, annual_rate=f"{annual}%", periods=n, growth=growth,
        step=None if step == "0" else step, growth_every=every,
        timing="advance" if advance else "arrears", rounding=mode, interest_rounding=mode,
    )  # fmt: skip
    assert fund.deposit == first
    assert frame_rows(fund.schedule(), "deposit") == want
    assert fund.reconciliation().passed


@pytest.mark.parametrize("seed", range(25))
def test_random_target_reached_matches_the_reference(seed: int) -> None:
    # Independent exact reference: the decimal loop with every deposit as scheduled; the
    # value it ends at is the target reached.
    rng = random.Random(seed)
    n = rng.randint(1, 150)
    annual = Decimal(rng.randint(0, 1500)) / 100
    deposit = Decimal(rng.randint(1, 500_000)) / 100
    balance = Decimal(rng.randint(0, 5_000_000)) / 100 if rng.random() < 0.5 else Decimal(0)
    advance = rng.random() < 0.5
    growth = Decimal(rng.randint(-50, 80)) / 1000 if rng.random() < 0.5 else None
    rate = Fraction(annual) / 100 / 12
    flows = path(
        deposit, n, 12, None if growth is None else Fraction(growth), Decimal(0), "half-up"
    )
    value = balance
    for dep in flows:
        base = value + dep if advance else value
        value = value + dep + interest(base, rate, "half-up")
    fund = Accumulation(
        deposit=deposit, balance=balance, annual_rate=f"{annual}%", periods=n, growth=growth,
        timing="advance" if advance else "arrears",
    )  # fmt: skip
    assert fund.target == value
    assert fund.reconciliation().passed


# -- whole batches: the vectorised paths against a decimal loop of the rules ------------------
#
# amort.annuity_cents.run_path steps a batch of annuities at once (its int64 fast path in
# amort.annuity_fast, or the general path). The reference below is written here from the
# rules in amort.annuity_cents's module docstring, one annuity at a time in Python
# integers, every interest rounded by Python's decimal module. It restates those rules
# (every rounding mode, advance and arrears, payouts and deposits, with and without a
# residual or target, early closes, the advance remainder and reach) and shares no code
# with amort.

DECIMAL_MODES = {
    Rounding.HALF_UP: ROUND_HALF_UP,
    Rounding.HALF_EVEN: ROUND_HALF_EVEN,
    Rounding.UP: ROUND_UP,
    Rounding.DOWN: ROUND_DOWN,
}


def cents_interest(base: int, rate: Fraction, mode: Rounding) -> int:
    """round(base x rate) in cents by Python's decimal module (60 digits: exact at ties)."""
    exact = Fraction(base) * rate
    with localcontext() as ctx:
        ctx.prec = 60
        value = Decimal(exact.numerator) / Decimal(exact.denominator)
        return int(value.quantize(Decimal(1), rounding=DECIMAL_MODES[mode]))


def remainder_left(goal: int, rate: Fraction, mode: Rounding) -> int:
    """The cents y left after the last payment in advance: y + interest(y) = goal exactly
    when some cent amount gives it, else goal / (1 + i) rounded half-up (loan engine rule)."""
    if goal <= 0:
        return 0
    near = int(
        (Decimal(goal) / (1 + Decimal(rate.numerator) / Decimal(rate.denominator))).quantize(
            Decimal(1), rounding=ROUND_HALF_UP
        )
    )
    for y in range(max(near - 3, 0), near + 4):
        if y + cents_interest(y, rate, mode) == goal:
            return y
    return near


def smallest_reaching(target: int, rate: Fraction, mode: Rounding) -> int:
    """The smallest cents y with y + interest(y) >= target, by a plain search."""
    y = max(int(Fraction(target) / (1 + rate)) - 3, 0)
    while y + cents_interest(y, rate, mode) < target:
        y += 1
    return y


def reference_annuity(opening, rate, flows, last, advance, deposits, goal, mode):
    """Rows (opening, flow, interest, closing) and the flow the goal needed, by the rules."""
    rows, value, need = [], opening, 0
    side = 0
    if goal is not None and advance:
        side = (smallest_reaching if deposits else remainder_left)(goal, rate, mode)
    for k in range(1, last + 1):
        c, final = flows[k - 1], k == last
        if deposits:
            if goal is None:
                flow, closes = c, final
                intr = cents_interest(value + c if advance else value, rate, mode)
                need = c
            elif advance:
                need = side - value
                closes = final or need <= c
                flow = max(need, 0) if closes else c
                intr = cents_interest(value + flow, rate, mode)
            else:
                intr = cents_interest(value, rate, mode)
                need = goal - value - intr
                closes = final or need <= c
                flow = max(need, 0) if closes else c
            closing = value + intr + flow
        else:
            if advance:
                if goal is None:
                    closes, flow = final or c >= value, min(c, value)
                else:
                    left = value - side
                    closes = final or left < c or (left == c and side == 0)
                    flow = left if closes else c
                intr = cents_interest(max(value - flow, 0), rate, mode)
            else:
                intr = cents_interest(value, rate, mode)
                if goal is None:
                    closes, flow = final or c >= value + intr, min(c, value + intr)
                else:
                    due = value + intr - goal
                    closes = final or due < c or (due == c and goal == 0)
                    flow = due if closes else c
            need = flow
            closing = value + intr - flow
        rows.append((value, flow, intr, closing))
        value = closing
        if closes:
            break
    return rows, need


def random_batch(rng: random.Random, size: int, deposits: bool, with_goal: bool) -> PathTerms:
    """Invented annuities: rates of whole basis points a year over 12 (ties at 6 %), flows
    level or varying, mixed timing and lengths, goals that some annuities meet early."""
    horizon = rng.randint(1, 48)
    periods = [rng.randint(1, horizon) if rng.random() < 0.6 else horizon for _ in range(size)]
    periods[0] = horizon
    bp = [rng.choice([0, 600, 600, rng.randint(1, 2_500)]) for _ in range(size)]
    opening = [
        rng.choice([0, rng.randint(0, 10**7), 100 * rng.randint(0, 10**5)]) for _ in range(size)
    ]
    level = [rng.randint(0, 10**6) for _ in range(size)]
    flows = [
        [level[j] if rng.random() < 0.7 else rng.randint(0, 2 * level[j] + 1) for j in range(size)]
        for _ in range(horizon)
    ]
    advance = [rng.random() < 0.5 for _ in range(size)]
    goal = None
    if with_goal and deposits:
        goal = [opening[j] + rng.randint(0, 3 * 10**7) for j in range(size)]
    elif with_goal:
        goal = [rng.choice([0, 0, rng.randint(0, opening[j] + 1)]) for j in range(size)]
    as_int = lambda xs: np.array(xs, dtype=np.int64)  # noqa: E731
    return PathTerms(
        opening=as_int(opening),
        rate_num=as_int(bp),
        rate_den=np.full(size, 120_000, dtype=np.int64),
        flows=as_int(flows).reshape(horizon, size),
        periods=as_int(periods),
        advance=np.array(advance),
        deposits=deposits,
        goal=None if goal is None else as_int(goal),
    )


def reference_table(terms: PathTerms, mode: Rounding) -> list[tuple[list, int]]:
    """Each annuity's reference rows and needed flow."""
    return [
        reference_annuity(
            int(terms.opening[j]),
            Fraction(int(terms.rate_num[j]), int(terms.rate_den[j])),
            terms.flows[:, j].tolist(),
            int(terms.periods[j]),
            bool(terms.advance[j]),
            terms.deposits,
            None if terms.goal is None else int(terms.goal[j]),
            mode,
        )
        for j in range(terms.size)
    ]


def on_the_boundary(rng: random.Random, terms: PathTerms, mode: Rounding) -> PathTerms:
    """The same annuities with goals met exactly, to the cent, at some period.

    Each goal is a value the annuity reaches exactly without one (so a target is reached
    with a scheduled deposit, and a residual is a value the fund merely stays at); some
    payouts also pay at one period exactly what the fund then holds (it empties there).
    """
    flows = terms.flows.copy()
    free = dataclasses.replace(terms, goal=None)
    goal = []
    for j, (rows, _) in enumerate(reference_table(free, mode)):
        k = rng.randrange(len(rows))
        goal.append(rows[k][3])
        if not terms.deposits and rng.random() < 0.3:
            value, _, intr, _ = rows[k]
            # In arrears the fund holds value + interest when it pays; in advance, value.
            flows[k, j] = value if bool(terms.advance[j]) else value + intr
    if not terms.deposits:
        goal = [g if rng.random() < 0.6 else 0 for g in goal]
    return dataclasses.replace(terms, flows=flows, goal=np.array(goal, dtype=np.int64))


def assert_batch_is_the_reference(terms: PathTerms, mode: Rounding) -> None:
    assert run_fast(terms, mode) is not None  # the batch is the fast path's to run
    table = run_path(terms, mode)
    offsets = table.offsets
    for j, (want, need) in enumerate(reference_table(terms, mode)):
        at = slice(int(offsets[j]), int(offsets[j + 1]))
        got = list(
            zip(
                table.opening[at].tolist(),
                table.flow[at].tolist(),
                table.interest[at].tolist(),
                table.closing[at].tolist(),
                strict=True,
            )
        )
        assert got == want, f"annuity {j}"
        assert table.period[at].tolist() == list(range(1, len(want) + 1))
        assert int(table.final_needed[j]) == need


@pytest.mark.parametrize("mode", list(Rounding), ids=[m.value for m in Rounding])
@pytest.mark.parametrize("deposits", [True, False], ids=["deposits", "payouts"])
@pytest.mark.parametrize("with_goal", [True, False], ids=["goal", "no-goal"])
@pytest.mark.parametrize("seed", range(3))
def test_batch_cents_equal_a_decimal_loop(seed, with_goal, deposits, mode) -> None:
    # Independent exact reference: Python decimal / fractions, one annuity at a time (above).
    rng = random.Random(f"{seed}-{with_goal}-{deposits}-{mode.value}")
    terms = random_batch(rng, rng.randint(2, 120), deposits, with_goal)
    assert_batch_is_the_reference(terms, mode)


@pytest.mark.parametrize("mode", list(Rounding), ids=[m.value for m in Rounding])
@pytest.mark.parametrize("deposits", [True, False], ids=["deposits", "payouts"])
@pytest.mark.parametrize("seed", range(3))
def test_goals_met_to_the_cent_equal_a_decimal_loop(seed, deposits, mode) -> None:
    # Independent exact reference: Python decimal / fractions (above), at the closing
    # rules' boundaries: a value equal to its target or residual, a fund paid to zero.
    rng = random.Random(f"edge-{seed}-{deposits}-{mode.value}")
    terms = random_batch(rng, rng.randint(2, 80), deposits, with_goal=False)
    assert_batch_is_the_reference(on_the_boundary(rng, terms, mode), mode)
