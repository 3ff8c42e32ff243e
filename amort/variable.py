"""Closed forms of ``B_k = a_k B_{k-1} - P`` when the rate differs from period to period.

Dated loans earn ``i_k = j x yearfrac(d_{k-1}, d_k)`` in period k, so the
growth factor ``a_k = 1 + i_k`` varies (an odd first period, Actual/365
months of 28 to 31 days). With the discount factors
``v_k = 1 / (a_1 ... a_k)`` (``v_0 = 1``) the recurrence solves to

    B_n = (B_0 - sum_{k<=n} P v_k) / v_n                 payments in arrears
    B_n = (B_0 - sum_{k<=n} P v_{k-1}) / v_n             payments in advance
    P   = (B_0 - F v_N) / sum_{k=1..N} v_k               (v_{k-1} in advance)

(DESIGN.md, "Variable a_k"). Arrays are ``(periods, loans)``: axis 0 runs
over periods, axis 1 over loans; rates are periodic decimal fractions
(float64). ``log v_k`` is a running sum of ``-log1p(i_k)`` kept in long
double, so 100,000 periods lose about 1e-14, not 1e-11.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]


def _log_discount(rates: npt.ArrayLike) -> npt.NDArray[np.longdouble]:
    """Return ``log v_k`` for k = 1..N, shape ``(N, loans)``."""
    i = np.asarray(rates, dtype=np.longdouble)
    return -np.cumsum(np.log1p(i), axis=0)


def discount_factors(rates: npt.ArrayLike) -> FloatArray:
    """Return ``v_k = 1 / (a_1 ... a_k)`` for k = 1..N (same shape as ``rates``).

    >>> discount_factors([[0.1], [0.1]]).round(6).ravel().tolist()
    [0.909091, 0.826446]
    """
    return np.asarray(np.exp(_log_discount(rates)), dtype=np.float64)


def _payment_weights(rates: npt.ArrayLike, advance: npt.ArrayLike) -> FloatArray:
    """Return each payment's present-value weight: ``v_k`` in arrears, ``v_{k-1}`` in advance."""
    v = discount_factors(rates)
    shifted = np.vstack([np.ones((1, *v.shape[1:])), v[:-1]])
    adv = np.asarray(advance, dtype=bool)
    return np.where(adv, shifted, v)


def payment(
    principal: npt.ArrayLike,
    rates: npt.ArrayLike,
    balloon: npt.ArrayLike = 0.0,
    advance: npt.ArrayLike = False,
) -> FloatArray:
    """Return the level payment ``P = (B_0 - F v_N) / sum_k w_k`` for each loan (axis 1).

    ``w_k = v_k`` in arrears, ``v_{k-1}`` in advance. With equal rates this
    is the constant-rate payment of :func:`amort.recurrence.payment`.

    >>> round(float(payment(100_000, [[0.005]] * 360)[0]), 6)
    599.550525
    """
    weights = _payment_weights(rates, advance)
    v_n = discount_factors(rates)[-1]
    b0 = np.asarray(principal, dtype=np.float64)
    f = np.asarray(balloon, dtype=np.float64)
    return np.asarray((b0 - f * v_n) / weights.sum(axis=0), dtype=np.float64)


def balances(
    principal: npt.ArrayLike,
    rates: npt.ArrayLike,
    payment: npt.ArrayLike,
    advance: npt.ArrayLike = False,
) -> FloatArray:
    """Return the exact balance after each period, ``(N, loans)``, for a level payment.

    ``B_n = (B_0 - P sum_{k<=n} w_k) / v_n``. Near the end of the term this
    is a small difference of large terms; its error is relative to
    :func:`balance_scales`.

    >>> balances(1000, [[0.1], [0.1]], 576.19).round(2).ravel().tolist()
    [523.81, 0.0]
    """
    weights = _payment_weights(rates, advance)
    v = discount_factors(rates)
    b0 = np.asarray(principal, dtype=np.float64)
    p = np.asarray(payment, dtype=np.float64)
    return np.asarray((b0 - p * np.cumsum(weights, axis=0)) / v, dtype=np.float64)


def balance_scales(
    principal: npt.ArrayLike,
    rates: npt.ArrayLike,
    payment: npt.ArrayLike,
    advance: npt.ArrayLike = False,
) -> FloatArray:
    """Return ``(B_0 + P sum_{k<=n} w_k) / v_n``, the size of the terms behind each balance."""
    weights = _payment_weights(rates, advance)
    v = discount_factors(rates)
    b0 = np.asarray(principal, dtype=np.float64)
    p = np.asarray(payment, dtype=np.float64)
    return np.asarray((b0 + p * np.cumsum(weights, axis=0)) / v, dtype=np.float64)


def accumulation_factors(rates: npt.ArrayLike) -> FloatArray:
    """Return ``s_n = sum_{k<=n} v_k / v_n = sum_{k<=n} a_{k+1} ... a_n`` (``s_1 = 1``).

    The value at n of one unit paid at the end of each of periods 1..n; with
    a constant rate it is ``((1 + i)^n - 1) / i``. It bounds how a rounding
    error of one unit per period can grow (:mod:`amort.reconcile`).

    >>> accumulation_factors([[0.1], [0.1]]).round(6).ravel().tolist()
    [1.0, 2.1]
    """
    v = discount_factors(rates)
    return np.asarray(np.cumsum(v, axis=0) / v, dtype=np.float64)


def balances_paying(
    principal: npt.ArrayLike,
    rates: npt.ArrayLike,
    payments: npt.ArrayLike,
    advance: npt.ArrayLike = False,
) -> FloatArray:
    """Return the exact balance after each period for a payment of its own each period.

    ``B_n = (B_0 - sum_{k<=n} P_k w_k) / v_n``; ``payments`` has the shape of
    ``rates``, ``(N, loans)``.

    >>> balances_paying(1000, [[0.1], [0.1]], [[100.0], [1000.0]]).round(2).ravel().tolist()
    [1000.0, 100.0]
    """
    weights = _payment_weights(rates, advance)
    v = discount_factors(rates)
    b0 = np.asarray(principal, dtype=np.float64)
    p = np.asarray(payments, dtype=np.float64)
    return np.asarray((b0 - np.cumsum(p * weights, axis=0)) / v, dtype=np.float64)


def balance_scales_paying(
    principal: npt.ArrayLike,
    rates: npt.ArrayLike,
    payments: npt.ArrayLike,
    advance: npt.ArrayLike = False,
) -> FloatArray:
    """Return ``(B_0 + sum_{k<=n} |P_k| w_k) / v_n``, the size behind :func:`balances_paying`."""
    weights = _payment_weights(rates, advance)
    v = discount_factors(rates)
    b0 = np.asarray(principal, dtype=np.float64)
    p = np.abs(np.asarray(payments, dtype=np.float64))
    return np.asarray((b0 + np.cumsum(p * weights, axis=0)) / v, dtype=np.float64)
