"""Day counts against their published definitions.

Sources and marks (from /work/shared/REFERENCES.md): [text] read in a copy of
the official text, [secondary] read in a page that reproduces it, [memory]
recalled from the named document and not re-read.

- OASIS OpenDocument Formula (ODF 1.2 part 2), YEARFRAC basis 0, US (NASD)
  30/360 [text]: 2008-02-29 -> 2009-02-28 counts 360 days.
- ISDA 2006 Definitions section 4.16 (as publicly summarised): 4.16(b)
  Actual/Actual (ISDA), 4.16(d) Actual/365 (Fixed), 4.16(e) Actual/360, 4.16(f)
  30/360 Bond Basis, 4.16(g) 30E/360 (Eurobond Basis), 4.16(h) 30E/360 (ISDA).
  Bond Basis examples [secondary]; Actual/Actual (ISDA) examples [memory].

Cases marked "derived" were worked by hand from the written rule named beside
them, not taken from a printed example. The last section implements the
30-day family a second way, straight from the rule text, and Actual/Actual
(ISDA) as a day-by-day sum, and checks both against amort.daycount.
"""

from __future__ import annotations

import calendar
from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from amort.daycount import DayCount, day_count_days, year_fraction

D = date


def assert_printed(got: Fraction, printed: str) -> None:
    """Assert an exact fraction agrees with a decimal printed to its last digit."""
    exponent = Decimal(printed).as_tuple().exponent
    assert isinstance(exponent, int)
    half_unit = Fraction(5, 10 ** (1 - exponent))
    assert abs(got - Fraction(Decimal(printed))) <= half_unit, (got, printed)


def check_days(start: date, end: date, convention: str, days: int, **options: date) -> None:
    """The day count and the year fraction (days over the year basis) both agree."""
    assert day_count_days(start, end, convention, **options) == days
    fraction = year_fraction(start, end, convention, **options)
    assert isinstance(fraction, Fraction)
    basis = 365 if convention == "actual/365" else 360
    assert fraction == Fraction(days, basis)


# -- 30/360 US: OpenDocument YEARFRAC basis 0 -----------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "days"),
    [
        # [text] ODF YEARFRAC basis 0: both dates the last day of February -> 360.
        (D(2008, 2, 29), D(2009, 2, 28), 360),
        # Derived from the ODF basis 0 rule: D1 = 31 -> 30, then D2 = 31 with D1 >= 30 -> 30.
        (D(2027, 1, 31), D(2027, 3, 31), 60),
        # Derived: D1 the last day of February -> 30; D2 = 31 with D1 = 30 -> 30.
        (D(2027, 2, 28), D(2027, 3, 31), 30),
        # Derived: 2028-02-28 is not the end of February in a leap year: no change, 33.
        (D(2028, 2, 28), D(2028, 3, 31), 33),
        # Derived: only D2 is the end of February: D2 stays 28.
        (D(2027, 1, 15), D(2027, 2, 28), 43),
        # Derived: D1 = 29 (not >= 30), so D2 = 31 stays 31.
        (D(2027, 1, 29), D(2027, 3, 31), 62),
        # Derived: an ordinary span, 6 months of 30 days.
        (D(2027, 1, 15), D(2027, 7, 15), 180),
    ],
)
def test_thirty_360_us_odf_basis_0(start: date, end: date, days: int) -> None:
    check_days(start, end, "30/360", days)


# -- 30/360 Bond Basis: ISDA 2006 4.16(f) ---------------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "days"),
    [
        # [secondary] ISDA 2006 4.16(f) Bond Basis examples.
        (D(2006, 8, 31), D(2007, 2, 28), 178),
        (D(2007, 2, 28), D(2007, 8, 31), 183),
        (D(2008, 2, 28), D(2008, 3, 31), 33),
        # [text, REFERENCES.md] ISDA's Bond Basis counts 359 where ODF basis 0 counts 360.
        (D(2008, 2, 29), D(2009, 2, 28), 359),
        # Derived from the ISDA 2006 4.16(f) definition: D1 = 30 > 29, so D2 31 -> 30.
        (D(2027, 1, 30), D(2027, 3, 31), 60),
        # Derived: D1 = 29 is not > 29, so D2 stays 31.
        (D(2027, 1, 29), D(2027, 3, 31), 62),
    ],
)
def test_bond_basis_isda_4_16_f(start: date, end: date, days: int) -> None:
    check_days(start, end, "30/360-bond", days)


