"""amort.apr: unit-periods, counting back, rounding as disclosed, the EU time bases, errors.

Sources: 12 CFR 1026 Appendix J (b)(3)-(b)(5) [text for the definitions and the
month rules, memory for the fraction counting of semimonths, multiples of a
month and years]; Directive 2008/48/EC Annex I (d)-(e) [text]; UK MCOB 10A.2.3R
[text] for counting whole years back. Exact references are Python's fractions
written here.
"""

from __future__ import annotations

from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction

import pytest

from amort import InvalidTerms, NoSolution
from amort.apr import (
    Method,
    Standard,
    UnitPeriod,
    YearBasis,
    count_back,
    eu_aprc,
    eu_year_fraction,
    regz_apr,
    unit_period,
)
from amort.calendar import add_months
from amort.disclosure import rate_on_periods
from amort.flows import Flows

MONTH = UnitPeriod("month")


def months(first: date, count: int, every: int = 1, *, eom: bool = False) -> list[date]:
    return [add_months(first, every * k, end_of_month=eom) for k in range(count)]


# -- counting back (Appendix J (b)(3)(iv), (b)(5)) ----------------------------------------------


@pytest.mark.parametrize(
    ("start", "end", "unit", "expected"),
    [
        # Months run date to same date: 10 Jan -> 10 Feb is one whole month [text].
        (date(1978, 1, 10), date(1978, 2, 10), MONTH, (1, Fraction(0))),
        # Remaining days over 30 [memory]: 10 Feb -> 1 Mar 1978 is 19 days.
        (date(1978, 2, 10), date(1978, 4, 1), MONTH, (1, Fraction(19, 30))),
        # Month-end to month-end [text]: 31 Jan -> 30 Apr is three months.
        (date(2027, 1, 31), date(2027, 4, 30), MONTH, (3, Fraction(0))),
        # A series on the 30th uses the last day of February [text].
        (date(2027, 1, 30), date(2027, 2, 28), MONTH, (1, Fraction(0))),
        (date(2027, 1, 30), date(2027, 3, 30), MONTH, (2, Fraction(0))),
        # Quarters: whole quarters back, then (30 x months + days) / 90 [memory].
        (date(1978, 5, 23), date(1978, 10, 1), UnitPeriod("month", 3), (1, Fraction(39, 90))),
        # Semimonths: whole months are two, 15 days one more, the rest over 15 [memory].
        (date(2027, 1, 1), date(2027, 2, 16), UnitPeriod("semimonth"), (3, Fraction(0))),
        (date(2027, 1, 1), date(2027, 1, 23), UnitPeriod("semimonth"), (1, Fraction(7, 15))),
        # Weeks and days: days over the unit's days [memory].
        (date(2027, 1, 1), date(2027, 1, 19), UnitPeriod("week", 2), (1, Fraction(4, 14))),
        (date(2027, 1, 1), date(2027, 1, 11), UnitPeriod("day", 4), (2, Fraction(2, 4))),
        # A year: whole years back, then months over 12 or days over 365 [memory].
        (date(2027, 1, 1), date(2028, 4, 1), UnitPeriod("month", 12), (1, Fraction(3, 12))),
        (date(2027, 1, 1), date(2028, 4, 11), UnitPeriod("month", 12), (1, Fraction(100, 365))),
    ],
)
def test_count_back(start: date, end: date, unit: UnitPeriod, expected: tuple) -> None:
    assert count_back(start, end, unit) == expected


def test_count_back_refuses_a_date_before_the_start() -> None:
    with pytest.raises(InvalidTerms, match="comes before the start of the term"):
        count_back(date(2027, 2, 1), date(2027, 1, 1), MONTH)


# -- the unit-period (Appendix J (b)(4) [text]) -------------------------------------------------


def test_unit_period_is_the_most_frequent_common_period() -> None:
    # An odd first period and monthly payments after it: the month occurs 11 times.
    assert unit_period(date(2027, 1, 10), months(date(2027, 3, 1), 12)) == MONTH


def test_unit_period_tie_goes_to_the_smaller() -> None:
    # Two monthly periods and two quarterly ones: the month, the smaller, wins.
    pay = [date(2027, 2, 1), date(2027, 3, 1), date(2027, 6, 1), date(2027, 9, 1)]
    assert unit_period(date(2027, 1, 1), pay) == MONTH


