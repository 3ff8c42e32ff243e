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
(``a_N = N``, ``P = (B_0 - F) / N``). In float64 the last bit of ``log1p(i)``, multiplied by
``n``, costs ``n L`` ulps of ``a^n``: under 1.5e-14 while ``|n L| <= 64``
(every ordinary loan), but 1.2e-13 relative at ``a^n = e^700``; there the
exponent is formed again in ``np.longdouble``, whose 64-bit significand on
x86-64 brings that under 1e-16 (on platforms whose long double is a plain
double the error stays at ``n L`` ulps). Where a result is a small difference of float
products (the margin ``P - i B_0`` of :func:`periods`, the excess
``N P + F - B_0`` of :func:`present_value_gap`) the products are split
exactly (Dekker's two-product) so the difference loses nothing. Nothing here
validates: impossible questions give NaN or inf; :mod:`amort.solve` checks
and explains.
"""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]
ArrayLike = npt.ArrayLike

# Below this |n i| the series of a_n and s_n is used for the derivative only.
_SERIES_LIMIT = 1e-5
# Veltkamp's splitting constant 2^27 + 1 (two 26-bit halves of a float64).
_SPLITTER = 134_217_729.0
# Below these the gap of the rate equation uses power series (see _lambda, _psi).
_LAMBDA_SERIES = 0.125
_PSI_SERIES = 0.5
# 1/k! for k = 20 down to 2: Horner's rule for psi(x) / x^2 = 1/2! - x/3! + x^2/4! - ...
_PSI_COEFFICIENTS = tuple(1.0 / math.factorial(k) for k in range(20, 1, -1))


def _f(x: ArrayLike) -> FloatArray:
    return np.asarray(x, dtype=np.float64)


def _exponent(i: ArrayLike, n: ArrayLike) -> npt.NDArray[np.longdouble]:
    """Return ``n log1p(i)`` in extended precision (``np.longdouble``)."""
    return np.asarray(n, dtype=np.longdouble) * np.log1p(np.asarray(i, dtype=np.longdouble))


# Below this |n log1p(i)| the float64 exponent is good to |x| * 2.2e-16 < 1.5e-14
# relative in exp(x); beyond it the exponent is formed again in long double.
_FLOAT_SAFE = 64.0


def _exp_of_exponent(
    i: ArrayLike, n: ArrayLike, *, sign: float, minus_one: bool, per_rate: bool
) -> FloatArray:
    """Return ``exp(sign n log1p(i))`` (``- 1`` with ``minus_one``, ``/ i`` with ``per_rate``).

    float64 where ``|n log1p(i)| <= 64`` (every ordinary loan: 360 months at
    10 % is 30); the rest again in ``np.longdouble``, where float64's
    exponent error would reach ~1e-13 (the module docstring).
    """
    ii, nn = np.broadcast_arrays(_f(i), _f(n))
    shape = ii.shape
    ii, nn = ii.ravel(), nn.ravel()
    fn = np.expm1 if minus_one else np.exp
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        x = sign * nn * np.log1p(ii)
        out = np.asarray(fn(x), dtype=np.float64)
        if per_rate:
            out = out / ii
        far = np.abs(x) > _FLOAT_SAFE
        if far.any():
            xl = sign * nn[far].astype(np.longdouble) * np.log1p(ii[far].astype(np.longdouble))
            value = fn(xl)
            if per_rate:
                value = value / ii[far].astype(np.longdouble)
            out[far] = _float(value)
    return out.reshape(shape)


def _float(x: ArrayLike) -> FloatArray:
    """Round extended values to float64 (beyond 1.8e308 to inf, without a warning)."""
    with np.errstate(over="ignore"):
        return np.asarray(x, dtype=np.float64)


def _two_product(a: FloatArray, b: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Return ``(p, e)`` with ``p = fl(a b)`` and ``p + e = a b`` exactly (Dekker, 1971)."""
    p = a * b
    c = _SPLITTER * a
    a_hi = c - (c - a)
    a_lo = a - a_hi
    c = _SPLITTER * b
    b_hi = c - (c - b)
    b_lo = b - b_hi
    e = ((a_hi * b_hi - p) + a_hi * b_lo + a_lo * b_hi) + a_lo * b_lo
    return p, e


def _two_sum(a: FloatArray, b: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Return ``(s, e)`` with ``s = fl(a + b)`` and ``s + e = a + b`` exactly (Knuth)."""
    s = a + b
    bb = s - a
    e = (a - (s - bb)) + (b - bb)
    return s, e


def growth(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``(1 + i)^n`` computed as ``exp(n log1p(i))``.

    >>> round(float(growth(0.05, 10)), 12)
    1.628894626777
    """
    return _exp_of_exponent(i, n, sign=1.0, minus_one=False, per_rate=False)


def discount(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``v^n = (1 + i)^-n``, computed as ``exp(-n log1p(i))``.

    >>> round(float(discount(0.05, 10)), 12)
    0.613913253541
    """
    return _exp_of_exponent(i, n, sign=-1.0, minus_one=False, per_rate=False)


def annuity_factor(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``a_n = (1 - v^n) / i``, the present value of n unit payments in arrears.

    Limit ``n`` at ``i = 0``.

    >>> round(float(annuity_factor(0.05, 10)), 9)
    7.721734929
    """
    i, n = np.broadcast_arrays(_f(i), _f(n))
    factor = -_exp_of_exponent(i, n, sign=-1.0, minus_one=True, per_rate=True)
    return np.where(i == 0, n, factor)


def accumulation_factor(i: ArrayLike, n: ArrayLike) -> FloatArray:
    """Return ``s_n = ((1 + i)^n - 1) / i``, the value at n of n unit payments in arrears.

    Limit ``n`` at ``i = 0``.

    >>> round(float(accumulation_factor(0.05, 10)), 8)
    12.57789254
    """
    i, n = np.broadcast_arrays(_f(i), _f(n))
    factor = _exp_of_exponent(i, n, sign=1.0, minus_one=True, per_rate=True)
    return np.where(i == 0, n, factor)


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

    For a balloon up to the principal it is evaluated in the sinking-fund
    form ``P = (B_0 - F) / a_N + i F``, two non-negative terms (the direct
    form loses ``1 / (N i)`` of its digits to ``B_0 - F v^N`` when ``F`` is
    near ``B_0`` and ``N i`` is small); for a larger balloon the direct form
    is used where ``v^N < 1/2``, which keeps the error within the problem's
    own sensitivity to ``F``. At ``i = 0`` it is ``(B_0 - F) / N``.

    >>> round(float(payment(100_000, 0.005, 360)), 9)
    599.550525153
    """
    b0, i, n, f = np.broadcast_arrays(_f(principal), _f(rate), _f(periods), _f(balloon))
    v_n = discount(i, n)
    per_unit = annuity_factor(i, n)  # a_N
    with np.errstate(divide="ignore", invalid="ignore"):
        sinking = (b0 - f) / per_unit + i * f
        direct = (b0 - f * v_n) / per_unit
    level = np.where((f <= b0) | (v_n >= 0.5), sinking, direct)
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
    ``B_k`` (the recurrence itself is that ill-conditioned there). The
    margin ``P' - i B_0`` is formed from exact products, as in :func:`periods`.

    >>> abs(round(float(balance(100_000, 0.005, 599.550525153, 360)), 4))
    0.0
    """
    b0, i, p, kk = np.broadcast_arrays(_f(principal), _f(rate), _f(payment), _f(k))
    adv = np.broadcast_to(np.asarray(advance, dtype=bool), b0.shape)
    margin = _margin(b0, i, p, adv)  # P' - i B_0, from exact products
    with np.errstate(over="ignore", invalid="ignore"):
        # Interest-only (margin 0) stays at B_0 even where s_k overflows.
        return np.where(margin == 0, b0, b0 - margin * accumulation_factor(i, kk))


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
    with np.errstate(over="ignore"):
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
    The margin ``P' - i B_0`` is formed from exact products: for a long term
    it is a tiny difference (``P' - i B_0 ~ P e^{-N i}``), and rounding
    ``i B_0`` first would cost ``e^{N i}`` of the result's digits.

    >>> round(float(periods(100_000, 0.005, 599.550525153)), 6)
    360.0
    """
    b0, i, p, f = np.broadcast_arrays(_f(principal), _f(rate), _f(payment), _f(balloon))
    adv = np.broadcast_to(np.asarray(advance, dtype=bool), b0.shape)
    p_eff = p * _timing_factor(i, adv)
    margin = _margin(b0, i, p, adv)
    with np.errstate(divide="ignore", invalid="ignore"):
        general = np.log1p(i * (b0 - f) / margin) / np.log1p(i)
        flat = (b0 - f) / p_eff
    out = np.where(i == 0, flat, general)
    return np.where(margin > 0, out, np.inf)


def _margin(b0: FloatArray, i: FloatArray, p: FloatArray, adv: npt.NDArray[np.bool_]) -> FloatArray:
    """Return ``P' - i B_0`` to a few ulps of itself: ``P - i B_0`` or ``P - i (B_0 - P)``."""
    # In advance P' - i B_0 = P (1 + i) - i B_0 = P - i (B_0 - P); B_0 - P is split
    # exactly into d + d_err, and each product into its float and its rounding error.
    d, d_err = _two_sum(b0, np.where(adv, -p, 0.0))
    base = np.where(adv, d, b0)
    prod, prod_err = _two_product(i, base)
    prod_err = prod_err + np.where(adv, i * d_err, 0.0)
    return (p - prod) - prod_err


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
    """Return the value at time 0 of N level payments and a balloon at N.

    The same as :func:`principal`, with the rate first (the rate equation's unknown).
    """
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


def _lambda(i: FloatArray) -> FloatArray:
    """Return ``1 - log1p(i) / i = i/2 - i^2/3 + i^3/4 - ...`` (0 at ``i = 0``) to a few ulps."""
    # The direct form loses 1 / lambda of its digits; below 0.125 the alternating
    # series, 20 terms by Horner's rule, is exact to 1e-19 relative.
    acc = np.zeros_like(i)
    for k in range(21, 1, -1):
        acc = 1.0 / k - i * acc
    with np.errstate(divide="ignore", invalid="ignore"):
        direct = 1.0 - np.log1p(i) / i
    return np.where(i < _LAMBDA_SERIES, i * acc, direct)


def _psi(x: FloatArray) -> FloatArray:
    """Return ``e^{-x} - 1 + x = x^2/2 - x^3/6 + ...`` to a few ulps (series below 0.5)."""
    acc = np.zeros_like(x)
    for coefficient in _PSI_COEFFICIENTS:
        acc = coefficient - x * acc
    return np.where(x < _PSI_SERIES, x * x * acc, np.expm1(-x) + x)


def present_value_gap(
    rate: ArrayLike,
    payment: ArrayLike,
    periods: ArrayLike,
    principal: ArrayLike,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return ``PV(i) - B_0``, the gap the rate equation drives to zero, without cancellation.

    ``PV(i) = P a_N(i) + F v^N(i)`` (``P (1 + i) a_N`` in advance) is strictly
    decreasing in ``i``; its root is the loan's periodic rate. Near a small
    rate ``PV - B_0`` is a small difference of two numbers near ``N P + F``,
    and evaluating it directly would cost ``2 / (N i)`` of the root's digits.
    Using ``a_n = n - i (Da)_n`` and ``v^N = 1 - i a_N`` it is rewritten as

        PV - B_0 = D - [P (m - a_m) + F (1 - v^N)],   D = N P + F - B_0,

    with ``m = N`` in arrears and ``N - 1`` in advance, and
    ``m - a_m = m lambda(i) + psi(m L) / i`` where ``L = log1p(i)``,
    ``lambda = 1 - L / i`` and ``psi(x) = e^{-x} - 1 + x`` (both by series near
    0, so every term is non-negative and accurate). ``D`` is summed from exact
    products. This form is used where ``D <= B_0`` (total interest at most the
    principal); beyond, ``PV - B_0`` itself is the better conditioned. At
    ``i = 0`` the gap is ``D``.

    >>> round(float(present_value_gap(0.005, 599.550525153, 360, 100_000)), 6)
    0.0
    """
    i, p, n, b0, f = np.broadcast_arrays(
        _f(rate), _f(payment), _f(periods), _f(principal), _f(balloon)
    )
    adv = np.broadcast_to(np.asarray(advance, dtype=bool), i.shape)
    paid, paid_err = _two_product(p, n)
    first, first_err = _two_sum(paid, -b0)
    second, second_err = _two_sum(first, f)
    excess = second + (first_err + second_err + paid_err)
    log_a = np.log1p(i)
    m = np.where(adv, n - 1.0, n)
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(i == 0, 0.0, _psi(m * log_a) / i)
    earned = p * (m * _lambda(i) + tail) + f * -np.expm1(-n * log_a)
    near = np.where(i == 0, excess, excess - earned)
    far = present_value(i, p, n, f, adv) - b0
    return np.where(excess <= b0, near, far)
