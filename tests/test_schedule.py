"""Unit tests of the batch cents engine (amort.schedule).

Expected cents come from a small scalar reference written here with Python's
``fractions`` (exact rationals) and integer floor division, independent of
amort's rounding helpers.
"""

from __future__ import annotations

import dataclasses
import random
from fractions import Fraction

import numpy as np
import pytest

from amort import Loan
from amort.money import Rounding
from amort.schedule import BatchTerms, CentsTable, interest_cents, run

MODES = list(Rounding)


def round_cents(value: Fraction, mode: Rounding) -> int:
    """Round a non-negative exact amount of cents to a whole cent (reference)."""
    whole = value.numerator // value.denominator
    rest = value - whole
    if mode is Rounding.DOWN:
        return whole
    if mode is Rounding.UP:
        return whole + (rest > 0)
    if mode is Rounding.HALF_UP:
        return whole + (rest >= Fraction(1, 2))
    return whole + (rest > Fraction(1, 2) or (rest == Fraction(1, 2) and whole % 2 == 1))


def fraction_schedule(
    b0: int,
    rate: Fraction,
    payment: int,
    periods: int,
    *,
    balloon: int = 0,
    advance: bool = False,
    mode: Rounding = Rounding.HALF_UP,
) -> list[tuple[int, int, int]]:
    """(opening, payment, interest) in cents per period, by DESIGN.md's rules.

    Advance is supported without a balloon only (the remainder rule is checked
    in tests/reference/test_exact_cents.py).
    """
    assert not (advance and balloon)
    rows = []
    balance = b0
    for k in range(1, periods + 1):
        if advance:
            closes = k == periods or balance <= payment
            pay = balance if closes else payment
            intr = round_cents((balance - pay) * rate, mode)
        else:
            intr = round_cents(balance * rate, mode)
            due = balance + intr - balloon
            closes = k == periods or due <= payment
            pay = due if closes else payment
        rows.append((balance, pay, intr))
        balance = balance - pay + intr
        if closes:
            break
    return rows


def big_path_broken() -> bool:
    """Probe a known engine bug: np.divmod has no loop for object arrays (numpy 2.x).

    schedule.run then raises TypeError for any batch whose rate needs Python
    integers, e.g. Loan(principal=1000, annual_rate="6.123456789%", periods=12).
    """
    loan = Loan(principal=1000, annual_rate="6.123456789%", periods=12)
    try:
        run(loan.batch_terms())
    except TypeError:
        return True
    return False


def advance_balloon_overflows() -> bool:
    """Probe a known engine bug: _advance_remainder forms balloon x rate_den in int64.

    It wraps for large balloons in advance: Loan(principal=10**12,
    annual_rate="7.12345%", periods=12, balloon=5 * 10**11, timing="advance")
    paid a balloon of 400,681,337.04.
    """
    loan = Loan(
        principal=10**12, annual_rate="7.12345%", periods=12, balloon=5 * 10**11, timing="advance"
    )
    return abs(int(run(loan.batch_terms()).balloon_paid[0]) - 5 * 10**13) > 1


def terms_of(*loans: dict[str, object]) -> BatchTerms:
    """BatchTerms from dicts with keys principal, rate (Fraction), payment, periods, ..."""

    def col(name: str, default: int = 0) -> np.ndarray:
        return np.array([int(loan.get(name, default)) for loan in loans], dtype=np.int64)

    rates = [Fraction(loan["rate"]) for loan in loans]
    return BatchTerms(
        principal=col("principal"),
        rate_num=np.array([r.numerator for r in rates], dtype=np.int64),
        rate_den=np.array([r.denominator for r in rates], dtype=np.int64),
        payment=col("payment"),
        periods=col("periods"),
        balloon=col("balloon"),
        advance=np.array([bool(loan.get("advance", False)) for loan in loans]),
    )


def rows_of(table: CentsTable, index: int) -> list[tuple[int, int, int]]:
    part = table.loan_rows(index)
    return list(
        zip(
            table.opening[part].tolist(),
            table.payment[part].tolist(),
            table.interest[part].tolist(),
            strict=True,
        )
    )


def test_batch_terms_refuses_arrays_of_different_shapes() -> None:
    good = terms_of({"principal": 100, "rate": 0, "payment": 50, "periods": 2})
    with pytest.raises(ValueError, match=r"BatchTerms\.payment has shape"):
        dataclasses.replace(good, payment=np.array([1, 2], dtype=np.int64))


