"""Positions of a loan book as of a date, vectorised across loans, in exact cents.

For each loan of a validated book (:attr:`amort.book.Book.loans`) and an as-of date:
the scheduled balance after the payments due on or before that date, how many
payments that is and what they came to, the interest of those periods, the next due
date and what falls due then (any balloon included), the payments left, the
maturity date, the final payment and the total interest over the life. Every cent is
the cent of the loan's own schedule, :meth:`amort.loan.Loan.schedule` (the same rules:
each period's interest is the opening balance times its exact rate rounded half-up,
the last payment pays what is left). The positions are *scheduled*: they say where
the loan stands if every payment was made on its due date.

How (see :mod:`amort.book_engine` for the stepping itself): loans are grouped by day
count, sorted by term and stepped in chunks, every loan of a chunk at once, keeping
only running state, so memory stays bounded whatever the size of the book.
Monthly-type and weekly frequencies with every day count, and weekend-only
business-day rules, run vectorised, the due dates and each period's exact rate
computed for all loans of a chunk together; semimonthly loans and business-day rules
with a holiday calendar run one by one through :class:`amort.loan.Loan` (``per_loan``
in the book, about 100 loans a second), with the same results.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import date
from typing import Any

import numpy as np
import pandas as pd

from amort import book_engine
from amort.book import EXACT_COLUMNS, RATE_DEN, Book
from amort.calendar import parse_date

__all__ = ["POSITION_COLUMNS", "STATUSES", "positions", "positions_totals"]

Progress = Callable[[int, int], None]

#: The columns of :func:`positions` (then the book's label columns), money in currency units.
POSITION_COLUMNS = (
    "row",
    "loan_id",
    "borrower",
    "segment",
    "status",
    "principal",
    "annual_rate",
    "payment",
    "payments_made",
    "paid_to_date",
    "interest_to_date",
    "scheduled_balance",
    "next_due_date",
    "next_payment",
    "remaining_payments",
    "maturity_date",
    "final_payment",
    "balloon",
    "total_interest",
    "fees",
)
#: The values of ``status`` (a categorical column).
STATUSES = ("open", "repaid", "not disbursed")


def loans_of(book: Book | pd.DataFrame) -> pd.DataFrame:
    """The validated loans of ``book`` (a :class:`~amort.book.Book` or its ``loans`` frame)."""
    return book.loans if isinstance(book, Book) else book


def positions(
    book: Book | pd.DataFrame,
    as_of: date | str,
    *,
    progress: Progress | None = None,
) -> pd.DataFrame:
    """Return each loan's position as of ``as_of`` (a date or YYYY-MM-DD), one row a loan.

    Columns (:data:`POSITION_COLUMNS`, then the book's extra labels); money is float64
    holding exact cents, in currency units:

    - ``status``: ``open``, ``repaid`` (every payment due by the date) or ``not disbursed``
      (disbursed after the date; its balance is 0 and no payment is due yet);
    - ``payment``: the regular payment (the level payment, or the first amortising
      payment of an equal-principal loan, the interest payment of a bullet loan);
    - ``payments_made``, ``paid_to_date``, ``interest_to_date``: the payments due on or
      before the date, what they came to and the interest of their periods (interest
      accruing in the current period is not included);
    - ``scheduled_balance``: the balance after those payments;
    - ``next_due_date``, ``next_payment``: the next payment and what falls due then,
      balloon included (NaT and NaN once repaid); ``remaining_payments``;
    - ``maturity_date``, ``final_payment`` (without the balloon), ``balloon``,
      ``total_interest`` over the life, ``annual_rate`` in percent.

    The frame in and the frame out are partitions of a book: under dask,
    ``ddf.map_partitions(positions, as_of)`` gives the same rows.

    >>> from amort.book import read_book
    >>> book = read_book("example_books/tallowmere_book.csv")
    >>> row = positions(book, "2025-06-30").iloc[0]
    >>> row["loan_id"], int(row["payments_made"]), float(row["scheduled_balance"])
    ('TCL-10001', 50, 4924.61)
    """
    loans = loans_of(book)
    day = np.datetime64(parse_date(as_of, "as_of"), "D")
    size = len(loans)
    made = np.zeros(size, dtype=np.int64)
    rows = np.zeros(size, dtype=np.int64)
    money = {name: np.zeros(size, dtype=np.int64) for name in _CENTS}
    next_due = np.full(size, np.datetime64("NaT"), dtype="M8[D]")
    maturity = np.full(size, np.datetime64("NaT"), dtype="M8[D]")
    for run in book_engine.runs(loans, day, progress=progress):
        at = run.index
        made[at], rows[at] = run.made, run.rows
        for name in _CENTS:
            money[name][at] = getattr(run, name)
        has_next = run.made < run.rows
        upcoming = np.full(at.size, np.datetime64("NaT"), dtype="M8[D]")
        if has_next.any():
            upcoming[has_next] = run.due(np.flatnonzero(has_next), run.made[has_next] + 1)
        next_due[at] = upcoming
        maturity[at] = run.due(np.arange(at.size), run.rows)
    return _frame(loans, day, made, rows, money, next_due, maturity)


_CENTS = (
    "regular",
    "paid",
    "interest_to_date",
    "balance",
    "next_payment",
    "final_payment",
    "balloon",
    "total_interest",
)


def _frame(
    loans: pd.DataFrame,
    day: np.datetime64,
    made: np.ndarray,
    rows: np.ndarray,
    money: dict[str, np.ndarray],
    next_due: np.ndarray,
    maturity: np.ndarray,
) -> pd.DataFrame:
    start = loans["disbursed_on"].to_numpy().astype("M8[ns]")
    later = start > day.astype("M8[ns]")
    repaid = ~later & (made >= rows)
    codes = np.where(later, 2, np.where(repaid, 1, 0))
    status = pd.Categorical.from_codes(codes, categories=pd.Index(STATUSES))
    balance = np.where(later, 0, money["balance"])
    upcoming = np.where(made < rows, money["next_payment"] / 100, np.nan)
    cents = lambda a: np.asarray(a, dtype=np.int64) / 100  # noqa: E731
    data: dict[str, Any] = {
        "row": loans["row"].to_numpy(np.int64),
        "loan_id": loans["loan_id"].array,
        "borrower": loans["borrower"].array,
        "segment": loans["segment"].array,
        "status": status,
        "principal": cents(loans["principal_cents"].to_numpy()),
        "annual_rate": loans["annual_rate_num"].to_numpy(np.float64) / (RATE_DEN // 100),
        "payment": cents(money["regular"]),
        "payments_made": made,
        "paid_to_date": cents(money["paid"]),
        "interest_to_date": cents(money["interest_to_date"]),
        "scheduled_balance": cents(balance),
        "next_due_date": next_due.astype("datetime64[ns]"),
        "next_payment": upcoming,
        "remaining_payments": rows - made,
        "maturity_date": maturity.astype("datetime64[ns]"),
        "final_payment": cents(money["final_payment"]),
        "balloon": cents(money["balloon"]),
        "total_interest": cents(money["total_interest"]),
        "fees": cents(loans["fees_cents"].to_numpy()),
    }
    frame = pd.DataFrame(data, index=loans.index)
    extra = [c for c in loans.columns if c not in _BOOK_COLUMNS]
    for name in ("rate_index", *extra):
        frame[name] = loans[name].array
    return frame


_BOOK_COLUMNS = frozenset(EXACT_COLUMNS)  # the validated book's own columns (amort.book)


def positions_totals(frame: pd.DataFrame, *, by: str | None = None) -> pd.DataFrame:
    """Sum a :func:`positions` frame, exactly (through integer cents), overall or by a label.

    Columns: ``loans``, ``open``, ``principal``, ``scheduled_balance``,
    ``interest_to_date``, ``paid_to_date``, ``next_payment`` (what falls due next,
    summed) and ``total_interest``.

    >>> from amort.book import read_book
    >>> p = positions(read_book("example_books/tallowmere_book.csv"), "2025-06-30")
    >>> int(positions_totals(p)["loans"].iloc[0])
    300
    """
    keys = frame[by].astype("str") if by else pd.Series("all", index=frame.index, dtype="str")
    sums: dict[str, Any] = {
        "loans": np.ones(len(frame), dtype=np.int64),
        "open": (frame["status"] == "open").to_numpy().astype(np.int64),
    }
    for name in (
        "principal",
        "scheduled_balance",
        "interest_to_date",
        "paid_to_date",
        "next_payment",
        "total_interest",
    ):
        values = frame[name].fillna(0.0).to_numpy(np.float64)
        sums[name] = np.rint(values * 100).astype(np.int64)
    table = pd.DataFrame(sums, index=frame.index)
    table.insert(0, by or "book", keys.to_numpy())
    grouped = table.groupby(by or "book", sort=True).sum().reset_index()
    for name in (
        "principal",
        "scheduled_balance",
        "interest_to_date",
        "paid_to_date",
        "next_payment",
        "total_interest",
    ):
        grouped[name] = grouped[name].to_numpy(np.int64) / 100
    return grouped
