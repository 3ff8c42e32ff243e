"""The fast path of the schedule engine, for ordinary terms (same cents as the general path).

See the notes below for how it stays exact; :func:`run_fast` returns ``None``
for any batch it cannot vouch for, and :func:`amort.schedule.run` then takes
the general path.
"""

from __future__ import annotations

import os
import threading
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from amort.batch import (
    BatchTerms,
    BoolArray,
    CentsTable,
    IntArray,
    advance_remainder,
    interest_cents,
)
from amort.money import Rounding

# -- the fast path ---------------------------------------------------------------------
#
# For ordinary terms (non-negative principal, balloon and rate, int64 rates, balances far
# below 2**50 cents) every money value is an integer that float64 holds exactly, and so
# are the sums and products the step needs. The fast path keeps balances in float64 and
# finds each period's interest with two float operations and one exact check:
#
#   x = B (n / d) is within 2**-12 of B n / d (|x| < 2**38, error ~ 2**-52 |x|), so
#   J = floor(x + c) is the rounded interest or one less; the comparison of the exact
#   products (J + h) d <= B n (h = 1/2 half-up, 1 down; J d < B n for up) adds the cent.
#   Half-even then takes the cent back at an exact tie with an odd result.
#
# A running bound on the balances (checked against the real maximum when it gets loose)
# keeps those limits; past them the batch goes to _run_general.
#
# Closing: a loan closes at its last period, or earlier when the balance after the step
# reaches its threshold: F in arrears (B + I(B) - P <= F is "due <= P"), y + I(y) in
# advance (B - P <= y, and b + I(b) is strictly increasing in b). Closing rows are
# settled in exact int64 by _close with _run_general's own rules.
#
# Loans are sorted by their last period, longest first, so the loans still running at
# period k are a prefix of the order; a loan that closes early rides along frozen (zero
# rate and payment, a balance above every threshold) until more than half of the prefix
# is frozen, when the survivors are packed into a new segment. Each period writes one
# row of balances into a segment's period-major buffer; between two balances the
# payment is level, so the table's rows follow from the balances alone (interest =
# payment - (B_t - B_{t+1})), each loan's last row from its settlement. The table is
# laid out in blocks of loans through a small tile (a cache-friendly transpose); loans
# already in term order are laid out chunk by chunk while a second thread makes the
# kernel supply the next chunk's pages.

_FLOAT_EXACT = 2.0**50  # |products| below this stay exact in float64 arithmetic
_X_LIMIT = 2.0**38  # |B n / d| below this keeps x within 2**-12 of exact
_BIAS = 2.0**-12
_CHUNK = 16_384  # loans stepped together: their vectors stay in the L2 cache
_CELLS = 2**25  # float64 cells per segment buffer (256 MiB)
_BLOCK = 128  # loans per block when the rows are laid out loan by loan
_UPPER_ROWS = 2**28  # largest row bound reserved up front (2 GiB a column)
_PAGE = 512  # int64 cells in a 4 KiB page
_PIECE = 2**19  # rows touched between two looks at the stop flag (4 MiB a column)
_TOUCH_MIN = 2**18  # fewer rows than this are not worth a second thread
_TOUCH_MAX = 2**23  # rows touched ahead at most (512 MiB over the eight columns)
_CORES = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1
_OFFSET = {
    Rounding.HALF_UP: 0.5 - _BIAS,
    Rounding.HALF_EVEN: 0.5 - _BIAS,
    Rounding.DOWN: -_BIAS,
    Rounding.UP: 1.0 - _BIAS,
}


class _TooLargeError(Exception):
    """A balance outgrew the range where the float64 step is exact."""


@dataclass(frozen=True)
class _Segment:
    """Period-major balances: row t opens period ``first + t``, column c is loan ``loans[c]``.

    The last row holds the balances after the segment's last period.
    """

    first: int
    loans: IntArray
    balances: npt.NDArray[np.float64]


