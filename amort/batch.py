"""The batch types of the schedule engine, and its exact interest rule.

A batch is a set of loans in integer cents (``int64``) with each loan's
periodic rate an exact fraction ``rate_num / rate_den``; its schedule is a
:class:`CentsTable` of rows in loan-then-period order. Both engine paths
(:mod:`amort.schedule` and :mod:`amort.schedule_fast`) share these.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from amort.money import Rounding, round_up_flags

IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]

#: Products below this stay exact in int64 arithmetic.
SAFE = 2**62
_SAFE = SAFE


@dataclass(frozen=True)
class BatchTerms:
    """Terms of a batch of level-payment loans, one array element a loan.

    principal, payment, balloon: integer cents (``int64``).
    rate_num, rate_den: the periodic rate as an exact fraction (``rate_den > 0``).
    periods: the number of the period whose payment is the last one (``int64``).
    advance: payments at the start of each period (annuity-due) where true.
    period_rate_num, period_rate_den: optional ``(max periods, loans)`` arrays of
        each period's exact rate (dated loans); they replace ``rate_num / rate_den``
        period by period, and may be object arrays of Python integers.
    period_payment, period_covers_interest: optional ``(max periods, loans)``
        payment rules (see :attr:`structured`); they replace ``payment``.
    """

    principal: IntArray
    rate_num: IntArray
    rate_den: IntArray
    payment: IntArray
    periods: IntArray
    balloon: IntArray
    advance: BoolArray
    period_rate_num: IntArray | None = None
    period_rate_den: IntArray | None = None
    period_payment: IntArray | None = None
    period_covers_interest: BoolArray | None = None

    def __post_init__(self) -> None:
        size = self.principal.shape
        for name in ("rate_num", "rate_den", "payment", "periods", "balloon", "advance"):
            if getattr(self, name).shape != size:
                raise ValueError(
                    f"BatchTerms.{name} has shape {getattr(self, name).shape}, not {size}"
                )
        if (self.period_rate_num is None) != (self.period_rate_den is None):
            raise ValueError(
                "BatchTerms needs both period_rate_num and period_rate_den, or neither"
            )
        if (self.period_payment is None) != (self.period_covers_interest is None):
            raise ValueError(
                "BatchTerms needs both period_payment and period_covers_interest, or neither"
            )
        if self.period_payment is not None and bool(self.advance.any()):
            raise ValueError("per-period payment rules are for payments in arrears")
        shape = (int(self.periods.max(initial=0)), *size)
        for name in ("period_payment", "period_covers_interest"):
            if getattr(self, name) is not None and getattr(self, name).shape != shape:
                raise ValueError(
                    f"BatchTerms.{name} has shape {getattr(self, name).shape}, not {shape}"
                )
        if self.period_rate_num is not None and self.period_rate_den is not None:
            for name in ("period_rate_num", "period_rate_den"):
                if getattr(self, name).shape != shape:
                    raise ValueError(
                        f"BatchTerms.{name} has shape {getattr(self, name).shape}, not {shape}"
                    )

    @property
    def varies(self) -> bool:
        """True when the batch carries a rate or a payment rule for each period."""
        return self.period_rate_num is not None or self.period_payment is not None

    @property
    def structured(self) -> bool:
        """True when each period has its own payment rule (interest-only, equal principal).

        Period k then pays ``period_payment[k-1]``, plus that period's interest
        where ``period_covers_interest[k-1]`` is true (arrears only).
        """
        return self.period_payment is not None

    def last_rates(self) -> tuple[IntArray, IntArray]:
        """Return each loan's rate in its last period, as (numerators, denominators)."""
        if self.period_rate_num is None or self.period_rate_den is None:
            return self.rate_num, self.rate_den
        row = np.maximum(self.periods - 1, 0)
        cols = np.arange(self.size)
        return self.period_rate_num[row, cols], self.period_rate_den[row, cols]

    @property
    def size(self) -> int:
        """Number of loans in the batch."""
        return int(self.principal.shape[0])

    @property
    def needs_big_integers(self) -> bool:
        """True when some rate's ``num x den`` would not fit int64 arithmetic."""
        if self.period_rate_num is not None and self.period_rate_den is not None:
            per_num, per_den = self.period_rate_num, self.period_rate_den
            if per_num.dtype == object or per_den.dtype == object:
                return True
            if per_num.size and int(np.abs(per_num).max()) * int(np.abs(per_den).max()) >= _SAFE:
                return True
        if self.size and self.rate_num.dtype.kind in "iu" and self.rate_den.dtype.kind in "iu":
            # |num| x |den| < 2**62 for the largest of each settles it without a loop.
            widest_num = max(int(self.rate_num.max()), -int(self.rate_num.min()))
            widest_den = max(int(self.rate_den.max()), -int(self.rate_den.min()))
            if widest_num * widest_den < _SAFE:
                return False
        pairs = zip(self.rate_num.tolist(), self.rate_den.tolist(), strict=True)
        return any(int(n) * int(d) >= _SAFE for n, d in pairs)


