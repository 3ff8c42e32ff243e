"""The book engine's stepping: every loan of a chunk through its periods at once, exactly.

:func:`step` takes a chunk's terms (:class:`amort.book_engine._Terms`, loans sorted by
term, longest first) and fills a :class:`amort.book_engine.Run`. The loans still due at
period k are then a prefix of the chunk, so each period works on one slice. Per
period and loan (the rules of :mod:`amort.book_engine`):

    interest = round_half_up(B n_k / d)
    payment  = base + cover x interest
    B'       = B + interest - payment

A loan closes at its last period, or at the first whose balance ``B'`` would reach its
balloon (``B' - F < 1`` with no balloon, ``B' < F`` with one): it then pays
``B + interest - F`` and the balloon, and rides along frozen (no balance, no
payment) to the end of the chunk. Snapshots at the as-of count ``made`` keep the
balance and the interest so far; the payment after it is kept as ``next_payment``.

Float mode (every product below 2**50, interest below 2**38): balances are float64
integers; ``J = floor(B i + 1/2 - 2**-12)`` is the rounded interest or one less, and the
exact comparison ``(J + 1/2) d <= B n`` adds the cent (the schedule engine's fast path,
:mod:`amort.schedule_fast`). A balance that outgrows the bound sends the chunk back
through int64 arithmetic (:func:`amort.batch.interest_cents`), or Python integers.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from amort.batch import interest_cents
from amort.money import Rounding

_OFFSET = 0.5 - 2.0**-12
_FLOAT_EXACT = 2.0**50  # products below this are exact in float64 (with room to spare)
_X_LIMIT = 2.0**38  # |B i| below this keeps the float product within 2**-13 of exact
_BIG = 2**62  # products below this are exact in int64
HALF_UP = Rounding.HALF_UP


def _matrix(pool: Any, name: str, shape: tuple[int, int]) -> np.ndarray:
    if pool is None:
        return np.empty(shape)
    return pool.take(name, shape, np.float64)


def _record_buffers(run: Any, record: bool, pool: Any, horizon: int, size: int) -> None:
    """Each period's interest and cash of the run (reused from the last run: see Pool)."""
    if record:
        run.interest = _matrix(pool, "interest", (horizon, size))
        run.cash = _matrix(pool, "cash", (horizon, size))


def _groups(values: np.ndarray, horizon: int) -> tuple[np.ndarray, np.ndarray]:
    """Loans ordered by ``values`` and where each value 0..horizon+1 starts in that order."""
    order = np.argsort(values, kind="stable")
    starts = np.searchsorted(values[order], np.arange(horizon + 3))
    return order, starts


def step(terms: Any, run: Any, record: bool, pool: Any = None) -> None:
    """Step the chunk ``terms`` to maturity and fill ``run`` (see the module notes)."""
    mode = exact_mode(terms)
    if mode == "float":
        done = _step_float(terms, run, record, pool, sums=False)
        if done is None:  # a level loan closed early: keep the interest sums after all
            done = _step_float(terms, run, record, pool, sums=True)
        if done:
            return
    _step(terms, run, record, "int" if mode != "object" else "object")


#: |x - rint(x)| beyond this may be a tie or on the wrong side of one: checked exactly.
_NEAR = 0.5 - 2.0**-11


