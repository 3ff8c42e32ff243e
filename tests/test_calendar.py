"""amort.calendar: due dates, the end-of-month rule, semimonthly pairs, business days.

Holidays are read from the ``holidays`` package in each test before they are
relied on, so a test states what the package says rather than a recollection.
Weekdays of 2027 dates are checked with ``date.weekday()`` beside their use.
"""

from __future__ import annotations

import calendar as stdcalendar
import itertools
import subprocess
import sys
from datetime import date, datetime, timedelta

import holidays
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from amort.calendar import (
    BusinessDay,
    PaymentDates,
    add_months,
    adjust_dates,
    days_in_month,
    due_dates,
    holiday_dates,
    is_month_end,
    is_regular_first_period,
    parse_date,
    parse_holiday_calendar,
    parse_semimonthly_days,
    parse_weekend,
    regular_period_start,
)
from amort.conventions import Frequency
from amort.errors import InvalidTerms

D = date
SAT, SUN = 5, 6


def iso(dates: tuple[date, ...]) -> list[str]:
    return [d.isoformat() for d in dates]


def naive_add_months(d: date, n: int) -> date:
    """Reference: whole months by year/month arithmetic, the day clipped to the month."""
    year = d.year + (d.month - 1 + n) // 12
    month = (d.month - 1 + n) % 12 + 1
    return date(year, month, min(d.day, stdcalendar.monthrange(year, month)[1]))


# -- parse_date -------------------------------------------------------------------------


def test_parse_date_accepts_dates_datetimes_datetime64_and_iso_strings() -> None:
    assert parse_date(D(2027, 1, 31), "first_payment") == D(2027, 1, 31)
    assert parse_date(datetime(2027, 1, 31, 12), "first_payment") == D(2027, 1, 31)
    assert parse_date(np.datetime64("2027-01-31"), "first_payment") == D(2027, 1, 31)
    assert parse_date(" 2027-01-31 ", "first_payment") == D(2027, 1, 31)
    assert type(parse_date(datetime(2027, 1, 31), "x")) is date


def test_parse_date_names_an_impossible_day() -> None:
    with pytest.raises(InvalidTerms) as caught:
        parse_date("2027-02-30", "first_payment")
    assert str(caught.value) == (
        "'first_payment' is not a valid date: 2027-02-30 (day is out of range for month)"
    )


@pytest.mark.parametrize("bad", ["2027-13-01", "2027-00-10", "2027-02-29", "0000-01-01"])
def test_parse_date_refuses_other_impossible_dates(bad: str) -> None:
    with pytest.raises(InvalidTerms, match=r"^'start' is not a valid date: "):
        parse_date(bad, "start")


@pytest.mark.parametrize(
    "bad", ["2027/01/31", "31-01-2027", "2027-1-31", "20270131", 20270131, None, ""]
)
def test_parse_date_refuses_other_spellings(bad: object) -> None:
    with pytest.raises(InvalidTerms) as caught:
        parse_date(bad, "first_payment")
    assert str(caught.value).startswith("'first_payment' must be a date written YYYY-MM-DD (got ")


# -- add_months and month ends ----------------------------------------------------------


def test_days_in_month_and_month_ends() -> None:
    assert [days_in_month(2027, m) for m in range(1, 13)] == [
        31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31
    ]  # fmt: skip
    assert days_in_month(2028, 2) == 29
    assert days_in_month(2100, 2) == 28  # divisible by 100, not by 400
    assert days_in_month(2000, 2) == 29
    assert is_month_end(D(2027, 2, 28)) and not is_month_end(D(2028, 2, 28))
    assert is_month_end(D(2027, 4, 30)) and not is_month_end(D(2027, 5, 30))


def test_add_months_clips_to_short_months() -> None:
    assert add_months(D(2027, 1, 31), 1) == D(2027, 2, 28)
    assert add_months(D(2028, 1, 31), 1) == D(2028, 2, 29)
    assert add_months(D(2027, 1, 30), 1) == D(2027, 2, 28)
    assert add_months(D(2027, 3, 31), -1) == D(2027, 2, 28)
    assert add_months(D(2027, 5, 31), -13) == D(2026, 4, 30)
    assert add_months(D(2027, 12, 15), 1) == D(2028, 1, 15)
    assert add_months(D(2027, 1, 15), 0) == D(2027, 1, 15)