@dataclass
class _Book:
    """The terms of the batch as the fast path uses them (index = loan)."""

    mode: Rounding
    principal: IntArray
    num: IntArray
    den: IntArray
    payment: IntArray
    balloon: IntArray
    last: IntArray
    advance: BoolArray
    remainder: IntArray
    threshold: npt.NDArray[np.float64]
    frozen_balance: float
    rate_max: float
    num_max: float
    payment_max: float
    rows: IntArray
    final_payment: IntArray
    final_interest: IntArray
    balloon_paid: IntArray


def _book(terms: BatchTerms, mode: Rounding) -> _Book | None:
    """Return the fast path's view of the terms, or None when it cannot vouch for them."""
    arrays = (
        terms.principal,
        terms.rate_num,
        terms.rate_den,
        terms.payment,
        terms.periods,
        terms.balloon,
    )
    if terms.size == 0 or any(a.ndim != 1 or a.dtype.kind not in "iu" for a in arrays):
        return None
    if terms.advance.dtype != np.bool_ or terms.needs_big_integers:
        return None
    principal, num, den, payment, last, balloon = (a.astype(np.int64) for a in arrays)
    if int(last.max()) < 1 or int(last.max()) > 10_000_000:
        return None
    if principal.min() < 0 or balloon.min() < 0 or num.min() < 0 or den.min() < 1:
        return None
    limit = _FLOAT_EXACT / 4
    money = max(int(principal.max()), int(balloon.max()), int(np.abs(payment).max()))
    if money >= limit or int(den.max()) >= limit:
        return None
    advance = terms.advance.copy()
    remainder = advance_remainder(terms, mode, np.int64).astype(np.int64)
    grown = remainder + interest_cents(remainder, num, den, mode)
    threshold = np.where(advance, grown, balloon)
    if int(np.abs(threshold).max()) >= limit:
        return None
    with np.errstate(all="ignore"):
        rate_max = float((num / den).max()) * (1 + 1e-12)
    loans = terms.size
    return _Book(
        mode=mode,
        principal=principal,
        num=num,
        den=den,
        payment=payment,
        balloon=balloon,
        last=last,
        advance=advance,
        remainder=remainder,
        threshold=threshold.astype(np.float64),
        frozen_balance=float(threshold.max()) + 1.0,
        rate_max=rate_max,
        num_max=float(num.max()),
        payment_max=float(np.abs(payment).max()),
        rows=np.zeros(loans, dtype=np.int64),
        final_payment=np.zeros(loans, dtype=np.int64),
        final_interest=np.zeros(loans, dtype=np.int64),
        balloon_paid=np.zeros(loans, dtype=np.int64),
    )


def run_fast(terms: BatchTerms, mode: Rounding) -> CentsTable | None:
    """Run the batch on the float64 fast path; None when the general path must run it."""
    book = _book(terms, mode)
    if book is None:
        return None
    last = book.last
    running = int(np.count_nonzero(last >= 1))
    buffers = _Buffers()
    # The table is allocated for every loan running to its last period and cut to its
    # length at the end (unless that bound is far too large to reserve).
    upper = int(np.maximum(last, 0).sum())
    out = _allocate(upper) if upper <= _UPPER_ROWS else None
    touch = _Prefault(out)
    try:
        if out is not None and bool((last[:-1] >= last[1:]).all()):
            return _run_in_order(book, running, buffers, out, touch)
        order = np.argsort(-np.maximum(last, 0), kind="stable").astype(np.int64)
        touch.start(0, upper)
        segments = []
        for start in range(0, running, _CHUNK):
            chunk = order[start : min(start + _CHUNK, running)]
            segments += _step_chunk(book, chunk, buffers)
    except _TooLargeError:
        return None
    finally:
        touch.join()
    rows = book.rows
    offsets = np.zeros(rows.size + 1, dtype=np.int64)
    np.cumsum(rows, out=offsets[1:])
    total = int(offsets[-1])
    out = _allocate(total) if out is None else out
    _lay_out(book, segments, offsets, out)
    _settle(book, slice(0, rows.size), offsets, out)
    return _table(book, _cut(out, total))


