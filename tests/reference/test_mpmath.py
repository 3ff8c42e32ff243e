"""The float64 closed forms against mpmath at 50 significant digits.

Source: mpmath (arbitrary-precision floating point), ``mp.dps = 50``. Each
reference is the textbook formula evaluated at 50 digits on the *same* float
inputs the library received, so the difference is the library's own
rounding error, not the problem's sensitivity to its inputs. The bar, from
DESIGN.md: 1e-13 relative error for periodic rates from 0 (and 1e-12) to 1
and terms up to 100,000 periods, both timings, with balloons.

The grid is a cartesian product of hand-picked rates, terms, balloons and
timings plus seeded random loans (a few thousand points in all); the library
is called once, vectorised, per quantity.
"""

from __future__ import annotations

import functools
import itertools
import math

import mpmath as mp
import numpy as np
import numpy_financial as npf
import pytest

from amort import recurrence, solve

DIGITS = 50
BAR = 1e-13
# On x86-64 the exponent n log(1+i) is formed in an 80-bit long double and the
# bar holds everywhere. Where long double is a plain double the last bit of
# log1p(i), times n, costs about n log(1+i) ulps of (1+i)^n: the bar widens to that.
EXTENDED_EPS = float(np.finfo(np.longdouble).eps)

RATES = [
    0.0,
    1e-12,
    1e-9,
    1e-6,
    1e-4,
    1e-3,
    0.05 / 12,
    0.005,
    0.01,
    0.05,
    0.1,
    0.125,
    0.25,
    0.5,
    1.0,
]
TERMS = [1, 2, 3, 12, 60, 360, 1000, 10_000, 100_000]
BALLOONS = [0.0, 0.25, 1.0]  # balloon as a fraction of the principal
RANDOM_LOANS = 600


def bar(exponent: np.ndarray) -> np.ndarray:
    """Return the error bar for a result that carries (1+i)^n, given x = n log(1+i)."""
    return np.maximum(BAR, 4 * EXTENDED_EPS * np.abs(exponent))


@functools.cache
def grid() -> dict[str, np.ndarray]:
    """Return the loans: principal, rate, periods, balloon, advance (flat arrays)."""
    rows = [
        (100_000.0, i, float(n), share * 100_000.0, adv)
        for i, n, share, adv in itertools.product(RATES, TERMS, BALLOONS, (False, True))
    ]
    rng = np.random.default_rng(20240611)
    for _ in range(RANDOM_LOANS):
        b0 = round(float(10 ** rng.uniform(2, 7)), 2)
        i = float(10 ** rng.uniform(-12, 0))
        n = float(np.round(10 ** rng.uniform(0, 5)))
        share = float(rng.choice([0.0, 0.0, rng.uniform(0, 1)]))
        rows.append((b0, i, n, round(share * b0, 2), bool(rng.integers(2))))
    cols = list(zip(*rows, strict=True))
    return {
        "principal": np.array(cols[0]),
        "rate": np.array(cols[1]),
        "periods": np.array(cols[2]),
        "balloon": np.array(cols[3]),
        "advance": np.array(cols[4], dtype=bool),
    }


# -- references at 50 digits ---------------------------------------------------------


def _m(x: float) -> mp.mpf:
    return mp.mpf(float(x))


def ref_annuity(i: mp.mpf, n: mp.mpf) -> mp.mpf:
    """a_n = (1 - v^n) / i; n at i = 0."""
    return n if i == 0 else -mp.expm1(-n * mp.log1p(i)) / i


def ref_accumulation(i: mp.mpf, n: mp.mpf) -> mp.mpf:
    """s_n = ((1 + i)^n - 1) / i; n at i = 0."""
    return n if i == 0 else mp.expm1(n * mp.log1p(i)) / i


def ref_payment(b0: float, i: float, n: float, f: float, adv: bool) -> mp.mpf:
    """P = (B_0 - F v^N) / a_N, divided by 1 + i in advance."""
    with mp.workdps(DIGITS):
        b0, i, n, f = map(_m, (b0, i, n, f))
        level = (b0 - f * (1 + i) ** -n) / ref_annuity(i, n)
        return +(level / (1 + i) if adv else level)


def ref_principal(p: float, i: float, n: float, f: float, adv: bool) -> mp.mpf:
    """B_0 = P a_N (x (1 + i) in advance) + F v^N."""
    with mp.workdps(DIGITS):
        p, i, n, f = map(_m, (p, i, n, f))
        return +(p * (1 + i if adv else 1) * ref_annuity(i, n) + f * (1 + i) ** -n)


