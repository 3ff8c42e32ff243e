"""Spreadsheet (.xlsx) writing with openpyxl: named sheets from DataFrames, saved safely.

The building blocks every workbook of amort uses (one loan's in
:mod:`amort.io.xlsx_loan`; annuities and books call the same ones):

- :func:`new_workbook` and :func:`add_table_sheet`: one sheet from a DataFrame,
  with a title row, the caution, a header row (frozen, with an auto filter),
  number formats by column kind (money ``#,##0.00``, dates ``yyyy-mm-dd``,
  rates as percent, counts as whole numbers), column widths from the contents
  and an optional totals row;
- :func:`add_pairs_sheet`: a sheet of labelled figures in sections (a summary);
- :func:`write_cell`: one value into one cell; text is user text and goes
  through :func:`amort.io.files.as_text_cell`, so ``=``, ``+``, ``-``, ``@``,
  tab and carriage return at its start never make a formula;
- :func:`save_workbook`: the caution in every sheet's page footer, then an
  atomic write (temporary name in the target folder, then a rename; an
  existing file is kept unless ``force``). Formula cells may be given cached
  values (openpyxl writes none), so a reader that does not recalculate sees
  the engine's figures;
- :func:`write_frames`: all of the above in one call, for a set of DataFrames.

Looks: plain, one accent colour (:data:`ACCENT`, a dark pine) on white, greys
for everything else.
"""

from __future__ import annotations

import math
import re
import zipfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from decimal import Decimal
from fractions import Fraction
from pathlib import Path, PurePosixPath
from typing import Any

import defusedxml.ElementTree as SafeET
import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from amort.caution import CAUTION
from amort.errors import ExportError
from amort.io.files import as_text_cell, write_atomic

#: The one accent colour of amort's workbooks and pictures (RGB hex): a dark pine green.
ACCENT = "2E5A4C"
#: Greys used beside the accent: body text of notes, rules and the second chart series.
GREY = "595959"
LIGHT_GREY = "BFBFBF"

#: Number formats by column kind.
FORMATS = {
    "money": "#,##0.00;-#,##0.00",
    "date": "yyyy-mm-dd",
    "rate": "0.0000%",
    "percent": "0.00##%",
    "count": "0",
    "number": "General",
    "text": "@",
}

#: Rows of a table sheet: title, caution, header; data start on FIRST_DATA_ROW.
TITLE_ROW, CAUTION_ROW, HEADER_ROW, FIRST_DATA_ROW = 1, 2, 3, 4

#: Money columns of the API's frames that are flows (summed in a totals row), not balances.
FLOW_COLUMNS = (
    "payment",
    "interest",
    "principal",
    "balloon",
    "extra_principal",
    "capitalised",
    "odd_days_interest",
)
#: Column names (or name parts) that hold rates, shown as percent.
RATE_WORDS = ("rate", "yield", "apr")
#: Integer columns that are counts or labels, not money.
COUNT_COLUMNS = ("period", "periods", "days", "loan", "payments", "number_of_payments")

_FOOTER = "amort: computed estimates, not advice; see the caution on each sheet. Page &P of &N"

_title_font = Font(bold=True, size=13, color=ACCENT)
_caution_font = Font(italic=True, size=9, color=GREY)
_header_font = Font(bold=True, color="FFFFFF")
_header_fill = PatternFill("solid", start_color=ACCENT, end_color=ACCENT)
_section_font = Font(bold=True, color=ACCENT)
_rule = Side(style="thin", color=ACCENT)
_bold = Font(bold=True)


@dataclass
class Cached:
    """Cached values of formula cells, by sheet title and coordinate (``"E4"``).

    openpyxl writes a formula without its value; :func:`save_workbook` writes
    these values beside the formulas, so a reader that does not recalculate
    (a viewer, ``openpyxl`` with ``data_only=True``) shows the engine's figures.
    """

    values: dict[str, dict[str, float | str | bool]] = field(default_factory=dict)

    def set(self, ws: Worksheet, coordinate: str, formula: str, value: float | str | bool) -> None:
        """Put ``formula`` into ``ws[coordinate]`` and remember ``value`` as its cached value."""
        ws[coordinate] = formula
        self.values.setdefault(ws.title, {})[coordinate] = value


