"""Interest rates: compounding conventions, periodic rates and conversions between quotes.

One rate of growth has three common quotes:

- a *nominal* annual rate ``j`` compounded ``m`` times a year, which grows one unit
  to ``(1 + j/m)^m`` in a year;
- the *effective* annual rate ``e``, the nominal rate compounded once a year
  (``m = 1``), so ``1 + e`` is the growth of one year;
- the *continuous* rate ``r`` (the force of interest), the limit ``m -> inf``,
  which grows one unit to ``exp(r)`` in a year.

Every quote carries the same force of interest ``d = m log(1 + j/m) = log(1 + e) = r``,
and every conversion goes through it: ``j_2 = m_2 (exp(d / m_2) - 1)``. Hence
EFFECT and NOMINAL of OASIS OpenDocument Formula: ``e = (1 + j/m)^m - 1`` and
``j = m ((1 + e)^(1/m) - 1)``; and the periodic rate of ``p`` payments a year,
``i = (1 + j/m)^(m/p) - 1`` (``exp(j/p) - 1`` when continuous), the rate of
growth over one payment period (DESIGN.md, "Money and rounding").

Rates are decimal fractions (``0.065`` is 6.5 %) a year, except periodic rates
(a payment period). Three numeric types, each said where it is used:

- ``float64`` arrays (:func:`convert_rate`, :func:`effective_from_nominal`,
  :func:`nominal_from_effective`, :func:`periodic_rate_array`): ``log1p`` and
  ``expm1``, so tiny rates keep their digits; a few ulps, bound in
  ``tests/reference/test_rates_mpmath.py``;
- exact :class:`~fractions.Fraction` wherever the answer is rational
  (:func:`convert_rate_exact`, :func:`periodic_rate`): ``(1 + j/m)^(m/p)`` is
  rational when ``p`` divides ``m`` and, otherwise, exactly when the numerator
  and denominator of ``1 + j/m`` are perfect powers of the root taken (exact
  answers are kept to about 3,900 digits a numerator or denominator, and
  powers and roots to :data:`MAX_EXACT_POWER`; beyond, the nearest double);
- the *nearest double* to an irrational answer (:func:`periodic_rate`,
  :func:`convert`): computed with :mod:`decimal` at 40 or more significant
  digits (its ``ln`` and ``exp`` are correctly rounded) and rounded once to a
  double, so the figure is the same on every machine. (That one rounding of
  a value good to about 38 digits could only miss on a rate within about 1e-38,
  relative, of the midpoint between two doubles.)

Which rates are allowed: any finite rate whose rate per compounding period is
above -100 % (``j/m > -1``; ``e > -1`` for an effective rate; any finite
continuous rate). A rate of -100 % or less a period loses everything and more,
and has no logarithm, so it is refused. Negative rates above that are accepted
here because conversions of negative yields are meaningful; a loan refuses
negative rates where its terms are parsed (:func:`amort.money.parse_rate`).
The exact and nearest-double functions also bound a rate's size:
at most :data:`MAX_RATE` (100,000,000 %) and, unless zero, at least
:data:`MIN_RATE` (1e-330, below every double). A converted rate too large for a
double is refused in every function.
"""

from __future__ import annotations

import decimal
import math
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import numpy.typing as npt

from amort.compounding import (  # the public names are re-exported from here
    _GUARD_DIGITS,
    _MAX_EXACT_BITS,
    MAX_EXACT_POWER,
    MAX_PER_YEAR,
    MAX_RATE,
    MIN_RATE,
    Compounding,
    CompoundingLike,
    RateLike,
    _payments_per_year,
    exact_rate,
)

__all__ = [
    "MAX_EXACT_POWER",
    "MAX_PER_YEAR",
    "MAX_RATE",
    "MIN_RATE",
    "Compounding",
    "CompoundingLike",
    "PeriodicRate",
    "RateLike",
    "as_fraction",
    "convert",
    "convert_rate",
    "convert_rate_exact",
    "effective_annual",
    "effective_from_nominal",
    "exact_rate",
    "nominal_annual",
    "nominal_from_effective",
    "periodic_rate",
    "periodic_rate_array",
]
from amort.conventions import Frequency
from amort.errors import InvalidTerms, describe

FloatArray = npt.NDArray[np.float64]


# -- the domain ---------------------------------------------------------------------------


