"""Loan structures (equal principal, interest-only periods, bullet) against an exact reference.

The reference is written here with Python's decimal and fractions only: each
period's interest is the opening balance times the periodic rate, quantized to
the cent under the interest rounding mode; an interest-only period pays its
interest; an equal-principal period pays the principal part plus its interest;
a level period pays the level payment, the exact closed form over the
amortising periods (P = B0 i / (1 - (1+i)^-n) less the balloon's share) rounded
under the payment rounding mode; the last period pays what is left.
"""

from __future__ import annotations

import random
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal, localcontext
from fractions import Fraction

import pytest

from amort import InvalidTerms, Loan

MODES = {"half-up": ROUND_HALF_UP, "half-even": ROUND_HALF_EVEN, "up": ROUND_UP, "down": ROUND_DOWN}
CENT = Decimal("0.01")


def to_cent(value: Fraction, mode: str) -> Decimal:
    """Round an exact rational to the cent with decimal's quantize under ``mode``.

    A half-cent tie is a terminating decimal, so 80 digits hold it exactly; any
    other value lies far more than 1e-80 from a tie for these denominators.
    """
    with localcontext() as ctx:
        ctx.prec = 80
        exact = Decimal(value.numerator) / Decimal(value.denominator)
        return exact.quantize(CENT, rounding=MODES[mode])


def level_payment(owed: Fraction, i: Fraction, n: int, balloon: Fraction) -> Fraction:
    if i == 0:
        return (owed - balloon) / n
    growth = (1 + i) ** n
    return (owed * growth - balloon) * i / (growth - 1)


def reference(
    principal: Decimal,
    annual: Fraction,
    periods: int,
    *,
    structure: str,
    interest_only: int,
    balloon: Decimal,
    rounding: str,
    interest_rounding: str,
    per_year: int = 12,
) -> list[tuple[Decimal, Decimal, Decimal, Decimal, Decimal]]:
    i = annual / per_year
    b0 = Fraction(principal)
    f = Fraction(balloon)
    amortising = periods - interest_only
    level = to_cent(level_payment(b0, i, amortising, f), rounding)
    part = to_cent((b0 - f) / amortising, rounding)
    rows = []
    balance = principal
    for k in range(1, periods + 1):
        interest = to_cent(Fraction(balance) * i, interest_rounding)
        if structure == "bullet" or k <= interest_only:
            pay = interest
        elif structure == "equal-principal":
            pay = part + interest
        else:
            pay = level
        due = balance + interest - balloon
        if k == periods or due < pay or (due == pay and balloon == 0):
            pay = due
            rows.append((balance, pay, interest, pay - interest, Decimal(0)))
            return rows
        closing = balance + interest - pay
        rows.append((balance, pay, interest, pay - interest, closing))
        balance = closing
    raise AssertionError("unreachable")


def cases(count: int, seed: int) -> list[dict]:
    rng = random.Random(seed)
    out = []
    for _ in range(count):
        structure = rng.choice(["level", "equal-principal", "bullet"])
        periods = rng.randint(1, 90)
        only = 0 if periods == 1 else rng.randint(0, min(periods - 1, 12))
        if structure == "level" and only == 0 and periods > 1:
            only = rng.randint(1, periods - 1)
        principal = Decimal(rng.randint(100, 5_000_000)) / 100
        balloon = Decimal(0)
        if structure != "bullet" and rng.random() < 0.3:
            balloon = (principal * Decimal(rng.randint(1, 60)) / 100).quantize(CENT)
        out.append(
            {
                "principal": principal,
                "annual": Fraction(rng.choice([0, 1, 6, 13, 65, 99, 125, 240, 1999]), 1000)
                if rng.random() < 0.5
                else Fraction(rng.randint(0, 3000), 10000),
                "periods": periods,
                "structure": structure,
                "interest_only": only,
                "balloon": balloon,
                "rounding": rng.choice(list(MODES)),
                "interest_rounding": rng.choice(list(MODES)),
            }
        )
    return out


@pytest.mark.parametrize("case", cases(600, seed=4), ids=lambda c: f"{c['structure']}")
def test_structured_schedules_equal_the_decimal_reference(case: dict) -> None:
    # Source: Python's decimal and fractions (exact arithmetic under the stated rounding).
    loan = Loan(
        principal=case["principal"],
        annual_rate=f"{Decimal(case['annual'].numerator) / case['annual'].denominator * 100}%",
        periods=case["periods"],
        structure=case["structure"],
        interest_only_periods=case["interest_only"] if case["structure"] != "bullet" else 0,
        balloon=case["balloon"],
        rounding=case["rounding"],
        interest_rounding=case["interest_rounding"],
    )
    want = reference(
        case["principal"],
        case["annual"],
        case["periods"],
        structure=case["structure"],
        interest_only=case["interest_only"] if case["structure"] != "bullet" else 0,
        balloon=case["balloon"],
        rounding=case["rounding"],
        interest_rounding=case["interest_rounding"],
    )
    frame = loan.schedule()
    got = [
        tuple(Decimal(repr(v)).quantize(CENT) for v in row)
        for row in frame[
            ["opening_balance", "payment", "interest", "principal", "closing_balance"]
        ].itertuples(index=False)
    ]
    assert got == [tuple(v.quantize(CENT) for v in row) for row in want]
    assert loan.reconciliation().passed


def test_equal_principal_interest_sums_to_the_hand_derived_total() -> None:
    # Derived by hand: the balances are B0 (N - k + 1) / N, so the interest is
    # i B0 (N + 1) / 2 when every product is a whole number of cents.
    loan = Loan(principal=120_000, annual_rate="6%", periods=24, structure="equal-principal")
    total = loan.summary()["total_interest"]
    assert total == Decimal("0.005") * 120_000 * 25 / 2
    assert loan.summary()["principal_part"] == Decimal("5000.00")