def test_add_months_end_of_month_keeps_month_ends() -> None:
    assert add_months(D(2027, 2, 28), 1, end_of_month=True) == D(2027, 3, 31)
    assert add_months(D(2027, 4, 30), 1, end_of_month=True) == D(2027, 5, 31)
    assert add_months(D(2027, 4, 30), -2, end_of_month=True) == D(2027, 2, 28)
    # Not a month end: the option changes nothing.
    assert add_months(D(2028, 2, 28), 1, end_of_month=True) == D(2028, 3, 28)
    assert add_months(D(2027, 4, 29), 1, end_of_month=True) == D(2027, 5, 29)


def test_add_months_refuses_to_leave_the_calendar() -> None:
    with pytest.raises(InvalidTerms, match="'date' must stay within 0001-01-01 to 9999-12-31"):
        add_months(D(9999, 12, 1), 1)
    with pytest.raises(InvalidTerms):
        add_months(D(1, 1, 31), -1)


@given(
    d=st.dates(min_value=D(1900, 1, 1), max_value=D(2200, 12, 31)),
    n=st.integers(min_value=-1200, max_value=1200),
)
def test_add_months_matches_naive_arithmetic(d: date, n: int) -> None:
    assert add_months(d, n) == naive_add_months(d, n)


# -- monthly-type due dates -------------------------------------------------------------


def test_monthly_from_the_31st_falls_on_month_ends_and_returns_to_the_31st() -> None:
    dates = due_dates("2027-01-31", 14, "monthly").unadjusted
    assert iso(dates) == [
        "2027-01-31", "2027-02-28", "2027-03-31", "2027-04-30", "2027-05-31", "2027-06-30",
        "2027-07-31", "2027-08-31", "2027-09-30", "2027-10-31", "2027-11-30", "2027-12-31",
        "2028-01-31", "2028-02-29",
    ]  # fmt: skip


def test_monthly_from_the_30th_and_29th_does_not_drift() -> None:
    assert iso(due_dates("2027-01-30", 4).unadjusted) == [
        "2027-01-30", "2027-02-28", "2027-03-30", "2027-04-30"
    ]  # fmt: skip
    assert iso(due_dates("2027-12-29", 4).unadjusted) == [
        "2027-12-29", "2028-01-29", "2028-02-29", "2028-03-29"
    ]  # fmt: skip
    assert iso(due_dates("2028-12-29", 4).unadjusted) == [
        "2028-12-29", "2029-01-29", "2029-02-28", "2029-03-29"
    ]  # fmt: skip


@pytest.mark.parametrize(
    ("frequency", "step"),
    [("monthly", 1), ("bimonthly", 2), ("quarterly", 3), ("semiannual", 6), ("annual", 12)],
)
def test_monthly_type_dates_step_from_the_first_date_without_drift(
    frequency: str, step: int
) -> None:
    first = D(2027, 1, 31)
    dates = due_dates(first, 400, frequency).unadjusted
    assert list(dates) == [naive_add_months(first, k * step) for k in range(400)]


def test_end_of_month_keeps_a_month_end_first_payment_at_every_month_end() -> None:
    dates = due_dates("2027-02-28", 6, "monthly", end_of_month=True).unadjusted
    assert iso(dates) == [
        "2027-02-28", "2027-03-31", "2027-04-30", "2027-05-31", "2027-06-30", "2027-07-31"
    ]  # fmt: skip
    assert all(is_month_end(d) for d in due_dates("2027-04-30", 240, end_of_month=True).unadjusted)
    # Without the option a loan first due on 30 April stays on the 30th.
    assert iso(due_dates("2027-04-30", 3).unadjusted) == ["2027-04-30", "2027-05-30", "2027-06-30"]


def test_end_of_month_has_no_effect_when_the_first_date_is_not_a_month_end() -> None:
    with_option = due_dates("2028-02-28", 24, "monthly", end_of_month=True).unadjusted
    assert with_option == due_dates("2028-02-28", 24, "monthly").unadjusted
    assert all(d.day == 28 for d in with_option)


