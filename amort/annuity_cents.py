"""Exact-cent annuity schedules: a batch of payouts or accumulations stepped period by period.

The loan engine (:mod:`amort.schedule`) subtracts payments that are never
negative, so a balance built up by deposits needs its own path; payouts
that the engine cannot take (payments in advance that grow or are
deferred, the first periods of a perpetuity) run here too, under the same
rules. Money is integer cents (``int64``, or Python integers in object
arrays when a rate's ``num x den`` would not fit), each annuity's periodic
rate the exact rational ``rate_num / rate_den``; every annuity of the batch
is done in each step with vector operations (for ordinary figures on the
int64 fast path of :mod:`amort.annuity_fast`, which also holds the rules of
one period below as :func:`~amort.annuity_fast.payout_step` and
:func:`~amort.annuity_fast.deposit_step`).

Rules of period k, with ``V`` the opening value and ``c_k`` the scheduled
flow (DESIGN.md, "Money and rounding"; interest by :func:`amort.batch.interest_cents`):

- payout, arrears: interest ``round(V i)``; the payment ``c_k``, or in the
  last period what leaves exactly the residual ``R``: ``V + interest - R``;
  in advance the payment comes first and ``V - c_k`` earns the interest,
  and the last payment leaves ``y`` with ``y + round(y i) = R`` (the loan
  engine's advance remainder, within a cent when no cent amount gives R);
- accumulation, arrears: interest ``round(V i)``, then the deposit ``c_k``;
  in advance the deposit comes first and ``V + c_k`` earns the interest;
  with a target ``T`` the last deposit is the smallest that reaches it
  (``T - V - interest`` in arrears, exactly), never below 0;
- either closes early in the period where the goal is met (a fund that
  would fall to the residual, a balance that would reach the target);
  without a goal every flow is as scheduled (a perpetuity's first periods).

Reconciliation (:func:`reconcile_paths`): with ``x_k`` the exact value
under the same rounded flows, ``x_k = a x_{k-1} -/+ c_k`` (arrears), each
period's interest is rounded once, by at most ``u`` cents (1/2 for the half
modes, 1 for up and down), so the gap ``e_k = c_k - x_k`` obeys
``e_k = a e_{k-1} + d_k`` with ``|d_k| <= u`` and

    |value_k - x_k| <= u s_k(i),         s_k = ((1 + i)^k - 1) / i,

checked row by row (plus 1e-12 of the value's scale for the float closed
form's own error), as :mod:`amort.reconcile` does for loans. The final flow
absorbs the drift: it differs from the scheduled one by ``x_n - R``
(payout) or ``T - x_n`` (accumulation), within ``u s_n`` in arrears; in
advance by that over ``1 + i``, within ``u s_{n-1} + 1.5`` cents.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from amort import variable
from amort.annuity_fast import deposit_step, goal_sides, payout_step, run_fast
from amort.batch import SAFE
from amort.money import Rounding, round_ratio

IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]
FloatArray = npt.NDArray[np.float64]

#: Allowance for the float closed form's own error, relative to the value's scale
#: (the same figure as amort.reconcile.FLOAT_ALLOWANCE).
FLOAT_ALLOWANCE = 1e-12


@dataclass(frozen=True)
class PathTerms:
    """A batch of annuities in cents, one array element (or column) an annuity.

    opening: value at time 0 (fund or starting balance), cents, ``>= 0``.
    rate_num, rate_den: the periodic rate as an exact fraction (``rate_den > 0``).
    flows: ``(max periods, annuities)`` scheduled payment or deposit of each period, ``>= 0``.
    periods: the last period of each annuity.
    advance: flows at the start of each period (annuity-due) where true.
    deposits: True for accumulations (flows add), False for payouts (flows subtract).
    goal: the residual a payout leaves or the target an accumulation reaches,
        cents; None runs every flow as scheduled.
    """

    opening: IntArray
    rate_num: IntArray
    rate_den: IntArray
    flows: IntArray
    periods: IntArray
    advance: BoolArray
    deposits: bool
    goal: IntArray | None = None

    def __post_init__(self) -> None:
        size = self.opening.shape
        for name in ("rate_num", "rate_den", "periods", "advance"):
            if getattr(self, name).shape != size:
                raise ValueError(f"PathTerms.{name} has shape {getattr(self, name).shape}")
        if self.goal is not None and self.goal.shape != size:
            raise ValueError(f"PathTerms.goal has shape {self.goal.shape}")
        if self.flows.shape != (int(self.periods.max(initial=0)), *size):
            raise ValueError(f"PathTerms.flows has shape {self.flows.shape}")

    @property
    def size(self) -> int:
        """Number of annuities in the batch."""
        return int(self.opening.shape[0])

    @property
    def big(self) -> bool:
        """True when the rates need Python integers (``num x den`` past 2**62)."""
        if self.rate_num.dtype == object or self.rate_den.dtype == object:
            return True
        if self.size == 0:
            return False
        return int(self.rate_num.max()) * int(self.rate_den.max()) >= SAFE


@dataclass(frozen=True)
class PathTable:
    """The rows of a batch of annuity schedules, annuity then period, money in int64 cents.

    Per annuity: ``rows`` (periods it ran), ``final_flow`` (its last flow)
    and ``final_needed`` (what its goal needed in the last period before
    clipping at 0; equal to ``final_flow`` unless the goal was passed
    without it).
    """

    annuity: IntArray
    period: IntArray
    opening: IntArray
    flow: IntArray
    interest: IntArray
    closing: IntArray
    rows: IntArray
    final_flow: IntArray
    final_needed: IntArray

    @property
    def offsets(self) -> IntArray:
        """Index of each annuity's first row (length ``annuities + 1``)."""
        return np.concatenate([[0], np.cumsum(self.rows)]).astype(np.int64)


