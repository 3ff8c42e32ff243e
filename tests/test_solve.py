"""amort.solve: validation of every input, error classes and messages, shapes and limits."""

from __future__ import annotations

import math
import re
from fractions import Fraction

import numpy as np
import pytest

from amort import solve
from amort.errors import AmortError, InvalidTerms, NoSolution

NAN = float("nan")
INF = float("inf")


def raises(error: type[Exception], *fragments: str):
    """pytest.raises for ``error`` whose message contains every fragment, in order."""
    return pytest.raises(error, match=".*".join(re.escape(f) for f in fragments))


def test_error_classes_refine_the_builtins():
    assert issubclass(InvalidTerms, ValueError) and issubclass(InvalidTerms, AmortError)
    assert issubclass(NoSolution, ArithmeticError) and issubclass(NoSolution, AmortError)


# -- one bad field at a time ------------------------------------------------------------

# (function, keyword arguments that are good, field to spoil)
GOOD = {
    "payment": dict(principal=100_000, rate=0.005, periods=360),
    "principal": dict(payment=600, rate=0.005, periods=360),
    "periods": dict(principal=100_000, rate=0.005, payment=600),
    "whole_periods": dict(principal=100_000, rate=0.005, payment=600),
    "rate": dict(principal=100_000, payment=600, periods=360),
    "balance": dict(principal=100_000, rate=0.005, payment=600, k=12),
    "total_paid": dict(principal=100_000, rate=0.005, periods=360),
    "total_interest": dict(principal=100_000, rate=0.005, periods=360),
}


def call(name: str, **changes: object) -> object:
    kwargs = {**GOOD[name], **changes}
    func = getattr(solve, name)
    positional = [kwargs.pop(k) for k in list(GOOD[name])]
    return func(*positional, **kwargs)


@pytest.mark.parametrize("name", sorted(GOOD))
def test_good_inputs_pass(name):
    result = call(name)
    values = result.periods if isinstance(result, solve.WholeTerm) else result
    assert np.all(np.isfinite(values))


MONEY_FIELDS = [
    (name, field)
    for name, good in GOOD.items()
    for field in good
    if field in ("principal", "payment") and (name, field) != ("balance", "payment")
]


@pytest.mark.parametrize(("name", "field"), MONEY_FIELDS)
@pytest.mark.parametrize("value", [-1000.0, 0.0])
def test_money_must_be_positive(name, field, value):
    with raises(InvalidTerms, f"'{field}'", "> 0", f"got {float(value)!r}"):
        call(name, **{field: value})


def test_balance_accepts_zero_payment_and_refuses_a_negative_one():
    assert float(solve.balance(1000, 0.01, 0, 2)) == pytest.approx(1020.1, rel=1e-15)
    with raises(InvalidTerms, "'payment'", ">= 0", "got -10"):
        solve.balance(1000, 0.01, -10, 2)


RATE_FUNCS = [name for name, good in GOOD.items() if "rate" in good]


@pytest.mark.parametrize("name", RATE_FUNCS)
@pytest.mark.parametrize("value", [-0.01, -1e-12, 1.01, 1.5, 12.0])
def test_rate_must_be_a_periodic_rate_from_0_to_1(name, value):
    with raises(InvalidTerms, "'rate'", "between 0 and 1", f"got {float(value)!r}"):
        call(name, rate=value)


@pytest.mark.parametrize("name", sorted(GOOD))
@pytest.mark.parametrize("value", [NAN, INF, -INF])
def test_nan_and_inf_are_refused_in_every_field(name, value):
    for field in GOOD[name]:
        with raises(InvalidTerms, f"'{field}'", "finite", f"got {value}"):
            call(name, **{field: value})


@pytest.mark.parametrize("name", sorted(GOOD))
@pytest.mark.parametrize("text", ["abc", "6.5%", "1,000"])
def test_non_numeric_strings_are_refused_in_every_field(name, text):
    for field in GOOD[name]:
        with raises(InvalidTerms, f"'{field}'", "numeric", repr(text)):
            call(name, **{field: text})


COUNT_FUNCS = [name for name, good in GOOD.items() if "periods" in good]


