"""Every cent of amort's schedules against an exact reference in Python's decimal and fractions.

The reference below is written from DESIGN.md ("Money and rounding") alone and
imports nothing from amort's arithmetic: rates are :class:`fractions.Fraction`,
amounts are :class:`decimal.Decimal` in currency units, and every rounding to
the cent is :meth:`decimal.Decimal.quantize` with the stated mode
(``ROUND_HALF_UP``, ``ROUND_HALF_EVEN``, ``ROUND_UP``, ``ROUND_DOWN``).

- Level payment: the exact rational closed form
  ``P = (B_0 a^N - F) i / (a^N - 1)`` (divided by ``a = 1 + i`` in advance,
  ``(B_0 - F) / N`` at ``i = 0``), rounded to the cent.
- Each period: interest ``= B_{k-1} i`` rounded to the cent (in advance
  ``(B_{k-1} - P) i``); principal = payment - interest. The last period pays
  ``B_{N-1}`` plus its interest less the balloon; a balance that would close
  before N closes there (an open term runs until it closes).
- In advance the balloon is what is left after the last payment, ``y``, plus
  its interest: the cent amount with ``y + round(y i) = F`` (there is at most
  one, since the left side rises with y), else ``F / a`` rounded half-up (the
  engine's documented fallback, a cent off).

Source of the check: Python's ``decimal`` and ``fractions`` modules (exact
decimal and rational arithmetic).
"""

from __future__ import annotations

import dataclasses
import decimal
import random
from decimal import ROUND_DOWN, ROUND_HALF_EVEN, ROUND_HALF_UP, ROUND_UP, Decimal
from fractions import Fraction

import numpy as np
import pytest

import amort.schedule
from amort import Loan

CENT = Decimal("0.01")

#: amort's rounding names -> the decimal module's modes.
MODES = {
    "half-up": ROUND_HALF_UP,
    "half-even": ROUND_HALF_EVEN,
    "up": ROUND_UP,
    "down": ROUND_DOWN,
}

#: Payments a year of each frequency (common practice: 52 weeks, 26 fortnights, ...).
PER_YEAR = {
    "weekly": 52,
    "biweekly": 26,
    "semimonthly": 24,
    "monthly": 12,
    "bimonthly": 6,
    "quarterly": 4,
    "semiannual": 2,
    "annual": 1,
}

# Exact context: traps Inexact, so a product that does not fit raises instead of rounding.
EXACT = decimal.Context(prec=400, traps=[decimal.Inexact, decimal.InvalidOperation])
# For quantize itself, which rounds on purpose (the mode is given each call).
ROUNDING = decimal.Context(prec=400)


@dataclasses.dataclass
class Tally:
    """How often the reference met an exact boundary: a half cent, or a whole cent."""

    interest_ties: dict[str, int] = dataclasses.field(
        default_factory=lambda: dict.fromkeys(MODES, 0)
    )
    payment_ties: dict[str, int] = dataclasses.field(
        default_factory=lambda: dict.fromkeys(MODES, 0)
    )
    interest_whole: int = 0
    payment_whole: int = 0


def quantize_ratio(numerator: Decimal | int, denominator: int, mode: str) -> tuple[Decimal, str]:
    """Return ``numerator / denominator`` (>= 0, currency units) rounded to the cent.

    The quotient is truncated at 80 significant digits. When that is inexact,
    the exact value lies strictly between the truncation q and q + ulp, and no
    cent or half-cent boundary lies in between (they are multiples of the
    ulp), so a sticky 5 one digit below q stands for it exactly as far as
    ``quantize`` can tell. Returns the amount and "tie" (exactly half a cent),
    "whole" (exactly whole cents) or "" (neither).
    """
    context = decimal.Context(prec=80, rounding=ROUND_DOWN)
    quotient = context.divide(Decimal(numerator), Decimal(denominator))
    kind = ""
    if context.flags[decimal.Inexact]:
        quotient = EXACT.add(quotient, Decimal((0, (5,), quotient.as_tuple().exponent - 1)))
    else:
        in_cents = EXACT.multiply(quotient, Decimal(100))
        fraction = EXACT.subtract(in_cents, in_cents.to_integral_value(rounding=ROUND_DOWN))
        kind = "whole" if fraction == 0 else "tie" if fraction == Decimal("0.5") else ""
    return quotient.quantize(CENT, rounding=MODES[mode], context=ROUNDING), kind


