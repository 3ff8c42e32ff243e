"""Book projections: scheduled cents, the pool recurrence, and the prepayment and default speeds.

Sources: the Bond Market Association's Standard Formulas (SMM = 1 - (1 - CPR)^(1/12),
the PSA and SDA curves) as REFERENCES.md reproduces them [secondary]; the loans' own
schedules (amort.Loan(...).schedule()) for the scheduled cents.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pandas as pd
import pytest

from amort import InvalidTerms
from amort.book import Book, book_from_frame, loan_from_row, read_book
from amort.book_synth import varied_book
from amort.projection import (
    PROJECTION_COLUMNS,
    cdr_of_sda,
    combine_projections,
    cpr_of_psa,
    monthly_rate,
    project,
)

AS_OF = "2025-06-30"


@functools.cache
def example() -> Book:
    return read_book("example_books/tallowmere_book.csv")


@functools.cache
def example_schedule(k: int) -> pd.DataFrame:
    return loan_from_row(example().loans.iloc[k]).schedule()


def scheduled_by_month(book: Book, as_of: str) -> dict[int, list[int]]:
    """Interest and principal cents of the loans' own schedules, by month after ``as_of``."""
    day = pd.Timestamp(as_of)
    base = day.year * 12 + day.month - 1
    out: dict[int, list[int]] = {}
    for k in range(len(book.loans)):
        row = book.loans.iloc[k]
        if row["disbursed_on"] > day:
            continue
        frame = example_schedule(k)
        frame = frame[frame["due_date"] > day]
        balloon = frame.get("balloon", 0.0)
        months = frame["due_date"].dt.year * 12 + frame["due_date"].dt.month - 1 - base
        for month, interest, principal in zip(
            np.maximum(months, 1), frame["interest"], frame["principal"] + balloon, strict=True
        ):
            cell = out.setdefault(int(month), [0, 0])
            cell[0] += round(interest * 100)
            cell[1] += round(principal * 100)
    return out


@pytest.mark.parametrize("as_of", ["2025-06-30", "2024-02-14"])
def test_no_prepayment_and_no_default_is_the_sum_of_the_loans_schedules(as_of: str) -> None:
    book = example()
    flows = project(book, as_of)
    want = scheduled_by_month(book, as_of)
    assert len(flows) == max(want)
    for month, (interest, principal) in want.items():
        row = flows[flows["month"] == month].iloc[0]
        assert round(row["scheduled_interest"] * 100) == interest
        assert round(row["scheduled_principal"] * 100) == principal
    # With CPR = CDR = 0 the projected flows are the scheduled ones, exactly.
    for a, b in (
        ("interest", "scheduled_interest"),
        ("principal", "scheduled_principal"),
        ("closing_balance", "scheduled_balance"),
    ):
        assert (flows[a] == flows[b]).all()
    assert (flows[["prepayment", "default", "recovery", "loss"]] == 0).all().all()


def test_the_opening_balance_is_the_book_balance_at_the_as_of_date() -> None:
    from amort.book_positions import positions

    flows = project(example(), AS_OF)
    balance = positions(example(), AS_OF)["scheduled_balance"].sum()
    assert flows["opening_balance"].iloc[0] == pytest.approx(balance, abs=1e-6)
    assert flows["scheduled_balance"].iloc[-1] == pytest.approx(0.0, abs=1e-9)


def one_loan() -> Book:
    frame = pd.DataFrame(
        {
            "loan_id": ["P1"],
            "principal": ["250000"],
            "annual_rate": ["6.5"],
            "term": ["360"],
            "disbursed_on": ["2025-06-15"],
        }
    )
    return book_from_frame(frame)


def test_a_one_loan_pool_follows_the_pool_recurrence_with_a_constant_cpr() -> None:
    # The pool recurrence written here from the Standard Formulas [secondary]:
    # SMM = 1 - (1 - CPR)^(1/12); each month the surviving balance A pays the scheduled
    # interest and principal scaled by A / S (S the scheduled balance), then prepays
    # SMM of what is left.
    cpr = 0.08
    smm = 1 - (1 - cpr) ** (1 / 12)
    book = one_loan()
    schedule = loan_from_row(book.loans.iloc[0]).schedule()
    flows = project(book, AS_OF, cpr=cpr)
    actual, scheduled = 250_000.0, 250_000.0
    for k, row in enumerate(schedule.itertuples()):
        share = actual / scheduled
        interest = row.interest * share
        principal = row.principal * share
        scheduled = row.closing_balance
        prepaid = smm * (actual - principal)
        actual = actual - principal - prepaid
        got = flows.iloc[k]
        assert got["interest"] == pytest.approx(interest, rel=1e-9, abs=1e-9)
        assert got["principal"] == pytest.approx(principal, rel=1e-9, abs=1e-9)
        assert got["prepayment"] == pytest.approx(prepaid, rel=1e-9, abs=1e-9)
        assert got["closing_balance"] == pytest.approx(actual, rel=1e-9, abs=1e-9)