def new_workbook() -> Workbook:
    """Return an empty openpyxl workbook (its default sheet removed)."""
    wb = Workbook()
    wb.remove(wb.active)
    return wb


def column_kind(name: str, series: pd.Series) -> str:
    """Return how column ``name`` is shown: money, date, rate, count, number or text.

    >>> import pandas as pd
    >>> column_kind("closing_balance", pd.Series([1.5])), column_kind("rate", pd.Series([0.01]))
    ('money', 'rate')
    >>> column_kind("due_date", pd.Series(pd.to_datetime(["2027-01-31"])))
    'date'
    """
    if pd.api.types.is_datetime64_any_dtype(series):
        return "date"
    if pd.api.types.is_bool_dtype(series):
        return "text"
    if pd.api.types.is_integer_dtype(series):
        return "count"
    if pd.api.types.is_float_dtype(series):
        if any(word in name.lower() for word in RATE_WORDS):
            return "rate"
        if name in COUNT_COLUMNS:
            return "count"
        return "money"
    return "text"


def header_label(name: str) -> str:
    """Return the header shown for column ``name``: ``opening_balance`` -> ``opening balance``."""
    return name.replace("_", " ")


def write_cell(ws: Worksheet, row: int, column: int, value: Any, kind: str | None = None) -> None:
    """Write one value into ``ws`` at (row, column), with the number format of ``kind``.

    Numbers, dates and booleans are written as such (NaN and NaT as an empty
    cell). Every string is user text: it is passed through
    :func:`~amort.io.files.as_text_cell`, and when that marks it (a leading
    ``=``, ``+``, ``-``, ``@``, tab or CR) the cell gets the spreadsheet form of
    that mark, a string cell with the quote prefix: it shows the text as given
    and never becomes a formula, even when edited.
    """
    cell = ws.cell(row=row, column=column)
    if kind is not None:
        cell.number_format = FORMATS[kind]
    if value is None:
        return
    if isinstance(value, str):
        safe = as_text_cell(value)
        cell.value = value
        cell.data_type = "s"  # never "f", whatever the first character
        if safe != value:
            cell.quotePrefix = True
        return
    if isinstance(value, (bool, np.bool_)):
        cell.value = bool(value)
        return
    if isinstance(value, pd.Timestamp):
        if pd.isna(value):
            return
        value = value.to_pydatetime()
    if isinstance(value, datetime):
        cell.value = value.date() if value.time() == datetime.min.time() else value
        cell.number_format = FORMATS["date"]
        return
    if isinstance(value, date):
        cell.value = value
        cell.number_format = FORMATS["date"]
        return
    if isinstance(value, (Decimal, Fraction, np.floating, float)):
        number = float(value)
        if math.isnan(number):
            return
        if not math.isfinite(number):
            cell.value = "infinite" if number > 0 else "-infinite"
            return
        cell.value = number
        return
    if isinstance(value, (int, np.integer)):
        cell.value = int(value)
        return
    write_cell(ws, row, column, str(value), kind)


def title_and_caution(ws: Worksheet, title: str, width: int, *, caution: str = CAUTION) -> None:
    """Write the sheet's title (row 1) and the caution (row 2, merged over ``width`` columns)."""
    write_cell(ws, TITLE_ROW, 1, title)
    ws.cell(row=TITLE_ROW, column=1).font = _title_font
    write_cell(ws, CAUTION_ROW, 1, caution)
    top = ws.cell(row=CAUTION_ROW, column=1)
    top.font = _caution_font
    top.alignment = Alignment(wrap_text=True, vertical="top")
    width = max(width, 6)
    ws.merge_cells(start_row=CAUTION_ROW, start_column=1, end_row=CAUTION_ROW, end_column=width)
    ws.row_dimensions[CAUTION_ROW].height = 15 * max(2, math.ceil(len(caution) / (14 * width)))