def quantize_fraction(value: Fraction, mode: str) -> tuple[Decimal, str]:
    """Return a non-negative exact rational amount rounded to the cent (see quantize_ratio)."""
    return quantize_ratio(value.numerator, value.denominator, mode)


@dataclasses.dataclass(frozen=True)
class Terms:
    """Loan terms as the user gives them (strings of decimals), for Loan and the reference."""

    principal: str
    annual_rate: str  # percent, e.g. "6.5"
    periods: int | None
    frequency: str = "monthly"
    balloon: str = "0"
    timing: str = "arrears"
    fixed_payment: str | None = None
    rounding: str = "half-up"
    interest_rounding: str = "half-up"

    def loan(self) -> Loan:
        return Loan(
            principal=self.principal,
            annual_rate=self.annual_rate + "%",
            periods=self.periods,
            frequency=self.frequency,
            balloon=self.balloon,
            timing=self.timing,
            fixed_payment=self.fixed_payment,
            rounding=self.rounding,
            interest_rounding=self.interest_rounding,
        )

    @property
    def rate(self) -> Fraction:
        """Periodic rate: nominal annual rate / payments a year, exactly."""
        return Fraction(Decimal(self.annual_rate)) / 100 / PER_YEAR[self.frequency]


@dataclasses.dataclass(frozen=True)
class Row:
    period: int
    opening: Decimal
    payment: Decimal
    interest: Decimal
    principal: Decimal
    closing: Decimal
    balloon: Decimal


def reference_payment(terms: Terms, tally: Tally | None = None) -> Decimal:
    """The level payment: the exact closed form rounded to the cent, or the fixed payment."""
    if terms.fixed_payment is not None:
        return Decimal(terms.fixed_payment)
    assert terms.periods is not None
    b0, f, i, n = (
        Fraction(Decimal(terms.principal)),
        Fraction(Decimal(terms.balloon)),
        terms.rate,
        terms.periods,
    )
    if i == 0:
        exact = (b0 - f) / n
    else:
        growth = (1 + i) ** n
        exact = (b0 * growth - f) * i / (growth - 1)
        if terms.timing == "advance":
            exact /= 1 + i
    payment, kind = quantize_fraction(exact, terms.rounding)
    if tally is not None:
        if kind == "tie":
            tally.payment_ties[terms.rounding] += 1
        elif kind == "whole":
            tally.payment_whole += 1
    return payment


def reference_schedule(terms: Terms, tally: Tally | None = None) -> tuple[Decimal, list[Row]]:
    """Return the payment and the rows of the schedule, every amount an exact Decimal."""
    mode = terms.interest_rounding
    rate = terms.rate
    p, q = rate.numerator, rate.denominator

    def interest(balance: Decimal) -> Decimal:
        amount, kind = quantize_ratio(EXACT.multiply(balance, Decimal(p)), q, mode)
        if tally is not None:
            if kind == "tie":
                tally.interest_ties[mode] += 1
            elif kind == "whole" and balance > 0 and p > 0:
                tally.interest_whole += 1
        return amount

    payment = reference_payment(terms, tally)
    balance = Decimal(terms.principal)
    balloon = Decimal(terms.balloon)
    last = terms.periods
    rows: list[Row] = []
    advance = terms.timing == "advance"
    if advance:
        # y with y + round(y i) = F: at most one cent amount, within a cent of F / a.
        near, _ = quantize_fraction(Fraction(balloon) / (1 + rate), "down")
        fits = [
            y
            for y in (near + CENT * j for j in range(-2, 3))
            if y >= 0 and y + quantize_ratio(EXACT.multiply(y, Decimal(p)), q, mode)[0] == balloon
        ]
        assert len(fits) <= 1
        left = fits[0] if fits else quantize_fraction(Fraction(balloon) / (1 + rate), "half-up")[0]
    k = 0
    while True:
        k += 1
        assert k <= 100_002, "the reference schedule does not close"
        final = k == last
        if advance:
            if final or balance - left < payment or (balance - left == payment and left == 0):
                pay = balance - left
                intr = interest(left)
                paid_balloon = left + intr
                rows.append(
                    Row(k, balance, pay, intr, pay - intr, balance - pay - left, paid_balloon)
                )
                break
            intr = interest(balance - payment)
        else:
            intr = interest(balance)
            due = balance + intr - balloon
            if final or due < payment or (due == payment and balloon == 0):
                closing = balance - (due - intr) - balloon
                rows.append(Row(k, balance, due, intr, due - intr, closing, balloon))
                break
        closing = balance - (payment - intr)
        rows.append(Row(k, balance, payment, intr, payment - intr, closing, Decimal(0)))
        balance = closing
    return payment, rows