def _domain_message(field: str, value: object, basis: Compounding) -> str:
    assert basis.per_year is not None
    m = basis.per_year
    return (
        f"{field!r} must be greater than {-m} ({-100 * m:,} %) at {basis} compounding, "
        f"because a rate of -100 % or less a compounding period loses everything "
        f"and has no logarithm (got {describe(value)})"
    )


def _check_exact_domain(rate: Fraction, basis: Compounding, field: str, value: object) -> None:
    if basis.per_year is not None and rate <= -basis.per_year:
        raise InvalidTerms(_domain_message(field, value, basis))
    if abs(rate) > MAX_RATE:
        raise InvalidTerms(
            f"{field!r} must be at most {MAX_RATE:,} ({100 * MAX_RATE:,} %) in size "
            f"(got {describe(value)})"
        )
    if rate and abs(rate) < MIN_RATE:
        raise InvalidTerms(
            f"{field!r} must be 0 or at least 1e-330 in size (got {describe(value)})"
        )


def _check_float_domain(rate: FloatArray, basis: Compounding, field: str) -> None:
    bad = ~np.isfinite(rate)
    if bad.any():
        first = rate[bad].flat[0]
        raise InvalidTerms(f"{field!r} must be a finite number (got {first})")
    if basis.per_year is not None:
        low = rate <= -basis.per_year
        if low.any():
            raise InvalidTerms(_domain_message(field, float(rate[low].flat[0]), basis))


def _too_large(field: str, value: object, source: Compounding, target: Compounding) -> str:
    return (
        f"{field!r} converted from {source} to {target} compounding is too large "
        f"for a double (got {describe(value)})"
    )


# -- exact rational work ------------------------------------------------------------------