def ref_balance(b0: float, i: float, p: float, k: float, adv: bool) -> mp.mpf:
    """B_k = a^k B_0 - P' s_k, P' = P (1 + i) in advance."""
    with mp.workdps(DIGITS):
        b0, i, p, k = map(_m, (b0, i, p, k))
        p_eff = p * (1 + i) if adv else p
        return +((1 + i) ** k * b0 - p_eff * ref_accumulation(i, k))


def ref_periods(b0: float, i: float, p: float, f: float, adv: bool) -> mp.mpf:
    """N = log((P' - i F) / (P' - i B_0)) / log(1 + i); inf when P' <= i B_0."""
    with mp.workdps(DIGITS):
        b0, i, p, f = map(_m, (b0, i, p, f))
        p_eff = p * (1 + i) if adv else p
        if i == 0:
            return (b0 - f) / p_eff
        margin = p_eff - i * b0
        if margin <= 0:
            return mp.inf
        return +(mp.log((p_eff - i * f) / margin) / mp.log1p(i))


def ref_rate(b0: float, p: float, n: float, f: float, adv: bool, start: float) -> mp.mpf:
    """Root of P a_N(i) (x (1 + i)) + F v^N(i) = B_0 by Newton steps at 50 digits.

    Started from ``start``; PV is strictly decreasing, so the root is unique and
    the start only saves steps. Converged when a step is below 1e-30 of the root.
    """
    with mp.workdps(DIGITS):
        b0, p, n, f = map(_m, (b0, p, n, f))
        x = _m(start) if start > 0 else mp.mpf("1e-6")
        for _ in range(200):
            a = 1 + x
            v_n = a**-n
            a_n = -mp.expm1(-n * mp.log1p(x)) / x
            da_n = (n * v_n / a - a_n) / x
            if adv:
                gap = p * a * a_n + f * v_n - b0
                slope = p * a_n + p * a * da_n - f * n * v_n / a
            else:
                gap = p * a_n + f * v_n - b0
                slope = p * da_n - f * n * v_n / a
            step = gap / slope
            x -= step
            if abs(step) <= abs(x) * mp.mpf("1e-30"):
                return x
    raise AssertionError(f"mpmath Newton did not converge for {(b0, p, n, f, adv)}")


def rel_err(got: np.ndarray, refs: list[mp.mpf]) -> np.ndarray:
    """Return |got - ref| / |ref| per element (0 where both are 0), as float64."""
    out = np.empty(len(refs))
    for j, (g, r) in enumerate(zip(got.ravel(), refs, strict=True)):
        with mp.workdps(DIGITS):
            diff = abs(_m(g) - r)
            out[j] = float(diff / abs(r)) if r != 0 else float(diff)
    return out


# -- the factors ----------------------------------------------------------------------


@functools.cache
def factor_points() -> tuple[np.ndarray, np.ndarray]:
    """Rates and terms of the grid, plus pairs whose (1+i)^n spans e^0 .. e^700."""
    pairs = list(itertools.product(RATES, TERMS))
    rng = np.random.default_rng(7)
    for _ in range(400):
        i = float(10 ** rng.uniform(-6, 0))
        x = float(rng.uniform(0, 700))
        n = float(max(1, min(100_000, math.floor(x / math.log1p(i)))))
        pairs.append((i, n))
    i, n = (np.array(c) for c in zip(*pairs, strict=True))
    return i, n


@pytest.mark.parametrize(
    ("name", "func", "ref"),
    [
        ("annuity_factor", recurrence.annuity_factor, ref_annuity),
        ("accumulation_factor", recurrence.accumulation_factor, ref_accumulation),
        ("growth", recurrence.growth, lambda i, n: (1 + i) ** n),
        ("discount", recurrence.discount, lambda i, n: (1 + i) ** -n),
    ],
)
def test_factors_match_mpmath(name, func, ref):
    """mpmath at 50 digits: a_n, s_n, (1+i)^n, v^n to 1e-13 wherever they are finite floats."""
    i, n = factor_points()
    got = np.asarray(func(i, n))
    with mp.workdps(DIGITS):
        refs = [+ref(_m(a), _m(b)) for a, b in zip(i, n, strict=True)]
    representable = np.array([abs(r) < 1e307 and (r == 0 or abs(r) > 1e-307) for r in refs])
    err = rel_err(got[representable], [r for r, k in zip(refs, representable, strict=True) if k])
    x = (n * np.log1p(i))[representable]
    assert np.all(err <= bar(x)), (name, err.max(), i[representable][err.argmax()])
    # The grid really reaches (1+i)^n ~ e^700, where a float64 exponent would not do.
    assert x.max() > 650


