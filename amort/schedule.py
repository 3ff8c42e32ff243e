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

Two paths give the same cents. Ordinary terms (non-negative principal, balloon
and rate, balances below about 2**48 cents) take the fast path: balances held as
float64 integers (exact below 2**53), interest from a float estimate confirmed by
an exact product comparison, loans stepped in cache-sized chunks and written into
the table block by block (see the notes above ``_run_fast``). Everything else
takes the general path, in int64: interest computed without overflow as
``q = (B // d) n + ((B % d) n) // d`` when ``B n`` could pass 2**62; terms whose
``n d`` would not fit int64 run the same steps on Python integers (object
arrays), slower but still exact.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from amort.batch import (
    BatchTerms,
    CentsTable,
    IntArray,
    advance_remainder,
    interest_cents,
)
from amort.money import Rounding
from amort.schedule_fast import run_fast

__all__ = ["BatchTerms", "CentsTable", "interest_cents", "run"]


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
    table = None if terms.varies else run_fast(terms, interest_rounding)
    if table is not None:
        # The fast path closes a loan when its balance reaches the balloon; a loan
        # that only reached it (and should run on to maturity) is redone exactly.
        early = (table.rows < terms.periods) & (terms.balloon > 0)
        if early.any():
            table = None
    if table is None:
        table = _run_general(terms, interest_rounding)
    return table


def _run_general(terms: BatchTerms, interest_rounding: Rounding) -> CentsTable:
    """Step every loan in int64 (or Python-integer) arithmetic; any terms, any size."""
    big = terms.needs_big_integers
    dtype: Any = object if big else np.int64
    loans = terms.size
    horizon = int(terms.periods.max(initial=0))
    num = terms.rate_num.astype(dtype)
    den = terms.rate_den.astype(dtype)
    level = terms.payment.astype(dtype)
    balloon = terms.balloon.astype(dtype)
    last = terms.periods
    advance = terms.advance
    remainder = advance_remainder(terms, interest_rounding, dtype)
    rule_payment = None if terms.period_payment is None else terms.period_payment.astype(dtype)
    rule_covers = terms.period_covers_interest
    varying_num = None if terms.period_rate_num is None else terms.period_rate_num.astype(dtype)
    varying_den = None if terms.period_rate_den is None else terms.period_rate_den.astype(dtype)

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
        p, f = level[at], balloon[at]
        if varying_num is not None and varying_den is not None:
            n_, d_ = varying_num[k - 1, at], varying_den[k - 1, at]
        else:
            n_, d_ = num[at], den[at]
        final = last[at] == k
        # In arrears the period's interest is earned on the opening balance.
        intr = interest_cents(balance, n_, d_, interest_rounding)
        if rule_payment is not None and rule_covers is not None:
            # A structured period pays its own amount, plus its interest where it covers it.
            p = rule_payment[k - 1, at] + np.where(rule_covers[k - 1, at], intr, 0)
        due = balance + intr - f
        # It closes early when the payment would take the balance to 0, or below
        # the balloon; a balance that merely stays at the balloon runs to maturity.
        closes = final | (due < p) | ((due == p) & (f == 0))
        pay = np.where(closes, due, p)
        adv = advance[at]
        if adv.any():
            # In advance the payment comes first and what stays earns the interest.
            y = remainder[at]
            left = balance - y
            closes_adv = final | (left < p) | ((left == p) & (y == 0))
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