def test_annual_payments_around_29_february() -> None:
    assert iso(due_dates("2028-02-29", 5, "annual").unadjusted) == [
        "2028-02-29", "2029-02-28", "2030-02-28", "2031-02-28", "2032-02-29"
    ]  # fmt: skip
    assert iso(due_dates("2027-02-28", 2, "annual").unadjusted) == ["2027-02-28", "2028-02-28"]
    assert iso(due_dates("2027-02-28", 2, "annual", end_of_month=True).unadjusted) == [
        "2027-02-28", "2028-02-29"
    ]  # fmt: skip


def test_quarterly_from_the_31st() -> None:
    assert iso(due_dates("2027-05-31", 4, Frequency.QUARTERLY).unadjusted) == [
        "2027-05-31", "2027-08-31", "2027-11-30", "2028-02-29"
    ]  # fmt: skip


# -- weekly and biweekly ----------------------------------------------------------------


@pytest.mark.parametrize(
    ("frequency", "days"), [("weekly", 7), ("biweekly", 14), ("fortnightly", 14)]
)
def test_weekly_and_biweekly_step_whole_weeks(frequency: str, days: int) -> None:
    first = D(2027, 12, 20)
    dates = due_dates(first, 60, frequency).unadjusted
    assert list(dates) == [first + timedelta(days=days * k) for k in range(60)]
    assert {d.weekday() for d in dates} == {first.weekday()}


def test_end_of_month_does_not_touch_weekly_dates() -> None:
    a = due_dates("2027-01-31", 10, "weekly", end_of_month=True)
    assert a == due_dates("2027-01-31", 10, "weekly")


# -- semimonthly ------------------------------------------------------------------------


def test_semimonthly_first_and_fifteenth() -> None:
    assert iso(due_dates("2027-01-15", 5, "semimonthly", semimonthly_days=(1, 15)).unadjusted) == [
        "2027-01-15", "2027-02-01", "2027-02-15", "2027-03-01", "2027-03-15"
    ]  # fmt: skip


@pytest.mark.parametrize("pair", [(15, "end"), (15, 31), ("end", 15), "15,end", ["15", "END"]])
def test_semimonthly_fifteenth_and_month_end(pair: object) -> None:
    dates = due_dates("2027-01-31", 6, "semimonthly", semimonthly_days=pair).unadjusted  # type: ignore[arg-type]
    assert iso(dates) == [
        "2027-01-31", "2027-02-15", "2027-02-28", "2027-03-15", "2027-03-31", "2027-04-15"
    ]  # fmt: skip


def test_semimonthly_day_past_a_short_month_falls_on_its_last_day() -> None:
    dates = due_dates("2028-01-30", 6, "semimonthly", semimonthly_days=(15, 30)).unadjusted
    assert iso(dates) == [
        "2028-01-30", "2028-02-15", "2028-02-29", "2028-03-15", "2028-03-30", "2028-04-15"
    ]  # fmt: skip
    # A first payment on the clipped day (28 February 2027 standing for the 30th) is accepted.
    later = due_dates("2027-02-28", 3, "semimonthly", semimonthly_days=(15, 30)).unadjusted
    assert iso(later) == ["2027-02-28", "2027-03-15", "2027-03-30"]


def test_semimonthly_gives_24_dates_a_year_in_order() -> None:
    dates = due_dates("2027-01-05", 240, "semimonthly", semimonthly_days=(5, 20)).unadjusted
    assert all(a < b for a, b in itertools.pairwise(dates))
    assert sum(d.year == 2027 for d in dates) == 24
    assert {d.day for d in dates} == {5, 20}


def test_semimonthly_first_payment_must_be_one_of_the_days() -> None:
    with pytest.raises(InvalidTerms) as caught:
        due_dates("2027-01-10", 3, "semimonthly", semimonthly_days=(1, 15))
    assert str(caught.value) == (
        "'first_payment' must fall on one of the semimonthly days (1, 15) of its month "
        "(got 2027-01-10)"
    )
    with pytest.raises(InvalidTerms, match=r"\(15, 'end'\)"):
        due_dates("2027-01-30", 3, "semimonthly", semimonthly_days=(15, "end"))


