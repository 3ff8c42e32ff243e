"""Day counts: the exact year fraction between two dates under a named convention.

A day count turns a period between two dates into a fraction of a year, so that
the periodic rate of a dated schedule is ``i_k = j * yearfrac(d_{k-1}, d_k)`` for a
nominal annual rate ``j``. Every fraction here is an exact
:class:`fractions.Fraction`; nothing is rounded.

The 30-day family counts ``360 (Y2 - Y1) + 30 (M2 - M1) + (D2 - D1)`` days over a
360-day year after adjusting the day numbers D1 and D2; the members differ only
in those adjustments, and most of all at the end of February:

================  ==========================================================
convention        source and rule
================  ==========================================================
``30/360``        30/360 US, as OASIS OpenDocument Formula YEARFRAC basis 0:
                  both last of February -> D2 = 30; D1 last of February ->
                  D1 = 30; D2 = 31 and D1 >= 30 -> D2 = 30; D1 = 31 -> D1 = 30.
``30/360-bond``   ISDA 2006 Definitions 4.16(f) Bond Basis: D1 = 31 -> 30;
                  D2 = 31 -> 30 only if D1 > 29. February is not adjusted.
``30e/360``       ISDA 2006 4.16(g) 30E/360 (Eurobond Basis): D1 = 31 -> 30;
                  D2 = 31 -> 30.
``30e/360-isda``  ISDA 2006 4.16(h) 30E/360 (ISDA): a month-end D1 -> 30; a
                  month-end D2 -> 30 unless D2 is the termination date and
                  falls in February.
================  ==========================================================

2008-02-29 -> 2009-02-28 shows the difference: 360 days under ``30/360`` (both
dates are the last day of February), 359 under Bond Basis and 30E/360, 360
under 30E/360 (ISDA) unless 2009-02-28 is the termination date (then 358).

The actual-day conventions count calendar days: ``actual/360`` and
``actual/365`` (Actual/365 Fixed, ISDA 2006 4.16(d)/(e)) divide by 360 or 365;
``actual/actual-isda`` (ISDA 2006 4.16(b)) splits the period at each 1 January
and divides the days falling in a leap year by 366 and the others by 365.
``equal`` is the undated convention: every period is exactly ``1/p`` of a year
for ``p`` periods a year, whatever its dates.

Naming caution: in the ISDA 2006 Definitions "Actual/365" is another name for
Actual/Actual (ISDA) and "30/360" for Bond Basis. Here ``actual/365`` is
Actual/365 Fixed and ``30/360`` is the US rule, as lenders usually mean them.
"""

from __future__ import annotations

import calendar as _stdcalendar
import enum
import itertools
from collections.abc import Sequence
from datetime import date, datetime
from fractions import Fraction

from amort.errors import InvalidTerms, describe


class DayCount(enum.Enum):
    """A day-count convention; the value is the name used in files and the CLI."""

    THIRTY_360 = "30/360"
    THIRTY_360_BOND = "30/360-bond"
    THIRTY_E_360 = "30e/360"
    THIRTY_E_360_ISDA = "30e/360-isda"
    ACT_360 = "actual/360"
    ACT_365F = "actual/365"
    ACT_ACT_ISDA = "actual/actual-isda"
    EQUAL = "equal"

    @classmethod
    def parse(cls, value: DayCount | str, field: str = "day_count") -> DayCount:
        """Return the convention named by ``value``, case-insensitively, aliases allowed.

        >>> DayCount.parse("Act/365F")
        <DayCount.ACT_365F: 'actual/365'>
        >>> DayCount.parse("30E/360 (ISDA)")
        <DayCount.THIRTY_E_360_ISDA: '30e/360-isda'>
        """
        if isinstance(value, DayCount):
            return value
        if isinstance(value, str):
            text = _normalise(value)
            text = _ALIASES.get(text, text)
            member = value.strip().upper()
            for convention in cls:
                if text == convention.value or member == convention.name:
                    return convention
        valid = ", ".join(repr(c.value) for c in cls)
        raise InvalidTerms(f"{field!r} must be one of {valid} (got {describe(value)})")

    @property
    def is_thirty_day(self) -> bool:
        """True for the 30-day family (30/360, Bond Basis, 30E/360, 30E/360 ISDA)."""
        return self in _THIRTY

    @property
    def is_dated(self) -> bool:
        """True when the year fraction depends on the dates (every convention but EQUAL)."""
        return self is not DayCount.EQUAL


_THIRTY = frozenset(
    {
        DayCount.THIRTY_360,
        DayCount.THIRTY_360_BOND,
        DayCount.THIRTY_E_360,
        DayCount.THIRTY_E_360_ISDA,
    }
)


def _normalise(text: str) -> str:
    # "Actual/365 (Fixed)" -> "actual/365-fixed"; "30E/360 ISDA" -> "30e/360-isda".
    text = text.strip().lower().replace("(", " ").replace(")", " ").replace("_", " ")
    text = "-".join(text.replace("-", " ").split())
    return text.replace("-/-", "/").replace("/-", "/").replace("-/", "/")