@pytest.mark.parametrize("name", COUNT_FUNCS)
@pytest.mark.parametrize("value", [0, -3, 12.5, 0.999, 100_001, 1e9])
def test_periods_must_be_whole_from_1_to_100000(name, value):
    with raises(
        InvalidTerms, "'periods'", "whole number from 1 to 100,000", f"got {float(value)!r}"
    ):
        call(name, periods=value)


def test_periods_at_the_limits_are_accepted():
    assert np.isfinite(solve.payment(100_000, 0.005, 1))
    assert np.isfinite(solve.payment(100_000, 0.005, solve.MAX_PERIODS))
    assert solve.MAX_PERIODS == 100_000


@pytest.mark.parametrize("value", [-1, 1.5, 100_001])
def test_balance_k_must_be_whole_from_0(value):
    with raises(InvalidTerms, "'k'", "whole number from 0 to 100,000", f"got {float(value)!r}"):
        solve.balance(1000, 0.005, 10, value)
    assert float(solve.balance(1000, 0.005, 10, 0)) == 1000.0


@pytest.mark.parametrize("name", [n for n, g in GOOD.items() if n != "balance"])
def test_negative_balloon_is_refused(name):
    with raises(InvalidTerms, "'balloon'", ">= 0", "got -5"):
        call(name, balloon=-5)


# -- questions without an answer --------------------------------------------------------


@pytest.mark.parametrize("name", ["periods", "whole_periods"])
@pytest.mark.parametrize("pay", [400.0, 500.0])
def test_payment_not_covering_interest_names_the_interest(name, pay):
    """Interest on 100,000 at 0.5 % is 500.00: a payment of 500 or less never repays it."""
    with raises(NoSolution, "'payment'", f"{pay:,.2f}", "interest of 500.00"):
        call(name, payment=pay)


def test_payment_in_advance_is_checked_against_interest_after_it():
    """In advance the first period earns interest on B_0 - P only: 99,503 x 0.5 % = 497.515."""
    with raises(NoSolution, "'payment' 497.00", "interest of 497.51"):
        solve.periods(100_000, 0.005, 497, advance=True)
    assert solve.periods(100_000, 0.005, 498, advance=True) > 0


def test_balloon_that_needs_a_negative_payment():
    """A balloon above what the principal grows to, 1,000 x 1.005^12 = 1,061.68, is refused."""
    with raises(InvalidTerms, "'balloon' 2,000.00", "1,061.68"):
        solve.payment(1000, 0.005, 12, balloon=2000)
    with raises(InvalidTerms, "'balloon'"):
        solve.total_paid(1000, 0.005, 12, balloon=2000)
    # just below the limit a (tiny) payment exists
    assert 0 < float(solve.payment(1000, 0.005, 12, balloon=1061.67)) < 0.001


def test_balloon_must_be_below_principal_when_solving_for_the_term():
    with raises(InvalidTerms, "'balloon'", "below the principal"):
        solve.periods(100_000, 0.005, 1000, balloon=100_000)


def test_rate_with_payments_totalling_less_than_principal():
    with raises(NoSolution, "payments total 36,000.00", "principal 100,000.00", "no rate >= 0"):
        solve.rate(100_000, 100, 360)
    with raises(NoSolution, "payments total 99,999.00"):
        solve.rate(100_000, 1000, 99, balloon=999)


def test_rate_with_advance_payment_at_least_the_principal():
    for pay in (100_000, 150_000):
        with raises(NoSolution, f"'payment' {pay:,.2f} in advance", "principal 100,000.00"):
            solve.rate(100_000, pay, 12, advance=True)


def test_rate_above_100_percent_a_period():
    with raises(NoSolution, "above 100 % a period"):
        solve.rate(100_000, 150_000, 12)


def test_term_longer_than_max_periods():
    with raises(NoSolution, "200,021 periods", "100,000"):
        solve.whole_periods(100_000, 1e-9, 0.5)


def test_array_errors_name_the_element():
    with raises(InvalidTerms, "'principal'", "got -5", "(element 2)"):
        solve.payment([1000, 2000, -5, -7], 0.005, 12)
    with raises(NoSolution, "interest of 10.00", "(element 1)"):
        solve.periods(1000, [0.005, 0.01], [6, 6])


