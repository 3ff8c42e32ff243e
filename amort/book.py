"""Loan books: the book layout (format 1), its readers and its row-level validation.

A book is a table with one row a loan. Files are CSV (UTF-8), XLSX (the first sheet,
or one named ``loans``) or Parquet; the extension chooses the reader and the content
must agree with it. Rows before the header whose first cell starts with ``#`` are
comments; ``# book format: 1`` declares the layout (Parquet: the key-value metadata
``amort_book_format``). Column names are matched without regard to case or
surrounding spaces.

Book format 1 (currency units are whatever the book is kept in; rates in percent):

==============  ========  =================================================================
column          required  what it holds
==============  ========  =================================================================
loan_id         yes       the loan's identifier, text, unique in the book
borrower        no        the borrower's name, text (a label)
segment         no        product line, branch or pool, text (a label)
principal       yes       amount lent, currency units, whole cents, > 0 and <= 10**12
annual_rate     yes       nominal rate, percent a year (6.5 = 6.5 %), 0 to 100, at most
                          6 decimals; for a variable loan the rate now in force
term            yes       number of payments, 1 to 1,200, spanning at most 60 years
frequency       no        weekly, biweekly, semimonthly, monthly (default), bimonthly,
                          quarterly, semiannual, annual
disbursed_on    yes       disbursement date, YYYY-MM-DD, 1950-01-01 to 2150-12-31
first_due_on    no        first due date, after disbursed_on and at most 12 periods after
                          it; default one regular period after disbursed_on
day_count       no        equal (default: each period 1/p of a year), 30/360,
                          30/360-bond, 30e/360, 30e/360-isda, actual/360, actual/365,
                          actual/actual-isda
structure       no        level (default), equal-principal, bullet
interest_only   no        interest-only payments before amortisation (level and
                          equal-principal), fewer than term; default 0
balloon         no        currency units paid with the last payment, below the principal
                          (level and equal-principal); default 0
payment         no        the lender's own level payment, currency units (level loans
                          without interest-only payments); default the closed form
rate_index      no        the reference rate a variable loan follows, text (a label)
rate_margin     no        percent a year over rate_index, may be negative (a label)
fees            no        currency units charged at disbursement, not financed and not
                          in the schedule (carried for reporting); default 0
business_days   no        none (default), following, modified-following, preceding
holidays        no        holiday calendar for business_days, e.g. US or GB-ENG
==============  ========  =================================================================

Other columns are kept as text labels (for ``--group-by``) and listed in
:attr:`Book.extra_columns`. Every loan pays in arrears; the payment is rounded
half-up, each period's interest half-up (amort's defaults), and odd days of a long
first period accrue in it; interest runs to the scheduled due dates, and a
business-day rule moves only the dates the payments fall on. Rows the vectorised
engine cannot take (semimonthly, a business-day rule with a holiday calendar) are
built as :class:`~amort.loan.Loan` here and refused with its message if it refuses them.

Validated loans come back in the book's exact form (:data:`EXACT_COLUMNS`): money in
int64 cents, the annual rate as ``annual_rate_num / 10**8`` (a decimal fraction),
dates as datetime64. Nothing on the money path passes through a binary float: text
is read as exact decimals (a float cell through its shortest repr, as
:func:`amort.money.parse_number` does).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from decimal import Decimal
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from amort import book_read
from amort.book_read import TextChunk
from amort.calendar import BusinessDay
from amort.conventions import Frequency, Structure
from amort.daycount import DayCount
from amort.errors import InvalidTerms
from amort.loan import AnnualRate, Loan

__all__ = [
    "EXACT_COLUMNS",
    "FORMAT",
    "RATE_DEN",
    "REQUIRED",
    "SCHEMA",
    "Book",
    "BookRowError",
    "add_months64",
    "book_from_frame",
    "loan_from_row",
    "read_book",
    "step_of",
]

#: The book layout this module reads and writes.
FORMAT = 1
#: ``annual_rate_num / RATE_DEN`` is the annual rate as a decimal fraction (1e-6 percent steps).
RATE_DEN = 10**8
MAX_TERM = 1_200
MAX_YEARS = 60
MAX_FIRST_PERIODS = 12
FIRST_DAY, LAST_DAY = date(1950, 1, 1), date(2150, 12, 31)

#: Every column of book format 1, in order; the others are optional.
SCHEMA = (
    "loan_id",
    "borrower",
    "segment",
    "principal",
    "annual_rate",
    "term",
    "frequency",
    "disbursed_on",
    "first_due_on",
    "day_count",
    "structure",
    "interest_only",
    "balloon",
    "payment",
    "rate_index",
    "rate_margin",
    "fees",
    "business_days",
    "holidays",
)
REQUIRED = ("loan_id", "principal", "annual_rate", "term", "disbursed_on")
LABELS = ("borrower", "segment", "rate_index")

#: The validated book (:attr:`Book.loans`), then any extra label columns.
EXACT_COLUMNS = (
    "row",
    "loan_id",
    "borrower",
    "segment",
    "principal_cents",
    "annual_rate_num",
    "term",
    "frequency",
    "disbursed_on",
    "first_due_on",
    "day_count",
    "structure",
    "interest_only",
    "balloon_cents",
    "payment_cents",
    "rate_index",
    "rate_margin_num",
    "fees_cents",
    "business_days",
    "holidays",
    "per_loan",
)
REJECTED_COLUMNS = ("row", "loan_id", "column", "value", "problem")

#: Months (or days) in one regular period; semimonthly has neither.
_STEPS = {
    Frequency.WEEKLY: (0, 7),
    Frequency.BIWEEKLY: (0, 14),
    Frequency.MONTHLY: (1, 0),
    Frequency.BIMONTHLY: (2, 0),
    Frequency.QUARTERLY: (3, 0),
    Frequency.SEMIANNUAL: (6, 0),
    Frequency.ANNUAL: (12, 0),
}


def step_of(frequency: Frequency) -> tuple[int, int] | None:
    """Return ``(months, days)`` of one regular period, or None (semimonthly).

    >>> step_of(Frequency.QUARTERLY), step_of(Frequency.BIWEEKLY)
    ((3, 0), (0, 14))
    """
    return _STEPS.get(frequency)


def add_months64(days: np.ndarray, months: np.ndarray | int) -> np.ndarray:
    """Return each ``datetime64[D]`` date moved by whole months, the day kept or clipped.

    The same rule as :func:`amort.calendar.add_months`: 31 January plus one month is
    28 (or 29) February, and plus two months 31 March.

    >>> add_months64(np.array(["2027-01-31"], dtype="M8[D]"), np.array([1, 2])).tolist()
    [datetime.date(2027, 2, 28), datetime.date(2027, 3, 31)]
    """
    days = np.asarray(days, dtype="M8[D]")
    month = days.astype("M8[M]")
    day = (days - month.astype("M8[D]")).astype(np.int64)
    target = month + np.asarray(months, dtype=np.int64)
    start = target.astype("M8[D]")
    length = ((target + 1).astype("M8[D]") - start).astype(np.int64)
    return start + np.minimum(day, length - 1).astype("m8[D]")


class BookRowError(InvalidTerms):
    """A bad row under ``strict``: the message names the row; ``counts`` so far."""

    def __init__(self, message: str, counts: dict[str, int]) -> None:
        super().__init__(message)
        self.counts = counts


@dataclass(frozen=True)
class Book:
    """A validated book: the good loans, the problems of the bad rows, and the counts.

    loans: one row a loan in the exact form (:data:`EXACT_COLUMNS`, then extra labels).
    rejected: one row a problem (:data:`REJECTED_COLUMNS`); a row may have several.
    read: data rows read from the source (blank rows are not rows).
    """

    loans: pd.DataFrame
    rejected: pd.DataFrame
    read: int
    source: str | None = None
    extra_columns: tuple[str, ...] = field(default=())

    @property
    def rejected_rows(self) -> int:
        """How many rows were refused (each may have several problems)."""
        return int(self.rejected["row"].nunique())

    @property
    def processed(self) -> int:
        """How many rows became loans."""
        return len(self.loans)

    @property
    def counts(self) -> dict[str, int]:
        """``read``, ``processed`` and ``rejected`` rows; ``read = processed + rejected``."""
        return {"read": self.read, "processed": self.processed, "rejected": self.rejected_rows}


def read_book(path: str | Path, *, strict: bool = False, chunk_rows: int = 250_000) -> Book:
    """Read and validate a book file (.csv, .xlsx or .parquet), ``chunk_rows`` rows at a time.

    A huge CSV or Parquet file is streamed, never held whole (only the loans' exact
    columns are kept). By default the good rows become loans and every problem of
    the bad ones is in :attr:`Book.rejected`; with ``strict`` the first bad row
    raises :class:`BookRowError`. A file that cannot be read, or is not what its
    extension says, raises :class:`~amort.errors.ExportError`; a book with no loan
    rows or without a required column raises :class:`~amort.errors.InvalidTerms`.

    >>> book = read_book("example_books/tallowmere_book.csv")
    >>> book.counts
    {'read': 300, 'processed': 300, 'rejected': 0}
    """
    from amort.book_rules import Checker

    path = Path(path)
    checker = Checker(strict=strict, source=str(path))
    for chunk in book_read.chunks(path, chunk_rows):
        checker.add(chunk)
    return checker.finish()


def book_from_frame(frame: pd.DataFrame, *, strict: bool = False, first_row: int = 2) -> Book:
    """Validate a book given as a DataFrame in the file layout (one row a loan).

    Cells may be text, numbers (a float read through its shortest repr) or dates;
    rows are numbered from ``first_row`` (2: the row under a header). It takes one
    partition at a time, e.g. under dask's ``map_partitions``; an empty frame gives
    an empty book.

    >>> frame = pd.DataFrame({"loan_id": ["A-1"], "principal": ["18500"],
    ...     "annual_rate": [7.9], "term": [60], "disbursed_on": ["2025-01-15"]})
    >>> loans = book_from_frame(frame).loans
    >>> loans[["principal_cents", "annual_rate_num", "term"]].iloc[0].tolist()
    [1850000, 7900000, 60]
    """
    names = book_read.header([str(c) for c in frame.columns], "the frame")
    columns = {n: book_read.as_text(frame.iloc[:, k]) for k, n in enumerate(names) if n}
    from amort.book_rules import Checker

    rows = np.arange(first_row, first_row + len(frame), dtype=np.int64)
    checker = Checker(strict=strict, source=None)
    checker.add(TextChunk(columns, rows, []))
    return checker.finish(allow_empty=True)


def loan_from_row(row: Any) -> Loan:
    """Return the :class:`~amort.loan.Loan` of one validated loan (a row of :attr:`Book.loans`).

    It is the per-loan reference the vectorised book engine matches cent for cent.
    """
    first = row["first_due_on"]
    holidays = str(row["holidays"]) or None
    payment = int(row["payment_cents"])
    return Loan(
        principal=Decimal(int(row["principal_cents"])) / 100,
        annual_rate=AnnualRate(Decimal(int(row["annual_rate_num"])) / RATE_DEN),
        periods=int(row["term"]),
        frequency=Frequency(str(row["frequency"])),
        balloon=Decimal(int(row["balloon_cents"])) / 100,
        fixed_payment=Decimal(payment) / 100 if payment else None,
        start=pd.Timestamp(row["disbursed_on"]).date(),
        first_payment=None if pd.isna(first) else pd.Timestamp(first).date(),
        day_count=DayCount(str(row["day_count"])),
        structure=Structure(str(row["structure"])),
        interest_only_periods=int(row["interest_only"]),
        business_days=BusinessDay(str(row["business_days"])),
        holidays=holidays,
    )