def add_table_sheet(
    wb: Workbook,
    name: str,
    frame: pd.DataFrame,
    *,
    title: str,
    kinds: Mapping[str, str] | None = None,
    totals: Sequence[str] | None = None,
    headers: Mapping[str, str] | None = None,
    caution: str = CAUTION,
) -> Worksheet:
    """Add sheet ``name`` holding ``frame``, one row a DataFrame row, and return it.

    Layout: :data:`TITLE_ROW` the title, :data:`CAUTION_ROW` the caution,
    :data:`HEADER_ROW` the column headers (``header_label`` of each name unless
    ``headers`` says otherwise), data from :data:`FIRST_DATA_ROW`. Panes are
    frozen below the header and an auto filter covers the data. ``kinds``
    overrides :func:`column_kind` per column. ``totals`` lists the columns
    summed in a totals row under the data (default: the money columns among
    :data:`FLOW_COLUMNS`; pass ``()`` for none). Values are written as the
    DataFrame holds them (money: the float64 of exact cents).
    """
    kinds = {c: (kinds or {}).get(c) or column_kind(c, frame[c]) for c in frame.columns}
    ws = wb.create_sheet(title=sheet_name(name))
    columns = list(frame.columns)
    title_and_caution(ws, title, len(columns), caution=caution)
    for j, column in enumerate(columns, start=1):
        write_cell(ws, HEADER_ROW, j, (headers or {}).get(column, header_label(column)))
        style_header(ws.cell(row=HEADER_ROW, column=j))
    ws.row_dimensions[HEADER_ROW].height = 30  # two lines: "opening / balance"
    for j, column in enumerate(columns, start=1):
        kind = kinds[column]
        for i, value in enumerate(frame[column].tolist(), start=FIRST_DATA_ROW):
            write_cell(ws, i, j, value, kind)
    last = FIRST_DATA_ROW + len(frame) - 1
    if totals is None:
        totals = [c for c in columns if c in FLOW_COLUMNS and kinds[c] == "money"]
    if totals and len(frame):
        totals_row(ws, last + 1, columns, totals, {c: float(frame[c].sum()) for c in totals})
    finish_table(ws, columns, kinds, len(frame))
    return ws


def style_header(cell: Any) -> None:
    """Give a header cell the accent fill, white bold text and wrapping."""
    cell.font = _header_font
    cell.fill = _header_fill
    cell.alignment = Alignment(horizontal="center", vertical="center", wrap_text=True)


def totals_row(
    ws: Worksheet,
    row: int,
    columns: Sequence[str],
    totals: Iterable[str],
    values: Mapping[str, Any],
    *,
    label: str = "total",
) -> None:
    """Write a bold totals row: ``label`` in the first column, ``values`` under ``totals``."""
    write_cell(ws, row, 1, label)
    for column in totals:
        j = columns.index(column) + 1
        write_cell(ws, row, j, values[column], "money")
    for j in range(1, len(columns) + 1):
        cell = ws.cell(row=row, column=j)
        cell.font = _bold
        cell.border = Border(top=_rule)


def finish_table(
    ws: Worksheet, columns: Sequence[str], kinds: Mapping[str, str], rows: int
) -> None:
    """Freeze the header, put an auto filter over the data and set the column widths."""
    ws.freeze_panes = ws.cell(row=FIRST_DATA_ROW, column=1)
    last_col = get_column_letter(max(len(columns), 1))
    ws.auto_filter.ref = f"A{HEADER_ROW}:{last_col}{HEADER_ROW + max(rows, 1)}"
    for j, column in enumerate(columns, start=1):
        ws.column_dimensions[get_column_letter(j)].width = _width(ws, j, kinds[column])


def _width(ws: Worksheet, column: int, kind: str) -> float:
    # Widths in characters: the widest of the header's words and the shown values, capped.
    header = str(ws.cell(row=HEADER_ROW, column=column).value or "")
    widest = max((len(word) for word in header.split()), default=4)
    shown = {"money": 14, "date": 10, "rate": 9, "count": 6, "percent": 9}
    if kind in shown:
        longest = 0
        for (value,) in ws.iter_rows(
            min_row=FIRST_DATA_ROW, min_col=column, max_col=column, values_only=True
        ):
            if isinstance(value, (int, float)) and kind == "money":
                longest = max(longest, len(f"{value:,.2f}"))
            elif isinstance(value, (int, float)) and kind == "count":
                longest = max(longest, len(f"{value}"))
        widest = max(widest, shown[kind] if kind != "money" else longest, longest)
    else:
        for (value,) in ws.iter_rows(
            min_row=FIRST_DATA_ROW, min_col=column, max_col=column, values_only=True
        ):
            if value is not None:
                widest = max(widest, len(str(value)))
    return float(min(max(widest + 2, 8), 60))


