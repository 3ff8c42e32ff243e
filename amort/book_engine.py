"""The book engine: validated loans stepped to their exact-cent schedules, a chunk at a time.

:func:`runs` takes the loans of a validated book (:attr:`amort.book.Book.loans`) and
yields :class:`Run` s, each a chunk of loans stepped from period 1 to maturity with
vector operations over the chunk, keeping only running state (and, when asked, each
period's interest and cash). The rules are the schedule engine's
(:mod:`amort.schedule`, DESIGN.md "Money and rounding"):

    interest_k = round_half_up(B_{k-1} x n_k / d)        exact, as amort.batch.interest_cents
    payment_k  = base + cover x interest_k               level: (P, 0); equal principal:
                                                         (part, 1); bullet and
                                                         interest-only periods: (0, 1)
    B_k        = B_{k-1} + interest_k - payment_k

and the last period (N, or the first whose balance would reach the balloon) pays what
is left, ``B_{k-1} + interest_k - F``, then the balloon F. Dated rates are exact:
``i_k = j x yearfrac(d_{k-1}, d_k)`` with ``j = annual_rate_num / 10**8`` held as the
fraction ``n_k / d`` (``d`` fixed for a loan, ``n_k`` the day count's numerator), and
under the ``equal`` rule ``i = j / p``, an odd first period ``i x (w + s)`` as
:mod:`amort.dated` counts it. The level payment is the exact closed form rounded
half-up: the float value decides the cent unless it lies within 1e-9 of a rounding
boundary, and then the exact rational does (:mod:`amort.exact`).

Arithmetic: where every product stays below 2**50 the balances are held as float64
integers and each interest is found by a float estimate confirmed by an exact product
comparison (the schedule engine's fast path); otherwise int64 with
:func:`amort.batch.interest_cents`, or Python integers where even that could overflow.
A weekend-only business-day rule moves the payment dates (numpy's business-day rolls)
and leaves the cents, interest running to the scheduled dates. Semimonthly loans and
business-day rules with a holiday calendar (``per_loan``) are built one by one as
:class:`amort.loan.Loan`, whose schedule gives the same fields.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
import pandas as pd

from amort import book_dates, book_step, recurrence
from amort.book import RATE_DEN, loan_from_row, step_of
from amort.book_dates import month_day, step_days
from amort.calendar import BusinessDay
from amort.conventions import Frequency, Structure
from amort.daycount import DayCount
from amort.exact import level_payment_cents, level_payment_fraction_variable
from amort.money import Rounding, round_fraction, round_ratio_array

IntArray = np.ndarray
HALF_UP = Rounding.HALF_UP
#: Loans stepped together (their vectors stay in the cache).
CHUNK = 32_768


@dataclass
class Run:
    """A chunk of loans stepped to maturity: per-loan results in int64 cents.

    index: positions of the loans in the book frame. rows: payments in the schedule.
    made: payments due on or before the as-of date. balance, interest_to_date, paid:
    the scheduled balance after them, their periods' interest, what they came to.
    next_payment: what falls due at payment ``made + 1`` (balloon included).
    regular, final_payment (without the balloon), balloon, total_interest.
    interest, cash: when recorded, ``(periods, loans)`` float64 integer cents of each
    period's interest and cash paid (payment plus balloon), zero after a loan's last.
    """

    index: IntArray
    rows: IntArray
    made: IntArray
    balance: IntArray
    interest_to_date: IntArray
    paid: IntArray
    next_payment: IntArray
    regular: IntArray
    final_payment: IntArray
    balloon: IntArray
    total_interest: IntArray
    anchor: IntArray  # day number (days from 1970-01-01) the due dates step from
    offset: IntArray
    months: IntArray
    days: IntArray
    dates: np.ndarray | None = None
    interest: np.ndarray | None = None
    cash: np.ndarray | None = None
    anchor_month: IntArray | None = None
    anchor_dom: IntArray | None = None

    def due_days(self, loans: IntArray, k: IntArray) -> IntArray:
        """Day numbers (days from 1970-01-01) of payment ``k`` of each loan in ``loans``."""
        loans = np.asarray(loans, dtype=np.int64)
        k = np.asarray(k, dtype=np.int64)
        if self.dates is not None:
            return self.dates[np.maximum(k - 1, 0), loans].astype(np.int64)
        return step_days(
            self.anchor[loans], self.months[loans], self.days[loans], k + self.offset[loans]
        )

    def due(self, loans: IntArray, k: IntArray) -> np.ndarray:
        """Due date (datetime64[D]) of payment ``k`` of each loan in ``loans`` (run indices)."""
        return self.due_days(loans, k).astype("M8[D]")


Progress = Callable[[int, int], None]


class Pool:
    """Work matrices reused from run to run: a fresh large allocation costs a page fault
    for every 4 KiB on first touch, far more than the writes themselves."""

    def __init__(self) -> None:
        self.flat: dict[str, np.ndarray] = {}

    def take(self, name: str, shape: tuple[int, int], dtype: Any) -> np.ndarray:
        """Return a ``shape`` matrix of ``dtype`` (old contents: the caller overwrites it)."""
        size = shape[0] * shape[1]
        held = self.flat.get(name)
        if held is None or held.size < size or held.dtype != np.dtype(dtype):
            held = np.empty(size, dtype=dtype)
            self.flat[name] = held
        return held[:size].reshape(shape)


def runs(
    loans: pd.DataFrame,
    as_of: np.datetime64,
    *,
    record: bool = False,
    progress: Progress | None = None,
    chunk: int = CHUNK,
    order: np.ndarray | None = None,
) -> Iterator[Run]:
    """Yield the book's loans as :class:`Run` s (see the module notes).

    ``progress(done, total)`` is called after each run with the loans done so far.
    Loans are stepped longest term first; ``order`` (one integer a loan) orders the
    loans of equal term, so that loans sharing a key sit side by side in a run.
    """
    total = len(loans)
    done = 0
    columns = _columns(loans)
    per_loan = loans["per_loan"].to_numpy(bool)
    day_count = loans["day_count"].to_numpy()
    term = columns["term"]
    day = int(np.asarray(as_of, dtype="M8[D]").astype(np.int64))
    pool = Pool()
    rolls = loans["business_days"].to_numpy()
    groups = pd.DataFrame({"rule": day_count, "roll": rolls})[~per_loan].drop_duplicates()
    for convention, roll in sorted(groups.itertuples(index=False, name=None)):
        chosen = np.flatnonzero((day_count == convention) & (rolls == roll) & ~per_loan)
        if order is None:
            chosen = chosen[np.argsort(-term[chosen], kind="stable")]
        else:
            chosen = chosen[np.lexsort((order[chosen], -term[chosen]))]
        for start in range(0, chosen.size, chunk):
            index = chosen[start : start + chunk]
            part = {name: values[index] for name, values in columns.items()}
            yield _run(part, index, DayCount(convention), day, record, pool, roll)
            done += index.size
            if progress is not None:
                progress(done, total)
    for k in np.flatnonzero(per_loan):
        yield _run_one(loans, int(k), day, record)
        done += 1
        if progress is not None and (done % 256 == 0 or done == total):
            progress(done, total)


_STRUCTURES = (Structure.LEVEL, Structure.EQUAL_PRINCIPAL, Structure.BULLET)
_FREQUENCIES = tuple(Frequency)
_STEP_MONTHS = np.asarray([(step_of(f) or (0, 0))[0] for f in _FREQUENCIES], dtype=np.int64)
_STEP_DAYS = np.asarray([(step_of(f) or (0, 0))[1] for f in _FREQUENCIES], dtype=np.int64)
_PER_YEAR = np.asarray([f.per_year for f in _FREQUENCIES], dtype=np.int64)


def _columns(loans: pd.DataFrame) -> dict[str, np.ndarray]:
    """The columns the engine reads, as numpy arrays (dates as day numbers)."""
    out = {
        name: loans[name].to_numpy(np.int64)
        for name in (
            "principal_cents",
            "term",
            "interest_only",
            "balloon_cents",
            "payment_cents",
            "annual_rate_num",
        )
    }
    for name, kinds in (("structure", _STRUCTURES), ("frequency", _FREQUENCIES)):
        codes, names = pd.factorize(loans[name])
        lookup = np.asarray([[k.value for k in kinds].index(str(n)) for n in names], np.int64)
        out[name] = lookup[codes] if lookup.size else codes.astype(np.int64)
    for name in ("disbursed_on", "first_due_on"):
        # datetime64[ns] to whole days: an integer division, no calendar arithmetic.
        out[name] = loans[name].to_numpy().astype("M8[ns]").astype(np.int64) // 86_400_000_000_000
    return out


# -- terms of a chunk --------------------------------------------------------------------------


@dataclass
class _Terms:
    """One chunk's terms, sorted by term (longest first); money in int64 cents."""

    principal: IntArray
    term: IntArray
    only: IntArray
    balloon: IntArray
    base: IntArray
    cover: np.ndarray
    num: IntArray  # (loans,) for a constant rate, or (periods, loans) per period
    den: IntArray
    odd: np.ndarray  # loans whose first period earns first_num / first_den
    first_num: np.ndarray
    first_den: np.ndarray
    made: IntArray
    regular_at: IntArray  # period whose payment is the regular payment (0: base)
    rates: np.ndarray | None = None  # float64 of num / den when it varies by period


