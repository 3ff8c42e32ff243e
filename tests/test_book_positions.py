"""Positions of a book: the vectorised engine against each loan's own schedule, cent for cent.

The reference is amort.Loan(...).schedule() of the same loan (the engine DESIGN.md
holds to exact decimal arithmetic, checked against Python's decimal and fractions in
tests/reference/); the book engine re-implements its rules on arrays of loans, so
every figure of a position must be the cent the per-loan schedule gives. The books
mix every day count, frequency and structure the layout allows (amort.book_synth).
"""

from __future__ import annotations

import functools
from datetime import date

import numpy as np
import pandas as pd
import pytest

import amort.book_step as engine
from amort import Loan
from amort.book import Book, book_from_frame, loan_from_row, read_book
from amort.book_positions import POSITION_COLUMNS, positions, positions_totals
from amort.book_synth import synthetic_book, varied_book

AS_OF = ("2020-02-29", "2021-07-15", "2023-12-31")


@functools.cache
def varied() -> Book:
    return book_from_frame(varied_book(300, seed=11))


@functools.cache
def loan_of(loan_id: str) -> Loan:
    loans = varied().loans
    return loan_from_row(loans[loans["loan_id"] == loan_id].iloc[0])


@functools.cache
def schedule_of(loan_id: str) -> pd.DataFrame:
    return loan_of(loan_id).schedule()


def cents(values: object) -> np.ndarray:
    return np.rint(np.asarray(values, dtype=np.float64) * 100).astype(np.int64)


def expected(loan: pd.Series, day: str) -> dict[str, object]:
    """A loan's position, read off its own schedule (Loan.schedule())."""
    frame = schedule_of(loan["loan_id"])
    due = frame["due_date"].to_numpy().astype("M8[D]")
    made = int(np.count_nonzero(due <= np.datetime64(day)))
    pay, interest = cents(frame["payment"]), cents(frame["interest"])
    balloon = cents(frame["balloon"]) if "balloon" in frame else np.zeros(len(frame), np.int64)
    closing = cents(frame["closing_balance"])
    rows = len(frame)
    later = loan["disbursed_on"] > pd.Timestamp(day)
    return {
        "payments_made": made,
        "remaining_payments": rows - made,
        "interest_to_date": int(interest[:made].sum()),
        "paid_to_date": int((pay + balloon)[:made].sum()),
        "scheduled_balance": 0
        if later
        else int(closing[made - 1] if made else loan["principal_cents"]),
        "total_interest": int(interest.sum()),
        "final_payment": int(pay[-1]),
        "balloon": int(balloon[-1]),
        "payment": round(loan_of(loan["loan_id"]).payment * 100),
        "next_payment": int((pay + balloon)[made]) if made < rows else None,
        "next_due_date": due[made] if made < rows else None,
        "maturity_date": due[-1],
    }


def got(row: pd.Series) -> dict[str, object]:
    money = {
        name: int(cents([row[name]])[0])
        for name in (
            "interest_to_date",
            "paid_to_date",
            "scheduled_balance",
            "total_interest",
            "final_payment",
            "balloon",
            "payment",
        )
    }
    return {
        "payments_made": int(row["payments_made"]),
        "remaining_payments": int(row["remaining_payments"]),
        **money,
        "next_payment": None
        if np.isnan(row["next_payment"])
        else int(cents([row["next_payment"]])[0]),
        "next_due_date": None
        if pd.isna(row["next_due_date"])
        else np.datetime64(row["next_due_date"], "D"),
        "maturity_date": np.datetime64(row["maturity_date"], "D"),
    }


@pytest.mark.parametrize("day", AS_OF)
def test_every_position_is_the_cent_of_the_loans_own_schedule(day: str) -> None:
    book = varied()
    assert book.processed > 250  # the book's own rules refuse some of the drawn terms
    table = positions(book, day)
    mismatched = []
    for k in range(len(book.loans)):
        loan = book.loans.iloc[k]
        if expected(loan, day) != got(table.iloc[k]):
            mismatched.append(loan["loan_id"])
    assert mismatched == []


def test_the_varied_book_covers_every_convention() -> None:
    loans = varied().loans
    assert set(loans["day_count"]) == {
        "equal",
        "30/360",
        "30/360-bond",
        "30e/360",
        "30e/360-isda",
        "actual/360",
        "actual/365",
        "actual/actual-isda",
    }
    assert set(loans["structure"]) == {"level", "equal-principal", "bullet"}
    assert {"weekly", "biweekly", "monthly", "quarterly", "annual"} <= set(loans["frequency"])
    assert (loans["interest_only"] > 0).any() and (loans["balloon_cents"] > 0).any()
    assert (loans["payment_cents"] > 0).any() and (loans["annual_rate_num"] == 0).any()
    assert loans["per_loan"].any()  # semimonthly and business-day loans, one by one


