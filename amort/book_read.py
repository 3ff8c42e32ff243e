"""Book files read as chunks of text columns: CSV, XLSX and Parquet, checked by content.

The extension chooses the reader and the first bytes must agree with it: an XLSX
workbook is a zip archive (``PK``), a Parquet file starts and ends with ``PAR1``, and a
CSV file is UTF-8 text. Each reader yields :class:`TextChunk` s of at most ``rows``
rows, every cell as text, so a huge file is never held whole:

- CSV is streamed by pyarrow's incremental reader; a record with the wrong number of
  fields is not a loan, and is reported as a malformed row instead of stopping the read.
- XLSX is read by openpyxl in read-only mode, with defusedxml imported first so that
  openpyxl parses the workbook's XML with it (no entity expansion, no external
  entities); the sheet is the one named ``loans``, else the first.
- Parquet is read batch by batch with pyarrow.

Rows are numbered as the file shows them: the header is row 1 plus any ``#`` comment
rows above it (for CSV, blank lines are not counted). Cells become text the way a
person would type them: a float through its shortest repr (``7.9``), a whole float
label without ``.0``, a date as ``YYYY-MM-DD``.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import date, datetime
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from amort.errors import ExportError, InvalidTerms

#: Largest number of bytes the CSV sniffing looks at.
_SNIFF = 65_536
_FORMAT_LINE = re.compile(r"^#\s*book\s+format\s*:?\s*(\S+)", re.IGNORECASE)
#: Extensions the readers know.
EXTENSIONS = (".csv", ".xlsx", ".parquet")


@dataclass(frozen=True)
class TextChunk:
    """Rows of a book file: each column as a pyarrow string array, and each row's number.

    ``malformed`` lists ``(row, message)`` for records that are not rows of the table
    (a CSV record with too many or too few fields), read but not in ``columns``.
    """

    columns: dict[str, pa.Array]
    rows: np.ndarray
    malformed: list[tuple[int, str]]


def chunks(path: Path, rows: int) -> Iterator[TextChunk]:
    """Yield the book file's rows as text chunks of at most ``rows`` rows (see module notes)."""
    suffix = path.suffix.lower()
    if suffix not in EXTENSIONS:
        raise ExportError(
            f"cannot read {str(path)!r}: a book must be a .csv, .xlsx or .parquet file "
            f"(got {suffix or 'no extension'!r})"
        )
    try:
        with path.open("rb") as handle:
            head = handle.read(_SNIFF)
    except OSError as exc:
        raise ExportError(f"cannot read {str(path)!r}: {exc.strerror or exc}") from exc
    if not head:
        raise InvalidTerms(f"the book {str(path)!r} is empty (0 bytes); it has no loans")
    _check_content(path, suffix, head)
    if suffix == ".csv":
        yield from _csv_chunks(path, head, rows)
    elif suffix == ".xlsx":
        yield from _xlsx_chunks(path, rows)
    else:
        yield from _parquet_chunks(path, rows)


def _looks_like(head: bytes) -> str:
    if head.startswith(b"PK\x03\x04"):
        return "a zip archive (such as an XLSX workbook)"
    if head.startswith(b"PAR1"):
        return "a Parquet file"
    if head.startswith(b"\xd0\xcf\x11\xe0"):
        return "an old binary Excel (.xls) file"
    if head.startswith(b"%PDF"):
        return "a PDF document"
    if b"\x00" in head:
        return "binary data"
    return "text"


def _check_content(path: Path, suffix: str, head: bytes) -> None:
    kind = _looks_like(head)
    name = str(path)
    if suffix == ".csv":
        if kind != "text":
            raise ExportError(f"{name!r} is not a CSV file: its content is {kind}")
        try:
            head.decode("utf-8")
        except UnicodeDecodeError as exc:
            if len(head) < _SNIFF or exc.start < len(head) - 3:  # not a character cut short
                raise ExportError(
                    f"{name!r} is not UTF-8 text (byte {exc.start + 1}); save the book as CSV UTF-8"
                ) from None
    elif suffix == ".xlsx" and not kind.startswith("a zip"):
        raise ExportError(f"{name!r} is not an XLSX workbook: its content is {kind}")
    elif suffix == ".parquet" and kind != "a Parquet file":
        raise ExportError(f"{name!r} is not a Parquet file: its content is {kind}")


def _check_format(value: str, name: str) -> None:
    if value.strip() != "1":
        raise InvalidTerms(
            f"{name!r} declares book format {value.strip()!r}; this amort reads book format 1"
        )


def header(names: list[Any], name: str) -> list[str]:
    cleaned = ["" if n is None else str(n).strip().lower() for n in names]
    seen: set[str] = set()
    for column in cleaned:
        if column and column in seen:
            raise InvalidTerms(f"the book {name!r} has the column {column!r} twice")
        seen.add(column)
    if not any(cleaned):
        raise InvalidTerms(f"the book {name!r} has no header row (the column names)")
    return cleaned