# -- errors="nan" -----------------------------------------------------------------------


def test_errors_nan_payment_marks_only_the_bad_balloons():
    out = solve.payment(1000, 0.005, 12, balloon=[0, 2000, 500, 5000], errors="nan")
    assert np.isnan(out[[1, 3]]).all()
    assert np.allclose(out[[0, 2]], solve.payment(1000, 0.005, 12, balloon=[0, 500]), rtol=0)


def test_errors_nan_periods_marks_only_the_endless_loans():
    pay = np.array([600.0, 400.0, 700.0, 500.0])
    out = solve.periods(100_000, 0.005, pay, errors="nan")
    assert np.isnan(out[[1, 3]]).all()
    good = solve.periods(100_000, 0.005, pay[[0, 2]])
    assert np.array_equal(out[[0, 2]], good)


def test_errors_nan_rate_marks_only_the_unsolvable_loans():
    pay = np.array([600.0, 100.0, 700.0, 150_000.0])
    adv = np.array([False, False, True, True])
    out = solve.rate(100_000, pay, 360, advance=adv, errors="nan")
    assert np.isnan(out[[1, 3]]).all()
    good = solve.rate(100_000, pay[[0, 2]], 360, advance=adv[[0, 2]])
    assert np.array_equal(out[[0, 2]], good)


def test_errors_nan_does_not_hide_invalid_terms():
    """errors="nan" is for questions without an answer; a wrong input still raises."""
    with raises(InvalidTerms, "'rate'"):
        solve.payment(1000, [0.005, -1], 12, errors="nan")
    with raises(InvalidTerms, "'periods'"):
        solve.rate(1000, 100, 12.5, errors="nan")


# -- vectorised calls -------------------------------------------------------------------


def test_vectorised_calls_return_the_broadcast_shape():
    b0 = np.array([[100_000.0], [250_000.0]])  # (2, 1)
    i = np.array([0.0, 0.004, 0.005])  # (3,)
    n = 360
    pay = solve.payment(b0, i, n)
    assert pay.shape == (2, 3)
    assert solve.principal(pay, i, n).shape == (2, 3)
    assert np.allclose(solve.principal(pay, i, n), np.broadcast_to(b0, (2, 3)), rtol=1e-13)
    assert solve.periods(b0, i, pay).shape == (2, 3)
    assert solve.rate(b0, pay, n).shape == (2, 3)
    assert solve.balance(b0, i, pay, np.arange(4).reshape(4, 1, 1)).shape == (4, 2, 3)
    term = solve.whole_periods(b0, i, pay * 1.5)
    assert term.periods.shape == term.final_payment.shape == (2, 3)
    assert term.periods.dtype == np.int64
    assert solve.total_paid(b0, i, n).shape == (2, 3)
    # each element equals the scalar call
    for r, c in np.ndindex(2, 3):
        assert pay[r, c] == float(solve.payment(float(b0[r, 0]), float(i[c]), n))


def test_scalar_calls_return_zero_dimensional_arrays():
    out = solve.payment(100_000, 0.005, 360)
    assert np.ndim(out) == 0 and out.dtype == np.float64


def test_mismatched_shapes_are_refused():
    with pytest.raises(ValueError, match="broadcast"):
        solve.payment([1000.0, 2000.0], [0.01, 0.02, 0.03], 12)


# -- whole periods: the final payment is where the balance path ends -------------------


def exact_path_final(b0: float, i: float, p: float, count: int, f: float, adv: bool) -> Fraction:
    """Walk the recurrence in exact rationals; return the final payment that lands on F."""
    a = 1 + Fraction(i)
    balance = Fraction(b0)
    for _ in range(count - 1):
        balance = a * (balance - Fraction(p)) if adv else a * balance - Fraction(p)
    return balance - Fraction(f) / a if adv else a * balance - Fraction(f)


