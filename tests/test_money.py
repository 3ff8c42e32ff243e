"""Exact money (amort.money): parsing amounts and rates, rounding modes, integer cents.

Rounding is checked against definitions written here with Python's
``fractions`` (and ``round`` on a Fraction, which rounds half to even), and
against Python's ``decimal`` quantize for decimal values.
"""

from __future__ import annotations

import math
import random
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal
from fractions import Fraction

import numpy as np
import pytest

from amort.errors import AmortError, InvalidTerms
from amort.money import (
    MAX_AMOUNT,
    Rounding,
    from_cents,
    parse_amount,
    parse_number,
    parse_rate,
    round_fraction,
    round_ratio,
    round_ratio_array,
    to_cents,
)

DECIMAL_MODES = {
    Rounding.HALF_UP: ROUND_HALF_UP,
    Rounding.HALF_EVEN: ROUND_HALF_EVEN,
    Rounding.UP: ROUND_UP,
    Rounding.DOWN: ROUND_DOWN,
}


def reference_round(value: Fraction, mode: Rounding) -> int:
    """Round to an integer by the definitions: ties away from zero / to even; up = away from 0."""
    sign = -1 if value < 0 else 1
    size = abs(value)
    if mode is Rounding.HALF_UP:
        return sign * math.floor(size + Fraction(1, 2))
    if mode is Rounding.HALF_EVEN:
        return round(value)  # Fraction.__round__ rounds half to even
    if mode is Rounding.UP:
        return sign * math.ceil(size)
    return sign * math.floor(size)


# -- parse_amount ----------------------------------------------------------------------------


def test_floats_are_read_through_their_shortest_repr() -> None:
    assert parse_amount(0.1) + parse_amount(0.2) == Decimal("0.3")
    assert parse_amount(0.1) == Decimal("0.1")  # not 0.1000000000000000055511151231257827
    assert parse_amount(1580.17) == Decimal("1580.17")
    # 0.1 + 0.2 is the float 0.30000000000000004: its repr is not whole cents
    with pytest.raises(InvalidTerms, match=r"whole number of cents \(got 0.30000000000000004\)"):
        parse_amount(0.1 + 0.2)


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        (250_000, Decimal("250000")),
        ("250,000.00", Decimal("250000.00")),
        ("1_000", Decimal("1000")),
        (" 12.5 ", Decimal("12.5")),
        ("1e3", Decimal("1E+3")),
        (Decimal("0.01"), Decimal("0.01")),
        (np.int64(7), Decimal(7)),
        (np.float64(0.07), Decimal("0.07")),
        (10**12, MAX_AMOUNT),
    ],
)
def test_parse_amount_accepts(value: object, expected: Decimal) -> None:
    result = parse_amount(value)
    assert isinstance(result, Decimal)
    assert result == expected


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (-1, r"'loan amount' must be > 0 \(got -1\)"),
        (0, r"'loan amount' must be > 0 \(got 0\)"),
        ("-0.01", r"'loan amount' must be > 0 \(got '-0.01'\)"),
        (float("nan"), r"'loan amount' must be a finite number \(got nan\)"),
        (float("inf"), r"'loan amount' must be a finite number \(got inf\)"),
        ("NaN", r"'loan amount' must be a number \(got 'NaN'\)"),
        ("Infinity", r"'loan amount' must be a number \(got 'Infinity'\)"),
        (Decimal("NaN"), r"'loan amount' must be a finite number \(got NaN\)"),
        (True, r"'loan amount' must be a number \(got True\)"),
        ("abc", r"'loan amount' must be a number \(got 'abc'\)"),
        ("", r"'loan amount' must be a number \(got ''\)"),
        (None, r"'loan amount' must be a number \(got None\)"),
        ([1], r"'loan amount' must be a number \(got \[1\]\)"),
        (Fraction(1, 3), r"'loan amount' must be a decimal number, not a fraction \(got 1/3\)"),
        ("10.005", r"'loan amount' must be a whole number of cents \(got '10.005'\)"),
        (0.001, r"'loan amount' must be a whole number of cents \(got 0.001\)"),
        (10**12 + 1, r"'loan amount' must be at most 1,000,000,000,000 currency units"),
        ("1000000000000.01", r"must be at most .* \(got '1000000000000.01'\)"),
    ],
)
def test_parse_amount_refuses_with_field_and_value(value: object, message: str) -> None:
    with pytest.raises(InvalidTerms, match=message):
        parse_amount(value, "loan amount")


def test_parse_amount_zero_only_when_allowed() -> None:
    assert parse_amount(0, "balloon", allow_zero=True) == 0
    with pytest.raises(InvalidTerms, match=r"'balloon' must be >= 0 \(got -5\)"):
        parse_amount(-5, "balloon", allow_zero=True)