# -- CSV ---------------------------------------------------------------------------------------


def _csv_chunks(path: Path, head: bytes, rows: int) -> Iterator[TextChunk]:
    import pyarrow.csv as pacsv

    text = head.decode("utf-8", errors="ignore").lstrip("\ufeff")
    lines = text.splitlines()
    comments = 0
    for line in lines:
        if not line.startswith("#"):
            break
        found = _FORMAT_LINE.match(line)
        if found:
            _check_format(found.group(1), str(path))
        comments += 1
    rest = lines[comments:]
    if not rest or not rest[0].strip():
        raise InvalidTerms(f"the book {str(path)!r} has no header row (the column names)")
    raw = next(csv.reader(io.StringIO(rest[0])))
    names = header(raw, str(path))
    malformed: list[tuple[int, str]] = []
    width = len(raw)

    def invalid(row: Any) -> str:
        number = int(row.number) if row.number is not None else -1
        malformed.append(
            (
                number,
                f"the row has {row.actual_columns} fields; the header has {width}: "
                f"{row.text[:60]!r}",
            )
        )
        return "skip"

    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(
                skip_rows=comments, use_threads=False, block_size=1 << 22
            ),
            parse_options=pacsv.ParseOptions(newlines_in_values=True, invalid_row_handler=invalid),
            convert_options=pacsv.ConvertOptions(
                column_types={n: pa.string() for n in raw}, strings_can_be_null=False
            ),
        )
        first = comments + 2  # the first data row's number
        done = 0  # good rows yielded so far
        reported = 0  # malformed rows handed on so far
        for batch in _rebatch(reader, rows):
            skipped = sorted(n for n, _ in malformed)
            numbers = _numbers(first, done, batch.num_rows, skipped)
            done += batch.num_rows
            last = int(numbers[-1]) if len(numbers) else 0
            ordered = sorted(malformed)
            bad = [m for m in ordered[reported:] if m[0] <= last]
            reported += len(bad)
            columns = {n: batch.column(k) for k, n in enumerate(names) if n}
            yield _drop_blank(TextChunk(columns, numbers, bad))
        if reported < len(malformed):
            empty = {n: pa.array([], pa.string()) for n in names if n}
            yield TextChunk(empty, np.zeros(0, np.int64), sorted(malformed)[reported:])
    except pa.ArrowInvalid as exc:
        raise ExportError(f"cannot read {str(path)!r} as CSV: {exc}") from None


def _rebatch(reader: Any, rows: int) -> Iterator[pa.RecordBatch]:
    """Re-cut the reader's batches to at most ``rows`` rows each."""
    for batch in reader:
        for start in range(0, batch.num_rows, rows):
            yield batch.slice(start, rows)


def _numbers(first: int, done: int, count: int, skipped: list[int]) -> np.ndarray:
    """Row numbers of the good rows ``done .. done + count - 1``, malformed rows skipped.

    With the malformed row numbers ``I_0 < I_1 < ...``, ``I_j - first - j`` good rows
    come before ``I_j``; good row g is row ``first + g`` plus the malformed rows before it.
    """
    good = np.arange(done, done + count, dtype=np.int64)
    before = np.asarray(skipped, dtype=np.int64) - first - np.arange(len(skipped))
    return first + good + np.searchsorted(before, good, side="right")


def _drop_blank(chunk: TextChunk) -> TextChunk:
    """Leave out rows whose every cell is empty (trailing ``,,,`` lines of spreadsheets)."""
    if not chunk.columns or not len(chunk.rows):
        return chunk
    keep = np.zeros(len(chunk.rows), dtype=bool)
    for col in chunk.columns.values():
        has = pc.not_equal(pc.utf8_trim_whitespace(col), "")
        keep |= np.asarray(has.to_numpy(zero_copy_only=False), dtype=np.bool_)
    if keep.all():
        return chunk
    take = pa.array(np.flatnonzero(keep))
    columns = {n: col.take(take) for n, col in chunk.columns.items()}
    return TextChunk(columns, chunk.rows[keep], chunk.malformed)


# -- XLSX --------------------------------------------------------------------------------------


