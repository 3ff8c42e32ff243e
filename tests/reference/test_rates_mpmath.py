"""Rate conversions against mpmath at 50 digits, OASIS OpenDocument EFFECT, and exact fractions.

Sources named beside each check:

- mpmath (arbitrary-precision floating point), ``mp.dps = 50``: the reference
  for every irrational figure. As in tests/reference/test_mpmath.py each
  reference is evaluated on the *same* double inputs the library received,
  so a difference is the library's own rounding error.
- OASIS OpenDocument Formula (ODF 1.2 part 2) EFFECT and NOMINAL [text]: the
  equation ``EFFECT(r; m) = (1 + r/m)^m - 1``, NOMINAL its inverse; the value
  EFFECT(0.06; 12) = 0.06167781186 was computed from that equation
  (REFERENCES.md: the standard itself gives no values).
- Python's fractions: the exact rational reference where the answer is rational.

The float64 bound, derived: a float64 conversion performs at most six
rounded operations (``z = j/m_1``, ``log1p(z)``, the ratio ``m_1/m_2``, the
product ``x``, ``expm1(x)``, the final ``m_2 *``), each within one ulp, at
most ``eps`` relative (numpy's log1p and expm1 measure under 0.6 ulp). The
error in ``x`` is magnified by ``lambda = x e^x / expm1(x)`` (the condition of
``expm1``, 1 near 0) and the rounding of ``z`` by ``kappa = z / ((1+z)
log1p(z))`` (the condition of ``log1p``, at most 1 for ``z >= 0``, large
only as ``z -> -1``). To first order the relative error is at most
``eps (lambda (kappa + 3) + 2)``; the test allows ``eps (lambda (kappa + 3) + 3)``.
For positive rates up to 100 % a year that is at most 2.1e-15; at 1,000 % a
year, continuous to effective, it reaches 9.6e-15.

The scalar functions (periodic_rate, convert) claim more: the double nearest
the exact figure, which the tests check as equality with mpmath's value
rounded to a double.
"""

from __future__ import annotations

import itertools
from decimal import Decimal
from fractions import Fraction

import mpmath as mp
import numpy as np
import pytest

from amort import rates
from amort.rates import Compounding

mp.mp.dps = 50
EPS = float(np.finfo(np.float64).eps)

# Annual rates as decimal fractions: 1e-12 to 10 (1,000 %), with negative rates.
POSITIVE = [1e-12, 1e-9, 1e-6, 1e-4, 0.01, 0.03, 0.05, 0.06, 0.065, 0.1, 0.25, 0.5, 1.0, 2.0, 10.0]
NEGATIVE = [-1e-9, -0.05, -0.5, -0.9, -0.99]
COMPOUNDINGS = [1, 2, 4, 12, 26, 52, 365, None]  # None: continuous


def _force(rate: float, m: int | None) -> mp.mpf:
    """The force of interest of ``rate`` at ``m`` compoundings a year (mpmath)."""
    q = mp.mpf(rate)
    return q if m is None else m * mp.log1p(q / m)


def _convert(rate: float, m1: int | None, m2: int | None) -> mp.mpf:
    """``rate`` at ``m1`` compoundings as the equivalent rate at ``m2`` (mpmath, 50 digits)."""
    force = _force(rate, m1)
    return force if m2 is None else m2 * mp.expm1(force / m2)


def _bar(rate: float, m1: int | None, m2: int | None) -> float:
    """The derived relative error bound for a float64 conversion (module docstring)."""
    if m2 is None:
        lam = mp.mpf(1)
    else:
        x = _force(rate, m1) / m2
        lam = abs(x * mp.exp(x) / mp.expm1(x))
    if m1 is None:
        kappa = mp.mpf(1)
    else:
        z = mp.mpf(rate) / m1
        kappa = abs(z / ((1 + z) * mp.log1p(z)))
    return EPS * float(lam * (kappa + 3) + 3)


def _rel(got: float, want: mp.mpf) -> float:
    return float(abs((mp.mpf(got) - want) / want))


def _pairs() -> list[tuple[int | None, int | None]]:
    return [(a, b) for a, b in itertools.product(COMPOUNDINGS, COMPOUNDINGS) if a != b]


def _rates_for(m: int | None) -> list[float]:
    return [q for q in POSITIVE + NEGATIVE if m is None or q / m > -1]