@pytest.mark.parametrize(
    "bad",
    [(15, 15), (31, "end"), (0, 15), (1, 32), (1,), (1, 15, 28), (28, 31), (29, 30), "x", 15,
     (1, True), (1.5, 15), None],
)  # fmt: skip
def test_bad_semimonthly_pairs_are_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms) as caught:
        due_dates("2027-01-01", 3, "semimonthly", semimonthly_days=bad)  # type: ignore[arg-type]
    assert str(caught.value).startswith(
        "'semimonthly_days' must be two different days of the month, each 1 to 31 or 'end', "
        "the earlier at most 27 (got "
    )


def test_semimonthly_pairs_are_sorted_and_31_means_the_end() -> None:
    assert parse_semimonthly_days(("end", 15)) == (15, 31)
    assert parse_semimonthly_days((20, 5)) == (5, 20)
    assert parse_semimonthly_days("1, 15") == (1, 15)
    assert parse_semimonthly_days((27, "last")) == (27, 31)


# -- business days: weekends ------------------------------------------------------------


def test_no_adjustment_by_default() -> None:
    dates = due_dates("2027-07-31", 3)
    assert dates.adjusted == dates.unadjusted
    assert isinstance(dates, PaymentDates) and len(dates) == 3


def test_weekend_rolls_in_2027() -> None:
    saturday = D(2027, 7, 31)
    assert saturday.weekday() == SAT
    assert adjust_dates([saturday], "following") == (D(2027, 8, 2),)
    assert adjust_dates([saturday], "preceding") == (D(2027, 7, 30),)
    # Modified following: the next business day is in August, so go back to Friday 30 July.
    assert adjust_dates([saturday], "modified-following") == (D(2027, 7, 30),)
    sunday = D(2027, 10, 31)
    assert sunday.weekday() == SUN
    assert adjust_dates([sunday], BusinessDay.MODIFIED_FOLLOWING) == (D(2027, 10, 29),)
    assert adjust_dates([sunday], BusinessDay.FOLLOWING) == (D(2027, 11, 1),)
    # Mid-month, modified following is following.
    assert adjust_dates([D(2027, 8, 14)], "modified-following") == (D(2027, 8, 16),)
    # A business day is left alone.
    assert adjust_dates([D(2027, 7, 30)], "preceding") == (D(2027, 7, 30),)


def test_due_dates_keep_both_unadjusted_and_adjusted_dates() -> None:
    dates = due_dates("2027-01-31", 6, "monthly", adjustment="modified-following")
    assert iso(dates.unadjusted) == [
        "2027-01-31", "2027-02-28", "2027-03-31", "2027-04-30", "2027-05-31", "2027-06-30"
    ]  # fmt: skip
    # 31 Jan 2027 is a Sunday, 28 Feb a Sunday; both roll back within their month.
    assert iso(dates.adjusted) == [
        "2027-01-29", "2027-02-26", "2027-03-31", "2027-04-30", "2027-05-31", "2027-06-30"
    ]  # fmt: skip
    assert dates.to_datetime64().dtype == np.dtype("datetime64[D]")
    assert dates.to_datetime64(adjusted=False)[0] == np.datetime64("2027-01-31")


def test_modified_following_never_leaves_the_month() -> None:
    dates = due_dates(
        "2027-01-31", 600, "monthly", adjustment="modified-following", holiday_calendar="US"
    )
    closed = holidays.country_holidays("US", years=range(2027, 2078))
    for raw, moved in zip(dates.unadjusted, dates.adjusted, strict=True):
        assert (raw.year, raw.month) == (moved.year, moved.month)
        assert moved.weekday() < SAT and moved not in closed
        assert moved <= raw  # from a month end, modified following can only go back


@given(
    d=st.dates(min_value=D(1990, 1, 1), max_value=D(2090, 12, 31)),
    rule=st.sampled_from(["following", "preceding", "modified-following"]),
)
def test_adjusted_dates_are_the_nearest_weekdays(d: date, rule: str) -> None:
    (moved,) = adjust_dates([d], rule)
    assert moved.weekday() < SAT
    assert abs((moved - d).days) <= 2
    between = [
        d + timedelta(days=k) for k in range(min(0, (moved - d).days), max(0, (moved - d).days) + 1)
    ]
    assert all(x.weekday() >= SAT for x in between if x != moved)