def _run(
    part: dict[str, np.ndarray],
    index: IntArray,
    rule: DayCount,
    as_of: int,
    record: bool,
    pool: Pool,
    roll: str = "none",
) -> Run:
    size = index.size
    b0 = part["principal_cents"]
    term = part["term"]
    only = part["interest_only"]
    balloon = part["balloon_cents"]
    fixed = part["payment_cents"]
    structure = part["structure"]
    frequency = part["frequency"]
    start = part["disbursed_on"]
    first = part["first_due_on"]
    months, days = _STEP_MONTHS[frequency], _STEP_DAYS[frequency]
    per_year = _PER_YEAR[frequency]
    anchored = step_days(start, months, days, np.ones(size, dtype=np.int64)) == first
    anchor = np.where(anchored, start, first)
    offset = np.where(anchored, 0, -1).astype(np.int64)
    run = Run(
        index=index,
        anchor=anchor,
        offset=offset,
        months=months,
        days=days,
        **{name: np.zeros(size, dtype=np.int64) for name in _RESULTS},
    )
    if roll != BusinessDay.NONE.value:
        run.dates = _moved_dates(run, term, BusinessDay(roll))
    made = _made(run, as_of, term)
    raw_num = part["annual_rate_num"]
    g = np.gcd(raw_num, RATE_DEN)
    a_num, a_den = raw_num // g, RATE_DEN // g
    bullet = structure == _STRUCTURES.index(Structure.BULLET)
    straight = structure == _STRUCTURES.index(Structure.EQUAL_PRINCIPAL)
    rates = None
    odd = np.zeros(size, dtype=bool)
    first_num = np.zeros(size, dtype=object)
    first_den = np.ones(size, dtype=object)
    if rule is DayCount.EQUAL:
        num, den = a_num, a_den * per_year
        begin = step_days(first, months, days, np.full(size, -1, dtype=np.int64))
        odd = ~anchored & (begin != start)
        if odd.any():
            whole, span, length = book_dates.share(start[odd], first[odd], months[odd], days[odd])
            n1 = num[odd].astype(object) * (whole.astype(object) * length + span)
            first_num[odd] = n1
            first_den[odd] = den[odd].astype(object) * length
        level = _level_equal(b0, num, den, term, only, balloon, odd, first_num, first_den)
    else:
        den = a_den * (360 if rule.is_thirty_day else book_dates.BASIS[rule])
        num, rates, v_end, weights = _dated_rates(run, start, term, only, a_num, den, rule, pool)
        level = _level_dated(b0, num, den, term, only, balloon, v_end, weights)
    level = np.where(fixed > 0, fixed, level)
    part_cents = round_ratio_array(b0 - balloon, np.maximum(term - only, 1), HALF_UP)
    base = np.where(bullet, 0, np.where(straight, part_cents, level))
    regular_at = np.where(bullet, 1, np.where(straight, np.minimum(only, term - 1) + 1, 0))
    terms = _Terms(
        principal=b0,
        term=term,
        only=only,
        balloon=balloon,
        base=base,
        cover=bullet | straight,
        num=num,
        den=den,
        odd=odd,
        first_num=first_num,
        first_den=first_den,
        made=made,
        regular_at=regular_at,
        rates=rates,
    )
    book_step.step(terms, run, record, pool)
    return run