def _xlsx_chunks(path: Path, rows: int) -> Iterator[TextChunk]:
    import defusedxml  # noqa: F401  (openpyxl parses with defusedxml when it is importable)
    import openpyxl
    from openpyxl.utils.exceptions import InvalidFileException

    try:
        workbook = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except (InvalidFileException, KeyError, OSError, ValueError) as exc:
        raise ExportError(f"{str(path)!r} is not a readable XLSX workbook ({exc})") from None
    except Exception as exc:  # zipfile.BadZipFile and XML errors of a damaged file
        raise ExportError(f"{str(path)!r} is not a readable XLSX workbook ({exc})") from None
    try:
        sheet = workbook["loans"] if "loans" in workbook.sheetnames else workbook.worksheets[0]
        names: list[str] | None = None
        buffer: list[tuple[Any, ...]] = []
        numbers: list[int] = []
        for number, values in enumerate(sheet.iter_rows(values_only=True), start=1):
            cells = tuple(values)
            if names is None:
                first = _cell_text(cells[0] if cells else None)
                if first.startswith("#"):
                    found = _FORMAT_LINE.match(first)
                    if found:
                        _check_format(found.group(1), str(path))
                    continue
                if not any(_cell_text(c) for c in cells):
                    continue
                names = header(list(cells), str(path))
                continue
            if not any(_cell_text(c) for c in cells):
                continue
            buffer.append(cells)
            numbers.append(number)
            if len(buffer) >= rows:
                yield _xlsx_chunk(names, buffer, numbers)
                buffer, numbers = [], []
        if names is None:
            raise InvalidTerms(f"the book {str(path)!r} has no header row (the column names)")
        if buffer:
            yield _xlsx_chunk(names, buffer, numbers)
    finally:
        workbook.close()


def _xlsx_chunk(names: list[str], cells: list[tuple[Any, ...]], numbers: list[int]) -> TextChunk:
    columns = {}
    for k, name in enumerate(names):
        if name:
            columns[name] = pa.array(
                [_cell_text(row[k]) if k < len(row) else "" for row in cells], pa.string()
            )
    return TextChunk(columns, np.asarray(numbers, dtype=np.int64), [])


def _cell_text(value: Any) -> str:
    """A cell's value as the text a person would type (floats by shortest repr)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, datetime):
        if value.time() == datetime.min.time():
            return value.date().isoformat()
        return value.isoformat(sep=" ")
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, float):
        if math.isfinite(value) and value == int(value) and abs(value) < 2**53:
            return str(int(value))
        return repr(value)
    return str(value).strip()


# -- Parquet -----------------------------------------------------------------------------------


def _parquet_chunks(path: Path, rows: int) -> Iterator[TextChunk]:
    import pyarrow.parquet as pq

    try:
        parquet = pq.ParquetFile(path)
    except (pa.ArrowInvalid, OSError) as exc:
        raise ExportError(f"{str(path)!r} is not a readable Parquet file ({exc})") from None
    metadata = parquet.schema_arrow.metadata or {}
    declared = metadata.get(b"amort_book_format")
    if declared is not None:
        _check_format(declared.decode("utf-8", errors="replace"), str(path))
    names = header(list(parquet.schema_arrow.names), str(path))
    done = 0
    try:
        for batch in parquet.iter_batches(batch_size=rows):
            columns = {n: arrow_text(batch.column(k)) for k, n in enumerate(names) if n}
            numbers = np.arange(2 + done, 2 + done + batch.num_rows, dtype=np.int64)
            done += batch.num_rows
            yield _drop_blank(TextChunk(columns, numbers, []))
    except (pa.ArrowInvalid, OSError) as exc:
        raise ExportError(f"cannot read {str(path)!r}: {exc}") from None


def arrow_text(column: pa.Array) -> pa.Array:
    """Return a typed Arrow column as text cells ('' for nulls), floats by shortest repr."""
    kind = column.type
    if pa.types.is_string(kind) or pa.types.is_large_string(kind):
        text = column
    elif pa.types.is_timestamp(kind):
        text = pc.strftime(column, format="%Y-%m-%d")
        has_time = pc.not_equal(pc.cast(column, pa.date32()).cast(kind), column)
        if pc.any(has_time).as_py():
            text = pc.if_else(has_time, pc.strftime(column, format="%Y-%m-%d %H:%M:%S"), text)
    elif pa.types.is_floating(kind):
        whole = pc.and_(pc.equal(pc.floor(column), column), pc.less(pc.abs(column), 2.0**53))
        as_int = pc.cast(pc.if_else(whole, column, 0.0), pa.int64()).cast(pa.string())
        text = pc.if_else(whole, as_int, pc.cast(column, pa.string()))
    else:
        text = pc.cast(column, pa.string())
    return pc.fill_null(text, "")


def as_text(series: pd.Series) -> pa.Array:
    """Return a DataFrame column as Arrow text cells, the way :func:`arrow_text` writes them."""
    if series.dtype == object:
        return pa.array([_cell_text(v) for v in series], pa.string())
    try:
        column = pa.array(series, from_pandas=True)
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        return pa.array([_cell_text(v) for v in series], pa.string())
    return arrow_text(column)
