"""Closed forms of the balance recurrence ``B_k = a B_{k-1} - P`` (float64, vectorised).

Every function here takes numpy arrays (or scalars) that broadcast together,
one element a loan, and returns float64 arrays. The periodic rate ``i`` is a
decimal fraction per period (0.005 = 0.5 % a period), ``a = 1 + i`` the growth
factor, ``n`` or ``N`` a number of periods, money in currency units.

Payments in arrears (end of period, annuity-immediate) follow
``B_k = a B_{k-1} - P``; payments in advance (annuity-due) follow
``B_k = a (B_{k-1} - P)``, which is the arrears recurrence with the payment
``a P``. Solving the first-order linear recurrence (homogeneous part ``a^k B_0``,
particular part a geometric sum) gives::

    B_n = a^n B_0 - P (a^n - 1) / i            balance after n periods
    P   = (B_0 - F v^N) / a_N,  a_N = (1 - v^N) / i,  v = 1 / a
    N   = log((P - i F) / (P - i B_0)) / log(1 + i)

Numerics: ``a^n - 1`` and ``1 - v^n`` are never formed directly. With
``L = log1p(i)`` they are ``expm1(n L)`` and ``-expm1(-n L)``, exact to a few
ulps even at ``i = 1e-12``; at ``i = 0`` each formula takes its limit
(``a_N = N``, ``P = (B_0 - F) / N``). Nothing here validates: impossible
questions give NaN or inf; :mod:`amort.solve` checks and explains.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
ArrayLike = npt.ArrayLike

# Below this |n i| the series of a_n and s_n is used for the derivative only.
_SERIES_LIMIT = 1e-5


def _f(x: ArrayLike) -> FloatArray:
    return np.asarray(x, dtype=np.float64)


def _safe_div_rate(numerator: FloatArray, i: FloatArray, limit: FloatArray) -> FloatArray:
    """Return numerator / i, or ``limit`` where i == 0 (both broadcast)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        out = numerator / i
    return np.where(i == 0, limit, out)