def run_path(terms: PathTerms, mode: Rounding = Rounding.HALF_UP) -> PathTable:
    """Step every annuity of the batch through its periods in exact cents (module docstring).

    A batch of one runs as a plain-integer loop; a larger one on the int64 fast
    path (:mod:`amort.annuity_fast`) when its figures are in that path's exact
    range, else on the general path (int64, or Python integers for huge rates).
    All three give the same cents.

    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> t = PathTerms(one(0), one(1), one(100), np.full((3, 1), 10_000), one(3),
    ...               np.array([False]), deposits=True)
    >>> table = run_path(t)
    >>> table.closing.tolist()  # 100.00 a period at 1 %: 100, 201, 303.01
    [10000, 20100, 30301]
    """
    if terms.size == 1:
        return _run_one(terms, mode)
    columns = run_fast(terms, mode)
    if columns is not None:
        return PathTable(**columns)
    return _run_general(terms, mode)


def _run_general(terms: PathTerms, mode: Rounding) -> PathTable:
    """The rules of :func:`run_path`, every annuity stepped with them each period."""
    dtype: Any = object if terms.big else np.int64
    loans = terms.size
    horizon = int(terms.periods.max(initial=0))
    num = terms.rate_num.astype(dtype)
    den = terms.rate_den.astype(dtype)
    flows = terms.flows.astype(dtype, copy=False)
    goal = None if terms.goal is None else terms.goal.astype(dtype)
    last = terms.periods
    advance = terms.advance
    deposits = terms.deposits
    side = goal_sides(terms, mode, dtype)

    opening = np.zeros((horizon, loans), dtype=dtype)
    paid = np.zeros((horizon, loans), dtype=dtype)
    credited = np.zeros((horizon, loans), dtype=dtype)
    rows = np.zeros(loans, dtype=np.int64)
    needed = np.zeros(loans, dtype=dtype)
    live = np.flatnonzero(last >= 1)
    everyone = live.size == loans
    value = terms.opening.astype(dtype)[live]
    step = deposit_step if deposits else payout_step
    for k in range(1, horizon + 1):
        if live.size == 0:
            break
        # A slice while every annuity is live: no gathers in the common case.
        at: slice | IntArray = slice(None) if everyone else live
        flow, intr, closes, need = step(
            value,
            flows[k - 1, at],
            num[at],
            den[at],
            advance[at],
            last[at] == k,
            None if goal is None else goal[at],
            None if side is None else side[at],
            mode,
        )
        opening[k - 1, at] = value
        paid[k - 1, at] = flow
        credited[k - 1, at] = intr
        value = value + intr + (flow if deposits else -flow)
        if closes.any():
            gone = live[closes]
            rows[gone] = k
            needed[gone] = need[closes]
            keep = ~closes
            live, value = live[keep], value[keep]
            everyone = False
    return _long(opening, paid, credited, rows, needed, deposits)