def test_a_one_loan_pool_with_defaults_recoveries_and_a_lag() -> None:
    # Defaults first (MDR of the balance at the start of the month), then prepayments;
    # a default recovers R of itself L months later (Standard Formulas [secondary]).
    cdr, cpr, rec, lag = 0.02, 0.05, 0.4, 6
    mdr, smm = 1 - (1 - cdr) ** (1 / 12), 1 - (1 - cpr) ** (1 / 12)
    book = one_loan()
    schedule = loan_from_row(book.loans.iloc[0]).schedule()
    flows = project(book, AS_OF, cpr=cpr, cdr=cdr, recovery=rec, lag=lag)
    actual, scheduled = 250_000.0, 250_000.0
    defaults = []
    for k, row in enumerate(schedule.itertuples()):
        default = mdr * actual
        performing = actual - default
        share = performing / scheduled
        principal = row.principal * share
        scheduled = row.closing_balance
        prepaid = smm * (performing - principal)
        actual = performing - principal - prepaid
        defaults.append(default)
        got = flows.iloc[k]
        assert got["default"] == pytest.approx(default, rel=1e-9)
        assert got["interest"] == pytest.approx(row.interest * share, rel=1e-9)
        assert got["closing_balance"] == pytest.approx(actual, rel=1e-9, abs=1e-9)
        recovered = rec * defaults[k - lag] if k >= lag else 0.0
        assert got["recovery"] == pytest.approx(recovered, rel=1e-9, abs=1e-12)
        assert got["loss"] == pytest.approx(recovered / rec * (1 - rec), rel=1e-9, abs=1e-12)
    assert len(flows) == len(schedule) + lag  # the horizon runs on to the last recovery


def test_the_psa_ramp_at_the_published_points() -> None:
    # 100 % PSA: CPR 0.2 % in month 1, up 0.2 % a month to 6 % at month 30, flat after;
    # month 6: CPR 1.2 %, SMM 0.0010055425 (REFERENCES.md [secondary]).
    assert float(cpr_of_psa(1, 100)) == pytest.approx(0.002)
    assert float(cpr_of_psa(6, 100)) == pytest.approx(0.012)
    assert float(monthly_rate(cpr_of_psa(6, 100))) == pytest.approx(0.0010055425, abs=5e-11)
    assert float(cpr_of_psa(30, 100)) == pytest.approx(0.06)
    assert float(cpr_of_psa(200, 100)) == pytest.approx(0.06)
    assert float(cpr_of_psa(10, 150)) == pytest.approx(0.03)
    # SMM and CPR invert each other: CPR = 1 - (1 - SMM)^12 [secondary].
    smm = float(monthly_rate(0.06))
    assert 1 - (1 - smm) ** 12 == pytest.approx(0.06, rel=1e-14)


def test_the_sda_curve_at_the_published_points() -> None:
    # 100 % SDA: 0.02 % a month to 0.60 % at month 30, flat to 60, down 0.0095 % a month
    # to 0.03 % at month 120, flat after (REFERENCES.md [secondary]).
    ages = np.array([1, 15, 30, 45, 60, 61, 90, 120, 240])
    want = [
        0.0002,
        0.003,
        0.006,
        0.006,
        0.006,
        0.006 - 0.000095,
        0.006 - 30 * 0.000095,
        0.0003,
        0.0003,
    ]
    assert cdr_of_sda(ages, 100) == pytest.approx(want, abs=1e-15)
    assert float(cdr_of_sda(30, 200)) == pytest.approx(0.012)


def test_tiny_annual_rates_keep_their_digits() -> None:
    # 1 - (1 - x)^(1/12) for x = 1e-12 is x / 12 to first order (log1p/expm1, DESIGN.md).
    assert float(monthly_rate(1e-12)) == pytest.approx(1e-12 / 12, rel=1e-9)
    assert float(monthly_rate(1.0)) == 1.0


