"""Exports of book results (positions, projections) and of the rejected rows: CSV, XLSX, Parquet.

Every file carries the caution and the row counts (read, processed, rejected):

- CSV (UTF-8, ISO dates, dot decimal, money to the cent): ``#`` lines with the caution
  and the notes, then the table; read back with
  ``pandas.read_csv(path, comment="#")``. The rejected rows go to a file beside it,
  ``<name>.rejected.csv``, when there are any.
- XLSX (openpyxl, write-only): a sheet with the table, a sheet ``rejected rows`` and a
  sheet ``about`` with the caution, the counts and the notes; a projection adds a
  ``charts`` sheet, a positions workbook a schedule sheet for each of its first
  :data:`~amort.io.xlsx_book.LOAN_SHEETS` loans and, beyond that, every schedule in
  ``<name>.schedules.parquet`` beside it (:mod:`amort.io.xlsx_book`).
- Parquet: the table, with the caution, counts and notes in the file's key-value
  metadata; the rejected rows beside it as ``<name>.rejected.parquet``.

Text that a spreadsheet would take for a formula (a leading ``=``, ``+``, ``-``, ``@``,
tab or carriage return) is written with a leading apostrophe in CSV and XLSX
(:func:`amort.io.files.as_text_cell`). Each file is written under a temporary name and
renamed; every target is checked (and an existing file kept unless ``force``) before
any is written.
"""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from amort.book import loan_from_row
from amort.caution import CAUTION
from amort.errors import ExportError
from amort.io.book_parquet import write_schedules
from amort.io.files import as_text_cell, check_target, write_atomic, write_text_atomic
from amort.io.xlsx_book import (
    LOAN_SHEETS,
    add_loan_sheets,
    add_projection_charts,
    append_frame,
    guarded,
)

__all__ = [
    "EXPORT_KINDS",
    "LOAN_SHEETS",
    "export_table",
    "export_targets",
    "rejected_path",
    "schedules_path",
]

#: The file kinds :func:`export_table` writes, by extension.
EXPORT_KINDS = (".csv", ".xlsx", ".parquet")
#: Rows a worksheet holds below its header row.
SHEET_ROWS = 1_048_575
_DATES = ("next_due_date", "maturity_date", "month_end", "due_date")


def rejected_path(path: Path) -> Path:
    """The file beside ``path`` that takes the rejected rows (CSV and Parquet exports).

    >>> rejected_path(Path("out/positions.csv")).as_posix()
    'out/positions.rejected.csv'
    """
    return path.with_name(f"{path.stem}.rejected{path.suffix}")


def schedules_path(path: Path) -> Path:
    """The Parquet file beside a positions workbook that takes every loan's schedule.

    >>> schedules_path(Path("out/positions.xlsx")).as_posix()
    'out/positions.schedules.parquet'
    """
    return path.with_name(f"{path.stem}.schedules.parquet")


def export_targets(
    path: str | Path,
    *,
    sheet: str,
    rejected: pd.DataFrame | None = None,
    loans: pd.DataFrame | None = None,
    loan_sheets: int = LOAN_SHEETS,
) -> list[Path]:
    """Return the files :func:`export_table` writes for these arguments, the table's first.

    A CSV or Parquet export adds :func:`rejected_path` when there are rejected rows;
    a positions workbook given the book's ``loans`` adds :func:`schedules_path`
    when the book has more than ``loan_sheets`` loans.

    >>> [p.name for p in export_targets("p.csv", sheet="positions")]
    ['p.csv']
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in EXPORT_KINDS:
        raise ExportError(
            f"cannot write {str(path)!r}: the export must end in .csv, .xlsx or .parquet "
            f"(got {suffix or 'no extension'!r})"
        )
    if loan_sheets < 0:
        raise ExportError(f"'loan_sheets' must be >= 0 (got {loan_sheets})")
    targets = [path]
    if suffix != ".xlsx" and rejected is not None and len(rejected):
        targets.append(rejected_path(path))
    positions_book = suffix == ".xlsx" and sheet == "positions" and loans is not None
    if positions_book and loans is not None and len(loans) > loan_sheets:
        targets.append(schedules_path(path))
    return targets


def export_table(
    frame: pd.DataFrame,
    path: str | Path,
    *,
    sheet: str,
    rejected: pd.DataFrame | None = None,
    notes: dict[str, Any] | None = None,
    force: bool = False,
    loans: pd.DataFrame | None = None,
    loan_sheets: int = LOAN_SHEETS,
) -> list[Path]:
    """Write ``frame`` (and the ``rejected`` rows) to ``path`` by its extension; return the files.

    ``sheet`` names the table (``positions``, ``projection``); ``notes`` (the counts,
    the as-of date, the assumptions) go into every file beside the caution.

    Workbooks: a projection gets a ``charts`` sheet (its monthly totals, a line
    chart of the balance and stacked columns of the collections); a positions
    workbook given the book's validated ``loans`` gets a ``loan sheets`` index and
    one schedule sheet for each of the first ``loan_sheets`` loans (default
    :data:`LOAN_SHEETS`), and, when the book has more, every loan's schedule in
    :func:`schedules_path` beside it (:func:`amort.io.book_parquet.write_schedules`),
    as the index and the ``about`` sheet say. Every target is checked before any
    file is written.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    targets = export_targets(
        path, sheet=sheet, rejected=rejected, loans=loans, loan_sheets=loan_sheets
    )
    notes = dict(notes or {})
    bad = rejected if rejected is not None and len(rejected) else None
    for target in targets:
        check_target(target, force=force)
    if suffix == ".csv":
        write_text_atomic(path, _csv_text(frame, notes), force=force)
        if bad is not None:
            write_text_atomic(targets[1], _csv_text(bad, notes), force=force)
    elif suffix == ".parquet":
        _write_parquet(frame, path, notes, force)
        if bad is not None:
            _write_parquet(bad, targets[1], notes, force)
    else:
        if len(frame) > SHEET_ROWS or (bad is not None and len(bad) > SHEET_ROWS):
            raise ExportError(
                f"cannot write {str(path)!r}: {len(frame):,} rows do not fit a worksheet "
                f"({SHEET_ROWS:,} at most); write .csv or .parquet instead"
            )
        beside = targets[1] if len(targets) > 1 else None
        if beside is not None and loans is not None:
            write_schedules(loans, beside, force=force)
        write_atomic(
            path,
            lambda tmp: _write_xlsx(frame, tmp, sheet, rejected, notes, loans, loan_sheets, beside),
            force=force,
        )
    return targets


