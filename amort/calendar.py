"""Payment dates: due dates from a first payment date, the end-of-month rule, business days.

Monthly-type frequencies (monthly, bimonthly, quarterly, semiannual, annual)
step whole months from the *first* payment date, so the k-th due date is
``add_months(first_payment, k * step)`` and never drifts: a loan due on the
31st is due on the last day of each shorter month and back on the 31st in long
months (Jan 31, Feb 28, Mar 31, Apr 30, ...). With ``end_of_month=True`` a first
payment on a month end (Feb 28 of a common year, Apr 30) keeps every payment on
the month end (Feb 28, Mar 31, Apr 30, ...). Weekly and biweekly payments step
7 and 14 days. Semimonthly payments fall on two fixed days of each month, e.g.
(1, 15) or (15, "end"); a day past the end of a short month falls on its last day.

Business-day adjustment (common practice, as in the ISDA 2006 Definitions
4.12): ``following`` moves a date that is not a business day to the next one,
``preceding`` to the previous one, and ``modified-following`` to the next one
unless that is in the next month, then to the previous one. Weekend days are
configurable; public holidays come from the ``holidays`` package (imported
only when a calendar is asked for). The unadjusted dates are kept next to the
adjusted ones, so that a schedule can run interest to either.

Dates are :class:`datetime.date` at the surface and ``numpy.datetime64[D]``
inside, so that 100,000 due dates take a few milliseconds.
"""

from __future__ import annotations

import calendar as _stdcalendar
import enum
import functools
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date, datetime
from typing import Literal

import numpy as np
import numpy.typing as npt

from amort.conventions import Frequency, parse_choice
from amort.errors import InvalidTerms, describe

DateArray = npt.NDArray[np.datetime64]

#: Months between payments for the monthly-type frequencies.
_STEP_MONTHS = {
    Frequency.MONTHLY: 1,
    Frequency.BIMONTHLY: 2,
    Frequency.QUARTERLY: 3,
    Frequency.SEMIANNUAL: 6,
    Frequency.ANNUAL: 12,
}
#: Days between payments for the day-stepping frequencies.
_STEP_DAYS = {Frequency.WEEKLY: 7, Frequency.BIWEEKLY: 14}

_FIRST_MONTH = 1 * 12  # month index (year * 12 + month - 1) of 0001-01
_LAST_MONTH = 9999 * 12 + 11  # of 9999-12


class BusinessDay(enum.Enum):
    """How a due date that is not a business day is moved; the value is its name."""

    NONE = "none"
    FOLLOWING = "following"
    MODIFIED_FOLLOWING = "modified-following"
    PRECEDING = "preceding"

    @classmethod
    def parse(cls, value: BusinessDay | str, field: str = "adjustment") -> BusinessDay:
        """Return the adjustment named by ``value`` (``"following"``, ``"mod-following"``, ...).

        >>> BusinessDay.parse("Modified Following")
        <BusinessDay.MODIFIED_FOLLOWING: 'modified-following'>
        """
        return parse_choice(cls, value, field, _ADJUSTMENT_ALIASES)


_ADJUSTMENT_ALIASES = {
    "unadjusted": "none",
    "no-adjustment": "none",
    "next": "following",
    "mod-following": "modified-following",
    "modified": "modified-following",
    "modfollowing": "modified-following",
    "modifiedfollowing": "modified-following",
    "previous": "preceding",
}

# numpy's names for the rolls.
_Roll = Literal["following", "modifiedfollowing", "preceding"]
_ROLL: dict[BusinessDay, _Roll] = {
    BusinessDay.FOLLOWING: "following",
    BusinessDay.MODIFIED_FOLLOWING: "modifiedfollowing",
    BusinessDay.PRECEDING: "preceding",
}


@dataclass(frozen=True)
class PaymentDates:
    """Due dates of a schedule, before and after business-day adjustment.

    ``unadjusted[k]`` is the k-th due date from the stepping rule and
    ``adjusted[k]`` the date it moves to (the same date under ``"none"``).
    """

    unadjusted: tuple[date, ...]
    adjusted: tuple[date, ...]

    def __post_init__(self) -> None:
        if len(self.unadjusted) != len(self.adjusted):
            raise InvalidTerms(
                f"'adjusted' must hold one date per due date ({len(self.unadjusted)}) "
                f"(got {len(self.adjusted)})"
            )

    def __len__(self) -> int:
        return len(self.unadjusted)

    def to_datetime64(self, *, adjusted: bool = True) -> DateArray:
        """Return the adjusted (or unadjusted) dates as a ``datetime64[D]`` array."""
        chosen = self.adjusted if adjusted else self.unadjusted
        return np.array(chosen, dtype="datetime64[D]")


