"""The schedule engine: a batch of level-payment loans expanded into exact-cent rows.

Money is integer cents (``int64``), each loan's periodic rate the exact
rational ``rate_num / rate_den``. The engine steps through the periods once
and does every loan of the batch in each step with vector operations, so one
loan is a batch of one and a book of a million loans takes the same path.

Rules (DESIGN.md, "Money and rounding"):

- interest of a period is ``B_{k-1} x i`` rounded to the cent under the
  interest rounding mode (in advance: ``(B_{k-1} - P) x i``, the payment being
  made at the start of the period);
- principal = payment - interest; closing = opening - principal - balloon;
- the last period pays what is left: ``B_{N-1}`` plus its interest, less the
  balloon, so the balance closes at exactly 0 once the balloon is paid;
- a loan whose balance would close before period N (a payment rounded up, a
  payment fixed by the user) ends on the period where it closes.

Interest is computed without overflow as ``q = (B // d) n + ((B % d) n) // d``
when ``B n`` could pass 2**62; terms whose ``n d`` would not fit int64 run the
same steps on Python integers (object arrays), slower but still exact.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from amort.money import Rounding, round_up_flags

IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]

_SAFE = 2**62


@dataclass(frozen=True)
class BatchTerms:
    """Terms of a batch of level-payment loans, one array element a loan.

    principal, payment, balloon: integer cents (``int64``).
    rate_num, rate_den: the periodic rate as an exact fraction (``rate_den > 0``).
    periods: the number of the period whose payment is the last one (``int64``).
    advance: payments at the start of each period (annuity-due) where true.
    """

    principal: IntArray
    rate_num: IntArray
    rate_den: IntArray
    payment: IntArray
    periods: IntArray
    balloon: IntArray
    advance: BoolArray

    def __post_init__(self) -> None:
        size = self.principal.shape
        for name in ("rate_num", "rate_den", "payment", "periods", "balloon", "advance"):
            if getattr(self, name).shape != size:
                raise ValueError(
                    f"BatchTerms.{name} has shape {getattr(self, name).shape}, not {size}"
                )

    @property
    def size(self) -> int:
        """Number of loans in the batch."""
        return int(self.principal.shape[0])

    @property
    def needs_big_integers(self) -> bool:
        """True when some rate's ``num x den`` would not fit int64 arithmetic."""
        num = [int(x) for x in self.rate_num]
        den = [int(x) for x in self.rate_den]
        return any(n * d >= _SAFE for n, d in zip(num, den, strict=True))


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


def interest_cents(balance: IntArray, num: IntArray, den: IntArray, mode: Rounding) -> IntArray:
    """Return ``balance x num / den`` rounded to the cent, elementwise, exactly.

    ``balance >= 0``; ``num x den`` must fit int64 (or the arrays be object
    arrays of Python integers).
    """
    if balance.dtype == object or int(balance.max(initial=0)) * int(num.max(initial=0)) < _SAFE:
        q, r = np.divmod(balance * num, den)
    else:
        q_b, r_b = np.divmod(balance, den)
        q_r, r = np.divmod(r_b * num, den)
        q = q_b * num + q_r
    return q + round_up_flags(q, r, den, mode)


def _advance_remainder(terms: BatchTerms, mode: Rounding, dtype: object) -> IntArray:
    """Return y, the cents left after the last payment in advance, that grow to the balloon.

    ``y + interest(y) = F`` is met exactly when some cent amount allows it
    (the first of ``round(F / a)``, one cent less, one cent more); otherwise
    ``y = round(F / a)`` and the balloon paid differs from F by a cent.
    """
    f = terms.balloon.astype(dtype)
    num = terms.rate_num.astype(dtype)
    den = terms.rate_den.astype(dtype)
    q, r = np.divmod(f * den, den + num)
    best = q + round_up_flags(q, r, den + num, Rounding.HALF_UP)

    def grows_to_balloon(y: IntArray) -> BoolArray:
        return np.asarray(y + interest_cents(y, num, den, mode) == f, dtype=bool)

    for shift in (-1, 1):
        candidate = np.maximum(best + shift, 0)
        best = np.where(~grows_to_balloon(best) & grows_to_balloon(candidate), candidate, best)
    return np.where(terms.advance & (f > 0), best, 0)