def _note_lines(notes: dict[str, Any]) -> list[str]:
    return [f"{key}: {value}" for key, value in notes.items()]


def _csv_text(frame: pd.DataFrame, notes: dict[str, Any]) -> str:
    out = guarded(frame)
    for name in out.columns:
        if name in _DATES:
            out[name] = pd.to_datetime(out[name]).dt.strftime("%Y-%m-%d").fillna("")
        elif out[name].dtype == np.float64:
            out[name] = out[name].map(lambda x: "" if x != x else f"{x:.2f}")
    buffer = io.StringIO()
    buffer.write(f"# {CAUTION}\n")
    for line in _note_lines(notes):
        buffer.write(f"# {line}\n")
    out.to_csv(buffer, index=False, lineterminator="\n")
    return buffer.getvalue()


def _write_parquet(frame: pd.DataFrame, path: Path, notes: dict[str, Any], force: bool) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(_plain(frame), preserve_index=False)
    metadata = dict(table.schema.metadata or {})
    metadata[b"caution"] = CAUTION.encode()
    metadata[b"amort_notes"] = json.dumps(notes, default=str).encode()
    table = table.replace_schema_metadata(metadata)
    write_atomic(path, lambda tmp: pq.write_table(table, tmp), force=force)


def _plain(frame: pd.DataFrame) -> pd.DataFrame:
    out = frame.copy()
    for name in out.columns:
        if isinstance(out[name].dtype, pd.CategoricalDtype):
            out[name] = out[name].astype("str")
    return out


def _write_xlsx(
    frame: pd.DataFrame,
    path: Path,
    sheet: str,
    rejected: pd.DataFrame | None,
    notes: dict[str, Any],
    loans: pd.DataFrame | None,
    loan_sheets: int,
    beside: Path | None,
) -> None:
    import openpyxl

    book = openpyxl.Workbook(write_only=True)
    append_frame(book, sheet, frame)
    append_frame(
        book, "rejected rows", rejected if rejected is not None else pd.DataFrame({"row": []})
    )
    about = book.create_sheet("about")
    about.append(["caution", CAUTION])
    for key, value in notes.items():
        about.append([str(key), as_text_cell(str(value))])
    if sheet == "projection" and len(frame):
        add_projection_charts(book, frame, title=_chart_title(notes))
    if loans is not None and sheet == "positions":
        shown = min(len(loans), loan_sheets)
        about.append(
            ["loan sheets", f"the first {shown:,} of {len(loans):,} loans (limit {loan_sheets:,})"]
        )
        if beside is not None:
            about.append(["every schedule", beside.name])
        add_loan_sheets(
            book,
            loans,
            lambda row: loan_from_row(row).schedule(),
            limit=loan_sheets,
            taken=[sheet, "rejected rows", "about"],
            beside=None if beside is None else beside.name,
        )
    book.save(path)


def _chart_title(notes: dict[str, Any]) -> str:
    """The charts' title: the book, the date and the assumptions, as far as the notes say."""
    text = f"Projection of {Path(str(notes.get('book', 'the book'))).name}"
    if "as_of" in notes:
        text += f" as of {notes['as_of']}"
    said = [f"{notes[k]} {k}" for k in ("prepayment", "defaults") if k in notes]
    if "recovery" in notes:
        said.append(f"recovery {notes['recovery']}")
    return text + (": " + ", ".join(said) if said else "")