def _run_one(terms: PathTerms, mode: Rounding) -> PathTable:
    """The rules of :func:`run_path` for a batch of one, in Python integers.

    One annuity of many periods would spend its time in numpy's per-call
    overhead; the same steps on Python integers are ten times quicker. The
    tests hold the two to the same cents.
    """
    num, den = int(terms.rate_num[0]), int(terms.rate_den[0])
    last, adv, deposits = int(terms.periods[0]), bool(terms.advance[0]), terms.deposits
    goal = None if terms.goal is None else int(terms.goal[0])
    sides = goal_sides(terms, mode, object)
    side = 0 if sides is None else int(sides[0])

    def interest(balance: int) -> int:
        return round_ratio(balance * num, den, mode)

    value = int(terms.opening[0])
    opening: list[int] = []
    paid: list[int] = []
    credited: list[int] = []
    need = 0
    for k, c in enumerate(terms.flows[:last, 0].tolist(), start=1):
        final = k == last
        if deposits and goal is None:
            flow, intr, closes = c, interest(value + c if adv else value), final
            need = flow
        elif deposits and adv:
            need = side - value
            closes = final or need <= c
            flow = max(need, 0) if closes else c
            intr = interest(value + flow)
        elif deposits:
            intr = interest(value)
            need = (goal or 0) - value - intr
            closes = final or need <= c
            flow = max(need, 0) if closes else c
        elif adv:
            if goal is None:
                closes, flow = final or c >= value, min(c, value)
            else:
                left = value - side
                closes = final or left < c or (left == c and side == 0)
                flow = left if closes else c
            intr = interest(max(value - flow, 0))
            need = flow
        else:
            intr = interest(value)
            if goal is None:
                closes, flow = final or c >= value + intr, min(c, value + intr)
            else:
                due = value + intr - goal
                closes = final or due < c or (due == c and goal == 0)
                flow = due if closes else c
            need = flow
        opening.append(value)
        paid.append(flow)
        credited.append(intr)
        value = value + intr + (flow if deposits else -flow)
        if closes:
            break
    as_rows = lambda xs: np.asarray(xs, dtype=np.int64)[:, None]  # noqa: E731
    return _long(
        as_rows(opening), as_rows(paid), as_rows(credited),
        np.array([len(opening)], dtype=np.int64), np.array([need]), deposits,
    )  # fmt: skip


def _transposed(a: IntArray, block: int = 1024) -> IntArray:
    """Return ``a.T`` as a contiguous int64 array, ``block`` columns at a time (cache-sized)."""
    out = np.empty((a.shape[1], a.shape[0]), dtype=np.int64)
    for lo in range(0, a.shape[1], block):
        out[lo : lo + block] = a[:, lo : lo + block].T
    return out