_RESULTS = (
    "rows",
    "made",
    "balance",
    "interest_to_date",
    "paid",
    "next_payment",
    "regular",
    "final_payment",
    "balloon",
    "total_interest",
)


#: numpy's names for the business-day rolls of amort.calendar.
_ROLLS: dict[BusinessDay, Any] = {
    BusinessDay.FOLLOWING: "following",
    BusinessDay.MODIFIED_FOLLOWING: "modifiedfollowing",
    BusinessDay.PRECEDING: "preceding",
}


def _moved_dates(run: Run, term: IntArray, roll: BusinessDay) -> IntArray:
    """Due dates moved off weekends (Saturday, Sunday), ``(periods, loans)`` day numbers.

    Interest runs to the scheduled dates (the book's only choice), so only the dates
    the payments fall on move, and the cents are those of the scheduled dates.
    """
    horizon = int(term.max(initial=0))
    loans = np.arange(term.size)
    period = np.arange(1, horizon + 1)
    scheduled = run.due_days(np.tile(loans, horizon), np.repeat(period, term.size))
    days = np.asarray(scheduled, dtype=np.int64).astype("M8[D]")
    moved = np.busday_offset(days, 0, roll=_ROLLS[roll], weekmask="1111100")
    return moved.astype(np.int64).reshape(horizon, term.size)