def _run_in_order(
    book: _Book, running: int, buffers: _Buffers, out: dict[str, IntArray], touch: _Prefault
) -> CentsTable:
    """Run loans already in term order (longest first), laying out each chunk at once.

    Chunk by chunk the loans' rows follow one another in the table, so each chunk is
    written as soon as it is stepped and its buffers then serve the next chunk. While
    one chunk is written, a second thread touches the pages of the next one's rows.
    """
    rows = book.rows
    bounds = np.maximum(book.last, 0)
    offsets = np.zeros(rows.size + 1, dtype=np.int64)
    total = 0
    touch.start(0, int(bounds[:_CHUNK].sum()))
    for start in range(0, running, _CHUNK):
        stop = min(start + _CHUNK, running)
        segments = _step_chunk(book, np.arange(start, stop, dtype=np.int64), buffers)
        np.cumsum(rows[start:stop], out=offsets[start + 1 : stop + 1])
        offsets[start + 1 : stop + 1] += total
        total = int(offsets[stop])
        touch.join()
        # Rows from ``total`` on are no one's yet: safe to touch while this chunk is written.
        touch.start(total, total + int(bounds[stop : stop + _CHUNK].sum()))
        _lay_out(book, segments, offsets, out)
        _settle(book, slice(start, stop), offsets, out)
        buffers.release()
    touch.join()
    offsets[running + 1 :] = total
    return _table(book, _cut(out, total))


def _allocate(size: int) -> dict[str, IntArray]:
    return {name: np.empty(size, dtype=np.int64) for name in _COLUMNS}


def _cut(out: dict[str, IntArray], size: int) -> dict[str, IntArray]:
    """Shrink the columns to ``size`` rows in place (the allocation shrinks, no copy)."""
    for column in out.values():
        if column.size != size:
            column.resize(size, refcheck=False)
    return out


class _Prefault:
    """Writes a zero to every page of some rows of the table from a second thread.

    The first write to a page makes the kernel supply (and clear) it; done here, on the
    second core, it overlaps the stepping and the writing of other rows. The caller
    only lets it touch rows that nothing else writes until :meth:`join` returns, and
    ``join`` stops it at the next piece: pages it did not reach are simply touched by
    the writes themselves.
    """

    def __init__(self, out: dict[str, IntArray] | None) -> None:
        self.out = out if _CORES > 1 else None
        self.thread: threading.Thread | None = None
        self.stop = threading.Event()

    def start(self, lo: int, hi: int) -> None:
        """Start touching rows ``lo .. hi - 1`` of every column (at most _TOUCH_MAX rows).

        The rows are a bound: loans that close early leave some unused, and the cap
        keeps what is touched in vain small. Small tables are not worth a thread.
        """
        hi = min(hi, lo + _TOUCH_MAX)
        if self.out is not None and hi - lo >= _TOUCH_MIN:
            self.stop = threading.Event()
            args = (list(self.out.values()), lo, hi, self.stop)
            self.thread = threading.Thread(target=_touch, args=args, daemon=True)
            self.thread.start()

    def join(self) -> None:
        """Stop touching and wait for the piece under way."""
        if self.thread is not None:
            self.stop.set()
            self.thread.join()
            self.thread = None


def _touch(columns: list[IntArray], lo: int, hi: int, stop: threading.Event) -> None:
    for at in range(lo, hi, _PIECE):
        if stop.is_set():
            return
        for column in columns:
            np.copyto(column[at : min(at + _PIECE, hi) : _PAGE], 0)  # releases the GIL