# -- single dates ----------------------------------------------------------------------

_ISO_DATE = re.compile(r"^(\d{4})-(\d{2})-(\d{2})$")


def parse_date(value: object, field: str) -> date:
    """Return ``value`` as a date: a ``datetime.date``, a ``datetime64`` or "YYYY-MM-DD".

    A ``datetime`` gives its date. Anything else, or an impossible day, is
    refused with :class:`~amort.errors.InvalidTerms`.

    >>> parse_date("2027-01-31", "first_payment")
    datetime.date(2027, 1, 31)
    >>> parse_date("2027-02-30", "first_payment")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    amort.errors.InvalidTerms: 'first_payment' is not a valid date: 2027-02-30 (day is out...)
    """
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    if isinstance(value, np.datetime64) and not np.isnat(value):
        day = value.astype("datetime64[D]").astype(object)
        if isinstance(day, date):
            return day
    if isinstance(value, str):
        match = _ISO_DATE.match(value.strip())
        if match:
            year, month, day_of_month = (int(g) for g in match.groups())
            try:
                return date(year, month, day_of_month)
            except ValueError as exc:
                raise InvalidTerms(
                    f"{field!r} is not a valid date: {value.strip()} ({exc})"
                ) from None
    raise InvalidTerms(f"{field!r} must be a date written YYYY-MM-DD (got {describe(value)})")


def days_in_month(year: int, month: int) -> int:
    """Return the number of days in the month (28 to 31).

    >>> days_in_month(2028, 2)
    29
    """
    return _stdcalendar.monthrange(year, month)[1]


def is_month_end(d: date) -> bool:
    """Return True when ``d`` is the last day of its month.

    >>> is_month_end(date(2027, 2, 28)), is_month_end(date(2028, 2, 28))
    (True, False)
    """
    return d.day == days_in_month(d.year, d.month)


def add_months(d: date, n: int, *, end_of_month: bool = False) -> date:
    """Return the date ``n`` whole months after ``d`` (before, for negative ``n``).

    The day of month is kept, or the last day of a month too short for it.
    With ``end_of_month=True`` a month-end ``d`` gives the month end.

    >>> add_months(date(2027, 1, 31), 1)
    datetime.date(2027, 2, 28)
    >>> add_months(date(2027, 2, 28), 1), add_months(date(2027, 2, 28), 1, end_of_month=True)
    (datetime.date(2027, 3, 28), datetime.date(2027, 3, 31))
    """
    index = d.year * 12 + d.month - 1 + n
    if not _FIRST_MONTH <= index <= _LAST_MONTH:
        raise InvalidTerms(
            f"'date' must stay within 0001-01-01 to 9999-12-31 ({d} plus {n} months is outside)"
        )
    year, month0 = divmod(index, 12)
    last = days_in_month(year, month0 + 1)
    day = last if end_of_month and is_month_end(d) else min(d.day, last)
    return date(year, month0 + 1, day)


# -- option parsing --------------------------------------------------------------------


def parse_semimonthly_days(
    value: Sequence[int | str] | str, field: str = "semimonthly_days"
) -> tuple[int, int]:
    """Return the two semimonthly payment days in order, 31 standing for the month end.

    Each day is 1 to 31, or ``"end"`` (the same as 31: the last day of every
    month); a day past the end of a short month falls on its last day. The two
    must differ and the earlier must be at most 27, so that the two dates differ
    in every February. A string ``"15,end"`` is read as a pair.

    >>> parse_semimonthly_days((15, "end"))
    (15, 31)
    """
    items: Sequence[object]
    items = value.split(",") if isinstance(value, str) else value
    try:
        pair = [_semimonthly_day(item) for item in items]
    except (TypeError, ValueError):
        pair = []
    if len(pair) == 2 and pair[0] != pair[1] and min(pair) <= 27:
        low, high = sorted(pair)
        return low, high
    raise InvalidTerms(
        f"{field!r} must be two different days of the month, each 1 to 31 or 'end', "
        f"the earlier at most 27 (got {describe(value)})"
    )


