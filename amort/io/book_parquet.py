"""Full schedules of a large book streamed to one Parquet file, a few thousand loans at a time.

:func:`write_schedules` runs the book engine (:mod:`amort.book_engine`) on slices of
the book and appends each slice's rows to a Parquet file as one row group, so memory
stays bounded by the slice, whatever the size of the book. The file is written under
a temporary name in the target folder and renamed when complete (an existing file is
kept unless ``force``): a failed or interrupted run leaves no half-written file.

Columns, one row a period of a loan, in loan-then-period order: ``loan_id``,
``period``, ``due_date`` (Parquet DATE), ``opening_balance``, ``payment``,
``interest``, ``principal``, ``balloon``, ``closing_balance`` (money as float64
holding exact cents, currency units: the cents of :meth:`amort.loan.Loan.schedule`).
The caution is in the file's key-value metadata.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from amort import book_engine
from amort.book import Book
from amort.caution import CAUTION
from amort.io.files import write_atomic

__all__ = ["SCHEDULE_COLUMNS", "write_schedules"]

#: Columns of the schedules file.
SCHEDULE_COLUMNS = (
    "loan_id",
    "period",
    "due_date",
    "opening_balance",
    "payment",
    "interest",
    "principal",
    "balloon",
    "closing_balance",
)
#: Loans a row group holds (about 1.5 million rows for 30-year monthly loans).
SLICE = 4_096


def write_schedules(
    book: Book | pd.DataFrame,
    path: str | Path,
    *,
    force: bool = False,
    progress: Callable[[int, int], None] | None = None,
    slice_loans: int = SLICE,
) -> int:
    """Stream every loan's schedule to the Parquet file ``path``; return the rows written.

    ``progress(done, total)`` is called with the loans written so far.
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    loans = book.loans if isinstance(book, Book) else book
    schema = pa.schema(
        [
            ("loan_id", pa.string()),
            ("period", pa.int32()),
            ("due_date", pa.date32()),
            *[(name, pa.float64()) for name in SCHEDULE_COLUMNS[3:]],
        ],
        metadata={b"caution": CAUTION.encode(), b"amort_content": b"loan schedules"},
    )
    written = 0

    def write(tmp: Path) -> None:
        nonlocal written
        with pq.ParquetWriter(tmp, schema) as writer:
            done = 0
            for run in book_engine.runs(
                loans, np.datetime64("1900-01-01"), record=True, chunk=slice_loans
            ):
                table = _rows(loans, run, schema)
                writer.write_table(table)
                written += table.num_rows
                done += run.index.size
                if progress is not None:
                    progress(done, len(loans))

    write_atomic(Path(path), write, force=force)
    return written


def _rows(loans: pd.DataFrame, run: book_engine.Run, schema: Any) -> Any:
    """One run's schedule rows as an Arrow table (loan-then-period order)."""
    import pyarrow as pa

    assert run.interest is not None and run.cash is not None
    horizon, size = run.interest.shape
    # Loan-major views: row j holds loan j's periods 1..horizon.
    interest = np.ascontiguousarray(run.interest.T)
    cash = np.ascontiguousarray(run.cash.T)
    period = np.arange(1, horizon + 1, dtype=np.int64)
    mask = period[None, :] <= run.rows[:, None]
    last = period[None, :] == run.rows[:, None]
    balloon = np.where(last, run.balloon[:, None], 0).astype(np.float64)
    payment = cash - balloon
    principal = payment - interest
    start = loans["principal_cents"].to_numpy(np.int64)[run.index].astype(np.float64)
    closing = start[:, None] - np.cumsum(principal + balloon, axis=1)
    opening = closing + principal + balloon
    who = np.repeat(np.arange(size), run.rows)
    k = period[None, :].repeat(size, axis=0)[mask]
    due = run.due_days(who, k).astype("M8[D]")
    ids = pa.array(loans["loan_id"].to_numpy(dtype=object)[run.index[who]], pa.string())
    columns = [
        ids,
        pa.array(k.astype(np.int32)),
        pa.array(due, pa.date32()),
        *[
            pa.array(values[mask] / 100.0)
            for values in (opening, payment, interest, principal, balloon, closing)
        ],
    ]
    return pa.Table.from_arrays(columns, schema=schema)