def add_checks_sheet(
    wb: Workbook, name: str, checks: Iterable[tuple[str, str, bool]]
) -> tuple[Worksheet, int]:
    """Add a sheet of (check, figures, pass/FAIL) rows; return it and its next free row.

    ``checks`` is a reconciliation's ``.checks`` list; the free row leaves one blank
    row under the table, for the details a caller adds.
    """
    table = pd.DataFrame(
        [
            {"check": check, "figures": figures, "result": "pass" if ok else "FAIL"}
            for check, figures, ok in checks
        ]
    )
    ws = add_table_sheet(
        wb,
        name,
        table,
        title="Reconciliation against the closed form",
        totals=(),
        kinds={"check": "text", "figures": "text", "result": "text"},
    )
    return ws, FIRST_DATA_ROW + len(table) + 1


def add_pairs_sheet(
    wb: Workbook,
    name: str,
    *,
    title: str,
    sections: Sequence[tuple[str, Sequence[tuple[str, Any, str | None]]]],
    caution: str = CAUTION,
) -> tuple[Worksheet, dict[str, str]]:
    """Add a sheet of labelled figures in sections; return it and each label's value cell.

    ``sections`` is ``[(heading, [(label, value, kind), ...]), ...]``; ``kind``
    is a key of :data:`FORMATS` or None (a number shown as it is). Labels go
    in column A, values in column B. The returned mapping gives the
    coordinate (``"B7"``) of each label's value, for formulas that refer to it.
    """
    ws = wb.create_sheet(title=sheet_name(name))
    title_and_caution(ws, title, 4, caution=caution)
    where: dict[str, str] = {}
    row = CAUTION_ROW + 2
    for heading, pairs in sections:
        write_cell(ws, row, 1, heading)
        for j in (1, 2):
            ws.cell(row=row, column=j).font = _section_font
            ws.cell(row=row, column=j).border = Border(bottom=_rule)
        row += 1
        for label, value, kind in pairs:
            write_cell(ws, row, 1, label)
            write_cell(ws, row, 2, value, kind)
            cell = ws.cell(row=row, column=2)
            cell.alignment = Alignment(horizontal="right", vertical="top", wrap_text=kind == "text")
            if kind == "text" and isinstance(value, str):
                # Wrapped text: a row tall enough for its lines (the column holds ~44 characters).
                lines = sum(max(1, math.ceil(len(part) / 44)) for part in value.split("\n"))
                ws.row_dimensions[row].height = 15 * min(lines, 20)
            where[label] = f"B{row}"
            row += 1
        row += 1
    ws.column_dimensions["A"].width = 34
    ws.column_dimensions["B"].width = 30
    return ws, where


def sheet_name(name: str) -> str:
    """Return ``name`` as a valid sheet name: no ``[]:*?/\\``, at most 31 characters."""
    cleaned = re.sub(r"[\[\]:*?/\\]", " ", name).strip().strip("'") or "Sheet"
    return cleaned[:31]