def test_unit_period_without_a_common_period_is_the_average_rounded() -> None:
    # Periods of 1, 2 and 3 months (none common): the average, 2 months, is standard.
    pay = [date(2027, 2, 1), date(2027, 4, 1), date(2027, 7, 1)]
    assert unit_period(date(2027, 1, 1), pay) == UnitPeriod("month", 2)
    # 1, 2 and 4 months average 71 days: 10 weeks (70 days) is the nearest standard interval.
    pay = [date(2027, 2, 1), date(2027, 4, 1), date(2027, 8, 1)]
    assert unit_period(date(2027, 1, 1), pay) == UnitPeriod("week", 10)


def test_single_advance_single_payment_unit_is_the_term() -> None:
    # (b)(4)(ii) [text]: the term, not over a year.
    assert unit_period(date(2027, 1, 1), [date(2027, 7, 1)]) == UnitPeriod("month", 6)
    assert unit_period(date(2027, 1, 1), [date(2027, 3, 12)]) == UnitPeriod("day", 70)
    assert unit_period(date(2027, 1, 1), [date(2028, 7, 1)]) == UnitPeriod("month", 12)


@pytest.mark.parametrize(
    ("dates", "unit"),
    [
        ([date(2027, 1, 1) + timedelta(7 * k) for k in range(1, 30)], UnitPeriod("week")),
        ([date(2027, 1, 1) + timedelta(14 * k) for k in range(1, 30)], UnitPeriod("week", 2)),
        (months(date(2027, 1, 16), 12) + months(date(2027, 2, 1), 12), UnitPeriod("semimonth")),
        (months(date(2027, 2, 28), 12, eom=True), MONTH),
        (months(date(2027, 4, 1), 8, 3), UnitPeriod("month", 3)),
        (months(date(2028, 1, 1), 5, 12), UnitPeriod("month", 12)),
    ],
)
def test_unit_period_of_each_payment_frequency(dates: list[date], unit: UnitPeriod) -> None:
    assert unit_period(date(2027, 1, 1), sorted(dates)) == unit


def test_unit_period_names_and_counts_a_year() -> None:
    assert (UnitPeriod("month", 12).name, UnitPeriod("month", 12).per_year) == ("year", 1)
    assert (UnitPeriod("week", 2).name, UnitPeriod("week", 2).per_year) == ("2 weeks", 26)
    assert UnitPeriod("semimonth").per_year == 24
    assert UnitPeriod("day", 70).per_year == Fraction(365, 70)
    with pytest.raises(InvalidTerms, match="1 to 12"):
        UnitPeriod("month", 13)


# -- rounding as disclosed (half-up, decided exactly at a tie) -------------------------------------


def one_year(amount: str, repaid: str) -> Flows:
    return Flows.of([("2027-01-01", amount, "advance"), ("2028-01-01", repaid, "payment")])


@pytest.mark.parametrize(("repaid", "shown"), [("1122.50", "12.3"), ("1123.50", "12.4")])
def test_eu_tie_rounds_half_up(repaid: str, shown: str) -> None:
    # Annex I (e) [text]: a following 5 raises the preceding figure. 1000 -> 1122.50 after
    # one year of 365 days is exactly 12.25 % (Python fractions: 1122.50 / 1000 - 1).
    assert Fraction(repaid) / 1000 - 1 == Fraction(shown) / 100 - Fraction(5, 10**4)
    assert eu_aprc(one_year("1000", repaid), decimals=1).apr == Decimal(shown)


def test_us_tie_rounds_half_up() -> None:
    # A single payment after twelve months: the unit-period is the year and the APR is
    # exactly 12.25 % (fractions), disclosed to one place as 12.3.
    result = regz_apr(one_year("1000", "1122.50"), decimals=1)
    assert result.unit_period == UnitPeriod("month", 12)
    assert result.apr == Decimal("12.3")


def test_decimals_are_checked() -> None:
    with pytest.raises(InvalidTerms, match="'decimals' must be a whole number from 1 to 8"):
        eu_aprc(one_year("1000", "1100"), decimals=0)
    with pytest.raises(InvalidTerms, match="from 0 to 8"):
        regz_apr(one_year("1000", "1100"), decimals=9)
    assert regz_apr(one_year("1000", "1100"), decimals=0).apr == Decimal("10")