_ALIASES = {
    # 30/360 US (OpenDocument YEARFRAC basis 0).
    "30u/360": "30/360",
    "30us/360": "30/360",
    "30/360-us": "30/360",
    "us-30/360": "30/360",
    "30/360-nasd": "30/360",
    "nasd": "30/360",
    # ISDA 2006 4.16(f).
    "bond": "30/360-bond",
    "bond-basis": "30/360-bond",
    "30/360-bond-basis": "30/360-bond",
    "360/360": "30/360-bond",
    # ISDA 2006 4.16(g).
    "30e/360-eurobond": "30e/360",
    "eurobond": "30e/360",
    "eurobond-basis": "30e/360",
    "30/360-eurobond": "30e/360",
    "30/360-european": "30e/360",
    "30/360-icma": "30e/360",
    "30e/360-icma": "30e/360",
    # ISDA 2006 4.16(h).
    "30e-isda/360": "30e/360-isda",
    "30/360-german": "30e/360-isda",
    "german": "30e/360-isda",
    # Actual/360, ISDA 2006 4.16(e).
    "act/360": "actual/360",
    "a/360": "actual/360",
    # Actual/365 Fixed, ISDA 2006 4.16(d).
    "act/365": "actual/365",
    "a/365": "actual/365",
    "actual/365f": "actual/365",
    "act/365f": "actual/365",
    "a/365f": "actual/365",
    "actual/365-fixed": "actual/365",
    "act/365-fixed": "actual/365",
    # Actual/Actual (ISDA), ISDA 2006 4.16(b). Bare "act/act" is refused: it also
    # names the ICMA rule, which needs a coupon schedule.
    "act/act-isda": "actual/actual-isda",
    "a/a-isda": "actual/actual-isda",
    "actual/365-isda": "actual/actual-isda",
    "act/365-isda": "actual/actual-isda",
    # The undated rule.
    "equal-periods": "equal",
    "periodic": "equal",
}


# -- validation ------------------------------------------------------------------------


def _as_date(value: object, field: str) -> date:
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    raise InvalidTerms(f"{field!r} must be a date (got {describe(value)})")


def _check_order(start: date, end: date) -> None:
    if end < start:
        raise InvalidTerms(f"'end' must be on or after the start date {start} (got {end})")


def _check_per_year(per_year: int | None, convention: DayCount) -> int:
    if per_year is None:
        raise InvalidTerms(
            f"'per_year' must be given (periods per year, >= 1) for day count "
            f"{convention.value!r} (got None)"
        )
    if isinstance(per_year, bool) or not isinstance(per_year, int) or per_year < 1:
        raise InvalidTerms(f"'per_year' must be a whole number >= 1 (got {describe(per_year)})")
    return per_year


# -- the rules -------------------------------------------------------------------------


def _month_end(d: date) -> bool:
    return d.day >= 28 and d.day == _stdcalendar.monthrange(d.year, d.month)[1]


def _february_end(d: date) -> bool:
    return d.month == 2 and _month_end(d)


def _thirty_days(start: date, end: date, convention: DayCount, termination: date | None) -> int:
    d1, d2 = start.day, end.day
    if convention is DayCount.THIRTY_360:
        # OpenDocument YEARFRAC basis 0; the order of the four steps matters.
        if _february_end(start) and _february_end(end):
            d2 = 30
        if _february_end(start):
            d1 = 30
        if d2 == 31 and d1 >= 30:
            d2 = 30
        if d1 == 31:
            d1 = 30
    elif convention is DayCount.THIRTY_360_BOND:
        # ISDA 4.16(f): D1 31 -> 30; D2 31 -> 30 only when D1 (already adjusted) > 29.
        d1 = min(d1, 30)
        if d2 == 31 and d1 > 29:
            d2 = 30
    elif convention is DayCount.THIRTY_E_360:
        d1 = min(d1, 30)
        d2 = min(d2, 30)
    else:  # THIRTY_E_360_ISDA, ISDA 4.16(h)
        if _month_end(start):
            d1 = 30
        if _month_end(end) and not (end == termination and end.month == 2):
            d2 = 30
    return 360 * (end.year - start.year) + 30 * (end.month - start.month) + (d2 - d1)


def _actual_actual_isda(start: date, end: date) -> Fraction:
    # Split at each 1 January: days in a leap year over 366, the others over 365.
    total = Fraction(0)
    cursor = start
    while cursor < end:
        next_year = date(cursor.year + 1, 1, 1) if cursor.year < date.max.year else None
        stop = end if next_year is None or end < next_year else next_year
        basis = 366 if _stdcalendar.isleap(cursor.year) else 365
        total += Fraction((stop - cursor).days, basis)
        cursor = stop
    return total


