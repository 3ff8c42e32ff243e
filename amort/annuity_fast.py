"""The annuities' one-period rules in exact cents, and the int64 fast path that uses them.

:func:`payout_step` and :func:`deposit_step` are the rules of one period
(module docstring of :mod:`amort.annuity_cents`), on integer cents (``int64``
or Python integers in object arrays). The general path of
:func:`amort.annuity_cents.run_path` applies them to every period; the fast
path here (:func:`run_fast`) applies them only where an annuity closes, and
steps every other period with the same cents by cheaper means. It returns
``None`` for a batch it cannot vouch for, and the general path runs it.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from amort.batch import BatchTerms, advance_remainder, exact_divmod, interest_cents
from amort.money import Rounding

if TYPE_CHECKING:
    from amort.annuity_cents import PathTerms

IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
FloatArray = npt.NDArray[np.float64]

# -- the rules of one period ---------------------------------------------------------------------


def reaching(target: IntArray, num: IntArray, den: IntArray, mode: Rounding) -> IntArray:
    """Return the smallest ``y`` with ``y + round(y i) >= target``, elementwise (``i >= 0``).

    ``y + round(y i)`` rises by at least 1 with each cent of ``y``, and
    ``floor(T / (1 + i))`` lies within two cents of the answer.

    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> reaching(one(10_100), one(1), one(100), Rounding.HALF_UP).tolist()  # 100.00 at 1 %
    [10000]
    """
    q, _ = exact_divmod(target * den, den + num)
    best = q + 2
    for shift in (1, 0, -1):
        candidate = np.maximum(q + shift, 0)
        reached = candidate + interest_cents(candidate, num, den, mode) >= target
        best = np.where(reached, candidate, best)
    return np.asarray(best)


def goal_sides(terms: PathTerms, mode: Rounding, dtype: Any) -> IntArray | None:
    """Return what an advance annuity's goal needs before its last interest, or None.

    Payouts in advance: the value ``y`` left after the last payment, with
    ``y + round(y i)`` the residual (:func:`amort.batch.advance_remainder`).
    Accumulations in advance: the smallest value that reaches the target
    (:func:`reaching`). None without a goal or without an annuity in advance.
    """
    if terms.goal is None or not terms.advance.any():
        return None
    if terms.deposits:
        num, den = terms.rate_num.astype(dtype), terms.rate_den.astype(dtype)
        return reaching(terms.goal.astype(dtype), num, den, mode)
    zero = np.zeros(terms.size, dtype=np.int64)
    return advance_remainder(
        BatchTerms(zero, terms.rate_num, terms.rate_den, zero, terms.periods, terms.goal,
                   terms.advance),
        mode,
        dtype,
    )  # fmt: skip


def payout_step(
    value: IntArray,
    c: IntArray,
    num: IntArray,
    den: IntArray,
    adv: BoolArray,
    final: BoolArray,
    goal: IntArray | None,
    remainder: IntArray | None,
    mode: Rounding,
) -> tuple[IntArray, IntArray, BoolArray, IntArray]:
    """One period of payouts: (payment, interest, closes, payment the goal needed).

    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> pay, intr, closes, _ = payout_step(one(10_000), one(3_000), one(1), one(100),
    ...     np.array([False]), np.array([False]), None, None, Rounding.HALF_UP)
    >>> pay.tolist(), intr.tolist(), closes.tolist()  # 100.00 earns 1.00, pays 30.00
    ([3000], [100], [False])
    """
    some_advance = bool(adv.any())
    if some_advance:
        # In advance the payment is known before the interest: what stays earns it.
        if goal is None:
            closes_adv = final | (c >= value)
            pay_adv = np.minimum(c, value)
        else:
            assert remainder is not None
            left = value - remainder
            closes_adv = final | (left < c) | ((left == c) & (remainder == 0))
            pay_adv = np.where(closes_adv, left, c)
        base = np.where(adv, np.maximum(value - pay_adv, 0), value)
    else:
        base = value
    intr = interest_cents(base, num, den, mode)
    if goal is None:
        # No residual to leave: pay as scheduled, unless the fund runs out first.
        available = value + intr
        closes = final | (c >= available)
        pay = np.minimum(c, available)
    else:
        due = value + intr - goal
        # As the loan engine: a fund that merely stays at the residual runs on to the end.
        closes = final | (due < c) | ((due == c) & (goal == 0))
        pay = np.where(closes, due, c)
    if some_advance:
        pay = np.where(adv, pay_adv, pay)
        closes = np.where(adv, closes_adv, closes)
    return pay, intr, np.asarray(closes, dtype=bool), pay


def deposit_step(
    value: IntArray,
    c: IntArray,
    num: IntArray,
    den: IntArray,
    adv: BoolArray,
    final: BoolArray,
    goal: IntArray | None,
    reach: IntArray | None,
    mode: Rounding,
) -> tuple[IntArray, IntArray, BoolArray, IntArray]:
    """One period of deposits: (deposit, interest, closes, deposit the target needed).

    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> dep, intr, closes, need = deposit_step(one(10_000), one(3_000), one(1), one(100),
    ...     np.array([False]), np.array([False]), one(12_000), None, Rounding.HALF_UP)
    >>> dep.tolist(), intr.tolist(), closes.tolist(), need.tolist()  # 100 + 1 + 19 = 120
    ([1900], [100], [True], [1900])
    """
    if goal is None:
        # Every deposit as scheduled; in advance it earns the period's interest.
        intr = interest_cents(np.where(adv, value + c, value), num, den, mode)
        return c, intr, np.asarray(final, dtype=bool), c
    some_advance = bool(adv.any())
    if some_advance:
        # In advance the deposit is known before the interest: the smallest that reaches.
        assert reach is not None
        need_adv = reach - value
        closes_adv = final | (need_adv <= c)
        dep_adv = np.where(closes_adv, np.maximum(need_adv, 0), c)
        base = np.where(adv, value + dep_adv, value)
    else:
        base = value
    intr = interest_cents(base, num, den, mode)
    need = goal - value - intr
    closes = final | (need <= c)
    dep = np.where(closes, np.maximum(need, 0), c)
    if some_advance:
        dep = np.where(adv, dep_adv, dep)
        closes = np.where(adv, closes_adv, closes)
        need = np.where(adv, need_adv, need)
    return dep, intr, np.asarray(closes, dtype=bool), np.asarray(need)


# -- the fast path -------------------------------------------------------------------------------
#
# Where every annuity goes on as scheduled, a period is one line: with V the opening value
# and c the flow, the base that earns interest is V (arrears) or V +/- c (advance), and the
# closing value is (V +/- c) + round(base i). Only the periods where an annuity closes need
# the full rules, and each of those is one exact call of payout_step / deposit_step on the
# annuities that close. Whether one closes is a comparison of that line's exact result:
#
#   accumulation with a target T (reach y_T in advance): closes when the value reaches it,
#       V + c + interest >= T in arrears, V + c >= y_T in advance;
#   payout (residual R, or none: R = 0; y_R in advance): closes when the value would fall
#       below what must stay, V - c + interest < R in arrears, V - c < y_R in advance; at
#       R = 0 "below" is "<= 0" (a fund that would empty closes), i.e. "< 1";
#   either: at its last period.
#
# The interest is exact in float64, every value an integer number of cents it holds
# exactly. x = base (n / d) is within 2**-13 of base n / d while x < 2**38 (float64 error
# ~ 2**-52 x), so J = floor(x + c_mode) is the rounded interest or one less, and the exact
# remainder r = base n - J d (both products below 2**53) adds the cent: r >= ceil(d / 2)
# in the half modes (c = 0), r >= d down (c = -2**-12), r >= 1 up (c = 1 - 2**-12).
# Half-even then takes the cent back at an exact tie (2 r = d) that left an odd cent. A
# running bound on the values (checked against the real maximum when it gets loose) keeps
# those limits; past them, or at a negative flow, run_fast gives up and the general path
# runs the batch.
#
# Annuities are stepped in chunks of consecutive ones, whose vectors stay in the cache.
# Each period writes one row of values into the chunk's period-major buffer; the table's
# rows follow from it (opening = row t, closing = row t + 1, the flow as scheduled, the
# interest their difference), each annuity's last row from its settlement. One that closes
# early rides along frozen (no rate, no flow, a threshold it cannot meet) until more than
# half of the chunk is frozen, when the rest are packed together. The table is written
# chunk by chunk, in blocks of annuities through a small tile (a cache-friendly transpose).

_X_LIMIT = 2.0**38  # x = base n / d below this keeps its float64 value within 2**-13
_PRODUCT_LIMIT = 2.0**52  # base x n below this: J d and base n exact in float64
_VALUE_LIMIT = 2.0**51  # values, and value + flow, below this
_DEN_LIMIT = 2**50
_BIAS = 2.0**-12
_CHUNK = 16_384  # annuities stepped together
_CELLS = 2**23  # float64 cells of a chunk's period-major buffer (64 MiB) at most
_BLOCK = 256  # annuities a block when the rows are laid out
_PACK = 64  # fewest annuities worth packing
_OFFSET = {
    Rounding.HALF_UP: 0.0,
    Rounding.HALF_EVEN: 0.0,
    Rounding.DOWN: -_BIAS,
    Rounding.UP: 1.0 - _BIAS,
}
_NEVER = 2.0**60  # a frozen annuity's threshold: beyond any value (sign by the comparison)
_NEGATIVE = 2**63  # an int64 flow viewed as uint64 at or above this is negative
_COLUMNS = ("annuity", "period", "opening", "flow", "interest", "closing")


class _TooLargeError(Exception):
    """A value outgrew the range where the fast step is exact."""


def run_fast(terms: PathTerms, mode: Rounding) -> dict[str, IntArray] | None:
    """Return the batch's table as :class:`~amort.annuity_cents.PathTable` fields, or None.

    Money in int64 cents; the same cents as the general path (the notes
    above). None when the batch has fewer than two annuities or some figure
    is outside the range the fast step is exact in: Python-integer rates, a
    denominator from 2**50, negative amounts, or a value whose interest
    would pass 2**38 cents or whose product with its rate numerator would
    pass 2**52.

    >>> from amort.annuity_cents import PathTerms
    >>> two = lambda *v: np.array(v, dtype=np.int64)
    >>> t = PathTerms(two(0, 0), two(1, 1), two(100, 100), np.full((3, 2), 10_000), two(3, 2),
    ...               np.array([False, True]), deposits=True)
    >>> table = run_fast(t, Rounding.HALF_UP)  # 100.00 a period at 1 %, arrears and advance
    >>> table["closing"].tolist()
    [10000, 20100, 30301, 10100, 20301]
    """
    batch = _Batch.build(terms, mode)
    if batch is None:
        return None
    width = max(_PACK, min(_CHUNK, _CELLS // (batch.horizon + 1)))
    total = 0
    try:
        for lo in range(0, terms.size, width):
            hi = min(lo + width, terms.size)
            total = batch.lay_out(lo, hi, batch.step_chunk(lo, hi), total)
    except _TooLargeError:
        return None
    for column in batch.out.values():
        if column.size != total:
            column.resize(total, refcheck=False)  # shrinks in place: no copy
    return {
        **batch.out,
        "rows": batch.rows,
        "final_flow": batch.final_flow,
        "final_needed": batch.final_needed,
    }


class _Batch:
    """The terms as the fast path uses them (index = annuity) and the table it fills."""

    def __init__(self, terms: PathTerms, mode: Rounding, side: IntArray | None) -> None:
        size = terms.size
        self.mode = mode
        self.deposits = terms.deposits
        self.flows = np.asarray(terms.flows, dtype=np.int64)
        self.opening = terms.opening.astype(np.int64)
        self.num = terms.rate_num.astype(np.int64)
        self.den = terms.rate_den.astype(np.int64)
        self.last = terms.periods.astype(np.int64)
        self.advance = terms.advance.astype(bool)
        self.goal = None if terms.goal is None else terms.goal.astype(np.int64)
        self.side = side
        self.horizon = int(self.last.max())
        self.rate = self.num / self.den
        # The remainder r = base n - J d that adds the cent (module notes).
        cent_at = self.den if mode is Rounding.DOWN else (self.den + 1) // 2
        self.cent_at = np.ones(size) if mode is Rounding.UP else cent_at.astype(np.float64)
        threshold = self._thresholds()
        self.threshold = None if threshold is None else threshold.astype(np.float64)
        upper = int(np.maximum(self.last, 0).sum())
        self.out = {name: np.empty(upper, dtype=np.int64) for name in _COLUMNS}
        self.rows = np.zeros(size, dtype=np.int64)
        self.final_flow = np.zeros(size, dtype=np.int64)
        self.final_needed = np.zeros(size, dtype=np.int64)
        self.final_interest = np.zeros(size, dtype=np.int64)
        self.final_closing = np.zeros(size, dtype=np.int64)
        self.buffer = np.empty(0, dtype=np.float64)

    @classmethod
    def build(cls, terms: PathTerms, mode: Rounding) -> _Batch | None:
        """Return the fast path's view of the terms, or None when it cannot vouch for them."""
        arrays = [terms.opening, terms.rate_num, terms.rate_den, terms.flows, terms.periods]
        if terms.goal is not None:
            arrays.append(terms.goal)
        if terms.size < 2 or any(a.dtype.kind not in "iu" for a in arrays) or terms.big:
            return None
        if terms.advance.dtype != np.bool_ or int(terms.periods.max()) < 1:
            return None
        if int(terms.opening.min()) < 0 or int(terms.rate_num.min()) < 0:
            return None
        if int(terms.rate_den.min()) < 1 or int(terms.rate_den.max()) >= _DEN_LIMIT:
            return None
        if (
            terms.goal is not None
            and not 0 <= int(terms.goal.min()) <= int(terms.goal.max()) < _VALUE_LIMIT
        ):
            return None
        return cls(terms, mode, goal_sides(terms, mode, np.int64))

    def _thresholds(self) -> IntArray | None:
        """Each annuity's closing threshold for the value the test compares (module notes)."""
        adv = self.advance
        if self.deposits:
            if self.goal is None:
                return None
            return self.goal if self.side is None else np.where(adv, self.side, self.goal)
        if self.goal is None:
            return np.ones(self.opening.size, dtype=np.int64)
        keep = self.goal if self.side is None else np.where(adv, self.side, self.goal)
        return np.where(keep == 0, 1, keep)

    def step_chunk(self, lo: int, hi: int) -> FloatArray:
        """Step annuities ``lo .. hi - 1`` to their closing; return their period-major values.

        Row t of the result opens period t + 1 (for each annuity, up to its last row).
        """
        size = hi - lo
        last = self.last[lo:hi]
        horizon = int(last.max())
        cells = (horizon + 1) * size
        if self.buffer.size < cells:
            # Zeros, not empty: cells no step writes (past an annuity's last row) must hold
            # finite numbers for the layout's casts.
            self.buffer = np.zeros(cells, dtype=np.float64)
        vals = self.buffer[:cells].reshape(horizon + 1, size)
        if horizon < 1:
            return vals
        _Chunk(self, lo, hi, vals).run(horizon)
        return vals

    def lay_out(self, lo: int, hi: int, vals: FloatArray, total: int) -> int:
        """Write the rows of annuities ``lo .. hi - 1`` from row ``total`` on; return the end."""
        rows = self.rows[lo:hi]
        starts = np.empty(rows.size + 1, dtype=np.int64)
        starts[0] = total
        np.cumsum(rows, out=starts[1:])
        starts[1:] += total
        out = self.out
        for c0 in range(0, hi - lo, _BLOCK):
            c1 = min(c0 + _BLOCK, hi - lo)
            count = rows[c0:c1]
            steps = int(count.max(initial=0))
            if steps == 0:
                continue
            n = c1 - c0
            # Transpose through a small contiguous tile: both copies stay cache-friendly.
            tile = np.ascontiguousarray(vals[: steps + 1, c0:c1])
            flows = self.flows[:steps, lo + c0 : lo + c1]
            at = slice(int(starts[c0]), int(starts[c1]))
            if int(count.min()) == steps:
                an, pe, o, f, i, cl = (out[name][at].reshape(n, steps) for name in _COLUMNS)
                np.copyto(o, tile[:-1].T, casting="unsafe")
                cl[:, :-1] = o[:, 1:]
                cl[:, -1] = tile[-1]
                np.copyto(f, flows.T)
                an[...] = np.arange(lo + c0, lo + c1, dtype=np.int64)[:, None]
                pe[0] = np.arange(1, steps + 1, dtype=np.int64)
                pe[1:] = pe[0]
            else:
                # Rows of different lengths: still one run of the table, annuity by annuity;
                # the mask picks each annuity's periods from the transposed tile.
                mask = np.arange(steps)[None, :] < count[:, None]
                an, pe, o, f, i, cl = (out[name][at] for name in _COLUMNS)
                np.copyto(o, tile[:-1].T[mask], casting="unsafe")
                np.copyto(cl, tile[1:].T[mask], casting="unsafe")
                np.copyto(f, flows.T[mask])
                an[...] = np.repeat(np.arange(lo + c0, lo + c1, dtype=np.int64), count)
                first = np.repeat(starts[c0:c1] - starts[c0], count)
                np.subtract(np.arange(1, an.size + 1, dtype=np.int64), first, out=pe)
            np.subtract(cl, o, out=i)
            (np.subtract if self.deposits else np.add)(i, f, out=i)
        # Each annuity's last row: its settlement.
        has = rows > 0
        ends = starts[1:][has] - 1
        who = np.arange(lo, hi)[has]
        out["flow"][ends] = self.final_flow[who]
        out["interest"][ends] = self.final_interest[who]
        out["closing"][ends] = self.final_closing[who]
        return int(starts[-1])