def _integer_root(n: int, k: int) -> int | None:
    """Return the integer ``k``-th root of ``n >= 0`` if ``n`` is a perfect power, else None."""
    if n < 2 or k == 1:
        return n
    # Newton's method on integers from above: x_{t+1} = ((k-1) x + n // x^(k-1)) // k
    # decreases to floor(n^(1/k)) and stops there.
    x = 1 << -(-n.bit_length() // k)
    while True:
        y = ((k - 1) * x + n // x ** (k - 1)) // k
        if y >= x:
            break
        x = y
    return x if x**k == n else None


def _rational_power(base: Fraction, exponent: Fraction) -> Fraction | None:
    """Return ``base ** exponent`` (base > 0) when it is rational and small enough, else None.

    ``(a/b)^(r/s)`` in lowest terms is rational exactly when ``a`` and ``b`` are
    perfect ``s``-th powers (compare prime exponents: ``s`` divides ``r v_p(a)``
    and ``gcd(r, s) = 1``).
    """
    r, s = exponent.numerator, exponent.denominator
    if abs(r) > MAX_EXACT_POWER or s > MAX_EXACT_POWER:
        return None
    widest = max(base.numerator.bit_length(), base.denominator.bit_length())
    if widest * abs(r) > _MAX_EXACT_BITS * s:
        return None
    top = _integer_root(base.numerator, s)
    bottom = _integer_root(base.denominator, s)
    if top is None or bottom is None:
        return None
    return Fraction(top, bottom) ** r


def _rational_per_period(
    rate: Fraction, source: Compounding, target: Compounding
) -> Fraction | None:
    """The rate per target period (or the force, target continuous) when rational, else None.

    Finite target ``m_2``: ``(1 + j/m_1)^(m_1/m_2) - 1`` (continuous source:
    ``exp(j/m_2) - 1``). Continuous target: ``m_1 log(1 + j/m_1)``. The
    exponential and the logarithm of a non-zero rational are irrational
    (Lindemann), so continuous either side is rational only at rate 0.
    """
    if rate == 0:
        return Fraction(0)
    m1, m2 = source.per_year, target.per_year
    if m1 == m2:
        return rate if m2 is None else rate / m2
    if m1 is None or m2 is None:
        return None
    power = _rational_power(1 + rate / m1, Fraction(m1, m2))
    return None if power is None else power - 1


# -- decimal work at high precision -------------------------------------------------------


def _digits_below_one(q: Fraction) -> int:
    """An upper bound on the digits lost when a value of size ``|q|`` is found by cancellation."""
    # |q| >= 2^(bits(num) - 1 - bits(den)); bit lengths, as str() of big ints is capped.
    bits = q.denominator.bit_length() - abs(q.numerator).bit_length() + 1
    return max(0, math.ceil(bits * math.log10(2)) + 1)


def _decimal_per_period(
    rate: Fraction, source: Compounding, target: Compounding, *, scale: bool
) -> Decimal:
    """The converted rate at 40+ significant digits (per target period unless ``scale``).

    Force ``d = m_1 ln(1 + j/m_1)`` (or ``j``), then ``exp(d/m_2) - 1`` per
    period, times ``m_2`` when ``scale`` (or ``d`` itself for a continuous
    target). :mod:`decimal` rounds ``ln`` and ``exp`` correctly to the context
    precision; the precision grows with the digits that ``exp(x) - 1`` and
    ``ln(1 + y)`` lose to cancellation when ``x`` and ``y`` are small.
    """
    m1, m2 = source.per_year, target.per_year
    widest = max(m1 or 1, m2 or 1)
    with decimal.localcontext() as ctx:
        ctx.prec = _GUARD_DIGITS + _digits_below_one(rate) + len(str(widest))
        ctx.Emax = decimal.MAX_EMAX
        ctx.Emin = decimal.MIN_EMIN
        ctx.traps[decimal.Overflow] = True
        if m1 is None:
            force = Decimal(rate.numerator) / Decimal(rate.denominator)
        else:
            growth = 1 + rate / m1  # exact, > 0
            force = (Decimal(growth.numerator) / Decimal(growth.denominator)).ln() * m1
        if m2 is None:
            return +force
        per_period = (force / m2).exp() - 1
        return per_period * m2 if scale else +per_period


def _nearest_double(
    rate: Fraction,
    source: Compounding,
    target: Compounding,
    *,
    scale: bool,
    field: str,
    value: object,
) -> tuple[float, Fraction | None]:
    """The converted rate as the nearest double, with its exact value when rational."""
    exact = _rational_per_period(rate, source, target)
    if exact is not None and scale and target.per_year is not None:
        exact *= target.per_year
    try:
        if exact is not None:
            result = float(exact)  # int / int true division: correctly rounded
        else:
            result = float(_decimal_per_period(rate, source, target, scale=scale))
    except (OverflowError, decimal.Overflow):
        raise InvalidTerms(_too_large(field, value, source, target)) from None
    if not math.isfinite(result):
        raise InvalidTerms(_too_large(field, value, source, target))
    return result, exact


# -- periodic rates -----------------------------------------------------------------------


@dataclass(frozen=True)
class PeriodicRate:
    """The rate of one payment period, exact when it is rational.

    ``value`` is a :class:`~fractions.Fraction` (the exact rate) when the rate
    is rational, else a ``float``: the double nearest the irrational rate.
    :attr:`exact` says which; :attr:`fraction` gives an exact rational either
    way (for the float, the double nearest the irrational rate, taken exactly),
    which is what the cent schedule engine computes with.

    >>> periodic_rate("6.5%", 12)
    PeriodicRate(value=Fraction(13, 2400))
    >>> float(periodic_rate("6%", 12, "semiannual"))  # 1.03^(1/6) - 1
    0.004938622031196978
    """

    value: Fraction | float

    def __post_init__(self) -> None:
        if not isinstance(self.value, (Fraction, float)):
            raise TypeError(
                f"PeriodicRate.value must be a Fraction or a float (got {self.value!r})"
            )
        if isinstance(self.value, float):
            if not math.isfinite(self.value):
                raise InvalidTerms(f"'periodic_rate' must be finite (got {self.value})")
            object.__setattr__(self, "value", float(self.value))  # np.float64 -> float

    @property
    def exact(self) -> bool:
        """True when :attr:`value` is the exact (rational) rate."""
        return isinstance(self.value, Fraction)

    @property
    def fraction(self) -> Fraction:
        """The rate as an exact fraction: the rate itself, or the nearest double taken exactly."""
        return as_fraction(self)

    def __float__(self) -> float:
        return float(self.value)


def as_fraction(rate: PeriodicRate | Fraction | Decimal | int | float) -> Fraction:
    """Return the exact rational value of a computed rate.

    For a :class:`PeriodicRate` that is not exact, and for any float, this is
    the binary double *taken exactly* (``Fraction(float)``): the double nearest
    the irrational rate, with a power-of-two denominator. It is meant for rates
    amort computed; a rate a user typed as a float is read through its repr by
    :func:`exact_rate` instead.

    >>> as_fraction(periodic_rate("6%", 12))
    Fraction(1, 200)
    >>> as_fraction(0.5)
    Fraction(1, 2)
    >>> as_fraction(periodic_rate("6%", 12, "semiannual")).denominator == 2**60
    True
    """
    if isinstance(rate, PeriodicRate):
        rate = rate.value
    if isinstance(rate, float) and not math.isfinite(rate):
        raise InvalidTerms(f"'rate' must be finite (got {rate})")
    return Fraction(rate)


def periodic_rate(
    annual_rate: RateLike, per_year: int | Frequency, compounding: CompoundingLike | None = None
) -> PeriodicRate:
    """Return the rate of one payment period from a nominal annual rate (decimal fractions).

    annual_rate: nominal annual rate ``j`` (``0.065``, ``Decimal("0.065")``,
    ``Fraction(13, 200)`` or ``"6.5%"``; floats through their repr).
    per_year: payments a year ``p`` (an int or a
    :class:`~amort.conventions.Frequency`). compounding: ``None`` (interest
    compounds with each payment), or anything :meth:`Compounding.parse` reads.

    - ``None`` or ``m = p``: ``i = j / p``, exact.
    - ``m`` a year: ``i = (1 + j/m)^(m/p) - 1``, exact when rational (always
      when ``p`` divides ``m``, e.g. ``m = 12``, ``p = 4``: ``(1 + j/12)^3 - 1``);
      otherwise the double nearest the irrational rate.
    - continuous: ``i = exp(j/p) - 1``, irrational unless ``j = 0``; the nearest double.

    The rate per compounding period must be above -100 % (``j/m > -1``).

    >>> periodic_rate("6.5%", 12).value
    Fraction(13, 2400)
    >>> periodic_rate("6%", 4, "monthly").value == (1 + Fraction(6, 1200)) ** 3 - 1
    True
    >>> periodic_rate("6%", 12, "continuous").value
    0.005012520859401...
    """
    j = exact_rate(annual_rate, "annual_rate")
    p = _payments_per_year(per_year)
    basis = Compounding(p) if compounding is None else Compounding.parse(compounding)
    _check_exact_domain(j, basis, "annual_rate", annual_rate)
    value, exact = _nearest_double(
        j, basis, Compounding(p), scale=False, field="annual_rate", value=annual_rate
    )
    return PeriodicRate(exact if exact is not None else value)


def periodic_rate_array(
    annual_rate: npt.ArrayLike,
    per_year: int | Frequency,
    compounding: CompoundingLike | None = None,
) -> FloatArray:
    """Vectorised :func:`periodic_rate` in float64: ``i = expm1((m/p) log1p(j/m))``.

    ``j/p`` when ``compounding`` is None; ``expm1(j/p)`` when continuous. A few
    ulps from the exact rate (tests/reference/test_rates_mpmath.py).

    >>> periodic_rate_array([0.06, 0.12], 12, "semiannual").round(12).tolist()
    [0.004938622031, 0.009758794179]
    """
    p = _payments_per_year(per_year)
    j = np.asarray(annual_rate, dtype=np.float64)
    basis = Compounding(p) if compounding is None else Compounding.parse(compounding)
    _check_float_domain(j, basis, "annual_rate")
    if basis.per_year == p:
        return j / p
    return _finite(_float_per_period(j, basis, Compounding(p)), j, basis, Compounding(p))


# -- float64 conversions ------------------------------------------------------------------


def _float_per_period(rate: FloatArray, source: Compounding, target: Compounding) -> FloatArray:
    """Rate per target period (force when the target is continuous), in float64."""
    m1, m2 = source.per_year, target.per_year
    with np.errstate(over="ignore"):  # overflow shows as inf and is refused by _finite
        if m1 is None:
            assert m2 is not None
            return np.expm1(rate / m2)
        force_per = np.log1p(rate / m1)  # force of interest per source period
        if m2 is None:
            return m1 * force_per
        return np.expm1(force_per * (m1 / m2))


def _finite(
    result: FloatArray, rate: FloatArray, source: Compounding, target: Compounding
) -> FloatArray:
    bad = ~np.isfinite(result)
    if bad.any():
        raise InvalidTerms(_too_large("rate", float(rate[bad].flat[0]), source, target))
    return result


def convert_rate(
    rate: npt.ArrayLike, source: CompoundingLike, target: CompoundingLike
) -> FloatArray:
    """Return ``rate`` quoted at ``source`` compounding as the equivalent rate at ``target``.

    Vectorised float64. ``source`` and ``target`` are anything
    :meth:`Compounding.parse` reads; an effective annual rate is a rate at
    ``1`` (annual) compounding, a continuous rate one at ``"continuous"``. With
    force ``d = m_1 log1p(j/m_1)`` (``d = r`` from continuous):
    target ``m_2``: ``m_2 expm1(d / m_2)``; target continuous: ``d``.

    >>> round(float(convert_rate(0.06, "semiannual", "annual")), 15)  # 1.03^2 - 1
    0.0609
    >>> round(float(convert_rate(0.06, "monthly", "continuous")), 12)  # 12 log(1.005)
    0.059850498132
    >>> convert_rate([0.05, 0.10], "continuous", 1).round(10).tolist()  # exp(r) - 1
    [0.0512710964, 0.1051709181]
    """
    src = Compounding.parse(source, "source")
    tgt = Compounding.parse(target, "target")
    q = np.asarray(rate, dtype=np.float64)
    _check_float_domain(q, src, "rate")
    if src == tgt:
        return q.copy()
    y = _float_per_period(q, src, tgt)
    result = y if tgt.per_year is None else tgt.per_year * y
    return _finite(result, q, src, tgt)


def effective_from_nominal(nominal: npt.ArrayLike, compounding: CompoundingLike) -> FloatArray:
    """Return the effective annual rate ``(1 + j/m)^m - 1`` of a nominal rate (EFFECT).

    OASIS OpenDocument Formula EFFECT(nominal; m); computed as
    ``expm1(m log1p(j/m))``, vectorised float64. ``compounding`` may be continuous
    (``expm1(r)``).

    >>> round(float(effective_from_nominal(0.06, 12)), 11)
    0.06167781186
    """
    return convert_rate(nominal, compounding, Compounding.ANNUAL)


def nominal_from_effective(effective: npt.ArrayLike, compounding: CompoundingLike) -> FloatArray:
    """Return the nominal rate ``m ((1 + e)^(1/m) - 1)`` of an effective annual rate (NOMINAL).

    OASIS OpenDocument Formula NOMINAL(effective; m), the inverse of EFFECT;
    computed as ``m expm1(log1p(e)/m)``, vectorised float64. ``compounding``
    may be continuous (``log1p(e)``).

    >>> round(float(nominal_from_effective(0.06167781186, 12)), 10)
    0.06
    """
    return convert_rate(effective, Compounding.ANNUAL, compounding)


def convert_rate_exact(
    rate: RateLike, source: CompoundingLike, target: CompoundingLike
) -> Fraction:
    """Return the exact converted rate when it is rational; :class:`InvalidTerms` otherwise.

    Rational when the rate is 0 or the compoundings are equal, and when
    ``(1 + j/m_1)^(m_1/m_2)`` is: always when ``m_2`` divides ``m_1`` (nominal
    monthly to effective: ``(1 + j/12)^12 - 1``), and for ``m_1/m_2 = r/s`` when
    the numerator and denominator of ``1 + j/m_1`` are perfect ``s``-th powers
    (effective 21 % is nominal 20 % semiannual: ``2 (1.21^(1/2) - 1)``).
    Continuous either side is irrational for a non-zero rate. Powers or roots
    above :data:`MAX_EXACT_POWER`, and answers of more than about 3,900 digits a
    numerator or denominator, are not attempted.

    >>> convert_rate_exact("6%", "semiannual", "annual")
    Fraction(609, 10000)
    >>> convert_rate_exact("21%", 1, 2)
    Fraction(1, 5)
    """
    q = exact_rate(rate)
    src = Compounding.parse(source, "source")
    tgt = Compounding.parse(target, "target")
    _check_exact_domain(q, src, "rate", rate)
    per_period = _rational_per_period(q, src, tgt)
    if per_period is None:
        raise InvalidTerms(
            f"'rate' {describe(rate)} at {src} compounding has no exact equivalent at "
            f"{tgt} compounding within reach (it is irrational, or its fraction passes "
            f"3,900 digits or a power of {MAX_EXACT_POWER}); use convert_rate for the "
            f"nearest double"
        )
    return per_period if tgt.per_year is None else per_period * tgt.per_year


# -- the analyst's view: one rate, all its quotes -----------------------------------------

_KINDS = ("nominal", "effective", "continuous")


def _basis(kind: object, compounding: object, side: str) -> tuple[str, Compounding]:
    """Return (kind, compounding) for one side of :func:`convert`."""
    text = str(kind).strip().lower() if isinstance(kind, str) else kind
    if text not in _KINDS:
        valid = ", ".join(repr(k) for k in _KINDS)
        raise InvalidTerms(f"{side!r} must be one of {valid} (got {describe(kind)})")
    field = f"{side}_compounding"
    if text == "nominal":
        basis = (
            Compounding.MONTHLY if compounding is None else Compounding.parse(compounding, field)
        )
        return "nominal", basis
    implied = Compounding.ANNUAL if text == "effective" else Compounding.CONTINUOUS
    if compounding is not None and Compounding.parse(compounding, field) != implied:
        raise InvalidTerms(
            f"{field!r} applies to a nominal rate; an {text} rate is at {implied} "
            f"compounding (got {describe(compounding)})"
        )
    return str(text), implied


def convert(
    rate: RateLike,
    *,
    source: str = "nominal",
    source_compounding: CompoundingLike | None = None,
    target: str = "effective",
    target_compounding: CompoundingLike | None = None,
    percent: bool = False,
) -> dict[str, Any]:
    """Convert one annual rate between quotes and return it with all its equivalents.

    rate: a decimal fraction (``0.06``; ``"6%"``; bare numbers are percent when
    ``percent``). source, target: ``"nominal"``, ``"effective"`` (annual) or
    ``"continuous"``; a nominal rate's compounding is ``*_compounding``
    (monthly when not given; anything :meth:`Compounding.parse` reads).

    Returns a dict of rates as decimal fractions a year, each the double nearest
    the exact figure: ``rate`` (the converted rate), ``exact`` (whether it is
    rational; :func:`convert_rate_exact` gives it), ``source_rate``, ``source``,
    ``source_compounding``, ``target``, ``target_compounding`` (compounding
    names), and the three equivalents ``nominal`` (at ``nominal_compounding``:
    the target's when the target is nominal, else the source's when it is
    nominal, else monthly), ``effective_annual`` and ``continuous``.

    >>> out = convert("6%", source_compounding="semiannual")
    >>> out["rate"], out["exact"]
    (0.0609, True)
    >>> out["nominal"], out["nominal_compounding"], out["continuous"]
    (0.06, 'semiannual', 0.0591176044830888)
    >>> convert(6.5, percent=True, target="nominal", target_compounding="quarterly")["rate"]
    0.06535271903935186
    """
    q = exact_rate(rate, "rate", percent=percent)
    source_kind, src = _basis(source, source_compounding, "source")
    target_kind, tgt = _basis(target, target_compounding, "target")
    _check_exact_domain(q, src, "rate", rate)

    def to(basis: Compounding) -> tuple[float, Fraction | None]:
        return _nearest_double(q, src, basis, scale=True, field="rate", value=rate)

    if target_kind == "nominal":
        shown = tgt
    elif source_kind == "nominal":
        shown = src
    else:
        shown = Compounding.MONTHLY
    converted, exact = to(tgt)
    return {
        "rate": converted,
        "exact": exact is not None,
        "source_rate": float(q),
        "source": source_kind,
        "source_compounding": src.name,
        "target": target_kind,
        "target_compounding": tgt.name,
        "nominal": to(shown)[0],
        "nominal_compounding": shown.name,
        "effective_annual": to(Compounding.ANNUAL)[0],
        "continuous": to(Compounding.CONTINUOUS)[0],
    }


# -- periodic <-> annual, the undated convention (kept for amort.quote) --------------------


def nominal_annual(periodic: npt.ArrayLike, per_year: int) -> FloatArray:
    """Return the nominal annual rate ``j = i p`` of a periodic rate (decimal fractions).

    >>> round(float(nominal_annual(0.005, 12)), 12)
    0.06
    """
    return np.asarray(periodic, dtype=np.float64) * per_year


def effective_annual(periodic: npt.ArrayLike, per_year: int) -> FloatArray:
    """Return the effective annual rate ``(1 + i)^p - 1`` of a periodic rate.

    >>> round(float(effective_annual(0.06 / 12, 12)), 11)
    0.06167781186
    """
    i = np.asarray(periodic, dtype=np.float64)
    return np.expm1(per_year * np.log1p(i))
