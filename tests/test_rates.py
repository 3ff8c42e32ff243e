"""amort.rates: parsing of compoundings, periodic rates, conversions, their domain and errors.

Outside-source checks (mpmath at 50 digits, OASIS EFFECT) are in
tests/reference/test_rates_mpmath.py; here the references are Python's
fractions (exact rationals) and the identities the conversions must keep.
"""

from __future__ import annotations

import re
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from amort import rates
from amort.conventions import Frequency
from amort.errors import InvalidTerms
from amort.rates import Compounding, PeriodicRate

EPS = float(np.finfo(np.float64).eps)

# -- Compounding.parse ----------------------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "per_year"),
    [
        ("annual", 1),
        ("yearly", 1),
        ("semiannual", 2),
        ("semi-annual", 2),
        ("half yearly", 2),
        ("quarterly", 4),
        ("bimonthly", 6),
        ("monthly", 12),
        ("Monthly ", 12),
        ("semimonthly", 24),
        ("biweekly", 26),
        ("fortnightly", 26),
        ("weekly", 52),
        ("daily", 365),
        ("12", 12),
        ("8", 8),
    ],
)
def test_compounding_names_and_numbers(text: str, per_year: int) -> None:
    assert Compounding.parse(text) == Compounding(per_year)


@pytest.mark.parametrize("value", ["continuous", "Continuously", " CONTINUOUS "])
def test_continuous_compounding_by_name(value: str) -> None:
    parsed = Compounding.parse(value)
    assert parsed is Compounding.CONTINUOUS
    assert parsed.continuous and parsed.per_year is None


@pytest.mark.parametrize(
    "value", [12, np.int64(12), 12.0, Decimal("12"), Fraction(12), Frequency.MONTHLY]
)
def test_compounding_from_numbers_and_frequencies(value: object) -> None:
    assert Compounding.parse(value) == Compounding.MONTHLY


def test_compounding_is_kept_as_is() -> None:
    assert Compounding.parse(Compounding.DAILY) is Compounding.DAILY


@pytest.mark.parametrize(
    "value", [0, -1, 2.5, "2.5", True, False, "simple", "none", "", "x12", None, 1_000_001, [12]]
)
def test_compounding_that_is_not_a_positive_whole_number_a_year_is_refused(value: object) -> None:
    with pytest.raises(InvalidTerms) as caught:
        Compounding.parse(value)
    message = str(caught.value)
    assert message.startswith("'compounding' must be a whole number of times a year")
    assert "'continuous'" in message and "(got " in message


def test_compounding_error_names_the_field_given() -> None:
    with pytest.raises(InvalidTerms, match=r"^'source' must be .* \(got 0\)$"):
        Compounding.parse(0, "source")
    with pytest.raises(InvalidTerms, match=r"\(got 'simple'\)$"):
        Compounding.parse("simple", "target")


def test_compounding_built_directly_is_validated() -> None:
    with pytest.raises(InvalidTerms):
        Compounding(0)
    with pytest.raises(InvalidTerms):
        Compounding(12.0)  # type: ignore[arg-type]


@pytest.mark.parametrize("per_year", [1, 2, 4, 6, 8, 12, 24, 26, 52, 365, 1000, None])
def test_compounding_name_reads_back(per_year: int | None) -> None:
    compounding = Compounding(per_year)
    assert Compounding.parse(compounding.name) == compounding


def test_compounding_words() -> None:
    assert str(Compounding.MONTHLY) == "monthly (12 a year)"
    assert str(Compounding(8)) == "8 times a year"
    assert str(Compounding.CONTINUOUS) == "continuous"
    assert Compounding.DAILY.name == "daily"


# -- exact_rate ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "value", [0.065, "0.065", "6.5%", " 6.5 % ", Decimal("0.065"), Fraction(13, 200)]
)
def test_exact_rate_reads_decimals_and_percent(value: object) -> None:
    got = rates.exact_rate(value)
    assert got == Fraction(13, 200) and type(got) is Fraction


def test_exact_rate_reads_floats_through_their_repr() -> None:
    # 0.1 is 1/10, not the binary double 3602879701896397/36028797018963968.
    assert rates.exact_rate(0.1) == Fraction(1, 10)
    assert rates.exact_rate(-0.5) == Fraction(-1, 2)
    assert rates.exact_rate(6.5, percent=True) == Fraction(13, 200)


@pytest.mark.parametrize("value", ["6.5 percent", None, True, float("nan"), float("inf"), [1]])
def test_exact_rate_refuses_what_is_not_a_number(value: object) -> None:
    with pytest.raises(InvalidTerms, match=r"^'rate' must be"):
        rates.exact_rate(value)