# -- EU time in years (Annex I (d) [text]) --------------------------------------------------------


@pytest.mark.parametrize(
    ("basis", "end", "expected"),
    [
        (YearBasis.DAYS_365, date(2026, 7, 1), Fraction(546, 365)),
        (YearBasis.DAYS, date(2026, 7, 1), Fraction(546, 365)),
        # Three whole years back from 1 July 2028 reach 1 July 2025; 181 days are left, in
        # the year that ends on 1 July 2025 (365 days).
        (YearBasis.DAYS, date(2028, 7, 1), 3 + Fraction(181, 365)),
        (YearBasis.WEEKS, date(2025, 12, 31), Fraction(364, 364)),
        # 12 equal months: 18 whole months, nothing left.
        (YearBasis.MONTHS, date(2026, 7, 1), Fraction(18, 12)),
    ],
)
def test_eu_year_fraction(basis: YearBasis, end: date, expected: Fraction) -> None:
    assert eu_year_fraction(date(2025, 1, 1), end, basis) == expected


def test_eu_days_basis_uses_366_in_a_leap_year() -> None:
    # MCOB 10A.2.3R [text]: days over the 366 days of a leap year counted back.
    assert eu_year_fraction(date(2028, 1, 1), date(2028, 7, 1)) == Fraction(182, 366)
    assert eu_year_fraction(date(2028, 1, 1), date(2028, 7, 1), "365-days") == Fraction(182, 365)


def test_eu_periodic_flows_are_k_over_p_years() -> None:
    items = [(0, "advance", Decimal(1000)), (12, "payment", Decimal(1100))]
    assert rate_on_periods(items, "monthly", standard="eu-ccd").apr == Decimal("10.0")


# -- errors ----------------------------------------------------------------------------------------


def test_payments_short_of_the_advance_are_no_solution_with_the_negative_rate() -> None:
    with pytest.raises(NoSolution, match=r"less than the 1,000.00 advanced.*-10.0000 %"):
        regz_apr(one_year("1000", "900"))
    with pytest.raises(NoSolution, match=r"less than the 1,000\.00 advanced"):
        eu_aprc(one_year("1000", "900"))
    with pytest.raises(NoSolution, match=r"less than the 1,000\.00 advanced"):
        regz_apr(one_year("1000", "900"), method="us-rule")


def test_a_payment_before_the_first_advance_is_refused() -> None:
    flows = Flows.of([("2027-01-01", "10", "payment"), ("2027-01-05", "100", "advance")])
    with pytest.raises(InvalidTerms, match="comes before the first advance"):
        regz_apr(flows)


def test_unknown_standard_and_method_are_refused() -> None:
    with pytest.raises(InvalidTerms, match="'standard' must be one of 'us-regz', 'eu-ccd'"):
        Standard.parse("uk-fca")
    with pytest.raises(InvalidTerms, match="'method' must be one of"):
        Method.parse("rule-of-78s")
    assert Standard.parse("EU") is Standard.EU_CCD


def test_zero_rate_when_payments_equal_the_advance() -> None:
    result = regz_apr(one_year("1000", "1000"))
    assert result.apr == Decimal("0.00") and result.apr_unrounded == 0


# -- several rates, several advances --------------------------------------------------------------


def test_two_rates_are_both_reported_and_the_smaller_is_disclosed() -> None:
    # Advances around a payment: 1000 (1 + i)^2 - 2300 (1 + i) + 1320 = 0 has the roots
    # i = 10 % and 20 % a year (quadratic formula); the unit-period is the year.
    flows = Flows.of(
        [
            ("2025-01-01", "1000", "advance"),
            ("2026-01-01", "2300", "payment"),
            ("2027-01-01", "1320", "advance"),
        ]
    )
    result = regz_apr(flows)
    assert result.ambiguous
    assert [round(r, 3) for r in result.roots] == [10.0, 20.0]
    assert result.apr == Decimal("10.00")


def test_periodic_irregular_features() -> None:
    items = [(0, "advance", Decimal(1000)), (1, "payment", Decimal(300))]
    items += [(3, "payment", Decimal(300)), (4, "payment", Decimal(450))]
    rules = rate_on_periods(items, "monthly").classification
    assert rules is not None and rules.features == ("irregular payment periods",)