def test_shapes_and_loan_then_period_order() -> None:
    terms = terms_of(
        {"principal": 100_000, "rate": Fraction(1, 100), "payment": 35_000, "periods": 3},
        {"principal": 50_000, "rate": 0, "payment": 10_000, "periods": 5},
        {"principal": 7_000, "rate": Fraction(1, 200), "payment": 7_035, "periods": 1},
    )
    table = run(terms)
    assert table.rows.tolist() == [3, 5, 1]
    total = 9
    for name in ("loan", "period", "opening", "payment", "interest", "principal", "closing"):
        column = getattr(table, name)
        assert column.shape == (total,), name
        assert column.dtype == np.int64, name
    for name in ("rows", "final_payment", "balloon_paid"):
        assert getattr(table, name).shape == (3,)
    assert table.loan.tolist() == [0, 0, 0, 1, 1, 1, 1, 1, 2]
    assert table.period.tolist() == [1, 2, 3, 1, 2, 3, 4, 5, 1]
    assert table.offsets.tolist() == [0, 3, 8, 9]
    assert table.loan_rows(1) == slice(3, 8)
    assert (table.principal == table.payment - table.interest).all()
    # 1,000.00 at 1 % a period: interest 10.00, 6.60, 3.17 (3.166 rounded half-up);
    # the last payment is 316.60 + 3.17 = 319.77
    assert table.interest[:3].tolist() == [1_000, 660, 317]
    assert table.final_payment.tolist() == [31_977, 10_000, 7_035]


def test_variable_term_lengths_in_one_batch_equal_batches_of_one() -> None:
    rng = random.Random(7)
    loans = []
    for _ in range(60):
        loan = Loan(
            principal=rng.randint(100, 10**7),
            annual_rate=rng.choice(["0%", "6%", "6.5%", "18%", "3.25%"]),
            periods=rng.randint(1, 240),
            frequency=rng.choice(["monthly", "weekly", "quarterly"]),
            timing=rng.choice(["arrears", "advance"]),
        )
        loans.append(loan)
    parts = [loan.batch_terms() for loan in loans]
    fields = [f.name for f in dataclasses.fields(BatchTerms) if not f.name.startswith("period_")]
    batch = BatchTerms(**{n: np.concatenate([getattr(p, n) for p in parts]) for n in fields})
    assert len(set(batch.periods.tolist())) > 30
    table = run(batch)
    for index, part in enumerate(parts):
        alone = run(part)
        for name in ("period", "opening", "payment", "interest", "principal", "closing"):
            got = getattr(table, name)[table.loan_rows(index)]
            assert np.array_equal(got, getattr(alone, name)), (index, name)
        assert table.final_payment[index] == alone.final_payment[0]


def test_rows_follow_the_fraction_reference_for_every_mode() -> None:
    rate = Fraction(65, 12_000)  # 6.5 % a year, monthly
    for mode in MODES:
        terms = terms_of(
            {"principal": 25_000_000, "rate": rate, "payment": 158_017, "periods": 360},
            {
                "principal": 25_000_000,
                "rate": rate,
                "payment": 157_164,
                "periods": 360,
                "advance": True,
            },
        )
        table = run(terms, mode)
        assert rows_of(table, 0) == fraction_schedule(25_000_000, rate, 158_017, 360, mode=mode)
        assert rows_of(table, 1) == fraction_schedule(
            25_000_000, rate, 157_164, 360, advance=True, mode=mode
        )
        assert (table.closing[table.offsets[1:] - 1] == 0).all()


def test_early_close_when_the_balance_is_paid_before_n() -> None:
    # 1,000.00 at 0 %, 300.00 a period over a 12-period term: closes in period 4 with 100.00.
    terms = terms_of(
        {"principal": 100_000, "rate": 0, "payment": 30_000, "periods": 12},
        {"principal": 100_000, "rate": 0, "payment": 25_000, "periods": 12},
        {"principal": 100_000, "rate": 0, "payment": 30_000, "periods": 12, "advance": True},
    )
    table = run(terms)
    assert table.rows.tolist() == [4, 4, 4]
    assert table.final_payment.tolist() == [10_000, 25_000, 10_000]
    fixed_300 = [70_000, 40_000, 10_000, 0]
    assert table.closing.tolist() == [*fixed_300, 75_000, 50_000, 25_000, 0, *fixed_300]


def test_final_period_pays_what_is_left() -> None:
    # A payment too small for the term: the last of 3 periods pays the rest with its interest.
    rate = Fraction(1, 100)
    table = run(terms_of({"principal": 100_000, "rate": rate, "payment": 20_000, "periods": 3}))
    # balances 100,000 -> 81,000 -> 61,810; last pays 61,810 + 618.10 -> 62,428
    assert table.opening.tolist() == [100_000, 81_000, 61_810]
    assert table.final_payment.tolist() == [62_428]


def test_balloon_column_in_arrears() -> None:
    rate = Fraction(1, 200)
    terms = terms_of(
        {
            "principal": 1_000_000,
            "rate": rate,
            "payment": 71_000,
            "periods": 12,
            "balloon": 200_000,
        },
    )
    table = run(terms)
    assert table.balloon.tolist() == [0] * 11 + [200_000]
    assert table.balloon_paid.tolist() == [200_000]
    assert table.closing[-1] == 0
    assert table.closing[-2] == table.opening[-1]
    assert int(table.principal.sum()) == 1_000_000 - 200_000
    expected = fraction_schedule(1_000_000, rate, 71_000, 12, balloon=200_000)
    assert rows_of(table, 0) == expected