# -- payment, principal, balance, periods ---------------------------------------------


def test_payment_matches_mpmath():
    """mpmath at 50 digits: the level payment P to 1e-13, both timings, balloons 0..B_0."""
    g = grid()
    got = recurrence.payment(g["principal"], g["rate"], g["periods"], g["balloon"], g["advance"])
    refs = [
        ref_payment(*row)
        for row in zip(
            g["principal"], g["rate"], g["periods"], g["balloon"], g["advance"], strict=True
        )
    ]
    err = rel_err(got, refs)
    assert err.max() <= BAR, (err.max(), err.argmax())


def test_payment_with_balloon_above_principal_matches_mpmath():
    """mpmath at 50 digits: F = 2 B_0 (negative amortisation): 1e-13 times the sensitivity to F.

    P = (B_0 - F v^N) / a_N loses digits of its own when F v^N is near B_0;
    kappa = F v^N / (B_0 - F v^N) is how much any rounding of F is amplified.
    """
    rows = [
        (100_000.0, i, float(n), 200_000.0, adv)
        for i, n, adv in itertools.product(RATES[1:], TERMS, (False, True))
        if n * math.log1p(i) > math.log(2.2)  # payment clearly positive
    ]
    b0, i, n, f, adv = (np.array(c) for c in zip(*rows, strict=True))
    got = recurrence.payment(b0, i, n, f, adv)
    refs = [ref_payment(*row) for row in rows]
    kappa = f * recurrence.discount(i, n) / (b0 - f * recurrence.discount(i, n))
    err = rel_err(got, refs)
    assert np.all(err <= BAR * np.maximum(1.0, kappa)), err.max()


def test_principal_matches_mpmath():
    """mpmath at 50 digits: B_0 = P a_N + F v^N from the float payment, to 1e-13."""
    g = grid()
    p = recurrence.payment(g["principal"], g["rate"], g["periods"], g["balloon"], g["advance"])
    got = recurrence.principal(p, g["rate"], g["periods"], g["balloon"], g["advance"])
    refs = [
        ref_principal(*row)
        for row in zip(p, g["rate"], g["periods"], g["balloon"], g["advance"], strict=True)
    ]
    err = rel_err(got, refs)
    assert err.max() <= BAR, (err.max(), err.argmax())