def run(terms: BatchTerms, interest_rounding: Rounding = Rounding.HALF_UP) -> CentsTable:
    """Expand every loan of the batch into its exact-cent schedule rows.

    >>> import numpy as np
    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> t = BatchTerms(one(10_000_00), one(1), one(200), one(860_66), one(12), one(0),
    ...                np.array([False]))
    >>> table = run(t)
    >>> int(table.rows[0]), int(table.final_payment[0]), int(table.closing[-1])
    (12, 86070, 0)
    """
    big = terms.needs_big_integers
    dtype: object = object if big else np.int64
    loans = terms.size
    horizon = int(terms.periods.max(initial=0))
    num = terms.rate_num.astype(dtype)
    den = terms.rate_den.astype(dtype)
    level = terms.payment.astype(dtype)
    balloon = terms.balloon.astype(dtype)
    last = terms.periods
    advance = terms.advance
    remainder = _advance_remainder(terms, interest_rounding, dtype)

    # Period-major storage: step k writes one contiguous row of each array.
    opening = np.zeros((horizon, loans), dtype=dtype)
    paid = np.zeros((horizon, loans), dtype=dtype)
    interest = np.zeros((horizon, loans), dtype=dtype)
    rows = np.zeros(loans, dtype=np.int64)
    balloon_paid = np.zeros(loans, dtype=dtype)

    live = np.flatnonzero(last >= 1)
    everyone = live.size == loans
    balance = terms.principal.astype(dtype)[live]
    for k in range(1, horizon + 1):
        if live.size == 0:
            break
        at = slice(None) if everyone else live
        p, f, n_, d_ = level[at], balloon[at], num[at], den[at]
        final = last[at] == k
        # In arrears the period's interest is earned on the opening balance.
        intr = interest_cents(balance, n_, d_, interest_rounding)
        due = balance + intr - f
        closes = final | (due <= p)
        pay = np.where(closes, due, p)
        adv = advance[at]
        if adv.any():
            # In advance the payment comes first and what stays earns the interest.
            y = remainder[at]
            closes_adv = final | (balance - y <= p)
            pay_adv = np.where(closes_adv, balance - y, p)
            intr_adv = interest_cents(np.maximum(balance - pay_adv, 0), n_, d_, interest_rounding)
            pay = np.where(adv, pay_adv, pay)
            intr = np.where(adv, intr_adv, intr)
            closes = np.where(adv, closes_adv, closes)
        opening[k - 1, at] = balance
        paid[k - 1, at] = pay
        interest[k - 1, at] = intr
        balance = balance - pay + intr
        if closes.any():
            gone = live[closes]
            rows[gone] = k
            # What is left settles as the balloon: F in arrears, y plus its interest in advance.
            balloon_paid[gone] = balance[closes]
            keep = ~closes
            live = live[keep]
            balance = balance[keep]
            everyone = False
    return _long_table(opening, paid, interest, rows, balloon_paid)


def _long_table(
    opening: IntArray,
    paid: IntArray,
    interest: IntArray,
    rows: IntArray,
    balloon_paid: IntArray,
) -> CentsTable:
    """Turn the period-major arrays into loan-then-period rows."""
    horizon, loans = opening.shape
    uniform = loans > 0 and bool((rows == horizon).all())
    if uniform:
        take = lambda a: np.ascontiguousarray(a.T).reshape(-1)  # noqa: E731
    else:
        mask = np.arange(horizon)[None, :] < rows[:, None]
        take = lambda a: np.ascontiguousarray(a.T)[mask]  # noqa: E731
    open_ = take(opening).astype(np.int64)
    pay = take(paid).astype(np.int64)
    intr = take(interest).astype(np.int64)
    loan = np.repeat(np.arange(loans, dtype=np.int64), rows)
    offsets = np.concatenate([[0], np.cumsum(rows)]).astype(np.int64)
    period = np.arange(open_.size, dtype=np.int64) - np.repeat(offsets[:-1], rows) + 1
    balloon = np.zeros_like(open_)
    ends = offsets[1:] - 1
    has_rows = rows > 0
    balloon[ends[has_rows]] = balloon_paid.astype(np.int64)[has_rows]
    principal = pay - intr
    closing = open_ - principal - balloon
    final_payment = np.zeros(loans, dtype=np.int64)
    final_payment[has_rows] = pay[ends[has_rows]]
    return CentsTable(
        loan=loan,
        period=period,
        opening=open_,
        payment=pay,
        interest=intr,
        principal=principal,
        closing=closing,
        balloon=balloon,
        rows=rows,
        final_payment=final_payment,
        balloon_paid=balloon_paid.astype(np.int64),
    )