def _fraction(
    start: date,
    end: date,
    convention: DayCount,
    per_year: int | None,
    termination: date | None,
) -> Fraction:
    if start == end:
        # Before any rule: 30E/360 (ISDA) would send a month-end D1 to 30 but keep a
        # termination date of 28 February, and count -2 days for no time at all.
        return Fraction(0)
    if convention is DayCount.EQUAL:
        return Fraction(1, per_year or 1)
    if convention in _THIRTY:
        return Fraction(_thirty_days(start, end, convention, termination), 360)
    if convention is DayCount.ACT_360:
        return Fraction((end - start).days, 360)
    if convention is DayCount.ACT_365F:
        return Fraction((end - start).days, 365)
    return _actual_actual_isda(start, end)


# -- public functions ------------------------------------------------------------------


def day_count_days(
    start: date,
    end: date,
    convention: DayCount | str,
    *,
    termination: date | None = None,
) -> int:
    """Return the days the convention counts from ``start`` to ``end`` (the numerator).

    The 30-day family gives ``360 (Y2 - Y1) + 30 (M2 - M1) + (D2 - D1)`` after its
    adjustments (see the module notes); the actual-day conventions give the
    calendar days ``end - start``. A date to itself counts 0 days under every
    convention. ``termination`` matters only for
    ``30e/360-isda``. The ``equal`` convention counts no days and is refused.

    >>> day_count_days(date(2006, 8, 31), date(2007, 2, 28), "30/360-bond")
    178
    >>> day_count_days(date(2008, 2, 29), date(2009, 2, 28), "30/360")
    360
    """
    rule = DayCount.parse(convention)
    start = _as_date(start, "start")
    end = _as_date(end, "end")
    _check_order(start, end)
    if rule is DayCount.EQUAL:
        raise InvalidTerms(
            "'day_count' 'equal' counts no days: each period is 1/p of a year "
            "(use a dated day count such as 'actual/365')"
        )
    if rule in _THIRTY and start != end:
        term = None if termination is None else _as_date(termination, "termination")
        return _thirty_days(start, end, rule, term)
    return (end - start).days


def year_fraction(
    start: date,
    end: date,
    convention: DayCount | str,
    *,
    per_year: int | None = None,
    termination: date | None = None,
) -> Fraction:
    """Return the exact fraction of a year from ``start`` to ``end`` under ``convention``.

    A period from a date to itself is 0 under every convention; ``end`` before
    ``start`` is refused. ``per_year`` (periods a year, e.g. 12) is required for
    ``equal``, which gives ``1/per_year`` for any period of positive length;
    ``termination`` (the final date of the schedule) matters only for
    ``30e/360-isda``. Both are ignored by the other conventions.

    >>> year_fraction(date(2003, 11, 1), date(2004, 5, 1), "actual/actual-isda")
    Fraction(66491, 133590)
    >>> year_fraction(date(2027, 1, 15), date(2027, 2, 15), "act/360")
    Fraction(31, 360)
    >>> year_fraction(date(2027, 1, 15), date(2027, 2, 15), "equal", per_year=12)
    Fraction(1, 12)
    """
    rule = DayCount.parse(convention)
    start = _as_date(start, "start")
    end = _as_date(end, "end")
    _check_order(start, end)
    if rule is DayCount.EQUAL:
        per_year = _check_per_year(per_year, rule)
    term = None if termination is None else _as_date(termination, "termination")
    return _fraction(start, end, rule, per_year, term)


def year_fractions(
    dates: Sequence[date],
    convention: DayCount | str,
    *,
    per_year: int | None = None,
    termination: date | None = None,
) -> list[Fraction]:
    """Return the exact year fractions of the consecutive periods ``d0..d1, d1..d2, ...``.

    ``dates`` must be in non-decreasing order; ``n`` dates give ``n - 1``
    fractions, each equal to ``year_fraction(d[k-1], d[k], ...)``. For
    ``30e/360-isda`` the termination date defaults to the last date of the list
    (the list is taken to be the whole schedule); pass ``termination`` to override.

    >>> year_fractions([date(2027, 1, 31), date(2027, 2, 28), date(2027, 3, 31)], "30e/360")
    [Fraction(7, 90), Fraction(4, 45)]

    (28 and 32 days: 30E/360 leaves the end of February as it is.)
    """
    rule = DayCount.parse(convention)
    points = [_as_date(d, "dates") for d in dates]
    for earlier, later in itertools.pairwise(points):
        if later < earlier:
            raise InvalidTerms(
                f"'dates' must be in non-decreasing order ({later} follows {earlier})"
            )
    if rule is DayCount.EQUAL:
        per_year = _check_per_year(per_year, rule)
    if termination is not None:
        term: date | None = _as_date(termination, "termination")
    else:
        term = points[-1] if points else None
    pairs = itertools.pairwise(points)
    if rule is DayCount.ACT_360 or rule is DayCount.ACT_365F:
        basis = 360 if rule is DayCount.ACT_360 else 365
        return [Fraction((b - a).days, basis) for a, b in pairs]
    if rule in _THIRTY:
        return [
            Fraction(_thirty_days(a, b, rule, term), 360) if a != b else Fraction(0)
            for a, b in pairs
        ]
    return [_fraction(a, b, rule, per_year, term) for a, b in pairs]