def test_odf_basis_0_and_isda_bond_basis_differ_at_the_end_of_february() -> None:
    """ODF YEARFRAC basis 0 [text] counts 360 days; ISDA 2006 4.16(f) counts 359."""
    start, end = D(2008, 2, 29), D(2009, 2, 28)
    assert year_fraction(start, end, DayCount.THIRTY_360) == 1
    assert year_fraction(start, end, DayCount.THIRTY_360_BOND) == Fraction(359, 360)


# -- 30E/360 (Eurobond Basis): ISDA 2006 4.16(g) --------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "days"),
    [
        # Derived from the ISDA 2006 4.16(g) definition: D1 31 -> 30; the end of February
        # is not adjusted.
        (D(2006, 8, 31), D(2007, 2, 28), 178),
        # Derived: D2 = 31 -> 30 whatever D1 is (Bond Basis counts 183 here).
        (D(2007, 2, 28), D(2007, 8, 31), 182),
        # Derived: Bond Basis counts 33 here.
        (D(2008, 2, 28), D(2008, 3, 31), 32),
        # Derived: 29 February to 28 February, no adjustment: 359.
        (D(2008, 2, 29), D(2009, 2, 28), 359),
        # Derived: D1 = 29, D2 = 31 -> 30 (Bond Basis keeps 31: 62).
        (D(2027, 1, 29), D(2027, 3, 31), 61),
    ],
)
def test_thirty_e_360_isda_4_16_g(start: date, end: date, days: int) -> None:
    check_days(start, end, "30e/360", days)


# -- 30E/360 (ISDA): ISDA 2006 4.16(h) ------------------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "termination", "days"),
    [
        # Derived from the ISDA 2006 4.16(h) definition: both month ends -> 30.
        (D(2008, 2, 29), D(2009, 2, 28), None, 360),
        # Derived: the same, but 2009-02-28 is the termination date in February: D2 stays 28.
        (D(2008, 2, 29), D(2009, 2, 28), D(2009, 2, 28), 358),
        # Derived: month-end D1 (31) -> 30 and month-end D2 (28 Feb, not termination) -> 30.
        (D(2006, 8, 31), D(2007, 2, 28), None, 180),
        (D(2006, 8, 31), D(2007, 2, 28), D(2007, 2, 28), 178),
        # Derived: D1 the end of February -> 30; D2 = 31 -> 30.
        (D(2007, 2, 28), D(2007, 8, 31), None, 180),
        # Derived: a month end outside February at the termination date is still adjusted.
        (D(2027, 1, 31), D(2027, 4, 30), D(2027, 4, 30), 90),
        # Derived: 28 February of a leap year is not a month end: no change.
        (D(2028, 2, 28), D(2028, 3, 31), None, 32),
    ],
)
def test_thirty_e_360_isda_4_16_h(
    start: date, end: date, termination: date | None, days: int
) -> None:
    options = {} if termination is None else {"termination": termination}
    check_days(start, end, "30e/360-isda", days, **options)


# -- Actual/360 and Actual/365 (Fixed): ISDA 2006 4.16(e) and 4.16(d) -----------------------


