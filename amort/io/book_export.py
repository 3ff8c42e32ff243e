"""Exports of book results (positions, projections) and of the rejected rows: CSV, XLSX, Parquet.

Every file carries the caution and the row counts (read, processed, rejected):

- CSV (UTF-8, ISO dates, dot decimal, money to the cent): ``#`` lines with the caution
  and the notes, then the table; read back with
  ``pandas.read_csv(path, comment="#")``. The rejected rows go to a file beside it,
  ``<name>.rejected.csv``, when there are any.
- XLSX (openpyxl, write-only): a sheet with the table, a sheet ``rejected rows`` and a
  sheet ``about`` with the caution, the counts and the notes.
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

from amort.caution import CAUTION
from amort.errors import ExportError
from amort.io.files import as_text_cell, check_target, write_atomic, write_text_atomic

__all__ = ["EXPORT_KINDS", "export_table", "rejected_path"]

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


def export_table(
    frame: pd.DataFrame,
    path: str | Path,
    *,
    sheet: str,
    rejected: pd.DataFrame | None = None,
    notes: dict[str, Any] | None = None,
    force: bool = False,
) -> list[Path]:
    """Write ``frame`` (and the ``rejected`` rows) to ``path`` by its extension; return the files.

    ``sheet`` names the table (``positions``, ``projection``); ``notes`` (the counts,
    the as-of date, the assumptions) go into every file beside the caution.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in EXPORT_KINDS:
        raise ExportError(
            f"cannot write {str(path)!r}: the export must end in .csv, .xlsx or .parquet "
            f"(got {suffix or 'no extension'!r})"
        )
    notes = dict(notes or {})
    bad = rejected if rejected is not None and len(rejected) else None
    targets = [path] if suffix == ".xlsx" or bad is None else [path, rejected_path(path)]
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
        write_atomic(path, lambda tmp: _write_xlsx(frame, tmp, sheet, rejected, notes), force=force)
    return targets


def _guarded(frame: pd.DataFrame) -> pd.DataFrame:
    """Text columns made safe for spreadsheets; categorical columns as text."""
    out = frame.copy()
    for name in out.columns:
        column = out[name]
        if (
            isinstance(column.dtype, pd.CategoricalDtype)
            or column.dtype == object
            or (column.dtype == "str")
        ):
            out[name] = column.astype("str").map(as_text_cell).astype("str")
    return out


def _note_lines(notes: dict[str, Any]) -> list[str]:
    return [f"{key}: {value}" for key, value in notes.items()]


def _csv_text(frame: pd.DataFrame, notes: dict[str, Any]) -> str:
    out = _guarded(frame)
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
) -> None:
    import openpyxl
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.styles import Font

    book = openpyxl.Workbook(write_only=True)
    bold = Font(bold=True)

    def add(title: str, table: pd.DataFrame) -> None:
        ws = book.create_sheet(title)
        header = []
        for name in table.columns:
            cell = WriteOnlyCell(ws, value=str(name))
            cell.font = bold
            header.append(cell)
        ws.append(header)
        formats = {
            name: ("yyyy-mm-dd" if name in _DATES else "#,##0.00")
            for name in table.columns
            if name in _DATES or table[name].dtype == np.float64
        }
        safe = _guarded(table)
        columns = [safe[name].to_numpy(dtype=object) for name in safe.columns]
        names = list(safe.columns)
        for values in zip(*columns, strict=True):
            row = []
            for name, value in zip(names, values, strict=True):
                if value is None or (isinstance(value, float) and value != value):
                    value = None
                elif isinstance(value, pd.Timestamp):
                    value = None if pd.isna(value) else value.date()
                elif isinstance(value, (np.integer, np.floating)):
                    value = value.item()
                cell = WriteOnlyCell(ws, value=value)
                if name in formats and value is not None:
                    cell.number_format = formats[name]
                row.append(cell)
            ws.append(row)

    add(sheet, frame)
    add("rejected rows", rejected if rejected is not None else pd.DataFrame({"row": []}))
    about = book.create_sheet("about")
    about.append(["caution", CAUTION])
    for key, value in notes.items():
        about.append([str(key), as_text_cell(str(value))])
    book.save(path)