class _Buffers:
    """Period-major buffers for the steps, handed back for reuse once laid out."""

    def __init__(self) -> None:
        self.free: dict[tuple[int, int], list[npt.NDArray[np.float64]]] = {}
        self.lent: list[npt.NDArray[np.float64]] = []

    def take(self, shape: tuple[int, int]) -> npt.NDArray[np.float64]:
        """Return a (steps + 1, loans) float64 buffer holding finite numbers."""
        spare = self.free.get(shape)
        # Zeros (not empty) so that the cells no step writes hold harmless numbers.
        buffer = spare.pop() if spare else np.zeros(shape, dtype=np.float64)
        self.lent.append(buffer)
        return buffer

    def release(self) -> None:
        """Take back every buffer lent so far."""
        for buffer in self.lent:
            self.free.setdefault(buffer.shape, []).append(buffer)
        self.lent = []


def _widths(last: IntArray, first: int, stop: int) -> IntArray:
    """Loans (sorted by ``last``, descending) still due at periods ``first .. stop``."""
    periods = np.arange(first, stop + 1, dtype=np.int64)
    return np.searchsorted(-last, -periods, side="right").astype(np.int64)


def _step_chunk(book: _Book, loans: IntArray, buffers: _Buffers) -> list[_Segment]:
    """Step the loans ``loans`` (sorted by last period, longest first) to their closing."""
    segments: list[_Segment] = []
    balance = book.principal[loans].astype(np.float64)
    first = 1
    while loans.size:
        segment, loans, balance, first = _step_segment(book, loans, balance, first, buffers)
        segments.append(segment)
    return segments