# -- periodic_rate ---------------------------------------------------------------------------


def test_periodic_rate_without_compounding_is_rate_over_payments() -> None:
    got = rates.periodic_rate("6.5%", 12)
    assert got == PeriodicRate(Fraction(13, 2400))
    assert got.exact and got.fraction == Fraction(13, 2400)
    assert float(got) == 13 / 2400


@pytest.mark.parametrize("frequency", list(Frequency))
def test_periodic_rate_takes_a_frequency(frequency: Frequency) -> None:
    got = rates.periodic_rate("6%", frequency)
    assert got.value == Fraction(6, 100) / frequency.per_year
    assert rates.periodic_rate("6%", frequency.value) == got


@pytest.mark.parametrize(("m", "p"), [(12, 4), (12, 12), (52, 26), (365, 1), (4, 2), (24, 12)])
def test_periodic_rate_exact_when_payments_divide_compoundings(m: int, p: int) -> None:
    j = Fraction(7, 100)
    got = rates.periodic_rate(Decimal("0.07"), p, m)
    assert got.exact and type(got.value) is Fraction
    assert got.value == (1 + j / m) ** (m // p) - 1  # Python fractions: the naive reference


@pytest.mark.parametrize(("m", "p"), [(1, 12), (2, 12), (365, 12), (52, 12), (4, 12), (12, 52)])
def test_periodic_rate_irrational_is_a_float(m: int, p: int) -> None:
    got = rates.periodic_rate(Decimal("0.07"), p, m)
    assert not got.exact and type(got.value) is float
    assert got.fraction == Fraction(got.value)
    assert rates.as_fraction(got) == got.fraction
    # Within a few ulps of the float64 formula expm1((m/p) log1p(j/m)).
    assert got.value == pytest.approx(float(np.expm1(m / p * np.log1p(0.07 / m))), rel=8 * EPS)


def test_periodic_rate_continuous() -> None:
    got = rates.periodic_rate("6%", 12, "continuous")
    assert not got.exact
    assert got.value == pytest.approx(float(np.expm1(0.005)), rel=2 * EPS)


def test_periodic_rate_of_zero_is_exactly_zero_for_every_compounding() -> None:
    for compounding in (None, 1, 2, 12, 365, "continuous"):
        got = rates.periodic_rate(0, 12, compounding)
        assert got.exact and got.value == 0


def test_periodic_rate_grows_with_compounding() -> None:
    # More compoundings a year at the same nominal rate grow faster, continuous the most.
    values = [float(rates.periodic_rate("8%", 12, m)) for m in (1, 2, 4, 12, 52, 365, "continuous")]
    assert values == sorted(values) and len(set(values)) == len(values)


def test_periodic_rate_negative_rates_and_the_minus_100_percent_limit() -> None:
    assert rates.periodic_rate("-6%", 12).value == Fraction(-1, 200)
    # -100 % a year compounded monthly is -1/12 a month: defined.
    assert rates.periodic_rate(-1, 12).value == Fraction(-1, 12)
    with pytest.raises(InvalidTerms, match=r"^'annual_rate' must be greater than -12 \(-1,200 %\)"):
        rates.periodic_rate(-12, 12)
    with pytest.raises(InvalidTerms, match=r"-100 % or less a compounding period"):
        rates.periodic_rate("-250%", 12, "semiannual")


@pytest.mark.parametrize("per_year", [0, -12, 1.5, True, "often", None])
def test_periodic_rate_refuses_bad_payments_a_year(per_year: object) -> None:
    with pytest.raises(InvalidTerms, match=r"^'per_year' must be a whole number of payments"):
        rates.periodic_rate("6%", per_year)  # type: ignore[arg-type]


def test_periodic_rate_refuses_a_bad_compounding() -> None:
    with pytest.raises(InvalidTerms, match=r"^'compounding' must be .*\(got 'hourly'\)$"):
        rates.periodic_rate("6%", 12, "hourly")


def test_periodic_rate_too_large_for_a_double_is_refused() -> None:
    with pytest.raises(InvalidTerms, match=r"too large for a double"):
        rates.periodic_rate(1000, 1, "continuous")
    with pytest.raises(InvalidTerms, match=r"too large for a double"):
        rates.periodic_rate(100_000, 1, "daily")


def test_periodic_rate_size_bounds() -> None:
    with pytest.raises(InvalidTerms, match=r"at most 1,000,000"):
        rates.periodic_rate(Fraction(10**7), 12)
    with pytest.raises(InvalidTerms, match=r"0 or at least 1e-330"):
        rates.periodic_rate(Fraction(1, 10**400), 12, "semiannual")
    # The smallest double is inside the bounds (its periodic rate rounds to the double 0.0).
    assert rates.periodic_rate(Fraction(5e-324), 12, "semiannual").value == 0.0
    assert rates.periodic_rate(Fraction(1e-300), 12, "semiannual").value == pytest.approx(
        1e-300 / 12, rel=EPS
    )


def test_periodic_rate_value_type_is_checked() -> None:
    with pytest.raises(TypeError):
        PeriodicRate(Decimal("0.01"))  # type: ignore[arg-type]
    with pytest.raises(InvalidTerms):
        PeriodicRate(float("inf"))
    assert type(PeriodicRate(np.float64(0.01)).value) is float


def test_as_fraction_is_exact() -> None:
    assert rates.as_fraction(0.1) == Fraction(3602879701896397, 36028797018963968)
    assert rates.as_fraction(Decimal("0.065")) == Fraction(13, 200)
    assert rates.as_fraction(Fraction(1, 3)) == Fraction(1, 3)
    with pytest.raises(InvalidTerms):
        rates.as_fraction(float("nan"))


def test_periodic_rate_array_matches_the_scalar() -> None:
    j = np.array([0.0, 1e-9, 0.03, 0.065, 0.2, 1.5])
    for compounding in (None, 1, 2, 12, 52, 365, "continuous"):
        array = rates.periodic_rate_array(j, 12, compounding)
        assert array.shape == j.shape and array.dtype == np.float64
        scalar = [float(rates.periodic_rate(q, 12, compounding)) for q in j]
        np.testing.assert_allclose(array, scalar, rtol=8 * EPS, atol=0)


def test_periodic_rate_array_refuses_out_of_domain() -> None:
    with pytest.raises(InvalidTerms, match=r"\(got -24.0\)$"):
        rates.periodic_rate_array([0.05, -24.0], 12)
    with pytest.raises(InvalidTerms, match=r"finite"):
        rates.periodic_rate_array([np.nan], 12, "monthly")


# -- float64 conversions ---------------------------------------------------------------------

COMPOUNDINGS: list[int | str] = [1, 2, 4, 12, 26, 52, 365, "continuous"]


@pytest.mark.parametrize("m", COMPOUNDINGS)
def test_nominal_to_effective_to_nominal_round_trip(m: int | str) -> None:
    j = np.array([1e-12, 1e-6, 0.01, 0.065, 0.18, 0.5, 1.0, 10.0, -0.05, -0.5])
    effective = rates.effective_from_nominal(j, m)
    back = rates.nominal_from_effective(effective, m)
    # Each leg errs by a few eps relative times the condition of the other.
    np.testing.assert_allclose(back, j, rtol=64 * EPS, atol=0)


@pytest.mark.parametrize("source", COMPOUNDINGS)
@pytest.mark.parametrize("target", COMPOUNDINGS)
def test_nominal_to_nominal_round_trip_and_force(source: int | str, target: int | str) -> None:
    j = np.array([1e-9, 0.04, 0.12, 2.0, -0.3])
    there = rates.convert_rate(j, source, target)
    back = rates.convert_rate(there, target, source)
    np.testing.assert_allclose(back, j, rtol=64 * EPS, atol=0)
    # Both quotes carry the same force of interest (the continuous rate).
    np.testing.assert_allclose(
        rates.convert_rate(there, target, "continuous"),
        rates.convert_rate(j, source, "continuous"),
        rtol=32 * EPS,
    )


def test_conversions_are_vectorised_elementwise() -> None:
    j = np.array([[0.01, 0.05], [0.1, -0.2]])
    got = rates.convert_rate(j, 12, 1)
    assert got.shape == (2, 2) and got.dtype == np.float64
    for index in np.ndindex(j.shape):
        assert got[index] == rates.convert_rate(j[index], 12, 1)
    assert rates.convert_rate(j, 12, "monthly") is not j  # same basis: a copy
    np.testing.assert_array_equal(rates.convert_rate(j, 12, "monthly"), j)


def test_effective_and_nominal_are_monotone_and_ordered() -> None:
    # An effective rate exceeds the nominal rate, for negative rates too (Bernoulli's
    # inequality: (1 + j/m)^m > 1 + j when j/m > -1, j != 0), and rises with it.
    j = np.array([0.02, 0.1, 0.5])
    e = rates.effective_from_nominal(j, 12)
    r = rates.convert_rate(j, 12, "continuous")
    assert np.all(e > j) and np.all(r < j)
    neg = np.array([-0.02, -0.1])
    assert np.all(rates.effective_from_nominal(neg, 12) > neg)
    assert np.all(np.diff(e) > 0)


def test_negative_rates_convert() -> None:
    # Effective -50 % is a continuous rate of log(0.5).
    assert float(rates.convert_rate(-0.5, 1, "continuous")) == pytest.approx(np.log(0.5), rel=EPS)
    # -100 % nominal compounded monthly is -1/12 a month: effective (11/12)^12 - 1.
    assert float(rates.effective_from_nominal(-1.0, 12)) == pytest.approx(
        float(Fraction(11, 12) ** 12 - 1), rel=4 * EPS
    )
    # A large negative continuous rate is any finite number: e = exp(r) - 1 > -1.
    assert -1 < float(rates.convert_rate(-30.0, "continuous", 1)) < -0.999999


@pytest.mark.parametrize(
    ("rate", "source", "rule"),
    [
        (-1.0, 1, r"greater than -1 \(-100 %\) at annual \(1 a year\)"),
        (-1.5, "annual", r"greater than -1 \(-100 %\)"),
        (-12.0, 12, r"greater than -12 \(-1,200 %\) at monthly \(12 a year\)"),
        (-2.0, "semiannual", r"greater than -2 \(-200 %\)"),
    ],
)
def test_conversion_from_minus_100_percent_or_less_is_refused(
    rate: float, source: int | str, rule: str
) -> None:
    for call in (
        lambda: rates.convert_rate(rate, source, "continuous"),
        lambda: rates.convert_rate_exact(rate, source, 1),
        lambda: rates.convert(rate, source="nominal", source_compounding=source),
    ):
        with pytest.raises(InvalidTerms) as caught:
            call()
        message = str(caught.value)
        assert message.startswith("'rate' must be greater than")
        assert "loses everything and has no logarithm" in message
        assert pytest.approx(rate) == float(message.rsplit("(got ", 1)[1].rstrip(")"))
        assert re.search(rule, message)


def test_array_refusal_names_the_first_bad_value() -> None:
    with pytest.raises(InvalidTerms, match=r"\(got -1.0\)$"):
        rates.convert_rate([0.05, -1.0, -3.0], 1, 12)
    with pytest.raises(InvalidTerms, match=r"^'rate' must be a finite number \(got inf\)$"):
        rates.convert_rate([0.05, np.inf], 12, 1)


def test_conversion_overflow_is_refused_not_warned() -> None:
    # filterwarnings = error: an overflow warning would fail this test too.
    with pytest.raises(InvalidTerms, match=r"too large for a double"):
        rates.convert_rate([0.05, 800.0], "continuous", 1)
    with pytest.raises(InvalidTerms, match=r"too large for a double"):
        rates.convert(800, source="continuous")


def test_oasis_effect_names() -> None:
    # The two OASIS-named conversions are convert_rate at annual compounding on one side.
    j = np.array([0.03, 0.06])
    np.testing.assert_array_equal(rates.effective_from_nominal(j, 4), rates.convert_rate(j, 4, 1))
    np.testing.assert_array_equal(rates.nominal_from_effective(j, 4), rates.convert_rate(j, 1, 4))


# -- exact conversions -----------------------------------------------------------------------

DECIMAL_RATES = st.integers(min_value=-4_999, max_value=100_000).map(lambda n: Fraction(n, 10_000))


@given(rate=DECIMAL_RATES, m=st.sampled_from([1, 2, 4, 12, 26, 52, 365]))
def test_exact_round_trip_nominal_effective_nominal(rate: Fraction, m: int) -> None:
    # Python fractions: e = (1 + j/m)^m - 1 exactly, and back through the exact m-th root.
    effective = rates.convert_rate_exact(rate, m, 1)
    assert effective == (1 + rate / m) ** m - 1
    assert rates.convert_rate_exact(effective, 1, m) == rate


@given(rate=DECIMAL_RATES, m=st.sampled_from([2, 4, 12, 52]))
def test_exact_and_float_agree(rate: Fraction, m: int) -> None:
    exact = rates.convert_rate_exact(rate, m, 1)
    assert float(rates.convert_rate(float(rate), m, 1)) == pytest.approx(
        float(exact), rel=16 * EPS, abs=16 * EPS * abs(float(rate))
    )
    assert rates.convert(rate, source_compounding=m)["rate"] == float(exact)


def test_exact_conversion_that_is_irrational_is_refused() -> None:
    with pytest.raises(InvalidTerms, match=r"no exact equivalent at monthly \(12 a year\)"):
        rates.convert_rate_exact("6%", "semiannual", "monthly")
    with pytest.raises(InvalidTerms, match=r"^'rate' '6%' at monthly .* nearest double$"):
        rates.convert_rate_exact("6%", "monthly", "continuous")
    assert rates.convert_rate_exact("0%", "monthly", "continuous") == 0
    assert rates.convert_rate_exact("6%", "continuous", "continuous") == Fraction(3, 50)


def test_exact_answers_are_kept_to_a_printable_size() -> None:
    # (1 + j/365)^365 for a 16-digit j would pass 4,300 digits (Python's printing limit):
    # the nearest double instead, and the exact conversion is refused.
    j = "0.0123456789012345"
    assert not rates.periodic_rate(j, 1, "daily").exact
    with pytest.raises(InvalidTerms, match=r"3,900 digits"):
        rates.convert_rate_exact(j, "daily", "annual")
    daily = rates.periodic_rate("6.5%", 1, "daily")
    assert daily.exact and repr(daily).startswith("PeriodicRate(value=Fraction(")
    with pytest.raises(InvalidTerms, match=r"^'rate' must have at most about 3,900 digits"):
        rates.exact_rate(Fraction(1, 10**4000))


def test_exact_conversion_coarser_target() -> None:
    # m_2 divides m_1: monthly to quarterly is 4 ((1 + j/12)^3 - 1).
    j = Fraction(13, 200)
    assert rates.convert_rate_exact(j, 12, 4) == 4 * ((1 + j / 12) ** 3 - 1)


def test_integer_root() -> None:
    assert rates._integer_root(103**6, 6) == 103
    assert rates._integer_root(103**6 + 1, 6) is None
    assert rates._integer_root(2**400, 365) is None
    assert rates._integer_root(7**365, 365) == 7
    assert rates._integer_root(1, 12) == 1 and rates._integer_root(0, 3) == 0


# -- convert: the analyst's view --------------------------------------------------------------


def test_convert_nominal_monthly_to_effective() -> None:
    out = rates.convert("6%")
    assert out == {
        "rate": float((1 + Fraction(1, 200)) ** 12 - 1),
        "exact": True,
        "source_rate": 0.06,
        "source": "nominal",
        "source_compounding": "monthly",
        "target": "effective",
        "target_compounding": "annual",
        "nominal": 0.06,
        "nominal_compounding": "monthly",
        "effective_annual": out["rate"],
        "continuous": pytest.approx(12 * np.log1p(0.005), rel=2 * EPS),
    }


def test_convert_effective_to_nominal_shows_the_target_compounding() -> None:
    out = rates.convert(0.0609, source="effective", target="nominal", target_compounding=2)
    assert out["rate"] == 0.06 and out["exact"]
    assert out["nominal"] == 0.06 and out["nominal_compounding"] == "semiannual"
    assert out["effective_annual"] == 0.0609


def test_convert_continuous_shows_monthly_nominal() -> None:
    out = rates.convert("5%", source="continuous", target="effective")
    assert out["nominal_compounding"] == "monthly"
    assert out["nominal"] == pytest.approx(12 * np.expm1(0.05 / 12), rel=2 * EPS)
    assert out["rate"] == out["effective_annual"] == pytest.approx(np.expm1(0.05), rel=EPS)
    assert out["continuous"] == 0.05 and not out["exact"]


def test_convert_reads_percent() -> None:
    assert rates.convert(6.5, percent=True) == rates.convert("6.5%") == rates.convert(0.065)


def test_convert_effective_or_continuous_take_no_other_compounding() -> None:
    assert rates.convert(0.05, source="effective", source_compounding=1)["rate"] == 0.05
    with pytest.raises(
        InvalidTerms, match=r"^'source_compounding' applies to a nominal rate; an effective rate"
    ):
        rates.convert(0.05, source="effective", source_compounding=12)
    with pytest.raises(InvalidTerms, match=r"^'target_compounding' applies to a nominal rate"):
        rates.convert(0.05, target="continuous", target_compounding="daily")


@pytest.mark.parametrize("kind", ["apr", "", "Nominal rate", 12])
def test_convert_refuses_unknown_kinds(kind: object) -> None:
    with pytest.raises(InvalidTerms, match=r"^'target' must be one of 'nominal', 'effective'"):
        rates.convert(0.05, target=kind)  # type: ignore[arg-type]


def test_convert_names_a_bad_compounding_field() -> None:
    with pytest.raises(InvalidTerms, match=r"^'source_compounding' must be a whole number"):
        rates.convert(0.05, source_compounding=0)


def test_convert_same_quote_is_the_identity() -> None:
    out = rates.convert("7.25%", target="nominal", target_compounding="monthly")
    assert out["rate"] == 0.0725 and out["exact"]