def test_invalid_terms_is_a_value_error_and_an_amort_error() -> None:
    with pytest.raises(ValueError):
        parse_amount("x")
    assert issubclass(InvalidTerms, AmortError)


def test_parse_number_keeps_exact_decimals() -> None:
    assert parse_number("0.065", "rate") == Decimal("0.065")
    assert parse_number(Decimal("1.230"), "x").as_tuple() == Decimal("1.230").as_tuple()
    assert parse_number(2**70, "x") == Decimal(2**70)


# -- parse_rate ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "kwargs", "expected"),
    [
        ("6.5%", {}, Decimal("0.065")),
        (" 6.5 % ", {}, Decimal("0.065")),
        ("650%", {}, Decimal("6.5")),
        (0.065, {}, Decimal("0.065")),
        ("0.065", {}, Decimal("0.065")),
        (0, {}, Decimal(0)),
        (1, {}, Decimal(1)),
        (6.5, {"percent": True}, Decimal("0.065")),
        ("6.5", {"percent": True}, Decimal("0.065")),
        ("6.5%", {"percent": True}, Decimal("0.065")),  # % is percent either way
        (0.1, {"percent": True}, Decimal("0.001")),
    ],
)
def test_parse_rate_accepts(value: object, kwargs: dict[str, bool], expected: Decimal) -> None:
    result = parse_rate(value, **kwargs)
    assert isinstance(result, Decimal)
    assert result == expected


def test_parse_rate_float_sums_are_exact() -> None:
    # 0.1 + 0.2 as typed separately is 0.3 exactly
    assert parse_rate(0.1) + parse_rate(0.2) == Decimal("0.3")
    assert parse_rate(0.07) * 100 == 7


def test_bare_rate_above_one_is_refused_with_a_hint() -> None:
    with pytest.raises(InvalidTerms) as caught:
        parse_rate(6.5)
    text = str(caught.value)
    assert "'annual_rate'" in text
    assert "6.5" in text
    assert "'6.5%'" in text  # the hint: write it as percent
    assert "0.065" in text  # or as a decimal fraction
    with pytest.raises(InvalidTerms, match=r"'rate' is a decimal fraction and '1.5' would mean"):
        parse_rate("1.5", "rate")


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (-0.01, r"'annual_rate' must be >= 0 \(got -0.01\)"),
        ("-1%", r"'annual_rate' must be >= 0 \(got '-1%'\)"),
        (float("nan"), r"'annual_rate' must be a finite number \(got nan\)"),
        (float("-inf"), r"'annual_rate' must be a finite number \(got -inf\)"),
        (True, r"'annual_rate' must be a number \(got True\)"),
        ("six", r"'annual_rate' must be a number \(got 'six'\)"),
        ("%", r"'annual_rate' must be a number"),
    ],
)
def test_parse_rate_refuses_with_field_and_value(value: object, message: str) -> None:
    with pytest.raises(InvalidTerms, match=message):
        parse_rate(value)


# -- rounding modes --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("numerator", "denominator", "expected"),
    [
        # ties: +2.5, -2.5, +3.5, -3.5
        (5, 2, {"half-up": 3, "half-even": 2, "up": 3, "down": 2}),
        (-5, 2, {"half-up": -3, "half-even": -2, "up": -3, "down": -2}),
        (7, 2, {"half-up": 4, "half-even": 4, "up": 4, "down": 3}),
        (-7, 2, {"half-up": -4, "half-even": -4, "up": -4, "down": -3}),
        # not ties
        (7, 3, {"half-up": 2, "half-even": 2, "up": 3, "down": 2}),
        (-7, 3, {"half-up": -2, "half-even": -2, "up": -3, "down": -2}),
        (8, 3, {"half-up": 3, "half-even": 3, "up": 3, "down": 2}),
        # whole numbers never move
        (6, 3, {"half-up": 2, "half-even": 2, "up": 2, "down": 2}),
        (-6, 3, {"half-up": -2, "half-even": -2, "up": -2, "down": -2}),
        (0, 7, {"half-up": 0, "half-even": 0, "up": 0, "down": 0}),
    ],
)
def test_rounding_modes_on_ties_of_both_signs(
    numerator: int, denominator: int, expected: dict[str, int]
) -> None:
    for name, want in expected.items():
        mode = Rounding.parse(name)
        assert round_ratio(numerator, denominator, mode) == want, name
        assert round_fraction(Fraction(numerator, denominator), mode) == want, name


def test_round_ratio_matches_definitions_on_random_values() -> None:
    rng = random.Random(3)
    for _ in range(3_000):
        d = rng.randint(1, 10**6)
        n = rng.randint(-(10**12), 10**12)
        if rng.random() < 0.2:  # an exact tie
            d = 2 * rng.randint(1, 10**5)
            n = rng.randint(-(10**6), 10**6) * d + d // 2
        for mode in Rounding:
            assert round_ratio(n, d, mode) == reference_round(Fraction(n, d), mode)


