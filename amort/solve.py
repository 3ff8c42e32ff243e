"""Vectorised solvers for one unknown of a level-payment loan (float64).

Each function takes numpy arrays (or scalars) that broadcast together, one
element a loan, and returns float64 arrays (``int64`` for whole counts). The
rate is the **periodic** rate as a decimal fraction (0.005 = 0.5 % a period),
money is in currency units, ``balloon`` is the balance left after the last
payment and ``advance=True`` puts each payment at the start of its period
(annuity-due). The formulas are in :mod:`amort.recurrence`.

Inputs are checked: a bad element raises :class:`~amort.errors.InvalidTerms`
or :class:`~amort.errors.NoSolution` naming the field, the value and (for
arrays) the element's index. Pass ``errors="nan"`` to get NaN for the
elements that have no answer instead.

>>> round(float(payment(250_000, 0.065 / 12, 360)), 2)
1580.17
"""

from __future__ import annotations

from typing import Literal, NamedTuple

import numpy as np
import numpy.typing as npt

from amort import recurrence
from amort.errors import InvalidTerms, NoSolution

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
ArrayLike = npt.ArrayLike
Errors = Literal["raise", "nan"]

#: Longest term accepted, in periods; beyond it a "loan" is a perpetuity in all but name.
MAX_PERIODS = 100_000
#: Highest periodic rate accepted (100 % a period); the closed forms are tested to it.
MAX_PERIODIC_RATE = 1.0

__all__ = [
    "MAX_PERIODIC_RATE",
    "MAX_PERIODS",
    "WholeTerm",
    "balance",
    "payment",
    "periods",
    "principal",
    "rate",
    "total_interest",
    "total_paid",
    "whole_periods",
]


class WholeTerm(NamedTuple):
    """A term in whole payments: how many, and the size of the last one."""

    periods: IntArray
    final_payment: FloatArray


def _where(mask: npt.NDArray[np.bool_]) -> str:
    """Return ' (element 3)' for the first True of an array mask, '' for a scalar."""
    if mask.ndim == 0 or mask.size == 1:
        return ""
    return f" (element {int(np.flatnonzero(mask.ravel())[0])})"


def _first(values: FloatArray, mask: npt.NDArray[np.bool_]) -> float:
    return float(np.broadcast_to(values, mask.shape)[mask].ravel()[0])


def _show(value: float) -> str:
    """Return a float as it should appear in a message: its shortest repr."""
    return repr(float(value))


def _array(value: ArrayLike, field: str) -> FloatArray:
    if value is None:
        raise InvalidTerms(f"{field!r} must be numeric (got None)")
    raw = np.asarray(value) if not isinstance(value, np.ndarray) else value
    if raw.dtype == bool or raw.dtype == object or raw.dtype.kind in "USV":
        if raw.dtype == object:
            try:
                raw = raw.astype(np.float64)
            except (TypeError, ValueError):
                raise InvalidTerms(f"{field!r} must be numeric (got {value!r})") from None
        else:
            raise InvalidTerms(f"{field!r} must be numeric (got {value!r})")
    try:
        out = np.asarray(raw, dtype=np.float64)
    except (TypeError, ValueError):
        raise InvalidTerms(f"{field!r} must be numeric (got {value!r})") from None
    bad = ~np.isfinite(out)
    if bad.any():
        raise InvalidTerms(
            f"{field!r} must be a finite number (got {_show(_first(out, bad))}){_where(bad)}"
        )
    return out


def _together(**arrays: ArrayLike) -> None:
    """Raise :class:`InvalidTerms` naming the shapes when the inputs do not broadcast."""
    try:
        np.broadcast(*(np.asarray(a) for a in arrays.values()))
    except ValueError:
        shapes = ", ".join(f"{k} {np.shape(a)}" for k, a in arrays.items())
        raise InvalidTerms(f"the input arrays do not broadcast together ({shapes})") from None


def _check(bad: npt.NDArray[np.bool_], message: str, errors: Errors) -> None:
    if errors == "raise" and bad.any():
        raise InvalidTerms(message + _where(bad))


def _money(value: ArrayLike, field: str, *, positive: bool) -> FloatArray:
    out = _array(value, field)
    bad = out <= 0 if positive else out < 0
    if bad.any():
        rule = "> 0" if positive else ">= 0"
        raise InvalidTerms(f"{field!r} must be {rule} (got {_show(_first(out, bad))}){_where(bad)}")
    return out