class _Chunk:
    """The stepping of one chunk of annuities (``lo .. hi - 1`` of the batch)."""

    def __init__(self, batch: _Batch, lo: int, hi: int, vals: FloatArray) -> None:
        self.batch, self.lo, self.vals = batch, lo, vals
        at = slice(lo, hi)
        self.pos = np.arange(hi - lo, dtype=np.int64)  # chunk columns of the working set
        self.packed = False
        # Working copies: a frozen annuity's rate, flow and threshold are overwritten.
        self.num = batch.num[at].astype(np.float64)
        self.den = batch.den[at].astype(np.float64)
        self.rate = batch.rate[at].copy()
        self.cent_at = batch.cent_at[at]
        self.adv = batch.advance[at]
        self.last = batch.last[at]
        self.threshold = None if batch.threshold is None else batch.threshold[at].copy()
        self.alive: FloatArray | None = None  # flow multiplier once some are frozen
        self.frozen = np.zeros(hi - lo, dtype=bool)
        self.n_frozen = 0
        self.bound = 0.0
        self.widest = 0
        self._vectors()

    def _vectors(self) -> None:
        """(Re)make the working vectors for the current working set."""
        size = self.pos.size
        self.t_c, self.t_bc, self.t_base, self.t_x, self.t_r, self.t_m = np.empty((6, size))
        self.t_after = (np.empty(size), np.empty(size))
        self.flags = np.empty(size, dtype=bool)
        self.adv_kind = "all" if bool(self.adv.all()) else "some" if self.adv.any() else "none"
        self.adv_float = self.adv.astype(np.float64)
        self.ends = set(np.unique(self.last).tolist())
        self.num_max = float(self.num.max(initial=0.0))
        self.rate_max = float(self.rate.max(initial=0.0)) * (1 + 1e-12)

    def run(self, horizon: int) -> None:
        """Step every period of the chunk, settling each annuity where it closes."""
        vals = self.vals
        vals[0] = self.batch.opening[self.lo : self.lo + vals.shape[1]]
        never = np.flatnonzero(self.last < 1)
        if never.size:
            self._freeze(never)
        value = vals[0]
        self.bound = float(value.max(initial=0.0))
        # The widest flow of the chunk, once: as uint64 a negative one is 2**63 or more.
        flows = self.batch.flows[:horizon, self.lo : self.lo + vals.shape[1]]
        self.widest = int(flows.view(np.uint64).max(initial=0))
        if self.widest >= _NEGATIVE:
            raise _TooLargeError  # a negative flow: outside the fast path's rules
        for t in range(horizon):
            if self.n_frozen == self.pos.size:
                return
            value = self._step(t, value)
        if self.n_frozen != self.pos.size:  # pragma: no cover
            raise AssertionError("every annuity closes by its last period")

    def _step(self, t: int, b: FloatArray) -> FloatArray:
        """Period t + 1: write the closing values, settle the annuities that close."""
        batch = self.batch
        deposits = batch.deposits
        row = batch.flows[t, self.lo : self.lo + self.vals.shape[1]]
        c_int = row[self.pos] if self.packed else row
        self._check_range(b)
        c = self.t_c
        np.copyto(c, c_int)
        if self.alive is not None:
            c *= self.alive
        bc = (np.add if deposits else np.subtract)(b, c, out=self.t_bc)
        if self.adv_kind == "none":
            base = b
        elif self.adv_kind == "all":
            base = bc
        else:
            base = np.multiply(c, self.adv_float, out=self.t_base)
            base = (np.add if deposits else np.subtract)(b, base, out=base)
        if self.packed:
            # Two buffers in turn: b (last period's values) must outlive this step.
            after = self.t_after[0] if b is not self.t_after[0] else self.t_after[1]
        else:
            after = self.vals[t + 1]
        self._interest(base, bc, after)
        closing = self._closing(bc, after, t + 1)
        if closing is not None:
            self._settle(closing, b, c_int, t + 1)
        if self.packed:
            self.vals[t + 1, self.pos] = after
        if self.n_frozen < self.pos.size and self.n_frozen * 2 > self.pos.size >= _PACK:
            return self._pack(after)
        return after

    def _check_range(self, b: FloatArray) -> None:
        """Keep every figure of the step inside its exact range (module notes), or give up."""
        for recheck in (False, True):
            if recheck:
                self.bound = float(b.max())  # the running bound got loose: the real one
            top = self.bound + self.widest
            exact = top * self.num_max < _PRODUCT_LIMIT and top * self.rate_max < _X_LIMIT
            if exact and top < _VALUE_LIMIT:
                break
        else:
            raise _TooLargeError
        # The next values: at most (V + c)(1 + i) + 1 (deposits), V (1 + i) + 1 (payouts).
        grows = top if self.batch.deposits else self.bound
        self.bound = grows * (1.0 + self.rate_max) + 2.0

    def _interest(self, base: FloatArray, bc: FloatArray, after: FloatArray) -> None:
        """Set ``after = bc + round(base x num / den)``, exactly (module notes)."""
        mode = self.batch.mode
        x = np.multiply(base, self.rate, out=self.t_x)
        if _OFFSET[mode]:
            x += _OFFSET[mode]
        np.floor(x, out=x)
        r = np.multiply(base, self.num, out=self.t_r)
        r -= np.multiply(x, self.den, out=self.t_m)
        np.greater_equal(r, self.cent_at, out=self.flags)
        np.add(bc, x, out=after)
        after += self.flags
        if mode is Rounding.HALF_EVEN:
            # An exact tie (2 r = d) rounded up to an odd cent goes back to the even one.
            r *= 2.0
            tie = np.flatnonzero(r == self.den)
            if tie.size:
                odd = x[tie] % 2.0 == 0.0  # x + 1 odd
                after[tie[odd]] -= 1.0

    def _closing(self, bc: FloatArray, after: FloatArray, k: int) -> IntArray | None:
        """Positions (in the working set) of the annuities that close in period k."""
        hit = None
        threshold = self.threshold
        if threshold is not None:
            kind = self.adv_kind
            if kind == "none":
                tested = after
            elif kind == "all":
                tested = bc
            else:
                tested = np.where(self.adv, bc, after)
            compare = np.greater_equal if self.batch.deposits else np.less
            compare(tested, threshold, out=self.flags)
            if self.flags.any():
                hit = np.flatnonzero(self.flags)
        if k in self.ends:
            final = np.flatnonzero(self.last == k)
            final = final[~self.frozen[final]]
            hit = final if hit is None else np.union1d(hit, final)
        return hit

    def _settle(self, closing: IntArray, b: FloatArray, c: IntArray, k: int) -> None:
        """Settle the annuities at working positions ``closing`` in period k by the rules."""
        if not closing.size:
            return
        batch = self.batch
        who = self.lo + self.pos[closing]
        value = b[closing].astype(np.int64)
        goal = None if batch.goal is None else batch.goal[who]
        side = None if batch.side is None else batch.side[who]
        step = deposit_step if batch.deposits else payout_step
        flow, intr, closes, need = step(
            value, c[closing], batch.num[who], batch.den[who], batch.advance[who],
            batch.last[who] == k, goal, side, batch.mode,
        )  # fmt: skip
        if not bool(np.all(closes)):  # pragma: no cover
            raise AssertionError("the fast closing test and the rules disagree")
        batch.rows[who] = k
        batch.final_flow[who] = flow
        batch.final_needed[who] = need
        batch.final_interest[who] = intr
        batch.final_closing[who] = value + intr + (flow if batch.deposits else -flow)
        self._freeze(closing)

    def _freeze(self, closing: IntArray) -> None:
        """Stop the annuities at working positions ``closing``: no rate, flow or threshold."""
        self.num[closing] = 0.0
        self.rate[closing] = 0.0
        if self.threshold is not None:
            self.threshold[closing] = _NEVER if self.batch.deposits else -_NEVER
        if self.alive is None:
            self.alive = np.ones(self.pos.size)
        self.alive[closing] = 0.0
        self.frozen[closing] = True
        self.n_frozen = int(np.count_nonzero(self.frozen))

    def _pack(self, after: FloatArray) -> FloatArray:
        """Keep only the live annuities in the working set; return their values."""
        keep = np.flatnonzero(~self.frozen)
        self.pos = self.pos[keep]
        self.packed = True
        self.num, self.rate = self.num[keep], self.rate[keep]
        self.den, self.cent_at = self.den[keep], self.cent_at[keep]
        self.adv, self.last = self.adv[keep], self.last[keep]
        if self.threshold is not None:
            self.threshold = self.threshold[keep]
        self.alive = None
        self.frozen = np.zeros(keep.size, dtype=bool)
        self.n_frozen = 0
        self._vectors()
        return after[keep]