@dataclass(frozen=True)
class CentsTable:
    """The rows of a batch schedule, in loan-then-period order, money in int64 cents.

    ``loan`` is the index of the row's loan in the batch; ``period`` counts from 1.
    ``balloon`` is non-zero only on a loan's last row. Per loan: ``rows`` (how
    many periods it ran), ``final_payment`` and ``balloon_paid``.
    """

    loan: IntArray
    period: IntArray
    opening: IntArray
    payment: IntArray
    interest: IntArray
    principal: IntArray
    closing: IntArray
    balloon: IntArray
    rows: IntArray
    final_payment: IntArray
    balloon_paid: IntArray

    @property
    def offsets(self) -> IntArray:
        """Index of each loan's first row (length ``loans + 1``, last = total rows)."""
        return np.concatenate([[0], np.cumsum(self.rows)]).astype(np.int64)

    def loan_rows(self, index: int) -> slice:
        """Return the slice of rows that belong to loan ``index``."""
        start = int(self.offsets[index])
        return slice(start, start + int(self.rows[index]))


def exact_divmod(a: IntArray, b: IntArray) -> tuple[IntArray, IntArray]:
    """``np.divmod``, also for object arrays of Python integers (numpy has no such loop)."""
    if a.dtype == object or np.asarray(b).dtype == object:
        return a // b, a % b
    q, r = np.divmod(a, b)
    return q, r


def interest_cents(balance: IntArray, num: IntArray, den: IntArray, mode: Rounding) -> IntArray:
    """Return ``balance x num / den`` rounded to the cent, elementwise, exactly.

    ``balance >= 0``; ``num x den`` must fit int64 (or the arrays be object
    arrays of Python integers).
    """
    if balance.dtype == object or int(balance.max(initial=0)) * int(num.max(initial=0)) < _SAFE:
        q, r = exact_divmod(balance * num, den)
    else:
        q_b, r_b = np.divmod(balance, den)
        q_r, r = np.divmod(r_b * num, den)
        q = q_b * num + q_r
    return q + round_up_flags(q, r, den, mode)


def advance_remainder(terms: BatchTerms, mode: Rounding, dtype: Any) -> IntArray:
    """Return y, the cents left after the last payment in advance, that grow to the balloon.

    ``y + interest(y) = F`` is met exactly when some cent amount allows it
    (the first of ``round(F / a)``, one cent less, one cent more); otherwise
    ``y = round(F / a)`` and the balloon paid differs from F by a cent.
    """
    last_num, last_den = terms.last_rates()
    wide = int(terms.balloon.max(initial=0)) * (
        int(np.asarray(last_den).max(initial=0)) + int(np.asarray(last_num).max(initial=0))
    )
    work: Any = object if wide >= _SAFE else dtype
    f = terms.balloon.astype(work)
    num = np.asarray(last_num).astype(work)
    den = np.asarray(last_den).astype(work)
    q, r = exact_divmod(f * den, den + num)
    best = q + round_up_flags(q, r, den + num, Rounding.HALF_UP)

    def grows_to_balloon(y: IntArray) -> BoolArray:
        return np.asarray(y + interest_cents(y, num, den, mode) == f, dtype=bool)

    for shift in (-1, 1):
        candidate = np.maximum(best + shift, 0)
        best = np.where(~grows_to_balloon(best) & grows_to_balloon(candidate), candidate, best)
    return np.asarray(np.where(terms.advance & (f > 0), best, 0)).astype(dtype)