def _step_segment(
    book: _Book, loans: IntArray, carry: npt.NDArray[np.float64], first: int, buffers: _Buffers
) -> tuple[_Segment, IntArray, npt.NDArray[np.float64], int]:
    """Step ``loans`` from period ``first`` until all close or most have closed early.

    Returns the segment written and the loans still open (with their balances and the
    next period) when the segment was cut short to pack them.
    """
    mode = book.mode
    last = book.last[loans]
    horizon = int(last[0])
    size = loans.size
    # At most about _CELLS cells a buffer; a long horizon continues in a new segment.
    steps = min(horizon - first + 1, max(64, _CELLS // size))
    width = _widths(last, first, first + steps)
    # Row t holds the balances at the start of period first + t, row t + 1 those after
    # it; the interest of a period is their difference plus the payment.
    balances = buffers.take((steps + 1, size))
    balances[0] = carry
    num = book.num[loans].astype(np.float64)
    den = book.den[loans].astype(np.float64)
    rate = num / den
    pay = book.payment[loans].astype(np.float64)
    advance = book.advance[loans]
    any_advance = bool(advance.any())
    pay_first = np.where(advance, pay, 0.0)
    threshold = book.threshold[loans]
    uniform = bool((threshold == threshold[0]).all())
    floor_at = float(threshold.max())
    done = np.zeros(size, dtype=bool)
    frozen = 0  # closed-early loans inside the running prefix
    offset = _OFFSET[mode]
    work = np.empty((5, size), dtype=np.float64)
    flags = np.empty(size, dtype=bool)
    # Bound on max |balance| of the running loans, to keep every product exact.
    bound = max(float(np.abs(carry).max(initial=0.0)), book.frozen_balance)
    w = -1
    for t in range(steps):
        k = first + t
        if int(width[t]) != w:
            w = int(width[t])
            v_rate, v_num, v_den, v_pay = rate[:w], num[:w], den[:w], pay[:w]
            v_first, v_threshold = pay_first[:w], threshold[:w]
            t1, t2, t3, tb, intr = (row[:w] for row in work)
            v_flags = flags[:w]
        w_next = int(width[t + 1])
        base_bound = bound + book.payment_max
        if base_bound * max(book.num_max, 1.0) >= _FLOAT_EXACT or (
            base_bound * book.rate_max >= _X_LIMIT
        ):
            bound = max(float(np.abs(balances[t, :w]).max()), book.frozen_balance)
            base_bound = bound + book.payment_max
            if base_bound * max(book.num_max, 1.0) >= _FLOAT_EXACT or (
                base_bound * book.rate_max >= _X_LIMIT
            ):
                raise _TooLargeError
        bound = bound + book.payment_max + 1.0 + base_bound * book.rate_max
        b = balances[t, :w]
        after = balances[t + 1, :w]
        base = np.subtract(b, v_first, out=tb) if any_advance else b
        # interest: J = floor(B i + c), plus one where the exact check says so
        np.multiply(base, v_rate, out=t1)
        np.add(t1, offset, out=t1)
        np.floor(t1, out=t1)
        np.multiply(base, v_num, out=t3)
        if mode is Rounding.UP:
            np.multiply(t1, v_den, out=t2)
            np.less(t2, t3, out=v_flags)
        else:
            np.add(t1, 1.0 if mode is Rounding.DOWN else 0.5, out=t2)
            np.multiply(t2, v_den, out=t2)
            np.less_equal(t2, t3, out=v_flags)
        np.add(t1, v_flags, out=intr)
        if mode is Rounding.HALF_EVEN:
            # A tie (J - 1/2) d = B n went up; half-even keeps the even cent.
            np.subtract(intr, 0.5, out=t2)
            np.multiply(t2, v_den, out=t2)
            np.equal(t2, t3, out=v_flags)
            if v_flags.any():
                tie = np.flatnonzero(v_flags)
                tie = tie[intr[tie] % 2 == 1]
                intr[tie] -= 1.0
        np.add(b, intr, out=after)
        np.subtract(after, v_pay, out=after)
        # A loan closes at its last period, or earlier when the balance would reach its
        # threshold (F in arrears, y + interest(y) in advance; see _close).
        if uniform:
            early_hit = bool(after[:w_next].min(initial=np.inf) <= floor_at)
        else:
            np.subtract(after, v_threshold, out=t2)
            early_hit = bool(t2[:w_next].min(initial=np.inf) <= 0.0)
        closing = None
        if w_next < w:
            closing = np.flatnonzero(~done[w_next:w]) + w_next
            frozen -= int(np.count_nonzero(done[w_next:w]))
        early = None
        if early_hit:
            early = np.flatnonzero(after[:w_next] <= v_threshold[:w_next])
            closing = early if closing is None else np.concatenate([early, closing])
        if closing is not None and closing.size:
            _close(book, loans[closing], balances[t, closing], k)
            done[closing] = True
        if early is not None and early.size:
            # Frozen: no rate, no payment, a balance above every threshold.
            after[early] = book.frozen_balance
            for vector in (rate, num, pay, pay_first):
                vector[early] = 0.0
            frozen += early.size
        if w_next == frozen:
            segment = _Segment(first, loans, balances[: t + 2])
            return segment, loans[:0], carry[:0], 0
        if t + 1 == steps or (frozen * 2 > w_next and w_next >= 64):
            # Pack the loans still open into a new segment from period k + 1.
            keep = np.flatnonzero(~done[:w_next])
            segment = _Segment(first, loans, balances[: t + 2])
            return segment, loans[keep], after[keep].copy(), k + 1
    raise AssertionError("every loan closes by its last period")  # pragma: no cover


def _close(book: _Book, who: IntArray, opening: npt.NDArray[np.float64], k: int) -> None:
    """Settle loans ``who`` in period ``k`` from their opening balances, in exact int64 cents.

    The same rules as _run_general: in arrears the payment is ``B + interest - F``; in
    advance it is ``B - y`` and the interest is earned on ``y``.
    """
    mode = book.mode
    balance = opening.astype(np.int64)
    num, den = book.num[who], book.den[who]
    intr = interest_cents(balance, num, den, mode)
    pay = balance + intr - book.balloon[who]
    advance = book.advance[who]
    if advance.any():
        pay_adv = balance - book.remainder[who]
        intr_adv = interest_cents(np.maximum(balance - pay_adv, 0), num, den, mode)
        pay = np.where(advance, pay_adv, pay)
        intr = np.where(advance, intr_adv, intr)
    book.rows[who] = k
    book.final_payment[who] = pay
    book.final_interest[who] = intr
    book.balloon_paid[who] = balance - pay + intr


def _lay_out(
    book: _Book, segments: list[_Segment], offsets: IntArray, out: dict[str, IntArray]
) -> None:
    """Write the segments' period-major balances into the loan-then-period table."""
    blocks = [
        (segment, c0, min(c0 + _BLOCK, segment.loans.size))
        for segment in segments
        for c0 in range(0, segment.loans.size, _BLOCK)
    ]
    _lay_out_blocks(book, blocks, offsets, out)


def _settle(book: _Book, loans: slice, offsets: IntArray, out: dict[str, IntArray]) -> None:
    """Rewrite the last row of each of ``loans``: its own payment, interest and balloon."""
    rows = book.rows[loans]
    has_rows = rows > 0
    ends = offsets[1:][loans][has_rows] - 1
    balloon = book.balloon_paid[loans][has_rows]
    pay = book.final_payment[loans][has_rows]
    principal = pay - book.final_interest[loans][has_rows]
    out["balloon"][ends] = balloon
    out["payment"][ends] = pay
    out["interest"][ends] = book.final_interest[loans][has_rows]
    out["principal"][ends] = principal
    out["closing"][ends] = out["opening"][ends] - principal - balloon


def _table(book: _Book, out: dict[str, IntArray]) -> CentsTable:
    return CentsTable(
        loan=out["loan"],
        period=out["period"],
        opening=out["opening"],
        payment=out["payment"],
        interest=out["interest"],
        principal=out["principal"],
        closing=out["closing"],
        balloon=out["balloon"],
        rows=book.rows,
        final_payment=book.final_payment,
        balloon_paid=book.balloon_paid,
    )


_COLUMNS = ("loan", "period", "opening", "payment", "interest", "principal", "closing", "balloon")


def _lay_out_blocks(
    book: _Book,
    blocks: list[tuple[_Segment, int, int]],
    offsets: IntArray,
    out: dict[str, IntArray],
) -> None:
    """Copy blocks of segment columns into the table (rows before each loan's last).

    Between two balances of a loan the payment is level, so with ``B_t`` the opening
    balance: closing = ``B_{t+1}``, principal = ``B_t - B_{t+1}``, interest = payment -
    principal. Each loan's last row is rewritten afterwards from its exact settlement.
    """
    tile = np.empty((0, 0))
    step = np.empty(0, dtype=np.int64)
    for segment, c0, c1 in blocks:
        steps = segment.balances.shape[0] - 1
        first = segment.first
        who = segment.loans[c0:c1]
        count = np.clip(book.rows[who] - (first - 1), 0, steps)
        start = offsets[who] + (first - 1)
        n = c1 - c0
        if tile.shape != (steps + 1, n):
            tile = np.empty((steps + 1, n), dtype=np.float64)
        if step.size != steps:
            step = np.arange(steps, dtype=np.int64)
        # Transpose through a small contiguous tile: both copies stay cache-friendly.
        np.copyto(tile, segment.balances[:, c0:c1])
        pay = book.payment[who]
        full = int(count.min()) == steps and bool((np.diff(start) == steps).all())
        if full:
            at = slice(int(start[0]), int(start[0]) + n * steps)
            cols = [out[name][at].reshape(n, steps) for name in _COLUMNS]
        else:
            cols = [np.empty((n, steps), dtype=np.int64) for _ in _COLUMNS]
        lo, pe, o, p, i, pr, cl, bl = cols
        np.copyto(o, tile[:-1].T, casting="unsafe")
        cl[:, :-1] = o[:, 1:]
        np.copyto(cl[:, -1], tile[-1], casting="unsafe")
        np.subtract(o, cl, out=pr)
        p[...] = pay[:, None]
        np.subtract(p, pr, out=i)
        lo[...] = who[:, None]
        np.add(step, first, out=pe[0])
        pe[1:] = pe[0]
        bl[...] = 0
        if not full:
            mask = step[None, :] < count[:, None]
            dest = (start[:, None] + step[None, :])[mask]
            for name, col in zip(_COLUMNS, cols, strict=True):
                out[name][dest] = col[mask]
