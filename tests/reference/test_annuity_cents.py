"""Annuity cents against an independent exact reference written here in decimal and fractions.

The reference follows the rules stated in DESIGN.md ("Money and rounding")
and the module docstrings of amort.annuity and amort.annuity_accumulation,
but computes everything its own way: the first payment or deposit from the
plain sum of discount factors in fractions (no closed form), each rounding
with Python's decimal module (ROUND_HALF_UP, ROUND_HALF_EVEN, ROUND_UP,
ROUND_DOWN), and the schedule by a plain loop over Decimal amounts.
"""

from __future__ import annotations

import random
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal
from fractions import Fraction

import pytest

from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation

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