def _semimonthly_day(item: object) -> int:
    if isinstance(item, str):
        text = item.strip().lower()
        if text in ("end", "last", "eom"):
            return 31
        item = int(text)
    if isinstance(item, bool) or not isinstance(item, int | np.integer) or not 1 <= item <= 31:
        raise ValueError(item)
    return int(item)


# English names, fixed (calendar.day_name follows the locale).
_DAY_NAMES = ("monday", "tuesday", "wednesday", "thursday", "friday", "saturday", "sunday")
_WEEKDAYS = {name: i for i, name in enumerate(_DAY_NAMES)} | {
    name[:3]: i for i, name in enumerate(_DAY_NAMES)
}


def parse_weekend(
    value: Iterable[int | str] | str = ("saturday", "sunday"), field: str = "weekend"
) -> tuple[int, ...]:
    """Return the weekend days as sorted weekday numbers (Monday 0 ... Sunday 6).

    Days are numbers 0 to 6 or English names (``"sat"``, ``"Sunday"``); a
    string is split at commas. No weekend days is allowed; all seven is not.

    >>> parse_weekend(("fri", "sat"))
    (4, 5)
    """
    items: Iterable[object]
    items = [s for s in value.split(",") if s.strip()] if isinstance(value, str) else value
    days: set[int] = set()
    for item in items:
        if isinstance(item, str) and item.strip().lower() in _WEEKDAYS:
            days.add(_WEEKDAYS[item.strip().lower()])
        elif isinstance(item, int | np.integer) and not isinstance(item, bool) and 0 <= item <= 6:
            days.add(int(item))
        else:
            raise InvalidTerms(
                f"{field!r} must hold weekdays, 0 (Monday) to 6 (Sunday) or names such as "
                f"'sat' (got {describe(item)})"
            )
    if len(days) == 7:
        raise InvalidTerms(f"{field!r} must leave at least one business day (got all seven)")
    return tuple(sorted(days))


def parse_holiday_calendar(
    value: str | Sequence[str] | None, field: str = "holiday_calendar"
) -> tuple[str, str | None] | None:
    """Return ``(country, subdivision)`` from "US", "US-NY" or ("US", "NY"); None for none.

    The pair is checked against the ``holidays`` package; an unknown country
    or subdivision is refused.

    >>> parse_holiday_calendar("us-ny")
    ('US', 'NY')
    """
    if value is None:
        return None
    if isinstance(value, str):
        text = value.strip()
        if not text or text.lower() == "none":
            return None
        parts: list[str] = text.split("-", 1)
    elif isinstance(value, Sequence) and 1 <= len(value) <= 2:
        parts = [str(p) for p in value if p is not None]
    else:
        parts = []
    if not parts or not all(p.strip() for p in parts):
        raise InvalidTerms(
            f"{field!r} must be a country code such as 'US', 'US-NY' or ('US', 'NY') "
            f"(got {describe(value)})"
        )
    country = parts[0].strip().upper()
    subdiv = parts[1].strip() if len(parts) == 2 else None
    found = _holiday_table(country, subdiv)
    if found == "country":
        raise InvalidTerms(
            f"{field!r} must name a country known to the holidays package, such as 'US' or "
            f"'GB' (got {describe(value)}: no country {country!r})"
        )
    if found == "subdivision":
        raise InvalidTerms(
            f"{field!r} must name a subdivision of {country} known to the holidays package, "
            f"such as {_example_subdivisions(country)} (got {describe(value)})"
        )
    return country, getattr(found, "subdiv", subdiv) if subdiv is not None else None


def _example_subdivisions(country: str) -> str:
    import holidays  # optional and heavy: only when a calendar is asked for

    names = holidays.list_supported_countries(include_aliases=False).get(country, [])
    return ", ".join(repr(s) for s in names[:4]) or "none (it has no subdivisions)"


@functools.lru_cache(maxsize=64)
def _holiday_table(country: str, subdiv: str | None) -> object:
    """Return the ``holidays`` calendar object (no years read yet), or what is unknown."""
    import holidays

    if country not in holidays.list_supported_countries(include_aliases=True):
        return "country"
    for name in (subdiv, subdiv.upper()) if subdiv is not None else (None,):
        try:
            return holidays.country_holidays(country, subdiv=name, expand=False)
        except NotImplementedError:
            continue
    return "subdivision"