def _made(run: Run, as_of: int, term: IntArray) -> IntArray:
    """How many payments fall due on or before the day number ``as_of`` (0 to the term)."""
    if run.dates is not None:
        due = run.dates <= as_of
        due &= np.arange(1, run.dates.shape[0] + 1)[:, None] <= term[None, :]
        return due.sum(axis=0).astype(np.int64)
    month_gap = month_day(np.array([as_of]))[0] - month_day(run.anchor)[0]
    by_month = np.floor_divide(month_gap, np.maximum(run.months, 1)) - run.offset
    by_day = np.floor_divide(as_of - run.anchor, np.maximum(run.days, 1)) - run.offset
    k = np.clip(np.where(run.months > 0, by_month, by_day), 0, term)
    # A due date later in the as-of month than the as-of date is not due yet.
    late = (k > 0) & (run.due_days(np.arange(k.size), np.maximum(k, 1)) > as_of)
    return np.where(late, k - 1, k)


def _points(run: Run, who: IntArray, k: int) -> tuple[IntArray, IntArray, IntArray]:
    """Day number, month (from 1900-01) and day of the month of payment ``k`` of ``who``."""
    steps = k + run.offset[who]
    months = run.months[who]
    assert run.anchor_month is not None and run.anchor_dom is not None
    month, dom = run.anchor_month[who], run.anchor_dom[who]
    target = month + months * steps
    target = np.clip(target, 0, book_dates.MONTH_LEN.size - 1)
    day_of = np.minimum(dom, book_dates.MONTH_LEN[target])
    day = book_dates.MONTH_START[target] + day_of - 1
    if not (months > 0).all():
        by_day = run.anchor[who] + run.days[who] * steps
        month_d, dom_d = month_day(by_day)
        weekly = months == 0
        day = np.where(weekly, by_day, day)
        target = np.where(weekly, month_d, target)
        day_of = np.where(weekly, dom_d, day_of)
    return day, target, day_of