def test_round_ratio_matches_decimal_quantize() -> None:
    """Python's decimal: (n / 1000).quantize(1) under each mode, over every n near a tie."""
    for n in range(-3_000, 3_001):
        exact = Decimal(n) / 1000
        for mode, decimal_mode in DECIMAL_MODES.items():
            want = int(exact.quantize(Decimal(1), rounding=decimal_mode))
            assert round_ratio(n, 1_000, mode) == want


def test_round_ratio_refuses_a_non_positive_denominator() -> None:
    with pytest.raises(ValueError, match="denominator must be > 0"):
        round_ratio(1, 0, Rounding.HALF_UP)
    with pytest.raises(ValueError):
        round_ratio(1, -2, Rounding.HALF_UP)


@pytest.mark.parametrize("mode", list(Rounding))
def test_round_ratio_array_matches_round_ratio(mode: Rounding) -> None:
    rng = np.random.default_rng(5)
    size = 5_000
    den = rng.integers(1, 10**9, size=size, dtype=np.int64)
    num = rng.integers(0, 10**18, size=size, dtype=np.int64)
    # ties and whole values: num = q d + d/2 (d even) and num = q d
    even = 2 * rng.integers(1, 10**6, size=size, dtype=np.int64)
    q = rng.integers(0, 10**9, size=size, dtype=np.int64)
    den[:1000] = even[:1000]
    num[:1000] = q[:1000] * even[:1000] + even[:1000] // 2
    num[1000:1500] = q[1000:1500] * den[1000:1500]
    num[1500:1510] = 0
    got = round_ratio_array(num, den, mode)
    assert got.dtype == np.int64
    want = [round_ratio(int(n), int(d), mode) for n, d in zip(num, den, strict=True)]
    assert got.tolist() == want
    # one scalar denominator for every numerator
    scalar = round_ratio_array(num[:500], 200, mode)
    assert scalar.tolist() == [round_ratio(int(n), 200, mode) for n in num[:500]]


def test_rounding_parse_and_error_bound() -> None:
    assert Rounding.parse("half_even") is Rounding.HALF_EVEN
    assert Rounding.parse(" HALF-UP ") is Rounding.HALF_UP
    assert Rounding.parse(Rounding.UP) is Rounding.UP
    assert Rounding.HALF_UP.max_error_cents == Fraction(1, 2)
    assert Rounding.HALF_EVEN.max_error_cents == Fraction(1, 2)
    assert Rounding.UP.max_error_cents == 1
    assert Rounding.DOWN.max_error_cents == 1
    with pytest.raises(
        InvalidTerms, match=r"'rounding' must be one of .*'half-up'.* \(got 'up!'\)"
    ):
        Rounding.parse("up!")


# -- integer cents ---------------------------------------------------------------------------


def test_to_cents_and_from_cents() -> None:
    assert to_cents(Decimal("1580.17")) == 158_017
    assert to_cents(Decimal("250000")) == 25_000_000
    assert to_cents(Decimal("0.1")) == 10
    assert isinstance(to_cents(Decimal("1.00")), int)
    assert from_cents(158_017) == Decimal("1580.17")
    assert str(from_cents(5)) == "0.05"
    assert str(from_cents(100)) == "1.00"
    assert str(from_cents(-5)) == "-0.05"
    assert str(from_cents(np.int64(10**14))) == "1000000000000.00"
    with pytest.raises(InvalidTerms, match=r"amount 0.005 is not a whole number of cents"):
        to_cents(Decimal("0.005"))


def test_cents_round_trip() -> None:
    rng = random.Random(9)
    for _ in range(2_000):
        cents = rng.randint(-(10**14), 10**14)
        amount = from_cents(cents)
        assert amount == Decimal(cents).scaleb(-2)
        assert to_cents(amount) == cents
        assert to_cents(parse_amount(str(abs(amount)), allow_zero=True)) == abs(cents)


@pytest.mark.parametrize("text", ["6,5", "1,23", "12,3456", "1,0000.5", ",5"])
def test_a_decimal_comma_is_refused_not_read_as_thousands(text: str) -> None:
    # "6,5" (a decimal comma, common practice in much of Europe) must not become 65.
    with pytest.raises(InvalidTerms, match="commas may only group thousands"):
        parse_number(text, "rate")


@pytest.mark.parametrize(
    ("text", "value"), [("250,000.00", "250000.00"), ("1,234,567", "1234567"), ("-1,000", "-1000")]
)
def test_thousands_commas_still_read(text: str, value: str) -> None:
    assert parse_number(text, "amount") == Decimal(value)