@pytest.mark.parametrize(("m1", "m2"), _pairs())
def test_float64_conversions_within_the_derived_bound_of_mpmath(
    m1: int | None, m2: int | None
) -> None:
    # Source: mpmath at 50 digits on the same double inputs.
    qs = _rates_for(m1)
    got = rates.convert_rate(qs, Compounding(m1), Compounding(m2))
    for q, g in zip(qs, got, strict=True):
        want = _convert(q, m1, m2)
        assert _rel(float(g), want) <= _bar(q, m1, m2), (q, m1, m2, float(g), want)


def test_the_derived_bound_is_near_1e_15_for_ordinary_rates() -> None:
    # The bar the previous test allows, stated as figures: positive rates up to 100 %.
    ordinary = [q for q in POSITIVE if q <= 1]
    worst = max(_bar(q, a, b) for q in ordinary for a, b in _pairs())
    assert worst <= 2.1e-15
    everything = max(_bar(q, a, b) for q in POSITIVE for a, b in _pairs())
    assert everything <= 9.6e-15


@pytest.mark.parametrize(("m1", "m2"), _pairs())
def test_scalar_convert_gives_the_nearest_double(m1: int | None, m2: int | None) -> None:
    # Source: mpmath at 50 digits, rounded once to a double; Fraction(q) is the double q exactly.
    for q in _rates_for(m1):
        out = rates.convert(
            Fraction(q),
            source="continuous" if m1 is None else "nominal",
            source_compounding=m1,
            target="continuous" if m2 is None else "nominal",
            target_compounding=m2,
        )
        assert out["rate"] == float(_convert(q, m1, m2)), (q, m1, m2)
        assert out["effective_annual"] == float(_convert(q, m1, 1))
        assert out["continuous"] == float(_convert(q, m1, None))


@pytest.mark.parametrize("per_year", [1, 2, 4, 12, 26, 52, 365])
@pytest.mark.parametrize("m", [1, 2, 4, 12, 52, 365, None])
def test_periodic_rate_against_mpmath(per_year: int, m: int | None) -> None:
    # Source: mpmath at 50 digits: i = (1 + j/m)^(m/p) - 1, or exp(j/p) - 1 when continuous.
    qs = _rates_for(m)
    array = rates.periodic_rate_array(qs, per_year, Compounding(m))
    for q, got in zip(qs, array, strict=True):
        if m is None:
            want = mp.expm1(mp.mpf(q) / per_year)
        else:
            want = mp.expm1(mp.mpf(m) / per_year * mp.log1p(mp.mpf(q) / m))
        assert _rel(float(got), want) <= _bar(q, m, per_year)
        scalar = rates.periodic_rate(Fraction(q), per_year, Compounding(m))
        assert float(scalar) == float(want)  # the nearest double, exact or not
        if scalar.exact:
            exact = mp.mpf(scalar.value.numerator) / scalar.value.denominator
            assert abs(exact - want) <= abs(want) * mp.mpf(10) ** -45


# -- the brief's named cases ----------------------------------------------------------------


def test_six_percent_semiannual_as_a_monthly_periodic_rate() -> None:
    # Source: mpmath at 50 digits: (1 + 0.06/2)^(2/12) - 1 = 1.03^(1/6) - 1. The same
    # equation is in DESIGN.md ("Money and rounding"); the quote is common practice.
    want = mp.power(mp.mpf("1.03"), mp.mpf(1) / 6) - 1
    got = rates.periodic_rate(Decimal("0.06"), 12, "semiannual")
    assert not got.exact and isinstance(got.value, float)
    assert got.value == float(want)
    assert float(want) == pytest.approx(0.004938622031196978, rel=1e-16)
    assert got.fraction == Fraction(got.value)  # the nearest double, taken exactly
    array = rates.periodic_rate_array([0.06], 12, "semiannual")
    assert _rel(float(array[0]), want) <= _bar(0.06, 2, 12)


def test_six_percent_semiannual_is_0609_effective_exactly() -> None:
    # Source: Python fractions, (1 + 3/100)^2 - 1 = 609/10000; mpmath agrees at 50 digits.
    exact = rates.convert_rate_exact(Decimal("0.06"), "semiannual", "annual")
    assert exact == Fraction(609, 10_000) and type(exact) is Fraction
    assert abs((mp.mpf(103) / 100) ** 2 - 1 - mp.mpf(609) / 10_000) < mp.mpf(10) ** -48
    out = rates.convert("6%", source_compounding="semiannual")
    assert out["rate"] == 0.0609 and out["exact"]
    float_path = float(rates.effective_from_nominal(0.06, "semiannual"))
    assert _rel(float_path, mp.mpf("0.0609")) <= _bar(0.06, 2, 1)