def _dated_rates(
    run: Run,
    start: IntArray,
    term: IntArray,
    only: IntArray,
    a_num: IntArray,
    den: IntArray,
    rule: DayCount,
    pool: Pool,
) -> tuple[IntArray, np.ndarray, np.ndarray, np.ndarray]:
    """Each period's rate numerator over ``den``, ``(periods, loans)`` int64 (0 after
    maturity), the same rates in float64, and the level payment's discount sums:
    ``v_N`` and ``W = sum v_k`` over the amortising periods
    (``v_k = 1 / ((1 + i_1) ... (1 + i_k))``, float64).

    The first period (from the disbursement), a 30E/360 ISDA last period and weekly
    periods are counted from their dates; the other regular periods come from
    :func:`_period_table`. The matrix is the pool's: valid until the next run.
    """
    horizon = int(term.max(initial=0))
    size = term.size
    out = pool.take("numerators", (horizon, size), np.int64)
    rates = pool.take("rates", (horizon, size), np.float64)
    run.anchor_month, run.anchor_dom = month_day(run.anchor)
    by_month = run.months > 0
    weekly = np.flatnonzero(~by_month)
    tables = {m: book_dates.period_table(rule, int(m)) for m in np.unique(run.months[by_month])}
    table = tables[next(iter(tables))] if len(tables) == 1 else None
    base = (run.anchor_month + run.months * run.offset) * 31 + run.anchor_dom - 1
    step = run.months * 31
    scale = a_num / den.astype(np.float64)
    v = np.ones(size)
    weights = np.zeros(size)
    v_end = np.ones(size)
    any_only = bool((only > 0).any())
    month, dom = month_day(start)
    first = book_dates.numerators_between(
        (start, month, dom), _points(run, np.arange(size), 1), rule, term == 1
    )
    termination = rule is DayCount.THIRTY_E_360_ISDA
    where_buf = np.empty(size, dtype=np.int64)
    growth_buf = np.empty(size)
    for k in range(1, horizon + 1):
        live = int(np.searchsorted(-term, -k, side="right"))  # sorted by term: a prefix
        ends = int(np.searchsorted(-term, -(k + 1), side="right"))
        row = out[k - 1, :live]
        rate = rates[k - 1, :live]
        if k == 1:
            row[:] = first
        else:
            where = where_buf[:live]
            np.multiply(step[:live], k, out=where)
            np.add(where, base[:live], out=where)
            if table is not None:
                np.take(table, where, out=row, mode="clip")
            else:
                for m, tab in tables.items():
                    pick = run.months[:live] == m
                    row[pick] = tab[where[pick]]
            _exact_periods(run, row, k, live, ends, weekly, rule, termination)
        np.multiply(row, scale[:live], out=rate)  # i_k = j x days / basis, in float64
        np.multiply(row, a_num[:live], out=row)
        growth = np.add(rate, 1.0, out=growth_buf[:live])
        if any_only:
            growth = np.where(k > only[:live], growth, 1.0)
        v[:live] /= growth
        weights[:live] += v[:live]
        v_end[ends:live] = v[ends:live]
        out[k:, ends:live] = 0  # after maturity
        rates[k:, ends:live] = 0.0
    return out, rates, v_end, weights - only  # v_k = 1 exactly in interest-only periods


def _exact_periods(run, row, k, live, ends, weekly, rule, termination) -> None:
    """Count from their dates the periods the table cannot give (weekly, the 30E/360 ISDA
    last period, which leaves a February month end as it is)."""
    who = weekly[weekly < live]
    if termination and ends < live:
        who = np.union1d(who, np.arange(ends, live))
    if who.size:
        before = _points(run, who, k - 1)
        after = _points(run, who, k)
        row[who] = book_dates.numerators_between(before, after, rule, who >= ends)


def _clear_cents(approx: np.ndarray, error: np.ndarray) -> tuple[IntArray, np.ndarray]:
    """Round each approx (cents) half-up; mark those within ``error`` of a boundary.

    ``error`` bounds the float value's distance from the exact one (a generous multiple
    of the rounding errors of the closed form), so the unmarked cents are exact.
    """
    finite = np.isfinite(approx)
    safe = np.where(finite, approx, 0.0)
    near = np.abs(safe - np.floor(safe) - 0.5) <= error
    return np.floor(safe + 0.5).astype(np.int64), near | ~finite