@pytest.mark.parametrize(
    ("start", "end", "days"),
    [
        # Derived from the ISDA 2006 4.16(e) definition: actual days over 360.
        (D(2027, 1, 1), D(2028, 1, 1), 365),
        (D(2028, 1, 1), D(2029, 1, 1), 366),
        (D(2027, 2, 28), D(2027, 3, 31), 31),
        (D(2008, 2, 29), D(2009, 2, 28), 365),
    ],
)
def test_actual_360_isda_4_16_e(start: date, end: date, days: int) -> None:
    check_days(start, end, "actual/360", days)


@pytest.mark.parametrize(
    ("start", "end", "days"),
    [
        # Derived from the ISDA 2006 4.16(d) definition: actual days over 365, leap or not.
        (D(2028, 1, 1), D(2029, 1, 1), 366),
        (D(2027, 1, 31), D(2027, 2, 28), 28),
        (D(2008, 2, 29), D(2009, 2, 28), 365),
        (D(2027, 3, 31), D(2027, 4, 30), 30),
    ],
)
def test_actual_365_fixed_isda_4_16_d(start: date, end: date, days: int) -> None:
    check_days(start, end, "actual/365", days)


def test_actual_365_fixed_gives_more_than_a_year_for_a_leap_year() -> None:
    """ISDA 2006 4.16(d), derived: 2028 has 366 days, so the fraction is 366/365."""
    assert year_fraction(D(2028, 1, 1), D(2029, 1, 1), "actual/365") == Fraction(366, 365)


# -- Actual/Actual (ISDA): ISDA 2006 4.16(b) ------------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "printed", "exact"),
    [
        # [memory] ISDA Actual/Actual (ISDA) examples; 2004 is a leap year.
        (D(2003, 11, 1), D(2004, 5, 1), "0.497724380567", Fraction(61, 365) + Fraction(121, 366)),
        (D(1999, 2, 1), D(1999, 7, 1), "0.410958904110", Fraction(150, 365)),
        (D(2002, 8, 15), D(2003, 7, 15), "0.915068493151", Fraction(334, 365)),
    ],
)
def test_actual_actual_isda_published(
    start: date, end: date, printed: str, exact: Fraction
) -> None:
    got = year_fraction(start, end, "actual/actual-isda")
    assert isinstance(got, Fraction)
    assert got == exact
    assert_printed(got, printed)


@pytest.mark.parametrize(
    ("start", "end", "exact"),
    [
        # Derived from the ISDA 2006 4.16(b) definition: split at 1 January.
        (D(2027, 12, 31), D(2028, 1, 2), Fraction(1, 365) + Fraction(1, 366)),
        (D(2028, 1, 1), D(2029, 1, 1), Fraction(1)),
        (D(2027, 1, 1), D(2030, 1, 1), Fraction(3)),
        (D(2028, 2, 28), D(2028, 3, 1), Fraction(2, 366)),
        (D(2008, 2, 29), D(2009, 2, 28), Fraction(307, 366) + Fraction(58, 365)),
    ],
)
def test_actual_actual_isda_derived(start: date, end: date, exact: Fraction) -> None:
    assert year_fraction(start, end, "actual/actual-isda") == exact


# -- A second implementation, straight from the rule text -----------------------------------


def _last_of_month(d: date) -> bool:
    # A different test for the month end from the library's: the next day is the 1st.
    return (d + timedelta(days=1)).day == 1


def _last_of_february(d: date) -> bool:
    return d.month == 2 and _last_of_month(d)