@pytest.mark.parametrize(
    ("b0", "i", "p", "f", "adv"),
    [
        (250_000.0, 0.065 / 12, 2000.0, 0.0, False),
        (250_000.0, 0.065 / 12, 2000.0, 0.0, True),
        (18_500.0, 0.0079, 412.5, 4000.0, False),
        (18_500.0, 0.0079, 412.5, 4000.0, True),
        (1_000.0, 0.0, 70.0, 0.0, False),
        (1_000.0, 0.0, 70.0, 300.0, True),
        (5_000.0, 0.25, 1300.0, 0.0, False),
    ],
)
def test_whole_periods_final_payment_follows_the_balance_path(b0, i, p, f, adv):
    term = solve.whole_periods(b0, i, p, balloon=f, advance=adv)
    count = int(term.periods)
    final = float(term.final_payment)
    exact = exact_path_final(b0, i, p, count, f, adv)
    assert final == pytest.approx(float(exact), abs=1e-9 * b0)
    assert 0 < final <= p * (1 + 1e-12)
    if count > 1:  # one payment fewer would not have reached the balloon
        assert float(exact_path_final(b0, i, p, count - 1, f, adv)) > p


def test_whole_periods_snaps_float_noise_to_the_whole_term():
    """A payment computed for exactly 360 periods is a 360-payment term, not 361."""
    pay = solve.payment(100_000, 0.005, 360)
    term = solve.whole_periods(100_000, 0.005, pay)
    assert int(term.periods) == 360
    assert float(term.final_payment) == pytest.approx(float(pay), rel=1e-9)


# -- rate 0: the limits are exact -------------------------------------------------------


@pytest.mark.parametrize(
    ("b0", "f", "n"), [(1200.0, 0.0, 12), (10_000.0, 2500.0, 7), (1.0, 0.5, 3)]
)
@pytest.mark.parametrize("adv", [False, True])
def test_rate_zero_limits_are_exact(b0, f, n, adv):
    """At rate 0: P = (B_0 - F) / N, B_0 = N P + F, N = (B_0 - F) / P, B_k = B_0 - k P."""
    p = solve.payment(b0, 0.0, n, balloon=f, advance=adv)
    assert float(p) == (b0 - f) / n
    assert float(solve.principal(p, 0.0, n, balloon=f, advance=adv)) == float(p) * n + f
    assert float(solve.periods(b0, 0.0, p, balloon=f, advance=adv)) == (b0 - f) / float(p)
    for k in range(n + 1):
        assert float(solve.balance(b0, 0.0, p, k, advance=adv)) == b0 - k * float(p)
    assert float(solve.total_interest(b0, 0.0, n, balloon=f, advance=adv)) == pytest.approx(
        0.0, abs=4 * math.ulp(b0)
    )


def test_rate_of_payments_totalling_exactly_the_principal_is_zero():
    assert float(solve.rate(1200, 100, 12)) == 0.0
    assert float(solve.rate(1200, 100, 10, balloon=200)) == 0.0
    assert float(solve.rate(1200, 100, 12, advance=True)) == 0.0


def test_rate_just_above_zero_is_resolved():
    """One cent of interest on 1,200 over 12 payments: i ~ 2 x 0.01 / (1200 x 13)."""
    got = float(solve.rate(1200, 100 + 0.01 / 12, 12))
    assert got == pytest.approx(2 * 0.01 / (1200 * 13), rel=1e-3)
    assert float(solve.payment(1200, got, 12)) == pytest.approx(100 + 0.01 / 12, rel=1e-14)


def test_none_and_booleans_are_not_numbers():
    with raises(InvalidTerms, "'principal'", "numeric", "None"):
        solve.payment(None, 0.005, 12)
    with raises(InvalidTerms, "'principal'", "numeric", "True"):
        solve.payment(True, 0.005, 12)


def test_arrays_that_do_not_broadcast_name_their_shapes():
    with raises(InvalidTerms, "do not broadcast", "principal (3,)", "rate (2,)"):
        solve.payment(np.full(3, 1000.0), np.full(2, 0.01), 12)


def test_periods_with_a_balloon_at_the_principal_is_nan_when_asked():
    out = solve.periods(100_000, 0.005, 1000, balloon=100_000, errors="nan")
    assert np.isnan(out)