def _level_equal(b0, num, den, term, only, balloon, odd, first_num, first_den) -> IntArray:
    """Level payments under the equal rule (an odd first period in the closed form)."""
    amortising = term - only
    plain = ~odd | (only > 0)
    level = np.zeros(b0.size, dtype=np.int64)
    if plain.any():
        level[plain] = level_payment_cents(
            b0[plain],
            num[plain],
            den[plain],
            amortising[plain],
            balloon[plain],
            np.zeros(int(plain.sum()), dtype=bool),
            HALF_UP,
        )
    skew = np.flatnonzero(~plain)
    if skew.size:
        # P = (B0 (1 + r1) a^(N-1) - F) / s_N(i): the variable closed form, one odd rate.
        i = num[skew] / den[skew]
        r1 = first_num[skew].astype(np.float64) / first_den[skew].astype(np.float64)
        n = term[skew]
        with np.errstate(all="ignore"):
            grown = b0[skew] * (1 + r1) * recurrence.growth(i, n - 1)
            weight = recurrence.accumulation_factor(i, n)
            approx = (grown - balloon[skew]) / weight
        # growth and accumulation_factor are good to about 1e-14 relative.
        error = 1e-11 * ((grown + balloon[skew]) / weight + np.abs(approx))
        cents, near = _clear_cents(approx, error)
        for k in np.flatnonzero(near):
            j = skew[k]
            rates = [Fraction(int(first_num[j]), int(first_den[j]))]
            rates += [Fraction(int(num[j]), int(den[j]))] * (int(term[j]) - 1)
            exact = level_payment_fraction_variable(int(b0[j]), rates, int(balloon[j]))
            cents[k] = round_fraction(exact, HALF_UP)
        level[skew] = cents
    return level


def _level_dated(b0, nums, den, term, only, balloon, v_end, weights) -> IntArray:
    """Level payments when each period earns ``nums[k] / den``: ``P = (B0 - F v_N) / W``.

    The float closed form decides the cent unless it lies near a rounding boundary;
    then the exact rational over the amortising periods' rates does.
    """
    approx = (b0 - balloon * v_end) / weights
    # Each product and sum of the N periods adds about 2**-53 relative: a wide margin.
    error = 1e-13 * (term + 10) * ((b0 + balloon) / weights + np.abs(approx))
    cents, near = _clear_cents(approx, error)
    for j in np.flatnonzero(near):
        rates = [Fraction(int(nums[k, j]), int(den[j])) for k in range(int(only[j]), int(term[j]))]
        exact = level_payment_fraction_variable(int(b0[j]), rates, int(balloon[j]))
        cents[j] = round_fraction(exact, HALF_UP)
    return cents


def _run_one(loans: pd.DataFrame, k: int, as_of: int, record: bool) -> Run:
    """One per-loan row, through :class:`amort.loan.Loan` and its schedule."""
    loan = loan_from_row(loans.iloc[k])
    frame = loan.schedule()
    cents = lambda name: np.rint(frame[name].to_numpy() * 100).astype(np.int64)  # noqa: E731
    interest, payment = cents("interest"), cents("payment")
    balloon = cents("balloon") if "balloon" in frame else np.zeros(len(frame), dtype=np.int64)
    closing = cents("closing_balance")
    due = frame["due_date"].to_numpy().astype("M8[D]").astype(np.int64)
    rows = len(frame)
    made = int(np.count_nonzero(due <= as_of))
    one = lambda v: np.array([v], dtype=np.int64)  # noqa: E731
    cash = payment + balloon
    run = Run(
        index=one(k),
        rows=one(rows),
        made=one(made),
        balance=one(closing[made - 1] if made else int(loans.iloc[k]["principal_cents"])),
        interest_to_date=one(interest[:made].sum()),
        paid=one(cash[:made].sum()),
        next_payment=one(cash[made] if made < rows else 0),
        regular=one(round(loan.payment * 100)),
        final_payment=one(payment[-1]),
        balloon=one(balloon[-1]),
        total_interest=one(interest.sum()),
        anchor=due[:1],
        offset=one(0),
        months=one(0),
        days=one(0),
        dates=due[:, None],
    )
    if record:
        run.interest = interest.astype(np.float64)[:, None]
        run.cash = cash.astype(np.float64)[:, None]
    return run