@pytest.mark.parametrize("rate", POSITIVE + NEGATIVE)
def test_continuous_compounding_against_exp(rate: float) -> None:
    # Source: mpmath at 50 digits: e = exp(r) - 1, r = log(1 + e).
    want = mp.expm1(mp.mpf(rate))
    got = float(rates.convert_rate(rate, "continuous", "annual"))
    assert _rel(got, want) <= _bar(rate, None, 1)
    assert rates.convert(Fraction(rate), source="continuous")["rate"] == float(want)
    back = float(rates.convert_rate(float(want), "annual", "continuous"))
    # float(want) rounds the reference once more; log1p's condition carries it.
    assert back == pytest.approx(rate, rel=_bar(float(want), 1, None) * 2)


# -- OASIS OpenDocument Formula EFFECT and NOMINAL ------------------------------------------


def test_oasis_effect_six_percent_monthly() -> None:
    # Source: OASIS OpenDocument Formula EFFECT(r; m) = (1 + r/m)^m - 1 [text];
    # EFFECT(0.06; 12) = 0.06167781186 computed from that equation (REFERENCES.md).
    assert round(float(rates.effective_from_nominal(0.06, 12)), 11) == 0.06167781186
    exact = rates.convert_rate_exact("0.06", 12, 1)
    assert exact == (1 + Fraction(6, 1200)) ** 12 - 1
    assert round(float(exact), 11) == 0.06167781186
    # mpmath at 50 digits agrees with the double path.
    want = mp.power(1 + mp.mpf(0.06) / 12, 12) - 1
    assert _rel(float(rates.effective_from_nominal(0.06, 12)), want) <= _bar(0.06, 12, 1)


def test_oasis_nominal_is_the_inverse_of_effect() -> None:
    # Source: OASIS OpenDocument Formula NOMINAL, the inverse of EFFECT [text].
    effective = float(rates.convert_rate_exact("0.06", 12, 1))
    assert float(rates.nominal_from_effective(effective, 12)) == pytest.approx(0.06, rel=4 * EPS)
    want = 12 * mp.expm1(mp.log1p(mp.mpf(effective)) / 12)
    assert _rel(float(rates.nominal_from_effective(effective, 12)), want) <= _bar(effective, 1, 12)


# -- exactness: Fractions wherever the rate is rational (Python fractions) ------------------


def test_periodic_rate_is_exact_for_payment_compounding() -> None:
    # Source: Python fractions: 6.5 % / 12 = 13/2400.
    got = rates.periodic_rate(Decimal("0.065"), 12)
    assert got.exact and type(got.value) is Fraction and got.value == Fraction(13, 2400)
    assert rates.periodic_rate(Decimal("0.065"), 12, "monthly") == got


def test_periodic_rate_is_exact_when_payments_divide_compoundings() -> None:
    # Source: Python fractions: m = 12, p = 4: (1 + j/12)^3 - 1.
    j = Fraction(13, 200)
    got = rates.periodic_rate(Decimal("0.065"), 4, 12)
    assert type(got.value) is Fraction
    assert got.value == (1 + j / 12) ** 3 - 1 == Fraction(225_858_997, 13_824_000_000)
    # Daily compounding, annual payments: (1 + j/365)^365 - 1, still exact.
    daily = rates.periodic_rate(Decimal("0.065"), 1, "daily")
    assert daily.exact and daily.value == (1 + j / 365) ** 365 - 1
    assert float(daily) == float(mp.power(1 + mp.mpf(j.numerator) / j.denominator / 365, 365) - 1)


def test_periodic_rate_is_exact_when_the_root_is_rational() -> None:
    # Source: Python fractions: 1 + j/2 = (101/100)^6 makes (1 + j/2)^(1/6) - 1 = 1/100.
    j = 2 * (Fraction(101, 100) ** 6 - 1)
    got = rates.periodic_rate(j, 12, "semiannual")
    assert got.exact and got.value == Fraction(1, 100)
    # Effective 21 % is nominal 20 % semiannual: 2 (1.21^(1/2) - 1).
    assert rates.convert_rate_exact("21%", "annual", "semiannual") == Fraction(1, 5)


def test_irrational_rates_are_not_claimed_exact() -> None:
    # 1.03^(1/6) is irrational (103 is no sixth power); exp and log of non-zero rationals are
    # irrational (Lindemann), so continuous compounding is exact only at rate 0.
    assert not rates.periodic_rate("6%", 12, "semiannual").exact
    assert not rates.periodic_rate("6%", 12, "continuous").exact
    assert rates.periodic_rate(0, 12, "continuous").value == Fraction(0)
    assert rates.convert("6%")["exact"] is True  # nominal monthly to effective: rational
    assert rates.convert("6%", source="effective", target="continuous")["exact"] is False