def test_bullet_pays_interest_then_everything() -> None:
    loan = Loan(principal=50_000, annual_rate="7.2%", periods=12, structure="bullet")
    frame = loan.schedule()
    # 50,000 x 0.6 % = 300.00 a month (hand-derived), principal only at maturity.
    assert (frame["interest"] == 300.0).all()
    assert (frame["payment"].iloc[:-1] == 300.0).all()
    assert frame["payment"].iloc[-1] == 50_300.0
    assert loan.reconciliation().passed


def test_interest_only_then_level_equals_a_level_loan_over_the_rest() -> None:
    # After m interest-only periods the balance is still B0: the rest is an
    # ordinary level loan over N - m periods (DESIGN.md's closed form).
    mixed = Loan(principal=80_000, annual_rate="5.4%", periods=60, interest_only_periods=12)
    plain = Loan(principal=80_000, annual_rate="5.4%", periods=48)
    assert mixed.payment == plain.payment
    tail = mixed.schedule().iloc[12:].reset_index(drop=True)
    head = plain.schedule()
    for column in ("opening_balance", "payment", "interest", "principal", "closing_balance"):
        assert tail[column].tolist() == head[column].tolist()


@pytest.mark.parametrize(
    ("terms", "needle"),
    [
        ({"structure": "bullet", "balloon": 100}, "bullet"),
        ({"interest_only_periods": 12}, "fewer than"),
        ({"interest_only_periods": -1}, "interest_only_periods"),
        ({"structure": "equal-principal", "timing": "advance"}, "arrears"),
        ({"structure": "spiral"}, "structure"),
    ],
)
def test_bad_structures_are_refused_in_one_sentence(terms: dict, needle: str) -> None:
    with pytest.raises(InvalidTerms, match=needle):
        Loan(principal=10_000, annual_rate="6%", periods=12, **terms)


def cent_loop(
    principal: Decimal, i: Fraction, payments: list[Decimal], balloon: Decimal = Decimal(0)
) -> list[tuple[Decimal, Decimal, Decimal]]:
    """Exact reference (decimal): (payment, interest, closing) a period, half-up interest."""
    rows = []
    balance = principal
    for k, pay in enumerate(payments, start=1):
        interest = to_cent(Fraction(balance) * i, "half-up")
        due = balance + interest - balloon
        if k == len(payments) or due < pay or (due == pay and balloon == 0):
            rows.append((due, interest, Decimal(0)))
            return rows
        balance = balance + interest - pay
        rows.append((pay, interest, balance))
    return rows


def test_custom_payments_equal_the_decimal_reference() -> None:
    # Source: Python's decimal and fractions; each listed payment is paid, the last
    # period pays what is left.
    listed = [Decimal(100)] * 6 + [Decimal(900)] * 6
    loan = Loan(principal=5000, annual_rate="9%", periods=12, custom_payments=listed)
    want = cent_loop(Decimal(5000), Fraction(9, 1200), listed)
    frame = loan.schedule()
    got = [
        (Decimal(repr(p)).quantize(CENT), Decimal(repr(r)).quantize(CENT), Decimal(repr(c)))
        for p, r, c in frame[["payment", "interest", "closing_balance"]].itertuples(index=False)
    ]
    assert got == [(p.quantize(CENT), r.quantize(CENT), c) for p, r, c in want]
    assert loan.reconciliation().passed


def test_seasonal_loan_pays_only_in_its_months_and_closes_by_the_closed_form() -> None:
    # 30/360 with due dates on the 10th: every month earns exactly 8 % / 12 = 1/150.
    # The level payment on paying months solves B_N = 0 with zero weight on the others
    # (exact iteration in fractions, below).
    loan = Loan(
        principal=20_000, annual_rate="8%", periods=24, start="2027-01-10",
        payment_months=(8, 9, 10, 11), day_count="30/360",
    )  # fmt: skip
    frame = loan.schedule()
    months = [d.month for d in frame["due_date"]]
    paid = frame["payment"].tolist()
    assert all((p > 0) == (m in (8, 9, 10, 11)) for p, m in zip(paid[:-1], months, strict=False))
    p = Fraction(loan.payment)
    balance = Fraction(20_000)
    for m in [d.month for d in loan.dated_plan().due]:
        balance = balance * (1 + Fraction(1, 150)) - (p if m in (8, 9, 10, 11) else 0)
    assert abs(balance) < 1  # the rounded payment leaves at most cents over the term
    want = cent_loop(
        Decimal(20_000),
        Fraction(1, 150),
        [loan.payment if m in (8, 9, 10, 11) else Decimal(0) for m in months]
        + [Decimal(0)] * (24 - len(months)),
    )
    assert [Decimal(repr(v)).quantize(CENT) for v in paid] == [r[0].quantize(CENT) for r in want]
    assert loan.reconciliation().passed


def test_seasonal_and_custom_bad_input() -> None:
    with pytest.raises(InvalidTerms, match="needs monthly payments and dates"):
        Loan(principal=1000, annual_rate="5%", periods=12, payment_months=(6,))
    with pytest.raises(InvalidTerms, match="months 1 to 12"):
        Loan(principal=1000, annual_rate="5%", periods=12, start="2027-01-01", payment_months=(13,))
    with pytest.raises(InvalidTerms, match="one a period"):
        Loan(principal=1000, annual_rate="5%", periods=12, custom_payments=[100, 100])
