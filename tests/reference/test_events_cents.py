"""Events on a schedule against an exact reference (Python decimal and fractions).

The reference steps the recurrence B_k = (1 + i_k) B_{k-1} - P_k - X_k in cents:
interest quantized half-up, P_k the payment (0 in a holiday, whose interest then
adds to the balance), X_k the extra principal; the level payment and every re-solve
are the exact closed form P = (B T_0 - F) / sum m_k T_k over the remaining periods
(holidays weighted 0) from the reference's own cent balance, rounded half-up.
"""

from __future__ import annotations

import random
from decimal import ROUND_HALF_UP, Decimal, localcontext
from fractions import Fraction

import pytest

from amort import InvalidTerms, Loan
from amort.events import ExtraPrincipal, PaymentHoliday, RateReset

CENT = Decimal("0.01")


def cent(value: Fraction) -> Decimal:
    with localcontext() as ctx:
        ctx.prec = 80
        return (Decimal(value.numerator) / Decimal(value.denominator)).quantize(
            CENT, rounding=ROUND_HALF_UP
        )


def solve(balance: Decimal, rates: list[Fraction], weights: list[int]) -> Decimal:
    tails = [Fraction(1)]
    for r in reversed(rates):
        tails.append(tails[-1] * (1 + r))
    tails.reverse()
    total = sum((w * tails[k] for k, w in enumerate(weights, start=1)), Fraction(0))
    return cent(Fraction(balance) * tails[0] / total)


def reference(principal: Decimal, annual: Fraction, n: int, events: list) -> list[tuple]:
    base = annual / 12
    resets = sorted((e for e in events if isinstance(e, RateReset)), key=lambda e: e.period)

    def rates_known_at(period: int) -> list[Fraction]:
        out = [base] * n
        for e in resets:
            if e.period <= period:
                out[e.period - 1 :] = [Fraction(e.annual_rate) / 12] * (n - e.period + 1)
        return out

    holidays = {p for e in events if isinstance(e, PaymentHoliday) for p in e.periods()}
    extras = [Decimal(0)] * n
    for e in events:
        if isinstance(e, ExtraPrincipal):
            for p in e.periods(n):
                extras[p - 1] += e.amount
    weights = [0 if k in holidays else 1 for k in range(1, n + 1)]
    change = {e.period for e in resets if e.reamortise} | {
        p + 1 for e in events if isinstance(e, ExtraPrincipal) and e.recast for p in e.periods(n)
    }
    rates = rates_known_at(n)
    pay = solve(principal, rates_known_at(0), weights)
    rows = []
    balance = principal
    for k in range(1, n + 1):
        if k in change:
            pay = solve(balance, rates_known_at(k)[k - 1 :], weights[k - 1 :])
        interest = cent(Fraction(balance) * rates[k - 1])
        regular = Decimal(0) if k in holidays else pay
        due = balance + interest
        total = regular + extras[k - 1]
        if k == n or due < total or due == total:
            rows.append((balance, due, interest, Decimal(0)))
            return rows
        balance = due - total
        rows.append((balance + total - interest, total, interest, balance))
    raise AssertionError("unreachable")


def random_events(rng: random.Random, n: int) -> list:
    events: list = []
    if rng.random() < 0.6:
        events.append(
            ExtraPrincipal(
                period=rng.randint(1, n - 1),
                amount=Decimal(rng.randint(1, 400_000)) / 100,
                every=rng.choice([None, None, 1, 3, 12]),
                recast=rng.random() < 0.5,
            )
        )
    if rng.random() < 0.5:
        start = rng.randint(1, n - 3)
        events.append(PaymentHoliday(period=start, count=rng.randint(1, 2)))
    if rng.random() < 0.6:
        events.append(
            RateReset(
                period=rng.randint(2, n),
                annual_rate=f"{rng.randint(0, 2500) / 100}%",
                reamortise=rng.random() < 0.6,
            )
        )
    return events


