"""Parts of the book workbooks (write-only openpyxl): table sheets, loan sheets and charts.

:func:`append_frame` writes a DataFrame as a plain sheet (bold header in row 1, data
from row 2, dates and money formatted, user text guarded against formulas).
:func:`add_loan_sheets` adds one schedule sheet for each of the first loans of a book
(:data:`LOAN_SHEETS` at most), each named by its loan id made a safe sheet name
(:func:`loan_sheet_names`), with an index sheet that maps every loan id to its sheet.
:func:`add_projection_charts` adds a sheet holding a projection's monthly totals and
two native charts drawn from them: the projected balance (line) and each month's
collections stacked by source (columns).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from amort.caution import CAUTION
from amort.io.files import FORMULA_TRIGGERS, as_text_cell
from amort.io.xlsx import ACCENT, GREY, LIGHT_GREY

__all__ = [
    "CHART_PARTS",
    "LOAN_SHEETS",
    "SHEET_NAME_LENGTH",
    "add_loan_sheets",
    "add_projection_charts",
    "append_frame",
    "guarded",
    "loan_sheet_names",
    "projection_by_month",
]

#: Loans of a positions workbook that get a schedule sheet of their own (the first ones).
LOAN_SHEETS = 25
#: The longest sheet name a spreadsheet accepts.
SHEET_NAME_LENGTH = 31
#: The stacked parts of a month's collections in the charts: column and label.
CHART_PARTS = (
    ("interest", "interest"),
    ("principal", "scheduled principal"),
    ("prepayment", "prepaid"),
    ("recovery", "recovered"),
)
#: Colours of the stacked parts: the accent, a lighter accent, grey, light grey.
PART_COLOURS = (ACCENT, "7FA89A", GREY, LIGHT_GREY)
DATE_COLUMNS = ("next_due_date", "maturity_date", "month_end", "due_date")
#: Number formats by column kind.
MONEY, DATE, RATE = "#,##0.00", "yyyy-mm-dd", "0.000000"
# Characters a sheet name may not hold, and control characters (tab, CR, ...).
_NOT_IN_NAMES = re.compile(r"[\[\]:*?/\\\x00-\x1f\x7f]")
# A name a spreadsheet keeps for itself.
_RESERVED = ("history",)


def guarded(frame: pd.DataFrame) -> pd.DataFrame:
    """Return ``frame`` with its text (and categorical) columns made safe for spreadsheets."""
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


def append_frame(
    book: Any,
    title: str,
    frame: pd.DataFrame,
    *,
    formats: Mapping[str, str] | None = None,
    above: Sequence[Sequence[Any]] = (),
) -> Any:
    """Add sheet ``title`` to the write-only ``book`` holding ``frame``; return the sheet.

    ``above``: rows written before the header (then the header is not in row 1).
    Dates get ``yyyy-mm-dd``, float64 columns ``#,##0.00`` unless ``formats`` says
    otherwise; text from users is written as text (:func:`amort.io.files.as_text_cell`).
    """
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.styles import Font

    ws = book.create_sheet(title)
    bold = Font(bold=True)
    for row in above:
        ws.append(list(row))
    header = []
    for name in frame.columns:
        cell = WriteOnlyCell(ws, value=str(name))
        cell.font = bold
        header.append(cell)
    ws.append(header)
    shown = {
        name: (DATE if name in DATE_COLUMNS else MONEY)
        for name in frame.columns
        if name in DATE_COLUMNS or frame[name].dtype == np.float64
    }
    shown.update(formats or {})
    safe = guarded(frame)
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
            if name in shown and value is not None:
                cell.number_format = shown[name]
            row.append(cell)
        ws.append(row)
    return ws


def loan_sheet_names(ids: Iterable[str], taken: Iterable[str] = ()) -> list[str]:
    """Return a safe, unique sheet name for each loan id (user text), in order.

    A sheet name holds at most 31 characters and none of ``[]:*?/\\`` (nor control
    characters), may not start or end with an apostrophe, and is unique without
    regard to case; a name starting with a formula character gets a leading ``_``;
    a repeated name gets `` (2)``, `` (3)``... ``taken``: names already used.

    >>> loan_sheet_names(["TCL-1", "=SUM(A1)", "a[1]:b", "tcl-1", "x" * 40])
    ['TCL-1', '_=SUM(A1)', 'a_1__b', 'tcl-1 (2)', 'xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx']
    """
    used = {name.casefold() for name in taken} | set(_RESERVED)
    names = []
    for raw in ids:
        base = _NOT_IN_NAMES.sub("_", str(raw)).strip().strip("'").strip()
        if base.startswith(FORMULA_TRIGGERS):
            base = "_" + base
        base = base[:SHEET_NAME_LENGTH].rstrip("'") or "loan"
        name, k = base, 2
        while name.casefold() in used:
            suffix = f" ({k})"
            name = base[: SHEET_NAME_LENGTH - len(suffix)] + suffix
            k += 1
        used.add(name.casefold())
        names.append(name)
    return names


def add_loan_sheets(
    book: Any,
    loans: pd.DataFrame,
    schedule_of: Callable[[Any], pd.DataFrame],
    *,
    limit: int = LOAN_SHEETS,
    taken: Iterable[str] = (),
    beside: str | None = None,
) -> list[str]:
    """Add the index sheet ``loan sheets`` and a schedule sheet for each of the first loans.

    ``loans``: the book's validated loans (:attr:`amort.book.Book.loans`);
    ``schedule_of(row)`` returns a loan's schedule; ``limit`` loans get a sheet
    (the first ones, in book order); ``beside`` names the file holding every
    loan's schedule, when the book has more loans than ``limit``. Returns the
    sheet names of the loans, in order.
    """
    shown = loans.iloc[:limit]
    names = loan_sheet_names(shown["loan_id"].astype("str"), [*taken, "loan sheets"])
    more = len(loans) - len(shown)
    note = (
        f"Schedule sheets for the first {len(shown):,} of {len(loans):,} loans "
        f"(at most {limit:,} in a workbook)."
    )
    if more > 0 and beside is not None:
        note += f" Every loan's schedule, all {len(loans):,}, is in {beside} beside this file."
    index = pd.DataFrame(
        {"loan_id": shown["loan_id"].astype("str").to_numpy(), "sheet": names},
        columns=["loan_id", "sheet"],
    )
    append_frame(book, "loan sheets", index, above=[["note", note], ["caution", CAUTION], []])
    for name, (_, row) in zip(names, shown.iterrows(), strict=True):
        frame = schedule_of(row)
        title = f"Schedule of loan {as_text_cell(str(row['loan_id']))}"
        append_frame(book, name, frame, formats={"rate": RATE}, above=[[title], []])
    return names


def projection_by_month(table: pd.DataFrame) -> pd.DataFrame:
    """Return a projection's months summed over its groups (the table itself if ungrouped).

    Columns: ``month``, ``month_end``, ``opening_balance``, ``closing_balance``, the
    parts of :data:`CHART_PARTS` and ``collections`` (currency units, float64).
    """
    parts = [c for c, _ in CHART_PARTS]
    keep = ["opening_balance", "closing_balance", *parts, "collections"]
    summed = table.groupby("month", sort=True)[keep].sum()
    ends = table.groupby("month", sort=True)["month_end"].first()
    out = summed.reset_index()
    out.insert(1, "month_end", ends.to_numpy())
    return out


def add_projection_charts(book: Any, table: pd.DataFrame, *, title: str) -> Any:
    """Add sheet ``charts``: the monthly totals of ``table`` and two native charts of them.

    A line chart of the projected balance at each month's end and stacked columns
    of each month's collections (interest, scheduled principal, prepaid,
    recovered), by month after the as-of date.
    """
    from openpyxl.chart import BarChart, LineChart, Reference
    from openpyxl.chart.series import SeriesLabel

    monthly = projection_by_month(table)
    ws = append_frame(
        book, "charts", monthly, above=[[as_text_cell(title)], ["caution", CAUTION], []]
    )
    header = 4  # the rows above and the header row
    first, last = header + 1, header + len(monthly)
    columns = list(monthly.columns)

    def ref(column: str) -> Any:
        j = columns.index(column) + 1
        return Reference(ws, min_col=j, min_row=header, max_row=last)

    months = Reference(ws, min_col=1, min_row=first, max_row=last)
    line = LineChart()
    line.title = "Projected balance at each month's end"
    line.y_axis.title = "balance (currency units)"
    line.add_data(ref("closing_balance"), titles_from_data=True)
    line.series[0].graphicalProperties.line.solidFill = ACCENT
    line.series[0].graphicalProperties.line.width = 28_000
    line.series[0].smooth = False
    bars = BarChart()
    bars.type = "col"
    bars.grouping = "stacked"
    bars.overlap = 100
    bars.gapWidth = 20
    bars.title = "Collections each month, by source"
    bars.y_axis.title = "collections per month (currency units)"
    for (column, label), colour in zip(CHART_PARTS, PART_COLOURS, strict=True):
        j = columns.index(column) + 1
        bars.add_data(Reference(ws, min_col=j, min_row=first, max_row=last))
        bars.series[-1].tx = SeriesLabel(v=label)
        bars.series[-1].graphicalProperties.solidFill = colour
        bars.series[-1].graphicalProperties.line.solidFill = colour
    for chart in (line, bars):
        chart.set_categories(months)
        chart.x_axis.title = "month after the as-of date"
        chart.height, chart.width = 9, 22
        chart.legend.position = "b"
        chart.x_axis.delete = False
        chart.y_axis.delete = False
        chart.y_axis.number_format = "#,##0"
    ws.add_chart(line, "K4")
    ws.add_chart(bars, "K23")
    return ws
