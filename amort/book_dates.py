"""Calendar arithmetic for the book engine: due dates and day counts on arrays of loans.

Dates are day numbers (days from 1970-01-01, int64) and months are counted from
1900-01, so that stepping a due date and counting a period are integer operations
with a few table look-ups, for every loan of a chunk at once. The rules are those
of :mod:`amort.calendar` (a day past a short month's end falls on its last day) and
:mod:`amort.daycount` (the 30-day adjustments of the OpenDocument basis 0 and ISDA
2006 4.16, Actual/360, Actual/365 Fixed, Actual/Actual ISDA), each exact: a period's
year fraction is an integer numerator over the convention's denominator
(:data:`BASIS`).
"""

from __future__ import annotations

import functools

import numpy as np

from amort.daycount import DayCount

__all__ = ["BASIS", "month_day", "numerators_between", "period_table", "share", "step_days"]

IntArray = np.ndarray

# -- calendar tables: months from 1900-01 to 2300-12 as day numbers ------------------------------

_FIRST_MONTH = (1900 - 1970) * 12
_MONTHS = np.arange(_FIRST_MONTH, (2301 - 1970) * 12 + 1, dtype=np.int64)
MONTH_START = _MONTHS.astype("M8[M]").astype("M8[D]").astype(np.int64)
MONTH_LEN = np.diff(MONTH_START)
MONTH_START = MONTH_START[:-1]
_DAY_ZERO = int(MONTH_START[0])
_MONTH_OF_DAY = np.repeat(np.arange(MONTH_LEN.size, dtype=np.int64), MONTH_LEN)
_YEARS = np.arange(1900, 2302, dtype=np.int64)
_YEAR_START = np.asarray(
    [np.datetime64(f"{y}-01-01", "D").astype(np.int64) for y in _YEARS], dtype=np.int64
)
_LEAP = (_YEARS % 4 == 0) & ((_YEARS % 100 != 0) | (_YEARS % 400 == 0))
_LEAP_DAYS_BEFORE = np.concatenate([[0], np.cumsum(np.where(_LEAP, 366, 0))])[:-1]


def month_day(day: IntArray) -> tuple[IntArray, IntArray]:
    """Month (index from 1900-01) and day of the month of each day number."""
    month = _MONTH_OF_DAY[day - _DAY_ZERO]
    return month, day - MONTH_START[month] + 1


def step_days(anchor: IntArray, months: IntArray, days: IntArray, steps: IntArray) -> IntArray:
    """Day numbers ``steps`` regular periods from ``anchor`` (the day kept, or the month's last)."""
    month, day = month_day(anchor)
    target = np.clip(month + months * steps, 0, MONTH_LEN.size - 1)
    by_month = MONTH_START[target] + np.minimum(day, MONTH_LEN[target]) - 1
    return np.where(months > 0, by_month, anchor + days * steps)


def _thirty_ymd(
    month1: IntArray,
    d1: IntArray,
    month2: IntArray,
    d2: IntArray,
    rule: DayCount,
    last: np.ndarray,
) -> IntArray:
    """Days between two dates (month from 1900-01, day of month) under a 30-day rule.

    amort.daycount's adjustments, vectorised; ``last`` marks periods ending on the
    termination date (30E/360 ISDA leaves a February month end there as it is).
    """
    end1 = d1 == MONTH_LEN[month1]
    end2 = d2 == MONTH_LEN[month2]
    if rule is DayCount.THIRTY_360:
        feb1 = (month1 % 12 == 1) & end1
        feb2 = (month2 % 12 == 1) & end2
        d2 = np.where(feb1 & feb2, 30, d2)
        d1 = np.where(feb1, 30, d1)
        d2 = np.where((d2 == 31) & (d1 >= 30), 30, d2)
        d1 = np.where(d1 == 31, 30, d1)
    elif rule is DayCount.THIRTY_360_BOND:
        d1 = np.minimum(d1, 30)
        d2 = np.where((d2 == 31) & (d1 > 29), 30, d2)
    elif rule is DayCount.THIRTY_E_360:
        d1, d2 = np.minimum(d1, 30), np.minimum(d2, 30)
    else:
        d1 = np.where(end1, 30, d1)
        d2 = np.where(end2 & ~(last & (month2 % 12 == 1)), 30, d2)
    # 360 (Y2 - Y1) + 30 (M2 - M1) = 30 x (months between the two month indexes).
    return 30 * (month2 - month1) + (d2 - d1)


def _leap_days_before(day: IntArray) -> IntArray:
    """Days from 1900-01-01 to each day number that fall in leap years."""
    year = month_day(day)[0] // 12
    into = day - _YEAR_START[year]
    return _LEAP_DAYS_BEFORE[year] + np.where(_LEAP[year], into, 0)


#: Denominator of the year fraction of each dated day count (Actual/Actual ISDA: 365 x 366).
BASIS = {DayCount.ACT_360: 360, DayCount.ACT_365F: 365, DayCount.ACT_ACT_ISDA: 365 * 366}


def share(
    start: IntArray, end: IntArray, months: IntArray, days: IntArray
) -> tuple[IntArray, IntArray, IntArray]:
    """Whole regular periods back from ``end`` and the stub ``span / length`` before them.

    The equal rule of :mod:`amort.dated`: count whole periods back from the first due
    date; what is left is a fraction (in actual days) of the regular period it falls in.
    """
    size = start.size
    whole = np.zeros(size, dtype=np.int64)
    span = np.zeros(size, dtype=np.int64)
    length = np.ones(size, dtype=np.int64)
    stop = end.copy()
    pending = np.ones(size, dtype=bool)
    for w in range(64):
        back = step_days(end, months, days, np.full(size, -(w + 1), dtype=np.int64))
        here = pending & (back <= start)
        whole[here] = w
        span[here] = stop[here] - start[here]
        length[here] = stop[here] - back[here]
        pending &= ~here
        stop = np.where(pending, back, stop)
        if not pending.any():
            break
    return whole, span, length


def numerators_between(a: tuple, b: tuple, rule: DayCount, last: np.ndarray) -> IntArray:
    """Numerator of yearfrac from point a to point b (day, month, day of month)."""
    if rule.is_thirty_day:
        (_, m1, d1), (_, m2, d2) = a, b
        return _thirty_ymd(m1, d1, m2, d2, rule, last)
    total = b[0] - a[0]
    if rule is DayCount.ACT_ACT_ISDA:
        leap = _leap_days_before(b[0]) - _leap_days_before(a[0])
        return (total - leap) * 366 + leap * 365
    return total


@functools.lru_cache(maxsize=64)
def period_table(rule: DayCount, months: int) -> IntArray:
    """Numerators of a regular period ending in each month, for each due day of the month.

    Entry ``[m * 31 + day - 1]`` is yearfrac's numerator from the due date of month
    ``m - months`` to that of month ``m`` (months from 1900-01), both on ``day`` or the
    month's last day when it is shorter; one look-up then gives any regular period.
    """
    count = MONTH_LEN.size
    month = np.repeat(np.arange(months, count, dtype=np.int64), 31)
    day = np.tile(np.arange(1, 32, dtype=np.int64), count - months)
    before = month - months
    d1, d2 = np.minimum(day, MONTH_LEN[before]), np.minimum(day, MONTH_LEN[month])
    a = (MONTH_START[before] + d1 - 1, before, d1)
    b = (MONTH_START[month] + d2 - 1, month, d2)
    table = np.zeros(count * 31, dtype=np.int64)
    table[months * 31 :] = numerators_between(a, b, rule, np.zeros(month.size, dtype=bool))
    return table
