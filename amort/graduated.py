"""Graduated payments: a first payment that grows geometrically or arithmetically.

After ``m`` interest-only periods (the balance stays at ``B_0``), the
amortising period ``k`` pays ``P_1 g^s`` (geometric, ``g = 1 + growth``) or
``P_1 + s h`` (arithmetic, step ``h``) with ``s = floor((k - m - 1) / e)``,
the number of whole growth steps of ``e`` periods before it. From the
variable-coefficient closed form (DESIGN.md) with ``T_k = (1 + i_{k+1}) ...
(1 + i_N)`` (so that ``v_k / v_N = T_k``):

    B_N = B_0 T_m - sum_{k>m} P_k T_k = F
    P_1 = (B_0 T_m - F - sum_{k>m} c_k T_k) / sum_{k>m} g_k T_k

with ``g_k = g^s`` (``c_k = 0``) geometric, or ``g_k = 1``, ``c_k = s h``
arithmetic. When ``g`` equals the growth factor ``1 + i`` of every period
the geometric sum is ``N a^(N-1)`` times a constant: the resonance case of
DESIGN.md, which this sum needs no special form for.

Each later payment is the rounded first payment grown exactly and rounded
again (``round(P_1 g^s)``; ``P_1 + s h`` is already whole cents), so every
payment can be recomputed from the first; the last payment takes what is
left, as in every schedule.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from amort.exact import cents_if_clear
from amort.money import Rounding, round_fraction

# Up to this many periods the first payment is computed exactly every time.
_EXACT_UP_TO = 1_000


def _steps(periods: int, interest_only: int, every: int) -> list[int]:
    """Return ``s`` for each amortising period ``k = m + 1 .. N``."""
    return [(k - interest_only - 1) // every for k in range(interest_only + 1, periods + 1)]


def first_payment_fraction(
    owed_cents: int,
    rates: list[Fraction],
    *,
    interest_only: int,
    every: int,
    growth: Fraction | None,
    step_cents: int | None,
    balloon_cents: int = 0,
) -> Fraction:
    """Return the exact first amortising payment ``P_1`` in cents (module docstring).

    >>> p1 = first_payment_fraction(100_000, [Fraction(0)] * 4, interest_only=0, every=2,
    ...                             growth=None, step_cents=1_000)
    >>> p1, p1 + p1 + (p1 + 1_000) + (p1 + 1_000)
    (Fraction(24500, 1), Fraction(100000, 1))
    """
    tails = [Fraction(1)]
    for rate in reversed(rates):
        tails.append(tails[-1] * (1 + rate))
    tails.reverse()  # tails[k] = T_k for k = 0..N
    steps = _steps(len(rates), interest_only, every)
    ks = range(interest_only + 1, len(rates) + 1)
    g = Fraction(1) if growth is None else 1 + growth
    h = Fraction(step_cents or 0)
    weights = sum((g**s * tails[k] for s, k in zip(steps, ks, strict=True)), Fraction(0))
    extra = sum((s * h * tails[k] for s, k in zip(steps, ks, strict=True)), Fraction(0))
    return (owed_cents * tails[interest_only] - balloon_cents - extra) / weights


def first_payment_cents(
    owed_cents: int,
    rates: list[Fraction],
    *,
    interest_only: int,
    every: int,
    growth: Fraction | None,
    step_cents: int | None,
    balloon_cents: int,
    mode: Rounding,
) -> int:
    """Return ``P_1`` rounded to the cent under ``mode``, exactly.

    Terms up to 1,000 periods are computed in exact fractions; longer ones by
    float64 unless the value lies near a rounding boundary.
    """
    if len(rates) > _EXACT_UP_TO:
        approx = _first_payment_float(
            owed_cents,
            rates,
            interest_only=interest_only,
            every=every,
            growth=growth,
            step_cents=step_cents,
            balloon_cents=balloon_cents,
        )
        cents = cents_if_clear(approx, mode)
        if cents is not None:
            return cents
    exact = first_payment_fraction(
        owed_cents,
        rates,
        interest_only=interest_only,
        every=every,
        growth=growth,
        step_cents=step_cents,
        balloon_cents=balloon_cents,
    )
    return round_fraction(exact, mode)


def _first_payment_float(
    owed_cents: int,
    rates: list[Fraction],
    *,
    interest_only: int,
    every: int,
    growth: Fraction | None,
    step_cents: int | None,
    balloon_cents: int,
) -> float:
    logs = np.log1p(np.asarray([float(r) for r in rates], dtype=np.longdouble))
    # log T_k = sum_{j>k} log(1 + i_j), for k = 0..N
    log_tails = np.concatenate([np.cumsum(logs[::-1])[::-1], [0.0]])
    steps = np.asarray(_steps(len(rates), interest_only, every), dtype=np.longdouble)
    tails = np.exp(log_tails[interest_only + 1 :])
    g = 1.0 if growth is None else 1.0 + float(growth)
    weights = np.sum(np.exp(steps * np.log(np.longdouble(g))) * tails)
    extra = np.sum(steps * float(step_cents or 0) * tails)
    value = (owed_cents * np.exp(log_tails[interest_only]) - balloon_cents - extra) / weights
    return float(value)


def payment_path(
    first_cents: int,
    periods: int,
    *,
    interest_only: int,
    every: int,
    growth: Fraction | None,
    step_cents: int | None,
    mode: Rounding,
) -> list[int]:
    """Return each period's scheduled payment in cents (0 in interest-only periods).

    >>> payment_path(10_000, 5, interest_only=1, every=2, growth=Fraction(1, 10),
    ...              step_cents=None, mode=Rounding.HALF_UP)
    [0, 10000, 10000, 11000, 11000]
    """
    out = [0] * interest_only
    g = None if growth is None else 1 + growth
    for s in _steps(periods, interest_only, every):
        if g is not None:
            out.append(round_fraction(first_cents * g**s, mode))
        else:
            out.append(first_cents + s * (step_cents or 0))
    return out


def weighted_payment_fraction(
    owed_cents: int,
    rates: list[Fraction],
    multipliers: list[int],
    balloon_cents: int = 0,
) -> Fraction:
    """Return the exact level payment, in cents, of a loan that pays only in some periods.

    Period k pays ``m_k P`` (``m_k`` 1 in a paying period, 0 in a skipped one,
    whose interest then adds to the balance): ``P = (B_0 T_0 - F) / sum m_k T_k``.

    >>> weighted_payment_fraction(100_000, [Fraction(0)] * 4, [1, 0, 1, 1])
    Fraction(100000, 3)
    """
    tails = [Fraction(1)]
    for rate in reversed(rates):
        tails.append(tails[-1] * (1 + rate))
    tails.reverse()
    weights = sum((m * tails[k] for k, m in enumerate(multipliers, start=1)), Fraction(0))
    return (owed_cents * tails[0] - balloon_cents) / weights