@pytest.mark.parametrize("mode", ["int", "object"])
def test_the_int64_and_python_integer_paths_give_the_same_cents(
    mode: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    book = varied()
    fast = positions(book, AS_OF[1])
    monkeypatch.setattr(engine, "exact_mode", lambda terms: mode)
    slow = positions(book, AS_OF[1])
    pd.testing.assert_frame_equal(fast, slow)


def test_equal_periods_match_the_undated_loan() -> None:
    # Under the 'equal' day count with a regular first period every period earns
    # annual rate / p: the cents of the undated Loan with the same terms.
    raw = synthetic_book(60, seed=5, per_loan_share=0, products=("vehicle", "personal"))
    raw["day_count"], raw["first_due_on"], raw["balloon"] = "equal", "", ""
    book = book_from_frame(raw)
    table = positions(book, "2040-01-01")
    for k in range(len(book.loans)):
        loan = book.loans.iloc[k]
        fixed = int(loan["payment_cents"])
        undated = Loan(
            principal=int(loan["principal_cents"]) / 100,
            annual_rate=f"{int(loan['annual_rate_num']) / 10**6}%",
            periods=int(loan["term"]),
            fixed_payment=fixed / 100 if fixed else None,
        )
        summary = undated.summary()
        row = table.iloc[k]
        assert cents([row["total_interest"]])[0] == cents([float(summary["total_interest"])])[0]
        assert cents([row["final_payment"]])[0] == cents([float(summary["final_payment"])])[0]
        assert int(row["remaining_payments"]) == 0 and row["status"] == "repaid"


def test_status_before_disbursement_after_maturity_and_in_between() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["A", "B", "C"],
            "principal": ["12000", "12000", "12000"],
            "annual_rate": ["6", "6", "6"],
            "term": ["12", "12", "12"],
            "disbursed_on": ["2025-07-15", "2020-01-15", "2025-01-15"],
        }
    )
    table = positions(book_from_frame(frame), date(2025, 6, 30))
    assert list(table["status"]) == ["not disbursed", "repaid", "open"]
    assert list(table["scheduled_balance"].iloc[:2]) == [0.0, 0.0]
    assert list(table["payments_made"]) == [0, 12, 5]
    assert table["next_due_date"].iloc[2] == pd.Timestamp("2025-07-15")
    assert np.isnan(table["next_payment"].iloc[1]) and pd.isna(table["next_due_date"].iloc[1])


def test_a_payment_due_later_in_the_as_of_month_is_not_yet_made() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["A"],
            "principal": ["1200"],
            "annual_rate": ["0"],
            "term": ["12"],
            "disbursed_on": ["2025-01-20"],
        }
    )
    book = book_from_frame(frame)
    assert int(positions(book, "2025-06-19")["payments_made"].iloc[0]) == 4
    assert int(positions(book, "2025-06-20")["payments_made"].iloc[0]) == 5


def test_an_empty_book_gives_an_empty_frame_with_the_columns() -> None:
    empty = book_from_frame(
        pd.DataFrame(
            {"loan_id": [], "principal": [], "annual_rate": [], "term": [], "disbursed_on": []}
        )
    )
    table = positions(empty, "2025-06-30")
    assert len(table) == 0
    assert list(table.columns[: len(POSITION_COLUMNS)]) == list(POSITION_COLUMNS)


def test_totals_are_exact_sums_of_the_cents() -> None:
    # Python's integers as the reference: the sum of every loan's cents.
    table = positions(read_book("example_books/tallowmere_book.csv"), "2025-06-30")
    totals = positions_totals(table)
    assert round(totals["scheduled_balance"].iloc[0] * 100) == sum(
        int(v) for v in cents(table["scheduled_balance"])
    )
    by = positions_totals(table, by="segment")
    assert int(by["loans"].sum()) == len(table)
    assert round(by["interest_to_date"].sum() * 100) == round(
        totals["interest_to_date"].iloc[0] * 100
    )


def test_progress_is_reported_up_to_every_loan() -> None:
    book = varied()
    seen: list[tuple[int, int]] = []
    positions(book, AS_OF[0], progress=lambda done, total: seen.append((done, total)))
    assert seen[-1] == (book.processed, book.processed)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)
