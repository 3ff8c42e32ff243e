"""Month-by-month cash flows of a loan book, with prepayment and default assumptions.

:func:`project` takes a validated book and an as-of date and returns, for each month
after that date (and each group of a label column, if asked), what the book collects
and what it loses:

- ``scheduled_interest``, ``scheduled_principal``, ``scheduled_balance``: the loans'
  own schedules, exact cents (the sum of :meth:`amort.loan.Loan.schedule` rows due in
  the month; principal includes balloons), as if every loan paid as agreed;
- ``opening_balance``, ``interest``, ``principal``, ``prepayment``, ``default``,
  ``recovery``, ``loss``, ``closing_balance`` and ``collections`` (interest +
  principal + prepayment + recovery): the projection under the assumptions, float64.

The assumptions, each loan month by month (Bond Market Association, Standard Formulas
for the analysis of mortgage-backed securities [secondary], via REFERENCES.md):

- prepayment at a constant annual rate, ``SMM = 1 - (1 - CPR)^(1/12)``, or on the PSA
  ramp: x % PSA means ``CPR = x/100 x 0.2 % x min(age, 30)`` (6 % from month 30 on);
- default at a constant annual rate, ``MDR = 1 - (1 - CDR)^(1/12)``, or on the SDA
  curve: ``CDR = 0.02 % x age`` to 0.60 % at month 30, flat to month 60, then down
  0.0095 % a month to 0.03 % at month 120 and flat after, times x/100;
- ``age`` is the loan's month of life: calendar months from the disbursement month to
  the projection month (month 1 of a loan disbursed in the as-of month is age 1;
  common practice);
- a defaulted balance recovers ``recovery`` of itself ``lag`` months later; the rest
  is the loss, shown in the same later month.

Each month t, a loan's performing share q (1 at the as-of date) first loses its
defaults and then its prepayments, ``q_t = (1 - MDR_t)(1 - SMM_t) q_{t-1}``: a
first-order linear recurrence, whose solution is the running product. With the
scheduled balance S, scheduled interest I and principal P of the month:
``default = MDR_t q_{t-1} S_{t-1}``, ``interest = q'_t I_t`` and ``principal = q'_t P_t``
with ``q'_t = (1 - MDR_t) q_{t-1}``, ``prepayment = SMM_t q'_t S_t``, ``closing =
q_t S_t``. (Prepayments and defaults take proportional slices of each loan; common
practice in pool models.) With no prepayment and no default the projected columns
equal the scheduled ones.

Month t is the calendar month t months after the as-of date's month; payments due
after the as-of date but still in its month count in month 1 (with a month-end as-of
date, the usual case, month 1 is simply the next month). Loans disbursed after the
as-of date are left out. The sums are linear in the loans, so projections of the
partitions of a book add up to the projection of the whole
(:func:`combine_projections`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from datetime import date
from typing import Any

import numpy as np
import pandas as pd

from amort import book_engine
from amort.book import Book
from amort.book_dates import month_day
from amort.book_positions import loans_of
from amort.calendar import parse_date
from amort.errors import InvalidTerms, describe
from amort.money import parse_rate

__all__ = [
    "PROJECTION_COLUMNS",
    "cdr_of_sda",
    "combine_projections",
    "cpr_of_psa",
    "monthly_rate",
    "project",
]

Progress = Callable[[int, int], None]

#: The columns of :func:`project` (after the group column, when grouped).
PROJECTION_COLUMNS = (
    "month",
    "month_end",
    "opening_balance",
    "interest",
    "principal",
    "prepayment",
    "default",
    "recovery",
    "loss",
    "closing_balance",
    "collections",
    "scheduled_interest",
    "scheduled_principal",
    "scheduled_balance",
)
_ADDITIVE = PROJECTION_COLUMNS[2:]
MAX_MONTHS = 1_200


def monthly_rate(annual: np.ndarray | float) -> np.ndarray:
    """Return the monthly rate of an annual one: ``1 - (1 - annual)^(1/12)``.

    SMM from CPR and MDR from CDR (Bond Market Association, Standard Formulas
    [secondary]); computed as ``-expm1(log1p(-annual) / 12)`` so that tiny rates keep
    their digits.

    >>> round(float(monthly_rate(0.012)), 10)  # 100 % PSA at month 6 (REFERENCES.md)
    0.0010055425
    """
    a = np.asarray(annual, dtype=np.float64)
    with np.errstate(divide="ignore"):
        return np.where(a >= 1.0, 1.0, -np.expm1(np.log1p(-np.minimum(a, 1.0)) / 12.0))


def cpr_of_psa(age: np.ndarray | int, speed: float) -> np.ndarray:
    """Return the annual prepayment rate of the PSA ramp at ``speed`` % PSA for a loan age.

    100 % PSA: 0.2 % in month 1, up 0.2 % a month to 6 % at month 30, flat after
    [secondary]; capped at 100 %.

    >>> float(cpr_of_psa(6, 100)), float(cpr_of_psa(45, 150))
    (0.012, 0.09)
    """
    months = np.clip(np.asarray(age, dtype=np.float64), 0, 30)
    return np.minimum(0.002 * months * speed / 100.0, 1.0)


def cdr_of_sda(age: np.ndarray | int, speed: float) -> np.ndarray:
    """Return the annual default rate of the SDA curve at ``speed`` % SDA for a loan age.

    100 % SDA: 0.02 % x age to 0.60 % at month 30, flat to month 60, down 0.0095 % a
    month to 0.03 % at month 120, flat after [secondary].

    >>> [round(float(cdr_of_sda(a, 100)), 6) for a in (1, 30, 60, 120, 200)]
    [0.0002, 0.006, 0.006, 0.0003, 0.0003]
    """
    a = np.asarray(age, dtype=np.float64)
    curve = np.where(
        a <= 30,
        0.0002 * np.maximum(a, 0),
        np.where(a <= 60, 0.006, np.where(a <= 120, 0.006 - 0.000095 * (a - 60), 0.0003)),
    )
    return np.minimum(curve * speed / 100.0, 1.0)


def _share(value: object, field: str) -> float:
    """A rate from 0 to 100 %: a decimal fraction (0.06) or a string with % ("6%")."""
    rate = parse_rate(value, field)
    if rate > 1:
        raise InvalidTerms(f"{field!r} must be from 0 to 100 % (got {describe(value)})")
    return float(rate)


def _speed(value: object, field: str) -> float:
    try:
        speed = float(str(value).strip().rstrip("%"))
    except ValueError:
        raise InvalidTerms(
            f"{field!r} must be a speed in percent, e.g. 100 (got {describe(value)})"
        ) from None
    if not math.isfinite(speed) or not 0 <= speed <= 10_000:
        raise InvalidTerms(f"{field!r} must be a speed from 0 to 10,000 % (got {describe(value)})")
    return speed


def project(
    book: Book | pd.DataFrame,
    as_of: date | str,
    *,
    cpr: object = 0,
    psa: object = None,
    cdr: object = 0,
    sda: object = None,
    recovery: object = 0,
    lag: int = 0,
    group_by: str | None = None,
    months: int | None = None,
    progress: Progress | None = None,
) -> pd.DataFrame:
    """Return the book's monthly cash flows after ``as_of`` (see the module notes).

    cpr, cdr, recovery: decimal fractions (0.06) or strings with % ("6%").
    psa, sda: speeds in percent of the benchmark (100 = 100 % PSA); they replace
    ``cpr`` and ``cdr``. lag: months from default to recovery. group_by: a label
    column of the book (``segment``, ``borrower``, ``rate_index``, an extra column,
    or ``structure``, ``frequency``, ``day_count``). months: the horizon (default:
    to the book's last payment, plus the lag).

    Money in currency units, float64 (the ``scheduled_*`` columns hold exact cents).

    >>> from amort.book import read_book
    >>> flows = project(read_book("example_books/tallowmere_book.csv"), "2025-06-30")
    >>> bool((flows["interest"] == flows["scheduled_interest"]).all())
    True
    """
    loans = loans_of(book)
    day = np.datetime64(parse_date(as_of, "as_of"), "D")
    if psa is not None and cpr not in (0, None, "0"):
        raise InvalidTerms("give 'cpr' (a constant rate) or 'psa' (the ramp), not both")
    if sda is not None and cdr not in (0, None, "0"):
        raise InvalidTerms("give 'cdr' (a constant rate) or 'sda' (the curve), not both")
    prepay = ("psa", _speed(psa, "psa")) if psa is not None else ("cpr", _share(cpr or 0, "cpr"))
    defaults = ("sda", _speed(sda, "sda")) if sda is not None else ("cdr", _share(cdr or 0, "cdr"))
    recovered = _share(recovery or 0, "recovery")
    if isinstance(lag, bool) or not isinstance(lag, (int, np.integer)) or not 0 <= lag <= 360:
        raise InvalidTerms(
            f"'lag' must be a whole number of months from 0 to 360 (got {describe(lag)})"
        )
    if months is not None and (
        isinstance(months, bool)
        or not isinstance(months, (int, np.integer))
        or not 1 <= months <= MAX_MONTHS
    ):
        raise InvalidTerms(
            f"'months' must be a whole number from 1 to {MAX_MONTHS:,} (got {describe(months)})"
        )
    keys, names = _groups(loans, group_by)
    ramp = prepay[0] == "psa" or defaults[0] == "sda"
    as_of_month = int(month_day(np.array([day.astype(np.int64)]))[0][0])
    start_month = month_day(_days(loans["disbursed_on"]))[0]
    age = np.maximum(as_of_month - start_month, 0) if ramp else np.zeros(len(loans), np.int64)
    ages = np.unique(age) if len(loans) else np.zeros(1, np.int64)
    cohort = np.searchsorted(ages, age)
    sums = _Sums(len(names), ages.size, months or MAX_MONTHS + 1)
    started = _days(loans["disbursed_on"]) <= int(day.astype(np.int64))
    slots = keys * ages.size + cohort
    # Loans of one slot whose first payment falls in the same month pay in the same
    # months (monthly loans): side by side in a run, their columns are summed at once.
    first_month = month_day(_days(loans["first_due_on"]))[0]
    order = slots * 10_000 + first_month
    runs = book_engine.runs(loans, day, record=True, progress=progress, order=order)
    for run in runs:
        sums.add(run, as_of_month, started[run.index], slots[run.index], order[run.index])
    horizon = months or max(sums.last_month + int(lag), 1)
    return _assemble(
        sums, horizon, ages, prepay, defaults, recovered, int(lag), group_by, names, as_of_month
    )


def _days(column: pd.Series) -> np.ndarray:
    return column.to_numpy().astype("M8[ns]").astype(np.int64) // 86_400_000_000_000


def _groups(loans: pd.DataFrame, group_by: str | None) -> tuple[np.ndarray, list[str]]:
    if group_by is None:
        return np.zeros(len(loans), dtype=np.int64), ["all"]
    choices = [c for c in loans.columns if loans[c].dtype == "str" and c != "loan_id"]
    if group_by not in choices:
        raise InvalidTerms(
            f"'group_by' must be a label column of the book: one of "
            f"{', '.join(repr(c) for c in choices)} (got {describe(group_by)})"
        )
    codes, names = pd.factorize(loans[group_by], sort=True)
    return codes.astype(np.int64), [str(n) for n in names]


class _Sums:
    """Scheduled interest and cash by (group, age cohort, month), exact in float64.

    Month 0 collects what fell due on or before the as-of date and is never read; a
    last slot collects the loans disbursed after it. Sums of whole cents stay exact
    in float64 below 2**53 cents.
    """

    def __init__(self, groups: int, cohorts: int, months: int) -> None:
        self.shape = (groups, cohorts, months + 2)  # months 0 .. months, then overflow
        self.slots = groups * cohorts
        size = (self.slots + 1) * self.shape[2]
        self.interest = np.zeros(size)
        self.cash = np.zeros(size)
        self.opening = np.zeros(self.slots + 1)
        self.last_month = 0

    def add(self, run: Any, as_of_month: int, started: np.ndarray, slots, keys) -> None:
        assert run.interest is not None and run.cash is not None
        horizon, size = run.interest.shape
        width = self.shape[2]
        slot = np.where(started, slots, self.slots)
        self.opening += np.bincount(slot, weights=run.balance, minlength=self.slots + 1)
        open_ = started & (run.made < run.rows)
        if open_.any():
            who = np.flatnonzero(open_)
            last = month_day(run.due_days(who, run.rows[who]))[0] - as_of_month
            self.last_month = max(self.last_month, int(last.max()))
        lowest = slot * width
        starts = np.flatnonzero(np.diff(np.where(started, keys, -1), prepend=-2))
        if run.dates is None and (run.months == 1).all() and starts.size * 4 <= size:
            # Monthly loans with one key pay in the same months: sum their columns first.
            interest = np.add.reduceat(run.interest, starts, axis=1)
            cash = np.add.reduceat(run.cash, starts, axis=1)
            month = _months(run, horizon, lowest - as_of_month, starts)
            low = lowest[starts]
        else:
            interest, cash = run.interest, run.cash
            month = _months(run, horizon, lowest - as_of_month)
            low = lowest
        # bins = slot x width + month after the as-of month, held within the slot's row.
        np.clip(month, low[None, :], (low + width - 1)[None, :], out=month)
        flat = month.ravel()
        self.interest += np.bincount(flat, weights=interest.ravel(), minlength=self.interest.size)
        self.cash += np.bincount(flat, weights=cash.ravel(), minlength=self.cash.size)
        self._as_of_month(run, as_of_month, slot, open_)

    def _as_of_month(self, run: Any, as_of_month: int, slot, open_) -> None:
        """Move payments due after the as-of date but in its month from month 0 to month 1."""
        width = self.shape[2]
        k = run.made.copy()  # 0-based row of the payment after the as-of date
        who = np.flatnonzero(open_)
        while who.size:
            row = k[who]
            here = month_day(run.due_days(who, row + 1))[0] == as_of_month
            who, row = who[here], row[here]
            if not who.size:
                break
            target = slot[who] * width + 1
            np.add.at(self.interest, target, run.interest[row, who])
            np.add.at(self.cash, target, run.cash[row, who])
            np.add.at(self.interest, target - 1, -run.interest[row, who])
            np.add.at(self.cash, target - 1, -run.cash[row, who])
            k[who] += 1
            who = who[k[who] < run.rows[who]]


def _months(
    run: Any, horizon: int, shift: np.ndarray, cols: np.ndarray | None = None
) -> np.ndarray:
    """Month index (from 1900-01) of each period's due date plus each loan's ``shift``,
    ``(periods, loans)`` int64 (only the loans ``cols`` when given)."""
    pick = slice(None) if cols is None else cols
    shift = shift[pick]
    if run.dates is not None:
        return month_day(run.dates[:, pick].astype(np.int64))[0] + shift[None, :]
    anchor, months, days = run.anchor[pick], run.months[pick], run.days[pick]
    offset = run.offset[pick]
    month, _ = month_day(anchor)
    start = month + months * offset + shift
    periods = np.arange(1, horizon + 1, dtype=np.int64)[:, None]
    if (months == 1).all():
        return start[None, :] + periods
    by_month = start[None, :] + months[None, :] * periods
    if (months > 0).all():
        return by_month
    by_day = anchor[None, :] + days[None, :] * (periods + offset[None, :])
    return np.where(months[None, :] > 0, by_month, month_day(by_day)[0] + shift[None, :])


def _assemble(
    sums, horizon, ages, prepay, defaults, recovered, lag, group_by, names, as_of_month
) -> pd.DataFrame:
    groups, cohorts, width = sums.shape
    cut = min(horizon, width - 2)
    used = sums.slots * width
    interest = sums.interest[:used].reshape(sums.shape)[:, :, 1 : cut + 1]
    cash = sums.cash[:used].reshape(sums.shape)[:, :, 1 : cut + 1]
    principal = cash - interest
    opening = sums.opening[: sums.slots].reshape(groups, cohorts)
    months = np.arange(1, horizon + 1)
    pad = horizon - cut
    if pad:
        interest = np.pad(interest, ((0, 0), (0, 0), (0, pad)))
        principal = np.pad(principal, ((0, 0), (0, 0), (0, pad)))
    scheduled = opening[:, :, None] - np.cumsum(principal, axis=2)  # S_t
    before = np.concatenate([opening[:, :, None], scheduled[:, :, :-1]], axis=2)  # S_{t-1}
    age = ages[:, None] + months[None, :]
    smm = monthly_rate(
        cpr_of_psa(age, prepay[1]) if prepay[0] == "psa" else np.full(age.shape, prepay[1])
    )
    mdr = monthly_rate(
        cdr_of_sda(age, defaults[1]) if defaults[0] == "sda" else np.full(age.shape, defaults[1])
    )
    keep = (1.0 - mdr) * (1.0 - smm)
    q = np.cumprod(keep, axis=1)  # q_t
    q_prev = np.concatenate([np.ones((cohorts, 1)), q[:, :-1]], axis=1)
    q_perf = q_prev * (1.0 - mdr)  # q'_t
    default = mdr[None] * q_prev[None] * before
    flows = {
        "opening_balance": q_prev[None] * before,
        "interest": q_perf[None] * interest,
        "principal": q_perf[None] * principal,
        "prepayment": smm[None] * q_perf[None] * scheduled,
        "default": default,
        "closing_balance": q[None] * scheduled,
        "scheduled_interest": interest,
        "scheduled_principal": principal,
        "scheduled_balance": scheduled,
    }
    totals = {name: value.sum(axis=1) for name, value in flows.items()}  # over cohorts
    later = np.zeros_like(totals["default"])
    if lag < horizon:
        later[:, lag:] = totals["default"][:, : horizon - lag]
    totals["recovery"] = recovered * later
    totals["loss"] = (1.0 - recovered) * later
    totals["collections"] = (
        totals["interest"] + totals["principal"] + totals["prepayment"] + totals["recovery"]
    )
    month_end = (
        (as_of_month + months + 1 + (1900 - 1970) * 12).astype("M8[M]").astype("M8[D]")
        - np.timedelta64(1, "D")
    ).astype("datetime64[ns]")
    frames = []
    for g, name in enumerate(names):
        data: dict[str, Any] = {"month": months, "month_end": month_end}
        for column in _ADDITIVE:
            data[column] = totals[column][g] / 100.0
        frame = pd.DataFrame(data)
        if group_by is not None:
            frame.insert(0, group_by, pd.Series([name] * horizon, dtype="str"))
        frames.append(frame)
    return pd.concat(frames, ignore_index=True)


def combine_projections(frames: list[pd.DataFrame], *, group_by: str | None = None) -> pd.DataFrame:
    """Add up projections of the partitions of one book (same as-of date and assumptions).

    >>> from amort.book import read_book
    >>> loans = read_book("example_books/tallowmere_book.csv").loans
    >>> halves = [project(loans.iloc[:150], "2025-06-30", months=24),
    ...           project(loans.iloc[150:], "2025-06-30", months=24)]
    >>> whole = project(loans, "2025-06-30", months=24)
    >>> bool(np.allclose(combine_projections(halves)["interest"], whole["interest"]))
    True
    """
    keys = [group_by, "month"] if group_by else ["month"]
    joined = pd.concat(frames, ignore_index=True)
    summed = joined.groupby(keys, sort=True)[list(_ADDITIVE)].sum()
    ends = joined.groupby(keys, sort=True)["month_end"].first()
    out = summed.join(ends).reset_index()
    return out[[*keys, *PROJECTION_COLUMNS[1:]]] if group_by else out[list(PROJECTION_COLUMNS)]