# -- the sample -------------------------------------------------------------------------------

# Annual rates (percent) whose periodic rate has a small denominator, so that
# balances land exactly on half cents: 6 % monthly is 1/200 a period.
TIE_RATES = ["6", "12", "18", "9", "3", "2.4", "7.2", "4.8", "24", "5.2", "2.6", "10", "8", "36"]


def _decimal_text(value: float, places: int) -> str:
    return f"{value:.{places}f}"


def _approx_payment(b0: float, i: float, n: int, f: float, advance: bool) -> float:
    if i == 0:
        return (b0 - f) / n
    a_n = (1 + i) ** n
    level = (b0 * a_n - f) * i / (a_n - 1)
    return level / (1 + i) if advance else level


def random_terms(rng: random.Random) -> Terms:
    """One random set of terms; validity is checked by the caller (Loan may refuse it)."""
    frequency = rng.choice(list(PER_YEAR))
    per_year = PER_YEAR[frequency]
    kind = rng.random()
    if kind < 0.12:
        rate = "0"
    elif kind < 0.30:
        rate = rng.choice(TIE_RATES)
    elif kind < 0.50:
        # a periodic rate k/m with m = 2^a 5^b: balances often land on half cents
        periodic = Fraction(rng.randint(1, 3), rng.choice([8, 20, 40, 80, 200, 400, 1000]))
        percent = periodic * per_year * 100
        rate = str(Decimal(percent.numerator) / Decimal(percent.denominator))
    elif kind < 0.80:
        rate = _decimal_text(rng.uniform(0.5, 30), rng.choice([1, 2, 3, 4]))
    elif kind < 0.93:
        # many digits: num x den passes 2**62, the engine's Python-integer path
        rate = _decimal_text(rng.uniform(0.5, 30), rng.choice([9, 12, 15]))
    else:
        rate = _decimal_text(rng.uniform(30, 100 * per_year), 2)  # up to 100 % a period
    size = rng.random()
    if size < 0.15:
        principal_cents = rng.randint(1, 10_000)
    elif size < 0.85:
        principal_cents = rng.randint(100_000, 100_000_000)
    else:
        principal_cents = rng.randint(10**9, 10**14)
    principal = str(Decimal(principal_cents) / 100)
    periods: int | None = rng.choice([1, 2, 3, rng.randint(4, 60), rng.randint(4, 360)])
    if rng.random() < 0.03:
        periods = rng.randint(361, 1200)
    timing = rng.choice(["arrears", "advance"])
    balloon = "0"
    if rng.random() < 0.25:
        balloon = str(Decimal(rng.randint(0, principal_cents * 3 // 5)) / 100)
    fixed_payment = None
    if rng.random() < 0.18:
        # a fixed payment, above the level payment of a random term
        i = float(Fraction(Decimal(rate)) / 100 / per_year)
        span = rng.randint(1, 360)
        b0, f = principal_cents / 100, float(balloon)
        level = _approx_payment(b0, i, span, f, timing == "advance")
        fixed_payment = _decimal_text(max(level * rng.uniform(1.0, 1.3), 0.01), 2)
        if rng.random() < 0.75:
            periods = None  # open term: the schedule runs until it closes
    return Terms(
        principal=principal,
        annual_rate=rate,
        periods=periods,
        frequency=frequency,
        balloon=balloon,
        timing=timing,
        fixed_payment=fixed_payment,
        rounding=rng.choice(list(MODES)),
        interest_rounding=rng.choice(list(MODES)),
    )


def handpicked_terms() -> list[Terms]:
    """Cases chosen to land on ties and whole cents, under every rounding mode."""
    cases = []
    for mode in MODES:
        for imode in MODES:
            common = {"rounding": mode, "interest_rounding": imode}
            # rate 0: 1.00 / 8 = 12.5 cents (a tie); 100.00 / 8 = 12.50 exactly
            cases.append(Terms("1.00", "0", 8, **common))
            cases.append(Terms("100.00", "0", 8, **common))
            cases.append(Terms("1.00", "0", 8, timing="advance", **common))
            # 6 % monthly = 1/200: 1.00 x 1/200 = half a cent; 1,000.00 gives 5.00 exactly
            cases.append(Terms("1.00", "6", 1, **common))
            cases.append(Terms("1.00", "6", 3, **common))
            cases.append(Terms("1000.00", "6", 12, **common))
            cases.append(Terms("12345.67", "6", 360, **common))
            cases.append(Terms("250000", "6.5", 360, **common))
            cases.append(Terms("10000", "6", 36, balloon="2000.00", timing="advance", **common))
            cases.append(Terms("10000", "6", 36, balloon="2000.00", **common))
            cases.append(Terms("5000", "12", None, fixed_payment="250.00", **common))
            cases.append(
                Terms("5000", "12", None, fixed_payment="250.00", timing="advance", **common)
            )
    return cases


SEED = 20_240_611
SAMPLE = 2_400


def build_sample() -> tuple[list[Terms], int]:
    """Return valid terms (handpicked first, then random) and how many draws Loan refused."""
    rng = random.Random(SEED)
    sample = handpicked_terms()
    refused = 0
    while len(sample) < SAMPLE:
        terms = random_terms(rng)
        try:
            terms.loan()
        except (ValueError, ArithmeticError):
            refused += 1
            continue
        sample.append(terms)
    return sample, refused


@dataclasses.dataclass
class Expected:
    terms: list[Terms]
    payments: list[Decimal]
    rows: list[list[Row]]
    paths: list[str]  # which engine path each loan takes (INT64, BIG, OVERFLOW)
    tally: Tally
    refused: int

    def chosen(self, path: str, interest_rounding: str | None = None) -> list[int]:
        """Indices of the sample on one engine path (and one interest rounding mode)."""
        return [
            j
            for j, t in enumerate(self.terms)
            if self.paths[j] == path and interest_rounding in (None, t.interest_rounding)
        ]


def engine_path(loan: Loan) -> str:
    """INT64, BIG (rate num x den >= 2**62: Python integers) or OVERFLOW (see below)."""
    terms = loan.batch_terms()
    if terms.needs_big_integers:
        return BIG
    if loan.advance and int(terms.balloon[0]) * int(terms.rate_den[0]) >= 2**63:
        return OVERFLOW
    return INT64


@pytest.fixture(scope="module")
def expected() -> Expected:
    sample, refused = build_sample()
    tally = Tally()
    payments, rows = [], []
    for terms in sample:
        payment, table = reference_schedule(terms, tally)
        payments.append(payment)
        rows.append(table)
    paths = [engine_path(t.loan()) for t in sample]
    return Expected(sample, payments, rows, paths, tally, refused)


def big_path_broken() -> bool:
    """Probe a known engine bug: np.divmod has no loop for object arrays (numpy 2.x).

    schedule.run then raises TypeError for any batch whose rate needs Python
    integers, e.g. Loan(principal=1000, annual_rate="6.123456789%", periods=12).
    """
    loan = Loan(principal=1000, annual_rate="6.123456789%", periods=12)
    try:
        amort.schedule.run(loan.batch_terms())
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
    return abs(int(amort.schedule.run(loan.batch_terms()).balloon_paid[0]) - 5 * 10**13) > 1


INT64 = "int64"
BIG = "python-integers"
OVERFLOW = "int64-advance-balloon"
# Known engine bugs (amort/schedule.py, not ours to edit): while they stand, the
# tests on those paths are expected to fail (strictly: a fix makes them pass).
BIG_PATH_BROKEN = pytest.mark.xfail(
    big_path_broken(),
    strict=True,
    raises=TypeError,
    reason="schedule.run: np.divmod does not support object arrays (big-integer path)",
)
OVERFLOW_BROKEN = pytest.mark.xfail(
    advance_balloon_overflows(),
    strict=True,
    raises=AssertionError,
    reason="schedule._advance_remainder: balloon x rate_den overflows int64",
)
PATHS = [
    INT64,
    pytest.param(BIG, marks=BIG_PATH_BROKEN),
    pytest.param(OVERFLOW, marks=OVERFLOW_BROKEN),
]


def cents(values: list[Decimal]) -> np.ndarray:
    return np.array([int(v * 100) for v in values], dtype=np.int64)


def reference_columns(rows: list[Row]) -> dict[str, np.ndarray]:
    return {
        "period": np.array([r.period for r in rows], dtype=np.int64),
        "opening": cents([r.opening for r in rows]),
        "payment": cents([r.payment for r in rows]),
        "interest": cents([r.interest for r in rows]),
        "principal": cents([r.principal for r in rows]),
        "closing": cents([r.closing for r in rows]),
        "balloon": cents([r.balloon for r in rows]),
    }


FRAME_COLUMNS = {
    "opening": "opening_balance",
    "payment": "payment",
    "interest": "interest",
    "principal": "principal",
    "closing": "closing_balance",
}


def first_difference(got: dict[str, np.ndarray], want: dict[str, np.ndarray]) -> str | None:
    for name, column in want.items():
        if got[name].shape != column.shape:
            return f"{name}: {got[name].size} rows, reference {column.size}"
        bad = np.flatnonzero(got[name] != column)
        if bad.size:
            at = int(bad[0])
            return f"{name} at period {at + 1}: got {got[name][at]}, reference {column[at]}"
    return None


def test_sample_is_large_and_varied(expected: Expected) -> None:
    terms = expected.terms
    assert len(terms) >= 2_000
    assert {t.rounding for t in terms} == set(MODES)
    assert {t.interest_rounding for t in terms} == set(MODES)
    assert {t.timing for t in terms} == {"arrears", "advance"}
    assert {t.frequency for t in terms} == set(PER_YEAR)
    assert sum(t.annual_rate == "0" for t in terms) >= 100
    assert sum(t.balloon != "0" for t in terms) >= 300
    assert sum(t.periods is None for t in terms) >= 150
    early = sum(
        t.periods is not None and len(rows) < t.periods
        for t, rows in zip(terms, expected.rows, strict=True)
    )
    assert early >= 10  # schedules that closed before N
    # both engine paths are exercised, and the int64 one with large balances
    assert 100 <= expected.paths.count(BIG) <= len(terms) - 1_000
    assert expected.paths.count(OVERFLOW) >= 1


def test_ties_occurred(expected: Expected) -> None:
    tally = expected.tally
    # Exact half cents of interest under each mode (where half-up and half-even differ).
    for mode in MODES:
        assert tally.interest_ties[mode] >= 50, (mode, tally)
    # Exact half-cent level payments (e.g. 1.00 / 8 at 0 %) under each mode.
    for mode in MODES:
        assert tally.payment_ties[mode] >= 4, (mode, tally)
    # Exact whole cents, where up/down must not move.
    assert tally.interest_whole >= 100
    assert tally.payment_whole >= 16


@pytest.mark.parametrize("path", PATHS)
def test_loan_schedules_match_the_decimal_reference(expected: Expected, path: str) -> None:
    """Every cent of >= 2,000 Loan schedules equals Python decimal/fractions arithmetic."""
    failures = []
    chosen = expected.chosen(path)
    if path == INT64:
        assert len(chosen) >= 2_000
    for j in chosen:
        terms, payment, rows = expected.terms[j], expected.payments[j], expected.rows[j]
        loan = terms.loan()
        frame = loan.schedule()
        want = reference_columns(rows)
        got = {"period": frame["period"].to_numpy()}
        for name, column in FRAME_COLUMNS.items():
            values = frame[column].to_numpy()
            # The frame holds float64 nearest the exact decimal: as float(Decimal) gives.
            want_float = np.array([float(getattr(r, name)) for r in rows])
            if values.shape == want_float.shape and not np.array_equal(values, want_float):
                failures.append((terms, f"{column} is not float(exact decimal)"))
            got[name] = np.rint(values * 100).astype(np.int64)
        if "balloon" in frame:
            got["balloon"] = np.rint(frame["balloon"].to_numpy() * 100).astype(np.int64)
        else:
            got["balloon"] = np.zeros(len(frame), dtype=np.int64)
        problem = first_difference(got, want)
        if loan.payment != payment:
            problem = f"payment {loan.payment}, reference {payment}"
        summary = loan.summary()
        if summary["final_payment"] != rows[-1].payment or summary["balloon"] != rows[-1].balloon:
            problem = f"summary {summary['final_payment']}, {summary['balloon']}"
        if summary["number_of_payments"] != len(rows):
            problem = f"{summary['number_of_payments']} payments, reference {len(rows)}"
        if problem:
            failures.append((terms, problem))
    assert not failures, f"{len(failures)} schedules differ; first: {failures[:3]}"


def _batch(loans: list[Loan]) -> amort.schedule.BatchTerms:
    parts = [loan.batch_terms() for loan in loans]
    fields = [
        f.name
        for f in dataclasses.fields(amort.schedule.BatchTerms)
        if not f.name.startswith("period_")
    ]
    return amort.schedule.BatchTerms(
        **{name: np.concatenate([getattr(p, name) for p in parts]) for name in fields}
    )


@pytest.mark.parametrize("mode", list(MODES))
@pytest.mark.parametrize("path", PATHS[:2])
def test_batch_engine_matches_the_decimal_reference(
    expected: Expected, mode: str, path: str
) -> None:
    """amort.schedule.run on hundreds of loans at once gives the reference's cents per loan."""
    chosen = expected.chosen(path, mode)
    loans = [expected.terms[j].loan() for j in chosen]
    terms = _batch(loans)
    assert terms.size >= (300 if path == INT64 else 25)
    assert terms.needs_big_integers == (path == BIG)
    assert len(set(terms.periods.tolist())) > 10  # variable term lengths in one batch
    table = amort.schedule.run(terms, loans[0].interest_rounding)
    failures = []
    for position, j in enumerate(chosen):
        part = table.loan_rows(position)
        got = {
            "period": table.period[part],
            "opening": table.opening[part],
            "payment": table.payment[part],
            "interest": table.interest[part],
            "principal": table.principal[part],
            "closing": table.closing[part],
            "balloon": table.balloon[part],
        }
        problem = first_difference(got, reference_columns(expected.rows[j]))
        if problem is None:
            # ... and the same cents as the loan run as a batch of one.
            alone = amort.schedule.run(
                loans[position].batch_terms(), loans[position].interest_rounding
            )
            if not np.array_equal(alone.interest, got["interest"]) or not np.array_equal(
                alone.payment, got["payment"]
            ):
                problem = "batch of one differs from the batch of many"
        if problem:
            failures.append((expected.terms[j], problem))
    assert not failures, f"{len(failures)} loans differ; first: {failures[:3]}"
    assert np.all(table.loan[1:] >= table.loan[:-1])  # loan-then-period order


def test_reference_rounding_helper_on_known_values() -> None:
    """The reference's own rounding, on values worked by hand."""
    assert quantize_ratio(1, 8, "half-up") == (Decimal("0.13"), "tie")
    assert quantize_ratio(1, 8, "half-even") == (Decimal("0.12"), "tie")
    assert quantize_ratio(3, 8, "half-even") == (Decimal("0.38"), "tie")
    assert quantize_ratio(100, 8, "up") == (Decimal("12.50"), "whole")
    assert quantize_ratio(1, 3, "up") == (Decimal("0.34"), "")
    assert quantize_ratio(1, 3, "down") == (Decimal("0.33"), "")
    assert quantize_ratio(2, 3, "half-up") == (Decimal("0.67"), "")
    # a value a hair above a tie: 0.125 + 10**-100 must round up even half-even
    assert quantize_ratio(10**100 + 8, 8 * 10**100, "half-even")[0] == Decimal("0.13")
    payment, rows = reference_schedule(Terms("1.00", "0", 8))
    assert payment == Decimal("0.13")
    assert [r.payment for r in rows] == [Decimal("0.13")] * 7 + [Decimal("0.09")]
