"""amort.daycount: parsing, the edges of each convention, and the vectorised form.

The published definitions are checked in tests/reference/test_daycount_published.py;
here the module's own contract: names, refusals, exact types and identities.
"""

from __future__ import annotations

import itertools
from datetime import date, datetime, timedelta
from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from amort.daycount import DayCount, day_count_days, year_fraction, year_fractions
from amort.errors import InvalidTerms

D = date
DATED = [c for c in DayCount if c.is_dated]


def options(convention: DayCount) -> dict[str, int]:
    """Keyword arguments every call needs for the convention (per_year for EQUAL)."""
    return {"per_year": 12} if convention is DayCount.EQUAL else {}


# -- parsing ----------------------------------------------------------------------------


@pytest.mark.parametrize("convention", list(DayCount))
def test_parse_round_trips_every_value_in_any_case(convention: DayCount) -> None:
    assert DayCount.parse(convention.value) is convention
    assert DayCount.parse(convention.value.upper()) is convention
    assert DayCount.parse(convention) is convention


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("act/360", DayCount.ACT_360),
        ("Actual/360", DayCount.ACT_360),
        ("act/365", DayCount.ACT_365F),
        ("actual/365f", DayCount.ACT_365F),
        ("Actual/365 (Fixed)", DayCount.ACT_365F),
        ("ACT/365F", DayCount.ACT_365F),
        ("act/act-isda", DayCount.ACT_ACT_ISDA),
        ("Actual/Actual (ISDA)", DayCount.ACT_ACT_ISDA),
        ("ACT_ACT_ISDA", DayCount.ACT_ACT_ISDA),
        ("act_365f", DayCount.ACT_365F),
        ("30u/360", DayCount.THIRTY_360),
        ("30/360 US", DayCount.THIRTY_360),
        ("bond", DayCount.THIRTY_360_BOND),
        ("Bond Basis", DayCount.THIRTY_360_BOND),
        ("360/360", DayCount.THIRTY_360_BOND),
        ("30E/360", DayCount.THIRTY_E_360),
        ("eurobond", DayCount.THIRTY_E_360),
        ("30E/360 (ISDA)", DayCount.THIRTY_E_360_ISDA),
        (" 30e/360 isda ", DayCount.THIRTY_E_360_ISDA),
        ("Equal", DayCount.EQUAL),
    ],
)
def test_parse_accepts_the_usual_aliases(text: str, expected: DayCount) -> None:
    assert DayCount.parse(text) is expected


@pytest.mark.parametrize("bad", ["act/999", "act/act", "actual/actual", "", "30/365", 360, None])
def test_parse_refuses_unknown_and_ambiguous_names(bad: object) -> None:
    # Bare "act/act" is refused on purpose: it also names the ICMA rule.
    with pytest.raises(InvalidTerms) as caught:
        DayCount.parse(bad)  # type: ignore[arg-type]
    message = str(caught.value)
    assert message.startswith("'day_count' must be one of '30/360', '30/360-bond', ")
    assert "'actual/actual-isda'" in message


def test_parse_error_message_names_the_field_and_value() -> None:
    with pytest.raises(InvalidTerms) as caught:
        DayCount.parse("act/999", field="basis")
    assert str(caught.value) == (
        "'basis' must be one of '30/360', '30/360-bond', '30e/360', '30e/360-isda', "
        "'actual/360', 'actual/365', 'actual/actual-isda', 'equal' (got 'act/999')"
    )


def test_invalid_terms_is_a_value_error() -> None:
    with pytest.raises(ValueError, match="day_count"):
        DayCount.parse("nope")


def test_family_properties() -> None:
    assert {c for c in DayCount if c.is_thirty_day} == {
        DayCount.THIRTY_360,
        DayCount.THIRTY_360_BOND,
        DayCount.THIRTY_E_360,
        DayCount.THIRTY_E_360_ISDA,
    }
    assert [c for c in DayCount if not c.is_dated] == [DayCount.EQUAL]


# -- edges ------------------------------------------------------------------------------


@pytest.mark.parametrize("convention", list(DayCount))
def test_a_period_from_a_date_to_itself_is_zero(convention: DayCount) -> None:
    # 28 February 2027 as its own termination date would count -2 days under a literal
    # reading of 30E/360 (ISDA) (D1 -> 30, D2 stays 28); a date to itself is always 0.
    for day in (D(2027, 1, 31), D(2027, 2, 28), D(2028, 2, 29)):
        got = year_fraction(day, day, convention, termination=day, **options(convention))
        assert got == 0
        assert isinstance(got, Fraction)
        if convention.is_dated:
            assert day_count_days(day, day, convention, termination=day) == 0
    if convention.is_dated:
        same = [D(2027, 2, 28), D(2027, 2, 28)]
        assert year_fractions(same, convention) == [0]