def _rate(value: ArrayLike) -> FloatArray:
    out = _array(value, "rate")
    bad = (out < 0) | (out > MAX_PERIODIC_RATE)
    if bad.any():
        raise InvalidTerms(
            "'rate' must be a periodic rate between 0 and 1 (0 % to 100 % a period) "
            f"(got {_show(_first(out, bad))}){_where(bad)}"
        )
    return out


def _count(value: ArrayLike, field: str, *, minimum: int) -> FloatArray:
    out = _array(value, field)
    bad = (out < minimum) | (out != np.floor(out)) | (out > MAX_PERIODS)
    if bad.any():
        raise InvalidTerms(
            f"{field!r} must be a whole number from {minimum} to {MAX_PERIODS:,} "
            f"(got {_show(_first(out, bad))}){_where(bad)}"
        )
    return out


def payment(
    principal: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
    errors: Errors = "raise",
) -> FloatArray:
    """Return the exact (unrounded) level payment for each loan.

    ``P = (B_0 - F v^N) i / (1 - v^N)``, in advance divided by ``1 + i``;
    ``(B_0 - F) / N`` at ``i = 0``. A balloon so large that the payment would
    be zero or negative is an error.

    >>> round(float(payment(100_000, 0.005, 360, advance=True)), 9)
    596.567686719
    """
    b0 = _money(principal, "principal", positive=True)
    i = _rate(rate)
    n = _count(periods, "periods", minimum=1)
    f = _money(balloon, "balloon", positive=False)
    _together(principal=b0, rate=i, periods=n, balloon=f, advance=advance)
    out = recurrence.payment(b0, i, n, f, advance)
    bad = ~(out > 0)
    if errors == "raise" and bad.any():
        most = b0 * recurrence.growth(i, n)
        raise InvalidTerms(
            f"'balloon' {_first(f, bad):,.2f} would need a payment of "
            f"{_first(out, bad):,.2f} or less; the balloon must be below "
            f"{_first(most, bad):,.2f}, what the principal grows to over the term{_where(bad)}"
        )
    return np.where(bad, np.nan, out)