def _long(
    opening: IntArray,
    paid: IntArray,
    credited: IntArray,
    rows: IntArray,
    needed: IntArray,
    deposits: bool,
) -> PathTable:
    """Turn the period-major arrays into annuity-then-period rows."""
    horizon, loans = opening.shape
    offsets = np.concatenate([[0], np.cumsum(rows)]).astype(np.int64)
    if loans and bool((rows == horizon).all()):
        # Every annuity ran to the end: a transpose, no mask (the common batch).
        take = lambda a: _transposed(a).reshape(-1)  # noqa: E731
        period = np.tile(np.arange(1, horizon + 1, dtype=np.int64), loans)
    else:
        mask = np.arange(horizon)[None, :] < rows[:, None]
        take = lambda a: np.ascontiguousarray(a.T, dtype=np.int64)[mask]  # noqa: E731
        period = np.arange(int(offsets[-1]), dtype=np.int64) - np.repeat(offsets[:-1], rows) + 1
    open_, flow, intr = take(opening), take(paid), take(credited)
    closing = open_ + intr + (flow if deposits else -flow)
    final = np.zeros(loans, dtype=np.int64)
    has = rows > 0
    final[has] = flow[offsets[1:][has] - 1]
    return PathTable(
        annuity=np.repeat(np.arange(loans, dtype=np.int64), rows),
        period=period,
        opening=open_,
        flow=flow,
        interest=intr,
        closing=closing,
        rows=rows,
        final_flow=final,
        final_needed=np.asarray(needed).astype(np.int64),
    )


# -- reconciliation -------------------------------------------------------------------------------


@dataclass(frozen=True)
class AnnuityCheck:
    """An annuity schedule's checks against the closed form (module docstring).

    Gaps, bounds and adjustments are in currency units; ``None`` where a
    schedule has no goal (a perpetuity's first periods: no final flow to check).
    """

    largest_gap: float
    gap_bound: float
    gap_within_bound: bool
    final_adjustment: float | None
    expected_adjustment: float | None
    adjustment_bound: float | None
    value_identity: bool
    chain_identity: bool
    goal_met: bool
    goal: str
    passed: bool
    #: "payments" (a payout) or "deposits" (an accumulation), for the labels.
    flows: str = "payments"

    @property
    def checks(self) -> list[tuple[str, str, bool]]:
        """Return (check, figures, passed) for each check, for display."""
        out = [
            (
                "largest gap between cent and closed-form value",
                f"{self.largest_gap:.4f} <= bound {self.gap_bound:.4f}, row by row",
                self.gap_within_bound,
            )
        ]
        if self.final_adjustment is not None and self.expected_adjustment is not None:
            bound = self.adjustment_bound or 0.0
            out.append(
                (
                    "final adjustment matches the closed form",
                    f"{self.final_adjustment:.2f} vs {self.expected_adjustment:.4f} "
                    f"(within {bound:.4f})",
                    abs(self.final_adjustment - self.expected_adjustment) <= bound,
                )
            )
        out += [
            (
                f"opening + interest {'+' if self.flows == 'deposits' else '-'} {self.flows} "
                "= closing",
                "exact" if self.value_identity else "broken",
                self.value_identity,
            ),
            (
                "each opening value = previous closing value",
                "exact" if self.chain_identity else "broken",
                self.chain_identity,
            ),
            (self.goal, "yes" if self.goal_met else "no", self.goal_met),
        ]
        return out

    def as_dict(self) -> dict[str, Any]:
        """Return the checks as plain values (for JSON)."""
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}


def _float_rates(terms: PathTerms) -> FloatArray:
    if terms.big:
        return np.asarray(
            [int(n) / int(d) for n, d in zip(terms.rate_num, terms.rate_den, strict=True)]
        )
    return terms.rate_num.astype(np.float64) / terms.rate_den.astype(np.float64)