def test_the_psa_ramp_follows_each_loans_own_age() -> None:
    # A loan disbursed 40 months before the as-of date is past the ramp: 150 % PSA is a
    # constant 9 % CPR for it (REFERENCES.md [secondary]).
    frame = pd.DataFrame(
        {
            "loan_id": ["Old"],
            "principal": ["100000"],
            "annual_rate": ["6"],
            "term": ["360"],
            "disbursed_on": ["2022-02-15"],
        }
    )
    book = book_from_frame(frame)
    ramp = project(book, AS_OF, psa=150, months=24)
    flat = project(book, AS_OF, cpr=0.09, months=24)
    assert np.allclose(ramp["prepayment"], flat["prepayment"], rtol=1e-12)
    young = project(one_loan(), AS_OF, psa=100, months=3)
    first = young.iloc[0]
    smm = float(monthly_rate(0.002))  # age 1
    schedule = loan_from_row(one_loan().loans.iloc[0]).schedule()
    assert first["prepayment"] == pytest.approx(
        smm * schedule["closing_balance"].iloc[0], rel=1e-12
    )


def test_the_flows_reconcile_every_month() -> None:
    flows = project(example(), AS_OF, psa=150, sda=100, recovery=0.35, lag=4)
    gone = flows["opening_balance"] - flows["closing_balance"]
    assert np.allclose(gone, flows["principal"] + flows["prepayment"] + flows["default"], atol=1e-6)
    assert np.allclose(
        flows["opening_balance"].iloc[1:], flows["closing_balance"].iloc[:-1].to_numpy()
    )
    assert flows["recovery"].sum() + flows["loss"].sum() == pytest.approx(flows["default"].sum())
    assert np.allclose(
        flows["collections"], flows[["interest", "principal", "prepayment", "recovery"]].sum(axis=1)
    )


def test_grouped_flows_add_up_to_the_book() -> None:
    whole = project(example(), AS_OF, cpr=0.06, cdr=0.01, recovery=0.4, months=120)
    grouped = project(
        example(), AS_OF, cpr=0.06, cdr=0.01, recovery=0.4, months=120, group_by="segment"
    )
    assert list(grouped.columns) == ["segment", *PROJECTION_COLUMNS]
    summed = grouped.groupby("month")[list(PROJECTION_COLUMNS[2:])].sum()
    assert np.allclose(summed.to_numpy(), whole.set_index("month")[list(PROJECTION_COLUMNS[2:])])
    assert set(grouped["segment"]) == set(example().loans["segment"])


def test_partitions_add_up_to_the_whole() -> None:
    loans = book_from_frame(varied_book(200, seed=3)).loans
    whole = project(loans, "2022-06-30", psa=120, cdr=0.02, recovery=0.5, lag=3, months=90)
    parts = [
        project(
            loans.iloc[k : k + 70], "2022-06-30", psa=120, cdr=0.02, recovery=0.5, lag=3, months=90
        )
        for k in (0, 70, 140)
    ]
    joined = combine_projections(parts)
    for column in PROJECTION_COLUMNS[2:]:
        assert np.allclose(joined[column], whole[column], rtol=1e-12, atol=1e-6), column
    for column in ("scheduled_interest", "scheduled_principal", "scheduled_balance"):
        assert (np.rint(joined[column] * 100) == np.rint(whole[column] * 100)).all()


def test_loans_disbursed_after_the_as_of_date_are_left_out() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["Now", "Later"],
            "principal": ["1200", "5000"],
            "annual_rate": ["0", "0"],
            "term": ["12", "12"],
            "disbursed_on": ["2025-06-01", "2025-07-20"],
        }
    )
    flows = project(book_from_frame(frame), AS_OF)
    # "Now" has made no payment yet (its first falls due on 2025-07-01); "Later" is out.
    assert flows["opening_balance"].iloc[0] == 1200.0
    assert flows["scheduled_principal"].sum() == 1200.0


@pytest.mark.parametrize(
    ("options", "words"),
    [
        ({"cpr": 0.05, "psa": 100}, "not both"),
        ({"cdr": 0.01, "sda": 100}, "not both"),
        ({"cpr": "120%"}, "from 0 to 100 %"),
        ({"cpr": -0.1}, "must be >= 0"),
        ({"psa": "fast"}, "speed in percent"),
        ({"lag": -1}, "'lag' must be a whole number"),
        ({"months": 0}, "'months' must be a whole number"),
        ({"group_by": "colour"}, "'group_by' must be a label column"),
    ],
)
def test_bad_assumptions_are_one_sentence(options: dict, words: str) -> None:
    with pytest.raises(InvalidTerms, match=words):
        project(one_loan(), AS_OF, **options)


def test_a_percent_string_is_a_rate() -> None:
    a = project(one_loan(), AS_OF, cpr="6%", months=12)
    b = project(one_loan(), AS_OF, cpr=0.06, months=12)
    pd.testing.assert_frame_equal(a, b)
    assert math.isclose(a["prepayment"].sum(), b["prepayment"].sum())