def test_weekend_days_are_configurable() -> None:
    friday = D(2027, 7, 30)
    assert friday.weekday() == 4
    assert adjust_dates([friday], "following", weekend=("fri", "sat")) == (D(2027, 8, 1),)
    assert adjust_dates([friday], "following", weekend=[4, 5]) == (D(2027, 8, 1),)
    assert adjust_dates([D(2027, 7, 31)], "following", weekend=()) == (D(2027, 7, 31),)
    assert adjust_dates([D(2027, 7, 31)], "following", weekend="sunday") == (D(2027, 7, 31),)


def test_parse_weekend() -> None:
    assert parse_weekend() == (SAT, SUN)
    assert parse_weekend("Sat, Sun") == (SAT, SUN)
    assert parse_weekend(["friday", 5]) == (4, 5)
    assert parse_weekend("") == ()


@pytest.mark.parametrize("bad", [("saturday", "funday"), (7,), (-1,), (True,), ("sat", 5.0)])
def test_bad_weekend_days_are_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms, match=r"^'weekend' must hold weekdays, 0 \(Monday\)"):
        parse_weekend(bad)  # type: ignore[arg-type]


def test_a_week_of_weekend_is_refused() -> None:
    with pytest.raises(InvalidTerms, match="'weekend' must leave at least one business day"):
        due_dates("2027-01-31", 3, adjustment="following", weekend=range(7))


@pytest.mark.parametrize("bad", ["nearest", "modified-preceding", "", None, 1])
def test_unknown_adjustments_are_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms) as caught:
        due_dates("2027-01-31", 3, adjustment=bad)  # type: ignore[arg-type]
    assert str(caught.value).startswith(
        "'adjustment' must be one of 'none', 'following', 'modified-following', 'preceding' (got "
    )


@pytest.mark.parametrize(
    ("text", "rule"),
    [("None", BusinessDay.NONE), ("FOLLOWING", BusinessDay.FOLLOWING),
     ("Modified Following", BusinessDay.MODIFIED_FOLLOWING),
     ("mod-following", BusinessDay.MODIFIED_FOLLOWING),
     ("modified_following", BusinessDay.MODIFIED_FOLLOWING),
     ("preceding", BusinessDay.PRECEDING)],
)  # fmt: skip
def test_adjustment_names(text: str, rule: BusinessDay) -> None:
    assert BusinessDay.parse(text) is rule


# -- business days: public holidays from the holidays package ---------------------------


@pytest.fixture(scope="module")
def us_2027() -> holidays.HolidayBase:
    return holidays.country_holidays("US", years=[2027, 2028])


def test_independence_day_2027_rolls_past_the_observed_monday(
    us_2027: holidays.HolidayBase,
) -> None:
    # What the holidays package says (checked, not recalled): 4 July 2027 is a Sunday and
    # Independence Day is observed on Monday 5 July.
    assert D(2027, 7, 4).weekday() == SUN
    assert "Independence Day" in us_2027.get(D(2027, 7, 4), "")
    assert "observed" in us_2027.get(D(2027, 7, 5), "")
    assert D(2027, 7, 6) not in us_2027
    dates = due_dates("2027-06-04", 3, adjustment="following", holiday_calendar="US")
    assert iso(dates.unadjusted) == ["2027-06-04", "2027-07-04", "2027-08-04"]
    assert iso(dates.adjusted) == ["2027-06-04", "2027-07-06", "2027-08-04"]
    # Weekends alone move it only to the Monday.
    assert due_dates("2027-07-04", 1, adjustment="following").adjusted == (D(2027, 7, 5),)
    assert adjust_dates([D(2027, 7, 4)], "preceding", holiday_calendar="US") == (D(2027, 7, 2),)