def principal(
    payment: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the principal that N level payments (and a balloon) repay.

    ``B_0 = P a_N + F v^N`` (``a_N`` times ``1 + i`` in advance).

    >>> round(float(principal(1580.17, 0.065 / 12, 360)), 2)
    249999.99
    """
    p = _money(payment, "payment", positive=True)
    i = _rate(rate)
    n = _count(periods, "periods", minimum=1)
    f = _money(balloon, "balloon", positive=False)
    _together(payment=p, rate=i, periods=n, balloon=f, advance=advance)
    return recurrence.principal(p, i, n, f, advance)


def balance(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    k: ArrayLike,
    *,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the exact balance after k level payments (k = 0 gives the principal).

    ``B_k = a^k B_0 - P s_k`` (``P (1 + i)`` in advance). A negative result
    means the payments have overpaid the loan by then.

    >>> round(float(balance(250_000, 0.065 / 12, 1580.17, 12)), 2)
    247205.69
    """
    b0 = _money(principal, "principal", positive=True)
    i = _rate(rate)
    p = _money(payment, "payment", positive=False)
    kk = _count(k, "k", minimum=0)
    _together(principal=b0, rate=i, payment=p, k=kk, advance=advance)
    return recurrence.balance(b0, i, p, kk, advance)


def _not_covered(b0: FloatArray, i: FloatArray, p: FloatArray, advance: ArrayLike) -> None:
    adv = np.broadcast_to(np.asarray(advance, dtype=bool), np.broadcast(b0, i, p).shape)
    b0, i, p = np.broadcast_arrays(b0, i, p)
    interest = np.where(adv, i * (b0 - p), i * b0)
    bad = p <= interest
    if bad.any():
        raise NoSolution(
            f"'payment' {_first(p, bad):,.2f} does not cover the first period's interest of "
            f"{_first(interest, bad):,.2f}; the balance would never be repaid{_where(bad)}"
        )


def periods(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
    errors: Errors = "raise",
) -> FloatArray:
    """Return the fractional number of payments that repays each loan down to the balloon.

    ``N = log((P - i F) / (P - i B_0)) / log(1 + i)`` (``P (1 + i)`` for
    ``P`` in advance); ``(B_0 - F) / P`` at ``i = 0``. When the payment does
    not cover the first period's interest the balance would grow forever:
    that is a :class:`~amort.errors.NoSolution` naming the interest figure.

    >>> round(float(periods(250_000, 0.065 / 12, 1580.17)), 4)
    360.0
    """
    b0 = _money(principal, "principal", positive=True)
    i = _rate(rate)
    p = _money(payment, "payment", positive=True)
    f = _money(balloon, "balloon", positive=False)
    _together(principal=b0, rate=i, payment=p, balloon=f, advance=advance)
    if errors == "raise":
        _not_covered(b0, i, p, advance)
        _check(
            np.broadcast_to(f >= b0, np.broadcast(b0, f).shape),
            "'balloon' must be below the principal when solving for the term",
            errors,
        )
    out = recurrence.periods(b0, i, p, f, advance)
    return np.where(np.isfinite(out) & (out >= 0) & (f < b0), out, np.nan)


def whole_periods(
    principal: ArrayLike,
    rate: ArrayLike,
    payment: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> WholeTerm:
    """Return the term in whole payments and the (smaller) final payment.

    The count is the fractional term rounded up; a term within 1e-9 of a
    whole number counts as that number (float noise, not a sliver of a
    payment). The final payment is the balance after ``n - 1`` payments plus
    its interest, less the balloon: ``B_{n-1} a - F`` in arrears,
    ``B_{n-1} - F / a`` in advance.

    >>> term = whole_periods(250_000, 0.065 / 12, 2000)
    >>> int(term.periods), round(float(term.final_payment), 2)
    (210, 494.4)
    """
    b0 = _money(principal, "principal", positive=True)
    i = _rate(rate)
    p = _money(payment, "payment", positive=True)
    f = _money(balloon, "balloon", positive=False)
    _together(principal=b0, rate=i, payment=p, balloon=f, advance=advance)
    frac = periods(b0, i, p, balloon=f, advance=advance)
    nearest = np.round(frac)
    snapped = np.where(np.abs(frac - nearest) <= 1e-9 * np.maximum(1.0, frac), nearest, frac)
    count = np.maximum(np.ceil(snapped), 1.0)
    if (count > MAX_PERIODS).any():
        bad = count > MAX_PERIODS
        raise NoSolution(
            f"the payment would take {_first(count, bad):,.0f} periods, more than the "
            f"{MAX_PERIODS:,} amort accepts{_where(bad)}"
        )
    before = recurrence.balance(b0, i, p, count - 1, advance)
    adv = np.asarray(advance, dtype=bool)
    final = np.where(adv, before - f / (1 + i), before * (1 + i) - f)
    return WholeTerm(count.astype(np.int64), final)


def rate(
    principal: ArrayLike,
    payment: ArrayLike,
    periods: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
    errors: Errors = "raise",
) -> FloatArray:
    """Return the periodic rate at which N level payments (and a balloon) repay the principal.

    Solves ``PV(i) = P a_N(i) [x (1 + i)] + F v^N(i) = B_0`` by Newton steps
    kept inside a bracket that shrinks every iteration (bisection when a step
    leaves it), vectorised across loans. The gap ``PV(i) - B_0`` is evaluated
    by :func:`amort.recurrence.present_value_gap`, which avoids the
    cancellation near small rates, so the root is accurate to a few ulps
    even at ``i = 1e-12``. With non-negative payments ``PV`` is
    strictly decreasing in ``i``, so the root is unique when it exists. It
    exists when ``PV(0) = N P + F >= B_0`` (else the implied rate is negative)
    and, in advance, when the first payment is less than the principal;
    otherwise :class:`~amort.errors.NoSolution` says which.

    >>> round(float(rate(250_000, 1580.17, 360)) * 12, 6)
    0.065
    """
    b0 = _money(principal, "principal", positive=True)
    p = _money(payment, "payment", positive=True)
    n = _count(periods, "periods", minimum=1)
    f = _money(balloon, "balloon", positive=False)
    _together(principal=b0, payment=p, periods=n, balloon=f, advance=advance)
    b0, p, n, f = np.broadcast_arrays(b0, p, n, f)
    adv = np.broadcast_to(np.asarray(advance, dtype=bool), b0.shape)
    total = p * n + f
    # N P + F - B_0 from exact products: > 0 exactly when some rate > 0 repays the loan.
    excess = recurrence.present_value_gap(np.zeros_like(b0), p, n, b0, f, adv)
    short = excess < -4 * np.finfo(float).eps * b0
    if errors == "raise" and short.any():
        raise NoSolution(
            f"the payments total {_first(total, short):,.2f}, less than the principal "
            f"{_first(b0, short):,.2f}; no rate >= 0 repays it{_where(short)}"
        )
    upfront = adv & (p >= b0)
    if errors == "raise" and upfront.any():
        raise NoSolution(
            f"'payment' {_first(p, upfront):,.2f} in advance repays the principal "
            f"{_first(b0, upfront):,.2f} on day one; no finite rate fits{_where(upfront)}"
        )
    high = np.full(b0.shape, MAX_PERIODIC_RATE)
    # A root within float noise of 100 % (the payment of a loan at exactly 100 %,
    # rounded) counts as 100 %, not as "above".
    too_high = recurrence.present_value_gap(high, p, n, b0, f, adv) > 4 * np.finfo(float).eps * b0
    if errors == "raise" and (too_high & ~short & ~upfront).any():
        bad = too_high & ~short & ~upfront
        raise NoSolution(
            f"the implied rate is above 100 % a period, outside what amort solves for{_where(bad)}"
        )
    none = short | upfront | too_high
    out = _solve_rate(b0, p, n, f, adv, high, excess, skip=none | (excess <= 0))
    return np.where(none, np.nan, np.where(excess <= 0, 0.0, out))


def _solve_rate(
    b0: FloatArray,
    p: FloatArray,
    n: FloatArray,
    f: FloatArray,
    adv: npt.NDArray[np.bool_],
    high: FloatArray,
    excess: FloatArray,
    *,
    skip: npt.NDArray[np.bool_],
) -> FloatArray:
    """Return the root of ``present_value_gap`` in ``(0, high]``; elements in ``skip`` are left."""
    eps = np.finfo(float).eps
    lo = np.zeros_like(b0)
    hi = high.copy()
    # First guess from the small-rate expansion P N + F - B_0 ~ i B_0 (N + 1) / 2.
    with np.errstate(divide="ignore", invalid="ignore"):
        x = 2 * excess / (b0 * (n + 1))
    x = np.where(np.isfinite(x) & (x > 0) & (x < hi), x, hi / 2)
    done = skip.copy()
    for _ in range(300):
        g = recurrence.present_value_gap(x, p, n, b0, f, adv)
        dg = recurrence.present_value_derivative(x, p, n, f, adv)
        lo = np.where(g > 0, x, lo)
        hi = np.where(g < 0, x, hi)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = x - g / dg
        inside = np.isfinite(step) & (step > lo) & (step < hi)
        wide = (lo > 0) & (hi > 1e3 * lo)
        middle = np.where(wide, np.sqrt(lo * hi), 0.5 * (lo + hi))
        new = np.where(inside, step, middle)
        settled = (g == 0) | (np.abs(new - x) <= 2 * eps * np.abs(x)) | (hi - lo <= 2 * eps * hi)
        x = np.where(done, x, new)
        done |= settled
        if done.all():
            break
    else:  # pragma: no cover - bisection halves the bracket, so 300 steps always suffice
        raise NoSolution("the rate search did not converge")
    return x


def total_paid(
    principal: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return everything the borrower pays: ``N P + F`` with the exact level payment.

    >>> round(float(total_paid(100_000, 0.005, 360)), 2)
    215838.19
    """
    p = payment(principal, rate, periods, balloon=balloon, advance=advance)
    return p * np.asarray(periods, dtype=np.float64) + np.asarray(balloon, dtype=np.float64)


def total_interest(
    principal: ArrayLike,
    rate: ArrayLike,
    periods: ArrayLike,
    *,
    balloon: ArrayLike = 0.0,
    advance: ArrayLike = False,
) -> FloatArray:
    """Return the interest over the life of the loan: ``N P + F - B_0``.

    >>> round(float(total_interest(100_000, 0.005, 360)), 2)
    115838.19
    """
    paid = total_paid(principal, rate, periods, balloon=balloon, advance=advance)
    return paid - np.asarray(principal, dtype=np.float64)