def _step_float(terms: Any, run: Any, record: bool, pool: Any, *, sums: bool) -> bool | None:
    """The float-mode pass (the same rules, fewer array passes); False: redo in int64.

    Interest: ``J = rint(B i)`` is the half-up cent unless ``|B i - J|`` is within
    2**-11 of a half (the float product errs by under 2**-13 below 2**38), and those
    few are settled by the exact comparison ``(floor(B i + 1/2 - 2**-12) + 1/2) d <= B n``.
    A level loan without interest-only periods pays P in every period but its last, so
    its interest sums follow from the balances and are not accumulated (unless
    ``sums``; None asks for that pass, when such a loan closes early).
    """
    size = terms.term.size
    horizon = int(terms.term.max(initial=0))
    widths = np.searchsorted(-terms.term, -np.arange(1, horizon + 2), side="right")
    varying = np.ndim(terms.num) == 2
    principal = terms.principal.astype(np.float64)
    bal, nxt = principal.copy(), np.empty(size)
    bound = 2.0 * float(principal.max(initial=0)) + float(np.abs(terms.base).max(initial=0))
    balloon = terms.balloon.astype(np.float64)
    thresh = balloon + (terms.balloon == 0)  # a loan closes when B' < thresh
    only = terms.only
    any_only = bool((only > 0).any())
    base_after = terms.base.astype(np.float64)
    cover_after = terms.cover.astype(np.float64)
    base = np.where(only > 0, 0.0, base_after)
    cover = np.where(only > 0, 1.0, cover_after)
    any_cover = bool(terms.cover.any() or any_only or sums)
    cum = np.zeros(size)
    done = np.zeros(size, dtype=bool)
    rows = run.rows
    balance_at = principal.copy()
    interest_at = np.zeros(size)
    next_pay = np.zeros(size)
    regular = terms.base.astype(np.float64)
    by_made, at_made = _groups(terms.made, horizon)
    by_only, at_only = _groups(only, horizon)
    by_reg, at_reg = _groups(terms.regular_at, horizon)
    _record_buffers(run, record, pool, horizon, size)
    den = terms.den.astype(np.float64)
    numf = None if varying else np.asarray(terms.num).astype(np.float64)
    rate = terms.rates if varying else np.asarray(numf) / den
    x_buf, j_buf, p_buf = np.empty(size), np.empty(size), np.empty(size)
    flags = np.empty(size, dtype=bool)
    odd = np.flatnonzero(terms.odd)
    peak = 0.0
    for k in range(1, horizon + 1):
        w, w_next = int(widths[k - 1]), int(widths[k])
        b = bal[:w]
        if any_only and k > 1:
            switch = by_only[at_only[k - 1] : at_only[k]]
            switch = switch[only[switch] > 0]
            base[switch], cover[switch] = base_after[switch], cover_after[switch]
        r_row = rate[k - 1, :w] if varying else rate[:w]
        x, intr = x_buf[:w], j_buf[:w]
        np.multiply(b, r_row, out=x)
        np.rint(x, out=intr)
        np.subtract(x, intr, out=x)
        np.abs(x, out=x)
        np.greater(x, _NEAR, out=flags[:w])
        if flags[:w].any():
            near = np.flatnonzero(flags[:w])
            n_near = (terms.num[k - 1, near] if varying else terms.num[near]).astype(np.float64)
            exact = np.floor(b[near] * (n_near / den[near]) + _OFFSET)
            intr[near] = exact + ((exact + 0.5) * den[near] <= b[near] * n_near)
        if k == 1 and odd.size:
            first = interest_cents(
                terms.principal[odd].astype(object),
                terms.first_num[odd],
                terms.first_den[odd],
                HALF_UP,
            )
            intr[odd] = first.astype(np.float64)
        if any_cover:
            pay = p_buf[:w]
            np.multiply(cover[:w], intr, out=pay)
            np.add(pay, base[:w], out=pay)
        else:
            pay = base[:w]
        after = nxt[:w]
        np.add(b, intr, out=after)
        np.subtract(after, pay, out=after)
        np.less(after[:w_next], thresh[:w_next], out=flags[:w_next])
        early = np.flatnonzero(flags[:w_next]) if flags[:w_next].any() else None
        closing = np.arange(w_next, w)
        if closing.size:
            closing = closing[~done[closing]]
        if early is not None:
            closing = np.concatenate([early, closing])
        paid = cash = pay
        if closing.size:
            if early is not None and not any_cover:
                return None
            owed = balloon[closing]
            last = after[closing] + pay[closing] - owed
            paid = pay.copy()
            paid[closing] = last
            cash = paid.copy()
            cash[closing] += owed
            after[closing] = 0.0
            rows[closing] = k
            run.final_payment[closing] = last.astype(np.int64)
            run.balloon[closing] = owed.astype(np.int64)
            done[closing] = True
            if early is not None:
                base[early] = cover[early] = balloon[early] = thresh[early] = 0.0
        bal, nxt = nxt, bal
        if any_cover:
            cum[:w] += intr
        if k % 16 == 0:
            peak = max(peak, float(after.max(initial=0.0)))
        if record:
            run.interest[k - 1, :w] = intr
            run.cash[k - 1, :w] = cash
            if w_next < w:  # loans at maturity: nothing in their later periods
                run.interest[k:, w_next:w] = 0.0
                run.cash[k:, w_next:w] = 0.0
        now = by_made[at_made[k] : at_made[k + 1]]
        if now.size:
            balance_at[now] = bal[now]
            interest_at[now] = cum[now]
        after_made = by_made[at_made[k - 1] : at_made[k]]
        after_made = after_made[after_made < w]
        if after_made.size:
            next_pay[after_made] = cash[after_made]
        reg = by_reg[at_reg[k] : at_reg[k + 1]]
        if reg.size:
            regular[reg] = paid[reg]
    if max(peak, float(np.abs(bal).max(initial=0.0))) > bound:
        return False
    made = np.minimum(terms.made, rows)
    level = not any_cover
    if level:
        # Payments before the last are all P: what was paid follows from the counts.
        paid_all = (rows - 1) * terms.base + run.final_payment + run.balloon
        paid = np.where(made >= rows, paid_all, made * terms.base)
        balance = balance_at.astype(np.int64)
        run.interest_to_date[:] = paid - (terms.principal - balance)
        run.total_interest[:] = paid_all - terms.principal
    else:
        run.interest_to_date[:] = interest_at.astype(np.int64)
        run.total_interest[:] = cum.astype(np.int64)
    run.made[:] = made
    run.balance[:] = balance_at.astype(np.int64)
    run.paid[:] = terms.principal - run.balance + run.interest_to_date
    run.next_payment[:] = np.where(made < rows, next_pay.astype(np.int64), 0)
    run.regular[:] = regular.astype(np.int64)
    return True