@pytest.mark.parametrize("convention", list(DayCount))
def test_end_before_start_is_refused(convention: DayCount) -> None:
    with pytest.raises(InvalidTerms) as caught:
        year_fraction(D(2027, 3, 1), D(2027, 2, 28), convention, **options(convention))
    assert (
        str(caught.value) == "'end' must be on or after the start date 2027-03-01 (got 2027-02-28)"
    )


@pytest.mark.parametrize("convention", DATED)
def test_day_count_days_refuses_end_before_start(convention: DayCount) -> None:
    with pytest.raises(InvalidTerms, match="'end' must be on or after"):
        day_count_days(D(2027, 3, 2), D(2027, 3, 1), convention)


@pytest.mark.parametrize("bad", ["2027-01-01", 20270101, None])
def test_non_dates_are_refused(bad: object) -> None:
    with pytest.raises(InvalidTerms, match="'start' must be a date"):
        year_fraction(bad, D(2027, 1, 1), "act/365")  # type: ignore[arg-type]


def test_datetimes_count_as_their_dates() -> None:
    start = datetime(2027, 1, 1, 23, 59)
    end = datetime(2027, 1, 2, 0, 1)
    assert year_fraction(start, end, "actual/365") == Fraction(1, 365)


def test_equal_gives_one_period_whatever_the_dates() -> None:
    """EQUAL: each period is exactly 1/p of a year (amort's undated convention)."""
    for end in (D(2027, 2, 1), D(2027, 3, 1), D(2027, 12, 31)):
        assert year_fraction(D(2027, 1, 31), end, "equal", per_year=12) == Fraction(1, 12)
    assert year_fraction(D(2027, 1, 1), D(2027, 1, 8), "equal", per_year=52) == Fraction(1, 52)


@pytest.mark.parametrize("bad", [None, 0, -12, True, 12.0, "12"])
def test_equal_needs_a_whole_per_year(bad: object) -> None:
    with pytest.raises(InvalidTerms, match="'per_year' must be"):
        year_fraction(D(2027, 1, 1), D(2027, 2, 1), "equal", per_year=bad)  # type: ignore[arg-type]


def test_per_year_is_ignored_by_dated_conventions() -> None:
    a, b = D(2027, 1, 1), D(2027, 2, 1)
    assert year_fraction(a, b, "act/360", per_year=4) == year_fraction(a, b, "act/360")


def test_equal_counts_no_days() -> None:
    with pytest.raises(InvalidTerms, match="'equal' counts no days"):
        day_count_days(D(2027, 1, 1), D(2027, 2, 1), "equal")


def test_termination_matters_only_for_30e_360_isda_and_only_in_february() -> None:
    a, b = D(2027, 1, 31), D(2027, 2, 28)
    assert day_count_days(a, b, "30e/360-isda") == 30
    assert day_count_days(a, b, "30e/360-isda", termination=b) == 28
    assert day_count_days(a, b, "30e/360-isda", termination=D(2027, 3, 31)) == 30
    for other in ("30/360", "30/360-bond", "30e/360"):
        assert day_count_days(a, b, other, termination=b) == day_count_days(a, b, other)
    # Outside February the termination date changes nothing.
    c = D(2027, 4, 30)
    assert day_count_days(a, c, "30e/360-isda", termination=c) == 90


def test_thirty_day_counts_are_never_negative_for_ordered_dates() -> None:
    # 30 January to 31 January counts 0 days under the rules that send both to 30.
    assert day_count_days(D(2027, 1, 30), D(2027, 1, 31), "30/360") == 0
    assert day_count_days(D(2027, 1, 30), D(2027, 1, 31), "30e/360") == 0
    assert day_count_days(D(2027, 1, 30), D(2027, 1, 31), "30/360-bond") == 0
    # 28 February to 1 March counts 1 under 30/360 US (28 Feb -> 30) but 3 under 30E/360.
    assert day_count_days(D(2027, 2, 28), D(2027, 3, 1), "30/360") == 1
    assert day_count_days(D(2027, 2, 28), D(2027, 3, 1), "30e/360") == 3