def test_year_end_2027_holidays_and_modified_following(us_2027: holidays.HolidayBase) -> None:
    # The package observes Christmas 2027 (a Saturday) on Friday 24 December and New Year's
    # Day 2028 (a Saturday) on Friday 31 December 2027.
    assert D(2027, 12, 25).weekday() == SAT and D(2028, 1, 1).weekday() == SAT
    assert "observed" in us_2027.get(D(2027, 12, 24), "")
    assert "observed" in us_2027.get(D(2027, 12, 31), "")
    assert D(2027, 12, 23) not in us_2027 and D(2027, 12, 30) not in us_2027
    assert D(2028, 1, 3) not in us_2027
    cal = {"holiday_calendar": "US"}
    assert adjust_dates([D(2027, 12, 25)], "preceding", **cal) == (D(2027, 12, 23),)
    assert adjust_dates([D(2027, 12, 25)], "following", **cal) == (D(2027, 12, 27),)
    assert adjust_dates([D(2027, 12, 31)], "following", **cal) == (D(2028, 1, 3),)
    # Modified following stays in December: back past the holiday to Thursday 30 December.
    assert adjust_dates([D(2027, 12, 31)], "modified-following", **cal) == (D(2027, 12, 30),)
    # Preceding from Saturday 1 January 2028 crosses into 2027 and sees its observed holiday.
    assert adjust_dates([D(2028, 1, 1)], "preceding", **cal) == (D(2027, 12, 30),)
    # Without the calendar, Friday 31 December is a business day.
    assert adjust_dates([D(2027, 12, 31)], "modified-following") == (D(2027, 12, 31),)


def test_subdivision_holidays() -> None:
    us = holidays.country_holidays("US", years=2027)
    ny = holidays.country_holidays("US", subdiv="NY", years=2027)
    extra = sorted(set(ny) - set(us))
    assert extra  # New York has state holidays beyond the federal ones
    day = extra[0]
    assert day.weekday() < SAT
    for spelling in ("US-NY", ("US", "NY"), "us-ny", ["us", "ny"]):
        (moved,) = adjust_dates([day], "following", holiday_calendar=spelling)
        assert moved > day and moved not in ny and moved.weekday() < SAT
    assert adjust_dates([day], "following", holiday_calendar="US") == (day,)


def test_holiday_dates_match_the_package() -> None:
    got = holiday_dates("US", 2027, 2027)
    assert got == frozenset(holidays.country_holidays("US", years=2027))
    assert D(2027, 7, 5) in got
    assert holiday_dates("US-NY", 2027, 2027) > got


def test_extra_holidays_close_more_days() -> None:
    wednesday = D(2027, 3, 10)
    assert wednesday.weekday() == 2
    assert D(2027, 4, 10).weekday() == SAT
    dates = due_dates(wednesday, 2, adjustment="following", extra_holidays=["2027-03-10"])
    assert iso(dates.adjusted) == ["2027-03-11", "2027-04-12"]
    with pytest.raises(InvalidTerms, match="'extra_holidays' is not a valid date"):
        due_dates(wednesday, 2, adjustment="following", extra_holidays=["2027-02-29"])


def test_parse_holiday_calendar_spellings() -> None:
    assert parse_holiday_calendar("US") == ("US", None)
    assert parse_holiday_calendar("us-ny") == ("US", "NY")
    assert parse_holiday_calendar(("US", "NY")) == ("US", "NY")
    assert parse_holiday_calendar(None) is None
    assert parse_holiday_calendar("none") is None


def test_unknown_country_is_refused_by_name() -> None:
    with pytest.raises(InvalidTerms) as caught:
        due_dates("2027-01-31", 3, adjustment="following", holiday_calendar="XX")
    assert str(caught.value) == (
        "'holiday_calendar' must name a country known to the holidays package, such as 'US' "
        "or 'GB' (got 'XX': no country 'XX')"
    )


@pytest.mark.parametrize("bad", ["US-ZZ", ("US", "ZZ")])
def test_unknown_subdivision_is_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms, match="'holiday_calendar' must name a subdivision of US"):
        parse_holiday_calendar(bad)  # type: ignore[arg-type]


@pytest.mark.parametrize("bad", [5, ("US", "NY", "X"), ("",), "-NY"])
def test_malformed_holiday_calendars_are_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms, match="'holiday_calendar' must be a country code"):
        parse_holiday_calendar(bad)  # type: ignore[arg-type]