def reconcile_paths(
    terms: PathTerms, table: PathTable, mode: Rounding = Rounding.HALF_UP
) -> list[AnnuityCheck]:
    """Return each annuity's :class:`AnnuityCheck` (vectorised over the batch).

    >>> one = lambda v: np.array([v], dtype=np.int64)
    >>> t = PathTerms(one(0), one(1), one(100), np.full((3, 1), 10_000), one(3),
    ...               np.array([False]), deposits=True, goal=one(30_302))
    >>> check = reconcile_paths(t, run_path(t))[0]
    >>> check.passed, check.final_adjustment
    (True, 0.01)
    """
    u = float(mode.max_error_cents)
    horizon = int(terms.periods.max(initial=0))
    loans = terms.size
    rates = np.broadcast_to(_float_rates(terms), (horizon, loans))
    scheduled = terms.flows.astype(np.float64)
    sign = -1.0 if terms.deposits else 1.0  # variable.balances_paying subtracts payments
    actual = np.zeros((horizon, loans))
    actual[table.period - 1, table.annuity] = table.flow
    b0 = terms.opening.astype(np.float64)
    with np.errstate(over="ignore", invalid="ignore"):
        exact_actual = variable.balances_paying(b0, rates, sign * actual, terms.advance)
        scale = variable.balance_scales_paying(b0, rates, actual, terms.advance)
        exact_scheduled = variable.balances_paying(b0, rates, sign * scheduled, terms.advance)
        s_k = variable.accumulation_factors(rates)
        at = (table.period - 1, table.annuity)
        bound = u * s_k[at] + FLOAT_ALLOWANCE * scale[at]
        gap = np.abs(table.closing - exact_actual[at])
    vacuous = ~np.isfinite(bound)
    ratio = np.where(vacuous, 0.0, gap / np.maximum(bound, 1e-300))
    offsets = table.offsets
    out = []
    for j in range(loans):
        rows = slice(int(offsets[j]), int(offsets[j + 1]))
        n = int(table.rows[j])
        if n == 0:
            continue
        adv = bool(terms.advance[j])
        a = 1.0 + float(rates[0, j])
        gaps = np.where(vacuous[rows], 0.0, gap[rows])
        final_adj = expected = adj_bound = None
        goal_met = True
        goal_name = "every flow as scheduled"
        if terms.goal is not None:
            target = float(terms.goal[j])
            x_n = float(exact_scheduled[n - 1, j])
            expected_c = (target - x_n) if terms.deposits else (x_n - target)
            s_prev = float(s_k[n - 2, j]) if n >= 2 else 0.0
            allowance = FLOAT_ALLOWANCE * float(scale[n - 1, j])
            if adv:
                expected_c /= a
                limit = u * s_prev + 1.5 + allowance
            else:
                limit = u * float(s_k[n - 1, j]) + allowance
            final_adj = (int(table.final_needed[j]) - int(terms.flows[n - 1, j])) / 100
            expected, adj_bound = expected_c / 100, limit / 100
            closing = int(table.closing[rows][-1])
            goal_c = int(terms.goal[j])
            if terms.deposits:
                goal_name = "the target is reached with the last deposit"
                before = int(table.opening[rows][-1]) if n >= 1 else 0
                exact_hit = closing == goal_c or (adv and closing - goal_c <= 1)
                goal_met = closing >= goal_c > before and (
                    exact_hit or int(table.final_flow[j]) == 0
                )
            else:
                goal_name = "the value left equals the residual"
                goal_met = closing == goal_c or (adv and abs(closing - goal_c) <= 1)
        flows = table.flow[rows]
        value = int(table.opening[rows][0]) + int(table.interest[rows].sum())
        value += int(flows.sum()) if terms.deposits else -int(flows.sum())
        value_identity = value == int(table.closing[rows][-1])
        chain = bool(table.opening[rows][0] == terms.opening[j]) and bool(
            (table.opening[rows][1:] == table.closing[rows][:-1]).all()
        )
        within = bool(ratio[rows].max(initial=0.0) <= 1.0)
        adjust_ok = final_adj is None or abs(final_adj - (expected or 0.0)) <= (adj_bound or 0.0)
        shown = np.where(vacuous[rows], np.inf, bound[rows])
        out.append(
            AnnuityCheck(
                largest_gap=float(gaps.max(initial=0.0)) / 100,
                gap_bound=float(shown.max(initial=0.0)) / 100,
                gap_within_bound=within,
                final_adjustment=final_adj,
                expected_adjustment=expected,
                adjustment_bound=adj_bound,
                value_identity=value_identity,
                chain_identity=chain,
                goal_met=goal_met,
                goal=goal_name,
                passed=within and adjust_ok and value_identity and chain and goal_met,
                flows="deposits" if terms.deposits else "payments",
            )
        )
    return out