def test_balance_matches_mpmath_relative_to_balance_scale():
    """mpmath at 50 digits: B_k to 1e-13 of ``balance_scale`` = a^k B_0 + P' s_k.

    Near the end of a term B_k is a small difference of two large terms, and
    the recurrence itself is that ill-conditioned; the documented bound is
    relative to their size, not to B_k.
    """
    g = grid()
    p = recurrence.payment(g["principal"], g["rate"], g["periods"], g["balloon"], g["advance"])
    rows = []
    for b0, i, n, pay, adv in zip(
        g["principal"], g["rate"], g["periods"], p, g["advance"], strict=True
    ):
        for k in sorted({0.0, 1.0, float(n // 3), n - 1, n}):
            rows.append((b0, i, pay, k, adv))
    b0, i, pay, k, adv = (np.array(c) for c in zip(*rows, strict=True))
    got = recurrence.balance(b0, i, pay, k, adv)
    scale = recurrence.balance_scale(b0, i, pay, k, adv)
    finite = np.isfinite(scale)
    refs = [ref_balance(*row) for row, ok in zip(rows, finite, strict=True) if ok]
    with mp.workdps(DIGITS):
        err = np.array(
            [float(abs(_m(x) - r)) for x, r in zip(got[finite], refs, strict=True)]
        ) / np.where(scale[finite] > 0, scale[finite], 1.0)
    assert np.all(err <= bar(k[finite] * np.log1p(i[finite]))), err.max()
    assert finite.sum() > 5000


def test_periods_match_mpmath():
    """mpmath at 50 digits: the fractional term N for the float payment, to 1e-13.

    For a long term the payment barely exceeds the interest (P - i B_0 ~ P e^{-N i});
    the reference is computed on the float payment, so it is well defined, and a
    margin that rounds to <= 0 must come back as inf, as it does at 50 digits.
    """
    g = grid()
    keep = g["balloon"] < g["principal"]
    b0, i, n, f, adv = (g[c][keep] for c in ("principal", "rate", "periods", "balloon", "advance"))
    p = recurrence.payment(b0, i, n, f, adv)
    got = recurrence.periods(b0, i, p, f, adv)
    refs = [ref_periods(*row) for row in zip(b0, i, p, f, adv, strict=True)]
    endless = np.array([r == mp.inf for r in refs])
    assert np.all(np.isinf(got[endless]))
    err = rel_err(got[~endless], [r for r, e in zip(refs, endless, strict=True) if not e])
    assert err.max() <= BAR, (err.max(), err.argmax())


# -- the rate -------------------------------------------------------------------------


def test_rate_root_matches_mpmath():
    """mpmath at 50 digits: the root of solve.rate to 1e-13, rates 0 .. 1 including 1e-12.

    The reference is the root for the *float* payment. At a true rate of 1 that
    root may lie a hair above 1, outside what amort solves for: then NaN is
    the right answer, or a value within the bar of the root.
    """
    g = grid()
    # In advance with one payment and no balloon PV does not depend on the rate.
    keep = ~(g["advance"] & (g["periods"] == 1) & (g["balloon"] == 0))
    b0, i, n, f, adv = (g[c][keep] for c in ("principal", "rate", "periods", "balloon", "advance"))
    p = recurrence.payment(b0, i, n, f, adv)
    keep = p > 0  # at rate 0 a balloon of the whole principal leaves nothing to pay
    b0, i, n, f, adv, p = (c[keep] for c in (b0, i, n, f, adv, p))
    got = solve.rate(b0, p, n, balloon=f, advance=adv, errors="nan")
    with mp.workdps(DIGITS):
        excess = [_m(a) * _m(c) + _m(d) - _m(b) for a, c, d, b in zip(p, n, f, b0, strict=True)]
    errs = []
    for j in range(b0.size):
        if excess[j] <= 0:  # no positive rate: N P + F <= B_0 exactly
            assert got[j] == 0.0, j
            continue
        root = ref_rate(b0[j], p[j], n[j], f[j], adv[j], start=float(i[j]))
        if root > 1 and np.isnan(got[j]):
            continue
        with mp.workdps(DIGITS):
            errs.append(float(abs(_m(got[j]) - root) / root))
    assert max(errs) <= BAR, max(errs)
    assert len(errs) > 1000


# -- the bar numpy-financial sets -----------------------------------------------------


def test_payment_beats_numpy_financial_on_the_same_grid():
    """mpmath at 50 digits, against numpy-financial's pmt on the same grid.

    numpy-financial forms (1 + rate)**nper - 1 directly, so near rate 0 it
    loses about 1 / (n i) of its digits and the rounding of 1 + rate costs
    eps / i. Measured on this grid (numpy-financial 1.0.0, the 97 loans whose
    2**n overflows inside it left out): worst relative error 9.1e-05, at about
    1e-12 a period (8.3e-08 at 1e-9, 8.4e-11 at 1e-6, 1.5e-13 at 1e-3),
    against amort's worst of 3.8e-16 on the whole grid: that is the bar amort beats.
    """
    g = grid()
    b0, i, n, f, adv = (g[c] for c in ("principal", "rate", "periods", "balloon", "advance"))
    refs = [ref_payment(*row) for row in zip(b0, i, n, f, adv, strict=True)]
    ours = rel_err(recurrence.payment(b0, i, n, f, adv), refs)
    with np.errstate(all="ignore"):  # (1 + 1)**100000 overflows inside numpy-financial
        theirs_raw = -npf.pmt(i, n, b0, -f, when=adv.astype(int))
    finite = np.isfinite(theirs_raw)
    theirs = rel_err(theirs_raw[finite], [r for r, k in zip(refs, finite, strict=True) if k])
    assert ours.max() <= BAR
    assert ours.max() < theirs.max()
    # The two agree where numpy-financial is well conditioned (i n not small).
    good = finite & (n * np.log1p(i) > 1)
    assert np.all(
        rel_err(theirs_raw[good], [r for r, k in zip(refs, good, strict=True) if k]) < 1e-10
    )