def _step(terms: Any, run: Any, record: bool, mode: str) -> None:
    """The int64 (or Python-integer) pass: the same rules, exact for any terms."""
    size = terms.term.size
    horizon = int(terms.term.max(initial=0))
    kind: Any = np.int64 if mode == "int" else object
    widths = np.searchsorted(-terms.term, -np.arange(1, horizon + 2), side="right")
    varying = np.ndim(terms.num) == 2
    bal = terms.principal.astype(kind)
    balloon = terms.balloon.astype(kind)
    unit = (terms.balloon == 0).astype(kind)  # closes when B' - F < unit
    base_after = terms.base.astype(kind)
    cover_after = terms.cover.astype(kind)
    only = terms.only
    base = np.where(only > 0, 0, base_after).astype(kind)
    cover = np.where(only > 0, 1, cover_after).astype(kind)
    any_cover = bool(terms.cover.any() or (only > 0).any())
    any_balloon = bool((terms.balloon > 0).any())
    cum = np.zeros(size, dtype=kind)
    done = np.zeros(size, dtype=bool)
    rows = run.rows
    balance_at = terms.principal.copy()
    interest_at = np.zeros(size, dtype=np.int64)
    next_pay = np.zeros(size, dtype=np.int64)
    regular = terms.base.copy()
    by_made, at_made = _groups(terms.made, horizon)
    by_only, at_only = _groups(only, horizon)
    by_reg, at_reg = _groups(terms.regular_at, horizon)
    if record:
        run.interest = np.zeros((horizon, size), dtype=np.float64)
        run.cash = np.zeros((horizon, size), dtype=np.float64)
    den = terms.den.astype(kind)
    num = np.asarray(terms.num).astype(kind)
    odd = np.flatnonzero(terms.odd)
    for k in range(1, horizon + 1):
        w, w_next = int(widths[k - 1]), int(widths[k])
        b = bal[:w]
        if k > 1:
            switch = by_only[at_only[k - 1] : at_only[k]]
            switch = switch[only[switch] > 0]
            base[switch], cover[switch] = base_after[switch], cover_after[switch]
        n_row = num[k - 1, :w] if varying else num[:w]
        intr = interest_cents(b, n_row, den[:w], HALF_UP).astype(kind)
        if k == 1 and odd.size:
            first = interest_cents(
                terms.principal[odd].astype(object),
                terms.first_num[odd],
                terms.first_den[odd],
                HALF_UP,
            )
            intr[odd] = first.astype(kind)
        pay = base[:w] + cover[:w] * intr if any_cover else base[:w].copy()
        due = b + intr
        after = due - pay
        gap = after[:w_next] - balloon[:w_next] if any_balloon else after[:w_next]
        early = np.flatnonzero(np.asarray(gap < unit[:w_next], dtype=bool))
        final = np.arange(w_next, w)
        final = final[~done[final]]
        closing = np.concatenate([early, final]) if early.size else final
        cash = pay
        if closing.size:
            owed = balloon[closing]
            last = due[closing] - owed
            pay[closing] = last
            after[closing] = 0
            rows[closing] = k
            run.final_payment[closing] = np.asarray(last).astype(np.int64)
            run.balloon[closing] = np.asarray(owed).astype(np.int64)
            done[closing] = True
            cash = pay.copy()
            cash[closing] += owed
            if early.size:
                base[early] = cover[early] = balloon[early] = unit[early] = 0
        bal[:w] = after
        cum[:w] += intr
        if record:
            run.interest[k - 1, :w] = intr
            run.cash[k - 1, :w] = cash
        now = by_made[at_made[k] : at_made[k + 1]]
        if now.size:
            balance_at[now] = np.asarray(bal[now]).astype(np.int64)
            interest_at[now] = np.asarray(cum[now]).astype(np.int64)
        after_made = by_made[at_made[k - 1] : at_made[k]]
        after_made = after_made[after_made < w]
        if after_made.size:
            next_pay[after_made] = np.asarray(cash[after_made]).astype(np.int64)
        reg = by_reg[at_reg[k] : at_reg[k + 1]]
        if reg.size:
            regular[reg] = np.asarray(pay[reg]).astype(np.int64)
    run.made[:] = np.minimum(terms.made, rows)
    run.balance[:] = balance_at
    run.interest_to_date[:] = interest_at
    run.paid[:] = terms.principal - balance_at + interest_at
    run.next_payment[:] = np.where(run.made < rows, next_pay, 0)
    run.regular[:] = regular
    run.total_interest[:] = np.asarray(cum).astype(np.int64)


def exact_mode(terms: Any) -> str:
    """'float', 'int' or 'object': the arithmetic a chunk's interest can be done in exactly."""
    num = np.asarray(terms.num)
    widest = 2 * int(terms.principal.max(initial=0)) + int(np.abs(terms.base).max(initial=0)) + 1
    n_max = int(num.max(initial=0))
    d_max = int(terms.den.max(initial=1))
    highest = num.max(axis=0) if num.ndim == 2 else num
    rate_max = float((highest / terms.den).max(initial=0.0))
    if (
        widest * max(n_max, 1) < _FLOAT_EXACT
        and widest * rate_max < _X_LIMIT
        and d_max < _FLOAT_EXACT
    ):
        return "float"
    return "int" if max(n_max, 1) * d_max < _BIG else "object"