@functools.lru_cache(maxsize=64)
def _holidays64(country: str, subdiv: str | None, first_year: int, last_year: int) -> DateArray:
    import holidays

    table = holidays.country_holidays(
        country, subdiv=subdiv, years=range(first_year, last_year + 1)
    )
    return np.array(sorted(table), dtype="datetime64[D]")


def holiday_dates(
    holiday_calendar: str | Sequence[str], first_year: int, last_year: int
) -> frozenset[date]:
    """Return the public holidays (observed days included) of a calendar in a range of years.

    Taken from the ``holidays`` package, e.g. ``holiday_dates("US", 2027, 2027)``;
    years outside the package's range for that country are refused.
    """
    parsed = parse_holiday_calendar(holiday_calendar)
    if parsed is None:
        return frozenset()
    table = _holidays_between(parsed, first_year, last_year)
    return frozenset(table.astype(object).tolist())


def _calendar_years(parsed: tuple[str, str | None]) -> tuple[int, int]:
    table = _holiday_table(*parsed)
    return int(getattr(table, "start_year", 1)), int(getattr(table, "end_year", 9999))


def _check_years(parsed: tuple[str, str | None], first_year: int, last_year: int) -> None:
    low, high = _calendar_years(parsed)
    if first_year < low or last_year > high:
        country, subdiv = parsed
        name = country if subdiv is None else f"{country}-{subdiv}"
        raise InvalidTerms(
            f"'holiday_calendar' {name!r} covers the years {low} to {high} in the holidays "
            f"package (the dates run from {first_year} to {last_year})"
        )


def _holidays_between(parsed: tuple[str, str | None], first_year: int, last_year: int) -> DateArray:
    _check_years(parsed, first_year, last_year)
    return _holidays64(parsed[0], parsed[1], first_year, last_year)


# -- business-day adjustment -----------------------------------------------------------


def _weekmask(weekend: tuple[int, ...]) -> str:
    return "".join("0" if day in weekend else "1" for day in range(7))


def _adjust64(
    days: DateArray,
    rule: BusinessDay,
    weekend: tuple[int, ...],
    parsed: tuple[str, str | None] | None,
    extra: DateArray,
) -> DateArray:
    if rule is BusinessDay.NONE or days.size == 0:
        return days.copy()
    closed = extra
    if parsed is not None:
        # Read one year either side, so that a roll across 1 January sees its holidays.
        low, high = _calendar_years(parsed)
        first_year, last_year = _year(days.min()), _year(days.max())
        _check_years(parsed, first_year, last_year)
        known = _holidays64(*parsed, max(low, first_year - 1), min(high, last_year + 1))
        closed = np.concatenate([known, extra])
    calendar = np.busdaycalendar(weekmask=_weekmask(weekend), holidays=closed)
    moved = np.busday_offset(days, 0, roll=_ROLL[rule], busdaycal=calendar)
    if moved.min() < np.datetime64("0001-01-01") or moved.max() > np.datetime64("9999-12-31"):
        raise InvalidTerms("'adjustment' moves a due date outside 0001-01-01 to 9999-12-31")
    if parsed is not None:
        _check_years(parsed, _year(moved.min()), _year(moved.max()))
    return moved


def _year(day: np.datetime64) -> int:
    return int(day.astype("datetime64[Y]").astype(np.int64)) + 1970


def _extra64(extra_holidays: Iterable[object]) -> DateArray:
    return np.array(
        [parse_date(d, "extra_holidays") for d in extra_holidays], dtype="datetime64[D]"
    )


def adjust_dates(
    dates: Sequence[date],
    adjustment: BusinessDay | str,
    *,
    weekend: Iterable[int | str] | str = ("saturday", "sunday"),
    holiday_calendar: str | Sequence[str] | None = None,
    extra_holidays: Iterable[date | str] = (),
) -> tuple[date, ...]:
    """Return each date moved to a business day under ``adjustment``.

    A business day is a day that is not a ``weekend`` day, not a public holiday
    of ``holiday_calendar`` (from the ``holidays`` package) and not one of
    ``extra_holidays``.

    >>> adjust_dates([date(2027, 7, 31)], "modified-following")   # a Saturday
    (datetime.date(2027, 7, 30),)
    """
    rule = BusinessDay.parse(adjustment)
    days = np.array([parse_date(d, "dates") for d in dates], dtype="datetime64[D]")
    moved = _adjust64(
        days,
        rule,
        parse_weekend(weekend),
        parse_holiday_calendar(holiday_calendar),
        _extra64(extra_holidays),
    )
    return tuple(moved.astype(object).tolist())


