"""Closed forms of annuities with level, geometric or arithmetic payments (float64 and exact).

An annuity pays (or receives) ``n`` amounts at a periodic rate ``i``: the
amount of payment k (k = 1..n) is ``c_k = P_1 g^s + s h`` with
``s = floor((k - 1) / e)``, the number of whole growth steps of ``e``
payments before it (``g = 1 + growth`` geometric, ``h`` the step
arithmetic; level is ``g = 1, h = 0``). Its value at time 0 is

    PV = P_1 W + h S,      W = sum_k g^s w_k,      S = sum_k s w_k

with ``w_k = v^(d + k)`` in arrears and ``v^(d + k - 1)`` in advance
(annuity-due), ``v = 1 / (1 + i)`` and ``d`` periods of deferral before the
first payment period. With ``n = J e + r``, ``x = v^e`` and ``y = g x``,
grouping the payments in blocks of ``e`` gives, in arrears and undeferred,

    W = a_e (1 - y^J) / (1 - y) + y^J a_r        (a_e J + a_r when y = 1: resonance)
    S = a_e (Ia)_{J-1}(I) + J x^J a_r            I = (1 + i)^e - 1, the rate of a block

where ``a_m = (1 - v^m) / i`` and ``(Ia)_m = sum_{j<=m} j x^j`` is the
increasing annuity at the block rate. For ``e = 1`` these are the textbook
forms: ``W = (1 - (g v)^n) / (1 + i - g)`` (``n v`` when ``g = 1 + i``),
and with ``P_1 = h = 1`` the payments 1, 2, ..., n are worth
``(Ia)_n = (a-due_n - n v^n) / i``. Deferral multiplies by ``v^d``, advance
by ``1 + i``. A perpetuity (``n`` infinite) is worth ``W = a_e / (1 - y)``,
finite only when ``y < 1`` (the growth of a step below the block rate), and
``S = a_e (1 + I) / I^2``, finite when ``i > 0``. The accumulated value at
``N = d + n`` is ``PV (1 + i)^N``.

Numerics: every ``1 - t^m`` is an ``expm1`` of a logarithm held in long
double, and the increasing annuity is ``(m + 1) a_m - (Da)_m`` for
``m log(1 + I) <= 1``, with ``(Da)_m = (m - a_m) / I`` formed as
``(m lambda(I) + psi(m L) / I) / I`` from the cancellation-free series of
:mod:`amort.recurrence`, and ``(a-due_m - m x^m) / I`` beyond, so neither
form cancels. The exact versions (:func:`exact_factors`) evaluate the same
closed forms in :class:`~fractions.Fraction` with integer powers, which
decides a cent whose float value lies near a rounding boundary.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction
from typing import NamedTuple

import numpy as np
import numpy.typing as npt

from amort import exact, recurrence
from amort.money import Rounding, round_fraction
from amort.recurrence import _lambda, _psi  # the cancellation-free series of (Da)

FloatArray = npt.NDArray[np.float64]
ArrayLike = npt.ArrayLike
LongArray = npt.NDArray[np.longdouble]

__all__ = [
    "Factors",
    "Stream",
    "accumulated_value",
    "exact_factors",
    "factors",
    "first_deposit_cents",
    "first_payment_cents",
    "fund_cents",
    "present_value",
    "root",
]


class Factors(NamedTuple):
    """The value at time 0 of one unit of first payment (``weight``) and of one unit of step."""

    weight: FloatArray
    step_weight: FloatArray


def _ld(x: ArrayLike) -> LongArray:
    return np.asarray(x, dtype=np.longdouble)


def _increasing(big_i: LongArray, log_block: LongArray, m: LongArray) -> LongArray:
    """Return ``(Ia)_m = sum_{j<=m} j x^j`` at the block rate ``I`` (``x = 1 / (1 + I)``).

    ``log_block = log(1 + I)``; ``m`` may be 0 (or -1, an empty sum).
    """
    m_pos = np.maximum(m, 0)
    ml = m_pos * log_block
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        a_m = np.where(big_i == 0, m_pos, -np.expm1(-ml) / big_i)
        # Near: (m + 1) a_m - (Da)_m, (Da)_m = (m lambda(I) + psi(m L) / I) / I, no cancellation.
        i64 = np.asarray(big_i, dtype=np.float64)
        lam = _ld(_lambda(i64))
        psi = _ld(_psi(np.asarray(ml, dtype=np.float64)))
        da = (m_pos * lam + psi / big_i) / big_i
        near = (m_pos + 1) * a_m - da
        # Far: (a-due_m - m x^m) / I, both terms well apart.
        far = ((1 + big_i) * a_m - m_pos * np.exp(-ml)) / big_i
    out = np.where(ml <= 1, near, far)
    return np.where(big_i == 0, m_pos * (m_pos + 1) / 2, np.where(m_pos == 0, 0, out))


def factors(
    rate: ArrayLike,
    payments: ArrayLike,
    *,
    every: ArrayLike = 1,
    growth: ArrayLike = 0.0,
    defer: ArrayLike = 0,
    advance: ArrayLike = False,
) -> Factors:
    """Return ``(W, S)``: the time-0 value of a unit first payment and of a unit step.

    ``rate``: periodic rate, decimal fraction; ``payments``: how many
    (``np.inf`` for a perpetuity); ``every``: payments between growth steps;
    ``growth``: geometric growth of a step (0.02 = 2 %); ``defer``: periods
    before the first payment period; ``advance``: payments at the start of
    each period. Arrays broadcast, one element an annuity; a perpetuity that
    does not converge has an infinite weight. Formulas: module docstring.

    >>> w, s = factors(0.05, 10)
    >>> round(float(w), 9), round(float(w + s), 7)  # a(10) and (Ia)(10) at 5 %
    (7.721734929, 39.3737828)
    """
    i, n, e, grow, d, adv = np.broadcast_arrays(
        np.asarray(rate, dtype=np.float64),
        np.asarray(payments, dtype=np.float64),
        np.asarray(every, dtype=np.float64),
        np.asarray(growth, dtype=np.float64),
        np.asarray(defer, dtype=np.float64),
        np.asarray(advance, dtype=bool),
    )
    log_a = np.log1p(_ld(i))
    log_y = np.log1p(_ld(grow)) - e * log_a  # log(g v^e)
    log_block = e * log_a  # log(1 + I)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        big_i = np.expm1(log_block)
        a_e = _ld(recurrence.annuity_factor(i, e))
        perpetual = np.isinf(n)
        blocks = np.where(perpetual, 0.0, np.floor(n / e))
        rest = np.where(perpetual, 0.0, n - blocks * e)
        a_r = _ld(recurrence.annuity_factor(i, rest))
        ratio = np.where(log_y == 0, blocks, np.expm1(blocks * log_y) / np.expm1(log_y))
        y_j = np.exp(blocks * log_y)
        x_j = np.exp(-blocks * log_block)
        weight = a_e * ratio + y_j * a_r
        step = a_e * _increasing(big_i, log_block, blocks - 1) + blocks * x_j * a_r
        # Perpetuities: a_e / (1 - y) and a_e (1 + I) / I^2, where they converge.
        weight = np.where(perpetual, np.where(log_y < 0, a_e / -np.expm1(log_y), np.inf), weight)
        step = np.where(
            perpetual, np.where(big_i > 0, a_e * (1 + big_i) / (big_i * big_i), np.inf), step
        )
        scale = np.exp(-d * log_a) * np.where(adv, 1 + _ld(i), 1)
        return Factors(
            np.asarray(weight * scale, dtype=np.float64),
            np.asarray(step * scale, dtype=np.float64),
        )


def present_value(
    rate: ArrayLike,
    payments: ArrayLike,
    first: ArrayLike = 1.0,
    *,
    every: ArrayLike = 1,
    growth: ArrayLike = 0.0,
    step: ArrayLike = 0.0,
    defer: ArrayLike = 0,
    advance: ArrayLike = False,
    residual: ArrayLike = 0.0,
) -> FloatArray:
    """Return the value at time 0 of the payments and of a residual at the end.

    ``PV = P_1 W + h S + R v^(d + n)`` (money in currency units; see :func:`factors`).

    >>> round(float(present_value(0.05, 10, 100)), 9)  # OASIS ODF PV(0.05; 10; -100)
    772.173492918
    >>> round(float(present_value(0.05, 10, advance=True)), 9)  # a-due(10) at 5 %
    8.107821676
    """
    w, s = factors(rate, payments, every=every, growth=growth, defer=defer, advance=advance)
    with np.errstate(invalid="ignore", over="ignore"):
        n = np.asarray(payments, dtype=np.float64) + np.asarray(defer, dtype=np.float64)
        res = np.asarray(residual, dtype=np.float64)
        tail = np.where(res == 0, 0.0, res * recurrence.discount(rate, n))
        return np.asarray(
            np.asarray(first) * w
            + np.where(np.asarray(step) == 0, 0.0, np.asarray(step) * s)
            + tail,
            dtype=np.float64,
        )


def accumulated_value(
    rate: ArrayLike,
    deposits: ArrayLike,
    first: ArrayLike = 1.0,
    *,
    every: ArrayLike = 1,
    growth: ArrayLike = 0.0,
    step: ArrayLike = 0.0,
    advance: ArrayLike = False,
    balance: ArrayLike = 0.0,
) -> FloatArray:
    """Return the value after ``n`` periods of a starting balance and ``n`` deposits.

    ``FV = (B_0 + D_1 W + h S) (1 + i)^n``: ``s_n`` for unit deposits in
    arrears, ``s-due_n`` in advance.

    >>> round(float(accumulated_value(0.05, 10)), 8)  # s(10) at 5 %
    12.57789254
    """
    w, s = factors(rate, deposits, every=every, growth=growth, advance=advance)
    with np.errstate(invalid="ignore", over="ignore"):
        grown = recurrence.growth(rate, deposits)
        value = np.asarray(balance) + np.asarray(first) * w
        value = value + np.where(np.asarray(step) == 0, 0.0, np.asarray(step) * s)
        return np.asarray(value * grown, dtype=np.float64)


# -- exact rational forms -----------------------------------------------------------------------


def exact_factors(
    rate: Fraction,
    payments: int | None,
    *,
    every: int = 1,
    growth: Fraction | None = None,
    defer: int = 0,
    advance: bool = False,
) -> tuple[Fraction, Fraction]:
    """Return ``(W, S)`` of :func:`factors` exactly; ``payments=None`` is a perpetuity.

    The closed forms of the module docstring in fractions with integer
    powers (no sum over the periods). A perpetuity must converge
    (``g v^e < 1`` and, for ``S``, ``i > 0``); the caller checks.

    >>> w, s = exact_factors(Fraction(1, 10), 2, growth=Fraction(1, 10))  # resonance: n v
    >>> w, s
    (Fraction(20, 11), Fraction(100, 121))
    """
    v = 1 / (1 + rate)

    def annuity(m: int) -> Fraction:
        return Fraction(m) if rate == 0 else (1 - v**m) / rate

    g = Fraction(1) if growth is None else 1 + growth
    x = v**every
    y = g * x
    a_e = annuity(every)
    if payments is None:
        weight = a_e / (1 - y)
        step = a_e * x / (1 - x) ** 2 if x != 1 else Fraction(0)
    else:
        blocks, rest = divmod(payments, every)
        ratio = Fraction(blocks) if y == 1 else (1 - y**blocks) / (1 - y)
        weight = a_e * ratio + y**blocks * annuity(rest)
        m = blocks - 1
        if m <= 0:
            increasing = Fraction(0)
        elif x == 1:
            increasing = Fraction(m * (m + 1), 2)
        else:
            increasing = x * (1 - (m + 1) * x**m + m * x ** (m + 1)) / (1 - x) ** 2
        step = a_e * increasing + blocks * x**blocks * annuity(rest)
    scale = v**defer * ((1 + rate) if advance else 1)
    return weight * scale, step * scale


class Stream(NamedTuple):
    """A stream of payments or deposits: rate, how many, growth, deferral, timing (exact)."""

    rate: Fraction
    payments: int | None  # None: a perpetuity
    every: int = 1
    growth: Fraction | None = None
    step_cents: int = 0
    defer: int = 0
    advance: bool = False

    def float_factors(self) -> Factors:
        return factors(
            float(self.rate),
            np.inf if self.payments is None else self.payments,
            every=self.every,
            growth=0.0 if self.growth is None else float(self.growth),
            defer=self.defer,
            advance=self.advance,
        )

    def exact_factors(self) -> tuple[Fraction, Fraction]:
        return exact_factors(
            self.rate,
            self.payments,
            every=self.every,
            growth=self.growth,
            defer=self.defer,
            advance=self.advance,
        )

    @property
    def level(self) -> bool:
        return self.growth is None and self.step_cents == 0

    @property
    def horizon(self) -> int | None:
        """Periods from time 0 to the end of the last payment period (None: never)."""
        return None if self.payments is None else self.defer + self.payments


def _one(value: int, big: bool) -> npt.NDArray[np.int64]:
    return np.array([value], dtype=object if big else np.int64)


#: Relative error allowed for the float forms when they decide a cent: ten times the
#: 1e-13 they are held to against mpmath (tests/reference/test_annuity_tables.py).
_TRUST = 1e-12


def _rounded(
    approx: float, scale: float, exact_value: Callable[[], Fraction], mode: Rounding
) -> int:
    """Round ``approx`` (cents) under ``mode``; near a boundary, round the exact value.

    ``scale`` is the size of the terms whose combination ``approx`` is (cents):
    the float value errs by at most ``_TRUST x scale``, so it decides the cent
    when it lies farther than that from every rounding boundary. A relative
    margin alone (as :func:`amort.exact.cents_if_clear`'s) would send every
    amount above a few million to the exact fractions, which for a growing
    stream of many payments are slow (their powers have 10^5 digits).
    """
    if math.isfinite(approx) and math.isfinite(scale):
        margin = _TRUST * max(scale, abs(approx), 1.0)
        if mode.half_unit:
            near = abs(approx - math.floor(approx) - 0.5) <= margin
            cents = math.floor(approx + 0.5)
        else:
            near = abs(approx - round(approx)) <= margin
            cents = math.ceil(approx) if mode is Rounding.UP else math.floor(approx)
        if not near:
            # The half modes differ only on a tie, and a tie is near by construction.
            return int(cents)
    return round_fraction(exact_value(), mode)


def first_payment_cents(
    fund_cents: int, residual_cents: int, stream: Stream, mode: Rounding
) -> int:
    """Return the first payment that pays out the fund down to the residual, in cents.

    ``P_1 = (V_0 - R v^N - h S) / W`` rounded under ``mode``; the float form
    decides the cent unless it lies near a rounding boundary, then the exact
    fractions do, so the cent always equals exact arithmetic. An undeferred
    level payout is the loan's own level payment (:mod:`amort.exact`) with
    the fund as principal and the residual as balloon.

    >>> first_payment_cents(10_000_000, 0, Stream(Fraction(1, 20), 10), Rounding.HALF_UP)
    1295046
    """
    if stream.level and stream.defer == 0 and stream.payments is not None:
        big = max(stream.rate.numerator, stream.rate.denominator) >= 2**62
        return int(
            exact.level_payment_cents(
                _one(fund_cents, big), _one(stream.rate.numerator, big),
                _one(stream.rate.denominator, big), _one(stream.payments, big),
                _one(residual_cents, big), np.array([stream.advance]), mode,
            )[0]
        )  # fmt: skip
    w, s = stream.float_factors()
    horizon = stream.horizon
    tail = (
        0.0
        if horizon is None
        else residual_cents * float(recurrence.discount(float(stream.rate), horizon))
    )
    stepped = stream.step_cents * float(s) if stream.step_cents else 0.0
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        approx = (fund_cents - tail - stepped) / float(w)
        scale = (fund_cents + tail + abs(stepped)) / float(w)

    def exact_value() -> Fraction:
        w_x, s_x = stream.exact_factors()
        v_n = 0 if horizon is None else (1 / (1 + stream.rate)) ** horizon
        return (fund_cents - residual_cents * v_n - stream.step_cents * s_x) / w_x

    return _rounded(float(approx), float(scale), exact_value, mode)


def fund_cents(payment_cents: int, residual_cents: int, stream: Stream) -> int:
    """Return the fund that pays the path and leaves the residual, rounded up to the cent.

    ``V_0 = P_1 W + h S + R v^N``; rounded up so that the fund suffices.

    >>> fund_cents(1_295_046, 0, Stream(Fraction(1, 20), 10))  # 100,000.0193... up
    10000002
    """
    w, s = stream.float_factors()
    horizon = stream.horizon
    tail = (
        0.0
        if horizon is None
        else residual_cents * float(recurrence.discount(float(stream.rate), horizon))
    )
    approx = payment_cents * float(w) + stream.step_cents * float(s) + tail
    scale = payment_cents * float(w) + abs(stream.step_cents * float(s)) + tail

    def exact_value() -> Fraction:
        w_x, s_x = stream.exact_factors()
        v_n = 0 if horizon is None else (1 / (1 + stream.rate)) ** horizon
        return payment_cents * w_x + stream.step_cents * s_x + residual_cents * v_n

    return _rounded(approx, scale, exact_value, Rounding.UP)


def first_deposit_cents(
    target_cents: int, balance_cents: int, stream: Stream, mode: Rounding
) -> int:
    """Return the first deposit that, with the starting balance, accumulates to the target.

    ``D_1 = (T v^n - B_0 - h S) / W`` rounded under ``mode`` (exact near a boundary).

    >>> first_deposit_cents(1_257_789, 0, Stream(Fraction(1, 20), 10), Rounding.HALF_UP)
    100000
    """
    assert stream.payments is not None and stream.defer == 0
    w, s = stream.float_factors()
    v_n = float(recurrence.discount(float(stream.rate), stream.payments))
    approx = (target_cents * v_n - balance_cents - stream.step_cents * float(s)) / float(w)
    scale = (target_cents * v_n + balance_cents + abs(stream.step_cents * float(s))) / float(w)

    payments = stream.payments

    def exact_value() -> Fraction:
        w_x, s_x = stream.exact_factors()
        v_x = (1 / (1 + stream.rate)) ** payments
        return (target_cents * v_x - balance_cents - stream.step_cents * s_x) / w_x

    return _rounded(approx, scale, exact_value, mode)


# -- the rate search ----------------------------------------------------------------------------


def root(
    gap: Callable[[FloatArray], FloatArray],
    low: ArrayLike,
    high: ArrayLike,
    *,
    increasing: bool,
) -> FloatArray:
    """Return the root in ``[low, high]`` of a monotone ``gap`` (vectorised), to a few ulps.

    ``gap(low)`` and ``gap(high)`` must have opposite signs (the caller
    checks and explains when they do not). False position with the Illinois
    modification (Dowell and Jarratt, 1971), falling back to bisection (in
    the geometric mean when the bracket spans three decades) whenever a step
    leaves the bracket or stalls; the bracket shrinks every iteration, so it
    converges.

    >>> float(root(lambda i: 100 / i - 2_000, 1e-9, 1.0, increasing=False))
    0.05
    """
    lo = np.array(low, dtype=np.float64, copy=True)
    hi = np.array(high, dtype=np.float64, copy=True)
    lo, hi = np.broadcast_arrays(lo, hi)
    lo, hi = lo.copy(), hi.copy()
    sign = 1.0 if increasing else -1.0
    g_lo = sign * gap(lo)  # < 0
    g_hi = sign * gap(hi)  # > 0
    eps = np.finfo(float).eps
    x = hi.copy()
    done = (g_lo >= 0) | (g_hi <= 0)
    x = np.where(g_lo >= 0, lo, x)
    side = np.zeros(lo.shape, dtype=np.int64)
    for _ in range(400):
        if done.all():
            break
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            guess = hi - g_hi * (hi - lo) / (g_hi - g_lo)
        wide = (lo > 0) & (hi > 1e3 * lo)
        middle = np.where(wide, np.sqrt(lo * hi), 0.5 * (lo + hi))
        inside = np.isfinite(guess) & (guess > lo) & (guess < hi)
        x_new = np.where(inside & ~wide, guess, middle)
        g_new = sign * gap(x_new)
        exact_hit = g_new == 0
        right = g_new > 0
        # Illinois: halve the stale end's value when the same end is kept twice.
        g_lo = np.where(right & (side == 1), 0.5 * g_lo, g_lo)
        g_hi = np.where(~right & (side == -1), 0.5 * g_hi, g_hi)
        hi = np.where(right & ~done, x_new, hi)
        g_hi = np.where(right & ~done, g_new, g_hi)
        lo = np.where(~right & ~done, x_new, lo)
        g_lo = np.where(~right & ~done, g_new, g_lo)
        side = np.where(right, 1, -1)
        x = np.where(done, x, x_new)
        done |= exact_hit | (hi - lo <= 4 * eps * hi)
    else:  # pragma: no cover - the bracket halves at least every other step
        raise ArithmeticError("the rate search did not converge")
    return x