def test_balloon_in_advance_is_the_remainder_plus_its_interest() -> None:
    # y + round(y / 200) = 200,000 has the cent solution y = 199,005 (199,005 + 995.025).
    rate = Fraction(1, 200)
    terms = terms_of(
        {
            "principal": 1_000_000,
            "rate": rate,
            "payment": 70_000,
            "periods": 12,
            "balloon": 200_000,
            "advance": True,
        },
    )
    table = run(terms)
    last = table.loan_rows(0).stop - 1
    assert table.payment[last] == table.opening[last] - 199_005
    assert table.interest[last] == 995
    assert table.balloon_paid.tolist() == [200_000]
    assert table.closing[last] == 0


def test_interest_in_advance_is_earned_after_the_payment() -> None:
    rate = Fraction(1, 100)
    table = run(
        terms_of(
            {"principal": 100_000, "rate": rate, "payment": 30_000, "periods": 4, "advance": True}
        )
    )
    # first: (1,000.00 - 300.00) x 1 % = 7.00; second: (707.00 - 300.00) x 1 % = 4.07
    assert table.interest[:2].tolist() == [700, 407]
    assert table.opening[:2].tolist() == [100_000, 70_700]


def test_a_loan_with_no_periods_gives_no_rows() -> None:
    terms = terms_of(
        {"principal": 100_000, "rate": 0, "payment": 50_000, "periods": 0},
        {"principal": 100_000, "rate": 0, "payment": 50_000, "periods": 2},
    )
    table = run(terms)
    assert table.rows.tolist() == [0, 2]
    assert table.loan.tolist() == [1, 1]
    assert table.final_payment.tolist() == [0, 50_000]


@pytest.mark.parametrize("mode", MODES)
def test_interest_cents_without_overflow_for_large_balances(mode: Rounding) -> None:
    """B x n passes 2**62 (n x d does not): the split quotient gives the exact cents."""
    rng = np.random.default_rng(11)
    balance = rng.integers(10**13, 10**14, size=2_000, dtype=np.int64)
    num = rng.integers(10**5, 10**6, size=2_000, dtype=np.int64)
    den = rng.integers(10**7, 10**8, size=2_000, dtype=np.int64)
    # a few exact half cents: b x n / d = k + 1/2
    den[:20] = 2 * num[:20]
    balance[:20] = 2 * (balance[:20] // 2) + 1
    assert int(balance.max()) * int(num.max()) >= 2**62
    got = interest_cents(balance, num, den, mode)
    want = [
        round_cents(Fraction(int(b) * int(n), int(d)), mode)
        for b, n, d in zip(balance, num, den, strict=True)
    ]
    assert got.tolist() == want


def test_large_balances_with_a_rate_of_many_digits_take_the_int64_path() -> None:
    """Principal near 10**12 at 7.12345 % a year monthly: 142469/24000000 a period."""
    rate = Fraction(Fraction("0.0712345"), 12)
    assert rate == Fraction(142_469, 24_000_000)
    b0 = 99_999_999_999_999
    loan = Loan(principal="999999999999.99", annual_rate="7.12345%", periods=360)
    terms = loan.batch_terms()
    assert not terms.needs_big_integers
    assert b0 * rate.numerator >= 2**62
    for mode in MODES:
        table = run(terms, mode)
        pay = int(terms.payment[0])
        assert rows_of(table, 0) == fraction_schedule(b0, rate, pay, 360, mode=mode)


@pytest.mark.xfail(
    big_path_broken(),
    strict=True,
    raises=TypeError,
    reason="schedule.run: np.divmod does not support object arrays (big-integer path)",
)
def test_big_integer_path_gives_the_reference_cents() -> None:
    """A rate whose num x den passes 2**62 runs on Python integers, to the same cents."""
    loan = Loan(principal="250000", annual_rate="6.123456789012%", periods=360)
    terms = loan.batch_terms()
    rate = loan.periodic_rate
    assert rate.numerator * rate.denominator >= 2**62
    assert terms.needs_big_integers
    pay = int(terms.payment[0])
    for mode in MODES:
        table = run(terms, mode)
        assert rows_of(table, 0) == fraction_schedule(25_000_000, rate, pay, 360, mode=mode)
        advance = dataclasses.replace(terms, advance=np.array([True]))
        assert rows_of(run(advance, mode), 0) == fraction_schedule(
            25_000_000, rate, pay, 360, advance=True, mode=mode
        )


@pytest.mark.xfail(
    advance_balloon_overflows(),
    strict=True,
    reason="schedule._advance_remainder forms balloon x rate_den in int64, which wraps",
)
def test_large_balloon_in_advance_is_paid_in_full() -> None:
    loan = Loan(
        principal=10**12, annual_rate="7.12345%", periods=12, balloon=5 * 10**11, timing="advance"
    )
    table = run(loan.batch_terms())
    assert abs(int(table.balloon_paid[0]) - 5 * 10**13) <= 1