def _thirty_reference(start: date, end: date, rule: str, termination: date | None) -> int:
    y1, m1, d1 = start.year, start.month, start.day
    y2, m2, d2 = end.year, end.month, end.day
    if rule == "30/360":
        # The 30/360 US rules of ODF YEARFRAC basis 0 (REFERENCES.md), restated: (1) both
        # the end of February -> D2 = 30; (2) D1 the 31st or the end of February -> 30;
        # (3) D2 the 31st and D1 (after 2) the 30th -> D2 = 30.
        if _last_of_february(start) and _last_of_february(end):
            d2 = 30
        if d1 == 31 or _last_of_february(start):
            d1 = 30
        if d1 == 30 and d2 == 31:
            d2 = 30
    elif rule == "30/360-bond":
        # ISDA 4.16(f), wording from memory: "D1 ... unless such number would be 31, in
        # which case D1 will be 30"; "D2 ... unless such number would be 31 and D1 is
        # greater than 29, in which case D2 will be 30".
        if d1 == 31:
            d1 = 30
        if d2 == 31 and d1 > 29:
            d2 = 30
    elif rule == "30e/360":
        # ISDA 4.16(g), wording from memory: "unless such number would be 31, in which
        # case D1 (D2) will be 30".
        if d1 == 31:
            d1 = 30
        if d2 == 31:
            d2 = 30
    else:
        # ISDA 4.16(h), paraphrased: D1 the last day of the month -> 30; D2 the last day
        # of the month -> 30 unless it is the Termination Date and the month is February.
        if _last_of_month(start):
            d1 = 30
        if _last_of_month(end) and not (end == termination and m2 == 2):
            d2 = 30
    return 360 * (y2 - y1) + 30 * (m2 - m1) + (d2 - d1)


def _actual_actual_day_by_day(start: date, end: date) -> Fraction:
    total = Fraction(0)
    day = start
    while day < end:
        total += Fraction(1, 366 if calendar.isleap(day.year) else 365)
        day += timedelta(days=1)
    return total


THIRTY_RULES = ["30/360", "30/360-bond", "30e/360", "30e/360-isda"]

# Days near the ends of months (and the 1st), over two years that include a leap February,
# so that every February and 31st rule is met in every combination.
_EDGES = [
    date(year, month, day)
    for year in (2027, 2028)
    for month in range(1, 13)
    for day in (1, 27, 28, 29, 30, 31)
    if day <= calendar.monthrange(year, month)[1]
]


@pytest.mark.parametrize("rule", THIRTY_RULES)
def test_thirty_day_family_matches_the_rule_text_on_every_month_end_pair(rule: str) -> None:
    """Every ordered pair of edge dates: amort equals the rule text implemented again."""
    # Periods of positive length: the definitions describe calculation periods, and a
    # date to itself is 0 in amort (tests/test_daycount.py) where 30E/360 (ISDA) read
    # literally gives -2 for 28 February 2027 as its own termination date.
    for i, start in enumerate(_EDGES):
        for end in _EDGES[i + 1 :]:
            termination = end if rule == "30e/360-isda" else None
            got = day_count_days(start, end, rule, termination=termination)
            assert got == _thirty_reference(start, end, rule, termination), (start, end)


dates = st.dates(min_value=date(1900, 1, 1), max_value=date(2200, 12, 31))


@given(a=dates, b=dates, rule=st.sampled_from(THIRTY_RULES), at_end=st.booleans())
def test_thirty_day_family_matches_the_rule_text_on_random_pairs(
    a: date, b: date, rule: str, at_end: bool
) -> None:
    start, end = min(a, b), max(a, b)
    termination = end if at_end else None
    got = year_fraction(start, end, rule, termination=termination)
    expected = 0 if start == end else _thirty_reference(start, end, rule, termination)
    assert got == Fraction(expected, 360)


@given(a=dates, span=st.integers(min_value=0, max_value=1200))
def test_actual_actual_isda_equals_a_day_by_day_sum(a: date, span: int) -> None:
    """Each day counts 1/366 in a leap year and 1/365 otherwise (ISDA 2006 4.16(b))."""
    end = a + timedelta(days=span)
    assert year_fraction(a, end, "actual/actual-isda") == _actual_actual_day_by_day(a, end)


@given(a=dates, span=st.integers(min_value=0, max_value=4000))
def test_actual_360_and_365_fixed_are_days_over_the_basis(a: date, span: int) -> None:
    end = a + timedelta(days=span)
    assert year_fraction(a, end, "actual/360") == Fraction(span, 360)
    assert year_fraction(a, end, "actual/365") == Fraction(span, 365)