def growth(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``(1 + i)^n`` computed as ``exp(n log1p(i))``.

    >>> round(float(growth(0.05, 10)), 12)
    1.628894626777
    """
    return np.exp(_f(n) * np.log1p(_f(i)))


def discount(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``v^n = (1 + i)^-n``."""
    return np.exp(-_f(n) * np.log1p(_f(i)))


def annuity_factor(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``a_n = (1 - v^n) / i``, the present value of n unit payments in arrears.

    Limit ``n`` at ``i = 0``.

    >>> round(float(annuity_factor(0.05, 10)), 9)
    7.721734929
    """
    i, n = np.broadcast_arrays(_f(i), _f(n))
    return _safe_div_rate(-np.expm1(-n * np.log1p(i)), i, n)


def accumulation_factor(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``s_n = ((1 + i)^n - 1) / i``, the value at n of n unit payments in arrears.

    Limit ``n`` at ``i = 0``.

    >>> round(float(accumulation_factor(0.05, 10)), 8)
    12.57789254
    """
    i, n = np.broadcast_arrays(_f(i), _f(n))
    return _safe_div_rate(np.expm1(n * np.log1p(i)), i, n)


def _timing_factor(i: FloatArray, advance: ArrayLike) -> FloatArray:
    """Return ``1 + i`` where payments are in advance, else 1."""
    return np.where(np.asarray(advance, dtype=bool), 1.0 + i, 1.0)


def payment(
    principal: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the exact level payment ``P = (B_0 - F v^N) / a_N`` (divided by ``1+i`` in advance).

    Written as ``(B_0 - F e^{-N L}) i / -expm1(-N L)`` so the factor is
    accurate at every rate; at ``i = 0`` it is ``(B_0 - F) / N``.

    >>> round(float(payment(100_000, 0.005, 360)), 9)
    599.550525153
    """
    b0, i, n, f = np.broadcast_arrays(_f(principal), _f(rate), _f(periods), _f(balloon))
    log_a = np.log1p(i)
    present = b0 - f * np.exp(-n * log_a)
    per_unit = _safe_div_rate(-np.expm1(-n * log_a), i, n)  # a_N
    with np.errstate(divide="ignore", invalid="ignore"):
        level = present / per_unit
    return level / _timing_factor(i, advance)


def principal(
    payment: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the principal a level payment repays: ``B_0 = P a_N (x (1+i) in advance) + F v^N``.

    >>> round(float(principal(599.550525153, 0.005, 360)), 4)
    100000.0
    """
    p, i, n, f = np.broadcast_arrays(_f(payment), _f(rate), _f(periods), _f(balloon))
    return p * _timing_factor(i, advance) * annuity_factor(i, n) + f * discount(i, n)


def balance(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    k: ArrayLike,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the balance after k level payments: ``B_k = B_0 + (i B_0 - P') s_k``.

    ``P' = P`` in arrears and ``(1 + i) P`` in advance. This is
    ``a^k B_0 - P' s_k`` rearranged so that at ``i = 0`` it is exactly
    ``B_0 - k P``. Near the end of a term the balance is a small difference
    of large terms; its error is relative to ``a^k B_0 + P' s_k``, not to
    ``B_k`` (the recurrence itself is that ill-conditioned there).

    >>> abs(round(float(balance(100_000, 0.005, 599.550525153, 360)), 4))
    0.0
    """
    b0, i, p, kk = np.broadcast_arrays(_f(principal), _f(rate), _f(payment), _f(k))
    p_eff = p * _timing_factor(i, advance)
    return b0 + (i * b0 - p_eff) * accumulation_factor(i, kk)


def balance_scale(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    k: ArrayLike,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return ``a^k B_0 + P' s_k``, the size of the terms whose difference is ``B_k``.

    Float errors of :func:`balance` are relative to this scale.
    """
    b0, i, p, kk = np.broadcast_arrays(_f(principal), _f(rate), _f(payment), _f(k))
    p_eff = p * _timing_factor(i, advance)
    return b0 * growth(i, kk) + p_eff * accumulation_factor(i, kk)


def periods(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the fractional number of payments that brings the balance to F.

    ``N = log1p(i (B_0 - F) / (P' - i B_0)) / log1p(i)``, from
    ``a^N = (P' - i F) / (P' - i B_0)``; ``(B_0 - F) / P'`` at ``i = 0``.
    Defined only when ``P' > i B_0`` (the payment covers the first period's
    interest); elsewhere the result is inf (the balance never falls to F).

    >>> round(float(periods(100_000, 0.005, 599.550525153)), 6)
    360.0
    """
    b0, i, p, f = np.broadcast_arrays(_f(principal), _f(rate), _f(payment), _f(balloon))
    p_eff = p * _timing_factor(i, advance)
    margin = p_eff - i * b0
    with np.errstate(divide="ignore", invalid="ignore"):
        general = np.log1p(i * (b0 - f) / margin) / np.log1p(i)
        flat = (b0 - f) / p_eff
    out = np.where(i == 0, flat, general)
    return np.where(margin > 0, out, np.inf)


def annuity_factor_derivative(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``d a_n / d i = (n v^{n+1} - a_n) / i``; ``-n (n+1) / 2`` at ``i = 0``.

    For small ``n i`` the first two terms of the series are used; the value
    steers Newton steps only, so it need not be exact to the last ulp.
    """
    i, n = np.broadcast_arrays(_f(i), _f(n))
    v_next = np.exp(-(n + 1) * np.log1p(i))
    with np.errstate(divide="ignore", invalid="ignore"):
        general = (n * v_next - annuity_factor(i, n)) / i
    series = -n * (n + 1) / 2 + n * (n + 1) * (n + 2) / 3 * i
    return np.where(np.abs(n * i) < _SERIES_LIMIT, series, general)


def present_value(
    rate: ArrayLike,
    payment: ArrayLike,
    periods: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the value at time 0 of N level payments and a balloon at N (same as :func:`principal`)."""
    return principal(payment, rate, periods, balloon, advance)


def present_value_derivative(
    rate: ArrayLike,
    payment: ArrayLike,
    periods: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return ``d PV / d i`` for :func:`present_value` (for Newton steps)."""
    i, p, n, f = np.broadcast_arrays(_f(rate), _f(payment), _f(periods), _f(balloon))
    adv = np.asarray(advance, dtype=bool)
    da = annuity_factor_derivative(i, n)
    d_arrears = p * da - f * n * discount(i, n + 1)
    d_advance = p * (annuity_factor(i, n) + (1 + i) * da) - f * n * discount(i, n + 1)
    return np.where(adv, d_advance, d_arrears)