def test_dates_beyond_the_packages_years_are_refused() -> None:
    table = holidays.country_holidays("US")
    last = table.end_year
    with pytest.raises(
        InvalidTerms, match=rf"'holiday_calendar' 'US' covers the years .* to {last}"
    ):
        due_dates(D(last, 6, 1), 24, adjustment="following", holiday_calendar="US")
    # Without adjustment the calendar is never read, and without a calendar weekends still work.
    due_dates(D(last, 6, 1), 24, holiday_calendar="US")
    due_dates(D(last, 6, 1), 24, adjustment="following")


# -- regular first periods --------------------------------------------------------------


@pytest.mark.parametrize(
    ("first", "frequency", "expected"),
    [
        (D(2027, 3, 31), "monthly", D(2027, 2, 28)),
        (D(2028, 3, 31), "monthly", D(2028, 2, 29)),
        (D(2027, 2, 28), "monthly", D(2027, 1, 28)),
        (D(2027, 5, 31), "quarterly", D(2027, 2, 28)),
        (D(2027, 7, 15), "annual", D(2026, 7, 15)),
        (D(2027, 1, 8), "weekly", D(2027, 1, 1)),
        (D(2027, 1, 8), "biweekly", D(2026, 12, 25)),
        (D(2027, 5, 1), "semimonthly", D(2027, 4, 15)),
        (D(2027, 5, 15), "semimonthly", D(2027, 5, 1)),
    ],
)
def test_regular_period_start(first: date, frequency: str, expected: date) -> None:
    assert regular_period_start(first, frequency) == expected


def test_regular_period_start_with_the_end_of_month_rule() -> None:
    assert regular_period_start(D(2027, 2, 28), "monthly", end_of_month=True) == D(2027, 1, 31)
    assert regular_period_start("2027-03-31", "semimonthly", semimonthly_days=(15, "end")) == D(
        2027, 3, 15
    )
    assert regular_period_start("2027-03-15", "semimonthly", semimonthly_days=(15, "end")) == D(
        2027, 2, 28
    )


@pytest.mark.parametrize(
    ("start", "first", "frequency", "regular"),
    [
        (D(2027, 1, 15), D(2027, 2, 15), "monthly", True),
        (D(2027, 1, 31), D(2027, 2, 28), "monthly", True),  # a month forward from the 31st
        (D(2027, 1, 28), D(2027, 2, 28), "monthly", True),  # a month back from the 28th
        (D(2027, 2, 28), D(2027, 3, 31), "monthly", True),  # a loan due on the 31st
        (D(2027, 1, 10), D(2027, 2, 15), "monthly", False),  # long first period
        (D(2027, 1, 20), D(2027, 2, 15), "monthly", False),  # short first period
        (D(2027, 1, 15), D(2027, 4, 15), "quarterly", True),
        (D(2027, 1, 15), D(2027, 3, 15), "quarterly", False),
        (D(2027, 1, 1), D(2027, 1, 8), "weekly", True),
        (D(2027, 1, 1), D(2027, 1, 9), "weekly", False),
        (D(2027, 1, 1), D(2027, 1, 15), "biweekly", True),
        (D(2027, 4, 15), D(2027, 5, 1), "semimonthly", True),
        (D(2027, 4, 16), D(2027, 5, 1), "semimonthly", False),
    ],
)
def test_is_regular_first_period(start: date, first: date, frequency: str, regular: bool) -> None:
    assert is_regular_first_period(start, first, frequency) is regular


@pytest.mark.parametrize("eom", [False, True])
def test_month_end_first_periods_are_regular_either_way(eom: bool) -> None:
    # Forward from the start or back from the first payment: one month either way.
    for start, first in [
        (D(2027, 2, 28), D(2027, 3, 28)),
        (D(2027, 2, 28), D(2027, 3, 31)),
        (D(2027, 4, 30), D(2027, 5, 30)),
        (D(2027, 4, 30), D(2027, 5, 31)),
        (D(2028, 1, 31), D(2028, 2, 29)),
    ]:
        assert is_regular_first_period(start, first, "monthly", end_of_month=eom), (start, first)
    # 28 February 2028 is not a month end: 28 Feb -> 31 Mar is a long period.
    assert not is_regular_first_period(D(2028, 2, 28), D(2028, 3, 31), "monthly", end_of_month=eom)