dates = st.dates(min_value=D(1900, 1, 1), max_value=D(2200, 12, 31))


@given(a=dates, b=dates, convention=st.sampled_from([c for c in DayCount if c.is_thirty_day]))
def test_thirty_day_counts_are_non_negative(a: date, b: date, convention: DayCount) -> None:
    start, end = min(a, b), max(a, b)
    assert day_count_days(start, end, convention, termination=end) >= 0


@given(
    a=dates,
    months=st.integers(min_value=0, max_value=600),
    day=st.integers(min_value=1, max_value=27),
    convention=st.sampled_from([c for c in DayCount if c.is_thirty_day]),
)
def test_thirty_day_family_counts_whole_months_as_thirty_days(
    a: date, months: int, day: int, convention: DayCount
) -> None:
    # Away from month ends every member agrees: m whole months are m/12 of a year.
    start = a.replace(day=day)
    index = start.month - 1 + months
    end = start.replace(year=start.year + index // 12, month=index % 12 + 1)
    assert year_fraction(start, end, convention) == Fraction(months, 12)


@given(
    a=dates,
    first=st.integers(min_value=0, max_value=800),
    second=st.integers(min_value=0, max_value=800),
    convention=st.sampled_from([DayCount.ACT_360, DayCount.ACT_365F, DayCount.ACT_ACT_ISDA]),
)
def test_actual_day_conventions_add_up_over_split_periods(
    a: date, first: int, second: int, convention: DayCount
) -> None:
    b = a + timedelta(days=first)
    c = b + timedelta(days=second)
    whole = year_fraction(a, c, convention)
    assert whole == year_fraction(a, b, convention) + year_fraction(b, c, convention)


def test_actual_actual_isda_reaches_the_last_representable_day() -> None:
    got = year_fraction(D(9999, 12, 1), D(9999, 12, 31), "actual/actual-isda")
    assert got == Fraction(30, 365)


# -- the vectorised form ----------------------------------------------------------------

SCHEDULE = [
    D(2027, 1, 31),
    D(2027, 2, 28),
    D(2027, 3, 31),
    D(2027, 4, 30),
    D(2027, 12, 31),
    D(2028, 2, 29),
    D(2028, 2, 29),
    D(2029, 2, 28),
]


@pytest.mark.parametrize("convention", list(DayCount))
def test_year_fractions_equal_the_pairwise_year_fractions(convention: DayCount) -> None:
    got = year_fractions(SCHEDULE, convention, **options(convention))
    assert len(got) == len(SCHEDULE) - 1
    termination = SCHEDULE[-1]
    expected = [
        year_fraction(a, b, convention, termination=termination, **options(convention))
        for a, b in itertools.pairwise(SCHEDULE)
    ]
    assert got == expected
    assert all(isinstance(f, Fraction) for f in got)


def test_year_fractions_take_the_last_date_as_the_termination_date() -> None:
    dates_ = [D(2027, 1, 31), D(2027, 2, 28)]
    # 30E/360 (ISDA): 28 February is the termination date, so it stays 28.
    assert year_fractions(dates_, "30e/360-isda") == [Fraction(28, 360)]
    assert year_fractions(dates_, "30e/360-isda", termination=D(2030, 1, 1)) == [Fraction(30, 360)]


def test_year_fractions_of_short_lists() -> None:
    assert year_fractions([], "act/365") == []
    assert year_fractions([D(2027, 1, 1)], "act/365") == []


def test_year_fractions_refuse_dates_out_of_order() -> None:
    with pytest.raises(InvalidTerms) as caught:
        year_fractions([D(2027, 1, 1), D(2027, 3, 1), D(2027, 2, 1)], "act/365")
    assert str(caught.value) == (
        "'dates' must be in non-decreasing order (2027-02-01 follows 2027-03-01)"
    )


def test_year_fractions_equal_needs_per_year() -> None:
    with pytest.raises(InvalidTerms, match="'per_year' must be given"):
        year_fractions([D(2027, 1, 1), D(2027, 2, 1)], "equal")


def test_year_fractions_of_a_weekly_year_sum_exactly() -> None:
    weekly = [D(2027, 1, 4) + timedelta(weeks=k) for k in range(53)]
    assert sum(year_fractions(weekly, "actual/365")) == Fraction(364, 365)
    assert sum(year_fractions(weekly, "equal", per_year=52)) == 1