# -- due dates -------------------------------------------------------------------------


def _month_index(d: date) -> int:
    return d.year * 12 + d.month - 1


def _check_months(first: int, last: int) -> None:
    if first < _FIRST_MONTH or last > _LAST_MONTH:
        raise InvalidTerms(
            "'periods' must keep every due date within 0001-01-01 to 9999-12-31 "
            "(the schedule runs past it)"
        )


def _months64(first_month: int, offsets: npt.NDArray[np.int64]) -> DateArray:
    # Month index (year * 12 + month - 1) to datetime64[M]; numpy counts months from 1970-01.
    return (offsets + (first_month - 1970 * 12)).astype("datetime64[M]")


def _monthly64(
    first: date, step: int, k: npt.NDArray[np.int64], *, end_of_month: bool
) -> DateArray:
    # The k-th date is add_months(first, k * step): the day of the FIRST date, clipped.
    base = _month_index(first)
    _check_months(base + step * int(k.min()), base + step * int(k.max()))
    months = _months64(base, k * step)
    starts = months.astype("datetime64[D]")
    lengths = (months + 1).astype("datetime64[D]") - starts
    if end_of_month and is_month_end(first):
        day = lengths
    else:
        day = np.minimum(lengths, np.timedelta64(first.day, "D"))
    return starts + (day - np.timedelta64(1, "D"))


def _semimonthly_slot(first: date, pair: tuple[int, int], field: str) -> int:
    last = days_in_month(first.year, first.month)
    for slot, day in enumerate(pair):
        if first.day == min(day, last):
            return slot
    shown = tuple("end" if d == 31 else d for d in pair)
    raise InvalidTerms(
        f"{field!r} must fall on one of the semimonthly days {shown} of its month (got {first})"
    )


def _semimonthly64(first: date, pair: tuple[int, int], k: npt.NDArray[np.int64]) -> DateArray:
    # Dates alternate between the two days: payment k is slot (s + k) mod 2 of month
    # (s + k) div 2 after the first payment's month.
    slot = _semimonthly_slot(first, pair, "first_payment")
    t = k + slot
    month_offsets = np.floor_divide(t, 2)
    base = _month_index(first)
    _check_months(base + int(month_offsets.min()), base + int(month_offsets.max()))
    months = _months64(base, month_offsets)
    starts = months.astype("datetime64[D]")
    lengths = (months + 1).astype("datetime64[D]") - starts
    wanted = np.where(t % 2 == 0, pair[0], pair[1]).astype("timedelta64[D]")
    return starts + (np.minimum(lengths, wanted) - np.timedelta64(1, "D"))


def _daily64(first: date, step: int, k: npt.NDArray[np.int64]) -> DateArray:
    days = np.datetime64(first, "D") + k * step
    if days.min() < np.datetime64("0001-01-01") or days.max() > np.datetime64("9999-12-31"):
        raise InvalidTerms(
            "'periods' must keep every due date within 0001-01-01 to 9999-12-31 "
            "(the schedule runs past it)"
        )
    return days


def _dates64(
    first: date,
    frequency: Frequency,
    k: npt.NDArray[np.int64],
    *,
    end_of_month: bool,
    pair: tuple[int, int],
) -> DateArray:
    if frequency in _STEP_DAYS:
        return _daily64(first, _STEP_DAYS[frequency], k)
    if frequency is Frequency.SEMIMONTHLY:
        return _semimonthly64(first, pair, k)
    return _monthly64(first, _STEP_MONTHS[frequency], k, end_of_month=end_of_month)


def _check_periods(periods: object) -> int:
    if isinstance(periods, bool) or not isinstance(periods, int | np.integer) or periods < 1:
        raise InvalidTerms(f"'periods' must be a whole number >= 1 (got {describe(periods)})")
    return int(periods)