@pytest.mark.parametrize("seed", range(300))
def test_event_schedules_equal_the_decimal_reference(seed: int) -> None:
    # Source: Python's decimal and fractions (exact arithmetic, half-up rounding).
    rng = random.Random(seed)
    n = rng.randint(6, 72)
    principal = Decimal(rng.randint(100_000, 10_000_000)) / 100
    annual = Fraction(rng.randint(0, 2400), 10_000)
    events = random_events(rng, n)
    try:
        loan = Loan(
            principal=principal,
            annual_rate=f"{Decimal(annual.numerator) / annual.denominator * 100}%",
            periods=n,
            events=tuple(events),
        )
        frame = loan.schedule()
    except InvalidTerms:
        pytest.skip("terms the library refuses (an extra payment larger than the loan, ...)")
    want = reference(principal, annual, n, events)
    paid = frame["payment"] + frame.get("extra_principal", 0)
    got = [
        (Decimal(repr(o)).quantize(CENT), Decimal(repr(p)).quantize(CENT),
         Decimal(repr(i)).quantize(CENT), Decimal(repr(c)).quantize(CENT))
        for o, p, i, c in zip(
            frame["opening_balance"], paid, frame["interest"], frame["closing_balance"],
            strict=True,
        )
    ]  # fmt: skip
    assert got == [tuple(v.quantize(CENT) for v in row) for row in want]
    assert loan.reconciliation().passed


def test_a_recast_lowers_the_payment_and_keeps_the_term() -> None:
    plain = Loan(principal=20_000, annual_rate="6%", periods=24)
    recast = Loan(
        principal=20_000, annual_rate="6%", periods=24,
        events=(ExtraPrincipal(period=6, amount=5_000, recast=True),),
    )  # fmt: skip
    shorter = Loan(
        principal=20_000, annual_rate="6%", periods=24,
        events=(ExtraPrincipal(period=6, amount=5_000),),
    )  # fmt: skip
    assert recast.number_of_payments == 24
    assert recast.schedule()["payment"].iloc[6] < plain.payment
    assert shorter.number_of_payments < 24
    assert shorter.schedule()["payment"].iloc[6] == float(plain.payment)
    assert shorter.schedule()["extra_principal"].iloc[5] == 5_000.0


def test_bad_events_are_refused_in_one_sentence() -> None:
    with pytest.raises(InvalidTerms, match="after maturity"):
        Loan(principal=1000, annual_rate="5%", periods=12, events=(RateReset(13, "6%"),))
    with pytest.raises(InvalidTerms, match="overlap"):
        Loan(
            principal=1000, annual_rate="5%", periods=12,
            events=(PaymentHoliday(3, 2), PaymentHoliday(4)),
        )  # fmt: skip
    with pytest.raises(InvalidTerms, match="annual_rate"):
        RateReset(3, "-1%")
    with pytest.raises(InvalidTerms, match="two rate resets"):
        Loan(
            principal=1000, annual_rate="5%", periods=12,
            events=(RateReset(3, "6%"), RateReset(3, "7%")),
        )  # fmt: skip


def test_events_on_dates_fall_in_the_first_period_due_on_or_after_them() -> None:
    # Due dates on the 10th from 2027-02-10: a reset "on" 2027-06-01 applies from the
    # 2027-06-10 payment, period 5; the same loan by period gives the same cents.
    terms = {"principal": 20_000, "annual_rate": "6%", "periods": 24, "start": "2027-01-10"}
    by_date = Loan(**terms, events=(RateReset(on="2027-06-01", annual_rate="9%"),))
    by_period = Loan(**terms, events=(RateReset(period=5, annual_rate="9%"),))
    assert by_date.schedule().equals(by_period.schedule())
    with pytest.raises(InvalidTerms, match="after maturity"):
        Loan(**terms, events=(ExtraPrincipal(on="2031-01-01", amount=100),))
    with pytest.raises(InvalidTerms, match="needs a dated loan"):
        Loan(
            principal=1000, annual_rate="5%", periods=12, events=(PaymentHoliday(on="2027-03-01"),)
        )
    with pytest.raises(InvalidTerms, match="one of them"):
        RateReset(period=3, on="2027-03-01", annual_rate="5%")


def test_a_dated_schedule_shows_the_reset_rate() -> None:
    loan = Loan(
        principal=20_000, annual_rate="6%", periods=24, start="2027-01-10",
        events=(RateReset(period=5, annual_rate="9%"),),
    )  # fmt: skip
    rates = loan.schedule()["rate"].tolist()
    assert rates[3] == 0.005 and rates[4] == 0.0075  # 6 % / 12, then 9 % / 12