def save_workbook(
    wb: Workbook, path: Path, *, force: bool = False, cached: Cached | None = None
) -> Path:
    """Write ``wb`` to ``path`` whole or not at all, with cached values for formula cells.

    Every sheet gets the page footer pointing to the caution. An existing file
    is kept unless ``force``; a failed write leaves no partial file and raises
    :class:`~amort.errors.ExportError` saying why.
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError(f"'path' must end in .xlsx (got {str(path)!r})")
    for ws in wb.worksheets:
        ws.oddFooter.center.text = _FOOTER
        ws.oddFooter.center.size = 8
        # Printed: as wide as one page, as many pages long as it takes.
        ws.sheet_properties.pageSetUpPr.fitToPage = True
        ws.page_setup.fitToWidth = 1
        ws.page_setup.fitToHeight = 0

    def write(tmp: Path) -> None:
        wb.save(tmp)
        if cached is not None and cached.values:
            _write_cached_values(tmp, cached)

    return write_atomic(path, write, force=force)


def write_frames(
    path: Path,
    sheets: Mapping[str, pd.DataFrame],
    *,
    title: str,
    force: bool = False,
    kinds: Mapping[str, str] | None = None,
) -> Path:
    """Write each DataFrame of ``sheets`` to its own named sheet of one .xlsx file.

    Each sheet is laid out by :func:`add_table_sheet` with ``title`` (and the
    sheet's name) in its first row and the caution in its second.

    >>> import pandas as pd, tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> frame = pd.DataFrame({"period": [1, 2], "payment": [374.23, 374.14]})
    >>> write_frames(folder / "plan.xlsx", {"Payments": frame}, title="Demo").name
    'plan.xlsx'
    """
    wb = new_workbook()
    for name, frame in sheets.items():
        add_table_sheet(wb, name, frame, title=f"{title}: {name}", kinds=kinds)
    return save_workbook(wb, path, force=force)


# -- cached values of formula cells ------------------------------------------------------------

_MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_PKG_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
# A formula cell as openpyxl writes it: <c r="E4" s="3"><f>...</f><v /></c> (or <v></v>).
_FORMULA_CELL = re.compile(r'<c r="([A-Z]+[0-9]+)"([^>]*)><f>(.*?)</f><v\s*/>(?:</v>)?</c>', re.S)


def _sheet_parts(archive: zipfile.ZipFile) -> dict[str, str]:
    """Map each sheet title to its part name in the package (``xl/worksheets/sheet1.xml``)."""
    book = SafeET.fromstring(archive.read("xl/workbook.xml"))
    rels = SafeET.fromstring(archive.read("xl/_rels/workbook.xml.rels"))
    targets = {r.get("Id"): r.get("Target") for r in rels.iter(f"{{{_PKG_REL_NS}}}Relationship")}
    parts = {}
    for sheet in book.iter(f"{{{_MAIN_NS}}}sheet"):
        target = str(targets[sheet.get(f"{{{_REL_NS}}}id")])
        part = target.lstrip("/") if target.startswith("/") else str(PurePosixPath("xl") / target)
        parts[str(sheet.get("name"))] = part
    return parts


def _value_xml(value: float | str | bool) -> tuple[str, str]:
    """Return (type attribute, <v> text) of a cached value."""
    if isinstance(value, bool):
        return ' t="b"', "1" if value else "0"
    if isinstance(value, str):
        text = value.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
        return ' t="str"', text
    return "", repr(float(value))


def _write_cached_values(path: Path, cached: Cached) -> None:
    """Rewrite the package at ``path`` with each formula cell's cached value filled in."""
    with zipfile.ZipFile(path) as archive:
        parts = _sheet_parts(archive)
        items = [(info, archive.read(info.filename)) for info in archive.infolist()]
    wanted = {parts[title]: values for title, values in cached.values.items()}
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for info, data in items:
            values = wanted.get(info.filename)
            if values:
                data = _fill(data.decode("utf-8"), values, info.filename).encode("utf-8")
            out.writestr(info, data)


def _fill(xml: str, values: Mapping[str, float | str | bool], part: str) -> str:
    seen: set[str] = set()

    def put(match: re.Match[str]) -> str:
        ref, attrs, formula = match.group(1), match.group(2), match.group(3)
        if ref not in values:
            return match.group(0)
        seen.add(ref)
        kind, text = _value_xml(values[ref])
        return f'<c r="{ref}"{attrs}{kind}><f>{formula}</f><v>{text}</v></c>'

    filled = _FORMULA_CELL.sub(put, xml)
    missing = set(values) - seen
    if missing:  # a cached value for a cell that holds no formula: a bug, not a user error
        raise ExportError(
            f"cannot write cached values in {part}: no formula in {', '.join(sorted(missing))}"
        )
    return filled