@given(
    first=st.dates(min_value=D(1950, 1, 1), max_value=D(2150, 12, 31)),
    frequency=st.sampled_from(
        ["weekly", "biweekly", "monthly", "bimonthly", "quarterly", "semiannual", "annual"]
    ),
    eom=st.booleans(),
)
def test_the_regular_period_start_gives_a_regular_first_period(
    first: date, frequency: str, eom: bool
) -> None:
    start = regular_period_start(first, frequency, end_of_month=eom)
    assert start < first
    assert is_regular_first_period(start, first, frequency, end_of_month=eom)
    # It is the due date the schedule would have had one period before the first payment.
    if frequency in ("weekly", "biweekly"):
        assert (first - start).days == (7 if frequency == "weekly" else 14)
        return
    step = {"monthly": 1, "bimonthly": 2, "quarterly": 3, "semiannual": 6, "annual": 12}
    assert (first.year * 12 + first.month) - (start.year * 12 + start.month) == step[frequency]
    last = days_in_month(start.year, start.month)
    if eom and is_month_end(first):
        assert start.day == last
    else:
        assert start.day == min(first.day, last)


def test_a_first_payment_on_or_before_the_start_is_refused() -> None:
    with pytest.raises(InvalidTerms) as caught:
        is_regular_first_period("2027-02-15", "2027-02-15", "monthly")
    assert str(caught.value) == (
        "'first_payment' must be after the start date 2027-02-15 (got 2027-02-15)"
    )


# -- other bad input --------------------------------------------------------------------


@pytest.mark.parametrize("bad", [0, -1, True, 1.5, "12", None])
def test_periods_must_be_a_whole_number(bad: object) -> None:
    with pytest.raises(InvalidTerms, match=r"^'periods' must be a whole number >= 1 \(got "):
        due_dates("2027-01-31", bad)  # type: ignore[arg-type]


def test_unknown_frequency_is_refused() -> None:
    with pytest.raises(InvalidTerms, match="'frequency' must be one of"):
        due_dates("2027-01-31", 3, "daily")


def test_an_invalid_first_payment_is_refused_by_name() -> None:
    with pytest.raises(InvalidTerms) as caught:
        due_dates("2027-02-30", 3)
    assert str(caught.value) == (
        "'first_payment' is not a valid date: 2027-02-30 (day is out of range for month)"
    )


@pytest.mark.parametrize(
    ("first", "periods", "frequency"),
    [("9999-06-30", 8, "monthly"), ("9999-12-01", 6, "weekly"), ("9999-12-15", 3, "semimonthly")],
)
def test_schedules_past_the_last_representable_date_are_refused(
    first: str, periods: int, frequency: str
) -> None:
    with pytest.raises(InvalidTerms, match="'periods' must keep every due date within"):
        due_dates(first, periods, frequency)


def test_the_last_representable_date_is_allowed() -> None:
    assert due_dates("9999-06-30", 7, "monthly", end_of_month=True).unadjusted[-1] == D(
        9999, 12, 31
    )


def test_long_schedules() -> None:
    # 100,000 periods, the largest term amort solves; checked against plain date arithmetic.
    weekly = due_dates("2027-01-04", 100_000, "weekly")
    assert weekly.unadjusted[-1] == D(2027, 1, 4) + timedelta(weeks=99_999)
    monthly = due_dates("1601-01-31", 100_000, "monthly")
    assert monthly.unadjusted[-1] == naive_add_months(D(1601, 1, 31), 99_999)
    semimonthly = due_dates("2027-01-15", 100_000, "semimonthly", semimonthly_days=(15, "end"))
    # Payment 99,999 (counting from 0) is the month-end slot, 49,999 months after January 2027.
    assert semimonthly.unadjusted[-1] == naive_add_months(D(2027, 1, 31), 49_999)


def test_importing_the_calendar_does_not_import_the_holidays_package() -> None:
    code = "import sys, amort.calendar, amort.daycount; print('holidays' in sys.modules)"
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == "False"
