"""Exact rational closed forms, for the cents that must not depend on float luck.

The level payment is rounded to the cent from its exact value. The float
closed form (:mod:`amort.recurrence`) is right to about 1e-15 relative, which
decides the cent unless the exact value lies within a hair of a rounding
boundary (a tie such as 12.5 cents, or a whole cent under ``up``/``down``).
:func:`level_payment_cents` uses the float value where it is safely away from
every boundary and recomputes the rest here, in Python integers, so the result
always equals exact decimal arithmetic.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import numpy.typing as npt

from amort import recurrence, variable
from amort.money import Rounding, round_fraction, round_ratio

IntArray = npt.NDArray[np.int64]

# Relative distance from a rounding boundary below which the float value is
# not trusted to decide the cent; the float closed form errs by ~1e-15.
_TRUST = 1e-9


def level_payment_fraction(
    principal_cents: int,
    rate: Fraction,
    periods: int,
    balloon_cents: int = 0,
    advance: bool = False,
) -> Fraction:
    """Return the exact level payment, in cents, as a fraction.

    With ``i = p/q``, ``A = (q + p)^N`` and ``D = q^N``:
    ``P = (B_0 A - F D) p / (q (A - D))``, times ``q / (q + p)`` in advance;
    ``(B_0 - F) / N`` at ``i = 0``.

    >>> round(float(level_payment_fraction(10_000_000, Fraction(1, 200), 360)), 4)
    59955.0525
    """
    if rate == 0:
        return Fraction(principal_cents - balloon_cents, periods)
    p, q = rate.numerator, rate.denominator
    big_a = (q + p) ** periods
    big_d = q**periods
    value = Fraction((principal_cents * big_a - balloon_cents * big_d) * p, q * (big_a - big_d))
    if advance:
        value *= Fraction(q, q + p)
    return value


def level_payment_cents(
    principal_cents: IntArray,
    rate_num: IntArray,
    rate_den: IntArray,
    periods: IntArray,
    balloon_cents: IntArray,
    advance: npt.NDArray[np.bool_],
    mode: Rounding,
) -> IntArray:
    """Return each loan's level payment in whole cents, rounded from its exact value.

    Arrays are one element a loan; the periodic rate is ``rate_num / rate_den``.
    """
    b0 = principal_cents.astype(np.float64)
    i = rate_num.astype(np.float64) / rate_den.astype(np.float64)
    approx = recurrence.payment(b0, i, periods, balloon_cents.astype(np.float64), advance)
    if mode.half_unit:
        shifted = approx - 0.5
        boundary = np.floor(shifted) + 0.5
        near = np.abs(approx - boundary) <= _TRUST * np.maximum(1.0, approx)
        near |= np.abs(approx - (boundary + 1)) <= _TRUST * np.maximum(1.0, approx)
        cents = np.floor(approx + 0.5)
    else:
        nearest = np.round(approx)
        near = np.abs(approx - nearest) <= _TRUST * np.maximum(1.0, approx)
        cents = np.ceil(approx) if mode is Rounding.UP else np.floor(approx)
    near |= ~np.isfinite(approx)
    out = np.where(np.isfinite(cents), cents, 0).astype(np.int64)
    for index in np.flatnonzero(near):
        rate = Fraction(int(rate_num[index]), int(rate_den[index]))
        exact = level_payment_fraction(
            int(principal_cents[index]),
            rate,
            int(periods[index]),
            int(balloon_cents[index]),
            bool(advance[index]),
        )
        out[index] = round_fraction(exact, mode)
    return out


def cents_if_clear(approx: float, mode: Rounding) -> int | None:
    """Return ``approx`` (cents, float) rounded under ``mode``, or None when too near a boundary.

    The float value decides the cent only when it lies more than 1e-9
    (relative) from every rounding boundary; otherwise, or when it is not
    finite, the caller computes the exact fraction.

    >>> cents_if_clear(1234.2, Rounding.HALF_UP), cents_if_clear(12.5, Rounding.HALF_UP)
    (1234, None)
    """
    if not np.isfinite(approx):
        return None
    tolerance = _TRUST * max(1.0, abs(approx))
    if mode.half_unit:
        near = abs(approx - np.floor(approx) - 0.5) <= tolerance
        cents = int(np.floor(approx + 0.5))
    else:
        near = abs(approx - round(approx)) <= tolerance
        cents = int(np.ceil(approx)) if mode is Rounding.UP else int(np.floor(approx))
    return None if near else cents


def interest_cents(balance_cents: int, rate: Fraction, mode: Rounding) -> int:
    """Return ``balance x rate`` rounded to the cent (scalar reference of the engine's rule)."""
    return round_ratio(balance_cents * rate.numerator, rate.denominator, mode)


def level_payment_fraction_variable(
    principal_cents: int,
    rates: list[Fraction],
    balloon_cents: int = 0,
    advance: bool = False,
) -> Fraction:
    """Return the exact level payment, in cents, when period k earns ``rates[k-1]``.

    With ``T_k = (1 + i_{k+1}) ... (1 + i_N)`` (``T_N = 1``), multiplying
    ``P = (B_0 - F v_N) / sum w_k`` through by ``1 / v_N`` gives
    ``P = (B_0 T_0 - F) / sum_{k=1..N} T_k`` in arrears and
    ``/ sum_{k=0..N-1} T_k`` in advance.

    >>> level_payment_fraction_variable(10_000_000, [Fraction(1, 200)] * 360) == (
    ...     level_payment_fraction(10_000_000, Fraction(1, 200), 360))
    True
    """
    tails = [Fraction(1)]
    for rate in reversed(rates):
        tails.append(tails[-1] * (1 + rate))
    tails.reverse()  # tails[k] = T_k, k = 0..N
    weights = sum(tails[:-1], Fraction(0)) if advance else sum(tails[1:], Fraction(0))
    return (principal_cents * tails[0] - balloon_cents) / weights


def level_payment_cents_variable(
    principal_cents: int,
    rates: list[Fraction],
    balloon_cents: int,
    advance: bool,
    mode: Rounding,
) -> int:
    """Return the level payment in whole cents for per-period rates, rounded from its exact value.

    The float closed form (:func:`amort.variable.payment`) decides the cent
    unless it lies near a rounding boundary; then the exact fraction does.
    """
    floats = np.asarray([float(r) for r in rates], dtype=np.float64)[:, None]
    approx = float(variable.payment(principal_cents, floats, balloon_cents, advance)[0])
    cents = cents_if_clear(approx, mode)
    if cents is not None:
        return cents
    exact = level_payment_fraction_variable(principal_cents, rates, balloon_cents, advance)
    return round_fraction(exact, mode)