def due_dates(
    first_payment: date | str,
    periods: int,
    frequency: Frequency | str = Frequency.MONTHLY,
    *,
    end_of_month: bool = False,
    semimonthly_days: Sequence[int | str] | str = (1, 15),
    adjustment: BusinessDay | str = BusinessDay.NONE,
    weekend: Iterable[int | str] | str = ("saturday", "sunday"),
    holiday_calendar: str | Sequence[str] | None = None,
    extra_holidays: Iterable[date | str] = (),
) -> PaymentDates:
    """Return the ``periods`` due dates from ``first_payment``, unadjusted and adjusted.

    Monthly-type frequencies step ``k * step`` months from the first payment
    (no drift; a day past a short month's end falls on its last day, and
    ``end_of_month`` keeps a month-end first payment at every month end);
    weekly and biweekly step 7 and 14 days; semimonthly alternates between
    the two ``semimonthly_days``, and ``first_payment`` must fall on one of them.
    ``end_of_month`` has no effect on the weekly and semimonthly frequencies.
    Business-day options are those of :func:`adjust_dates`.

    >>> dates = due_dates("2027-01-31", 4)
    >>> [d.isoformat() for d in dates.unadjusted]
    ['2027-01-31', '2027-02-28', '2027-03-31', '2027-04-30']
    >>> [d.isoformat() for d in due_dates("2027-01-31", 4, adjustment="following").adjusted]
    ['2027-02-01', '2027-03-01', '2027-03-31', '2027-04-30']
    """
    first = parse_date(first_payment, "first_payment")
    count = _check_periods(periods)
    freq = Frequency.parse(frequency)
    pair = parse_semimonthly_days(semimonthly_days)
    rule = BusinessDay.parse(adjustment)
    weekend_days = parse_weekend(weekend)
    calendar = parse_holiday_calendar(holiday_calendar)
    extra = _extra64(extra_holidays)
    k = np.arange(count, dtype=np.int64)
    raw = _dates64(first, freq, k, end_of_month=bool(end_of_month), pair=pair)
    moved = _adjust64(raw, rule, weekend_days, calendar, extra)
    unadjusted = tuple(raw.astype(object).tolist())
    adjusted = unadjusted if rule is BusinessDay.NONE else tuple(moved.astype(object).tolist())
    return PaymentDates(unadjusted=unadjusted, adjusted=adjusted)


def regular_period_start(
    first_payment: date | str,
    frequency: Frequency | str,
    *,
    end_of_month: bool = False,
    semimonthly_days: Sequence[int | str] | str = (1, 15),
) -> date:
    """Return the date one regular period before ``first_payment`` (unadjusted).

    It is the due date before the first one under the same stepping rule, so a
    monthly loan first due on 31 March starts its regular period on 28 (or 29)
    February, and a (1, 15) semimonthly loan first due on 1 May on 15 April.

    >>> regular_period_start(date(2027, 3, 31), "monthly")
    datetime.date(2027, 2, 28)
    >>> regular_period_start(date(2027, 5, 1), "semimonthly")
    datetime.date(2027, 4, 15)
    """
    first = parse_date(first_payment, "first_payment")
    freq = Frequency.parse(frequency)
    pair = parse_semimonthly_days(semimonthly_days)
    k = np.array([-1], dtype=np.int64)
    before = _dates64(first, freq, k, end_of_month=bool(end_of_month), pair=pair)
    result: date = before.astype(object)[0]
    return result


def is_regular_first_period(
    start: date | str,
    first_payment: date | str,
    frequency: Frequency | str,
    *,
    end_of_month: bool = False,
    semimonthly_days: Sequence[int | str] | str = (1, 15),
) -> bool:
    """Return True when ``first_payment`` is exactly one regular period after ``start``.

    That is, ``start`` is :func:`regular_period_start` of the first payment, or
    (monthly-type frequencies) one period stepped forward from ``start`` by
    :func:`add_months` lands on the first payment: 31 January to 28 February is
    a regular month, as is 28 February to 31 March for a loan due on the 31st.
    A first payment on or before ``start`` is refused.

    >>> is_regular_first_period(date(2027, 1, 31), date(2027, 2, 28), "monthly")
    True
    >>> is_regular_first_period(date(2027, 1, 10), date(2027, 2, 28), "monthly")
    False
    """
    begin = parse_date(start, "start")
    first = parse_date(first_payment, "first_payment")
    if first <= begin:
        raise InvalidTerms(f"'first_payment' must be after the start date {begin} (got {first})")
    freq = Frequency.parse(frequency)
    eom = bool(end_of_month)
    if regular_period_start(first, freq, end_of_month=eom, semimonthly_days=semimonthly_days) == (
        begin
    ):
        return True
    if freq in _STEP_MONTHS:
        return add_months(begin, _STEP_MONTHS[freq], end_of_month=eom) == first
    return False
