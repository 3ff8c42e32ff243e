"""An annuity's workbook: terms and figures, schedule, reconciliation, closed form, charts.

:func:`write_annuity_workbook` lays one :class:`~amort.annuity.Payout` or
:class:`~amort.annuity_accumulation.Accumulation` out in five sheets (names in
:data:`SHEETS`), with the generic writer of :mod:`amort.io.xlsx`:

- **Terms and figures**: the terms as given (and which figure was solved),
  the conventions used (rounding of the solved flow and of each period's
  interest credited, the exact periodic rate, timing), the key figures
  (payment or deposit, how many, the final one, totals, the value left or
  reached, dates) and the reconciliation's verdict;
- **Period by period**: one row a period with the annuity's own columns
  (``period, due_date, opening_value, payment | deposit, interest_credited,
  closing_value``; ``due_date`` left out when undated) and a totals row;
- **Reconciliation**: every check of ``reconciliation()`` with its figures
  and pass/fail, and the gap, bound and final adjustment in currency units;
- **Closed form**: the closed form used, in words and symbols, and its
  factors evaluated for these terms (:mod:`amort.io.annuity_text`), so a
  reader can recompute the solved figure by hand;
- **Charts**: native charts of the value after each period and of each
  period's flow split: a payout's payment into the interest credited and
  the part drawn from the fund, an accumulation's growth into the deposit
  and the interest credited (:func:`amort.io.annuity_text.chart_parts`).

Money is written as the float64 of exact cents the schedule holds; every
sheet opens with the caution; user text (``metadata``) never becomes a formula.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path
from typing import Any

import pandas as pd
from openpyxl import Workbook
from openpyxl.chart import BarChart, LineChart, Reference
from openpyxl.styles import Alignment, Font
from openpyxl.worksheet.worksheet import Worksheet

from amort import __version__
from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.errors import ExportError
from amort.io.annuity_text import (
    Annuity,
    annuity_title,
    chart_parts,
    closed_form_figures,
    flow_column,
    method_lines,
)
from amort.io.xlsx import (
    ACCENT,
    CAUTION_ROW,
    FIRST_DATA_ROW,
    HEADER_ROW,
    LIGHT_GREY,
    add_checks_sheet,
    add_pairs_sheet,
    add_table_sheet,
    new_workbook,
    save_workbook,
    style_header,
    title_and_caution,
    write_cell,
)

#: The sheets of an annuity workbook, in order.
SHEETS = {
    "summary": "Terms and figures",
    "schedule": "Period by period",
    "checks": "Reconciliation",
    "method": "Closed form",
    "charts": "Charts",
}

#: Labelled figures of a summary section: (label, value, kind).
Rows = list[tuple[str, Any, str | None]]

_ROUNDING_WORDS = {
    "half-up": "half-up (ties away from zero)",
    "half-even": "half-even (ties to the even cent)",
    "up": "up (away from zero)",
    "down": "down (toward zero)",
}
#: Where the chart data of a payout's split sits on the Charts sheet (clear of the charts).
_DATA_COLUMN = 16


def write_annuity_workbook(
    product: Annuity,
    path: Path,
    *,
    force: bool = False,
    rows: int | None = None,
    metadata: Mapping[str, str] | None = None,
) -> Path:
    """Write ``product``'s workbook to ``path`` (.xlsx), whole or not at all; return the path.

    rows: the payments of a perpetuity to show (default one year of them).
    force: replace an existing file (otherwise it is kept and ExportError raised).
    metadata: labelled user text shown first (a client, a reference, a note),
        written so that it never becomes a formula.

    >>> import tempfile, pathlib, openpyxl
    >>> payout = Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual")
    >>> path = write_annuity_workbook(payout, pathlib.Path(tempfile.mkdtemp()) / "p.xlsx")
    >>> sheet = openpyxl.load_workbook(path)["Period by period"]
    >>> sheet["C4"].value, sheet["D4"].value, sheet["E13"].value
    (12950.46, 5000, 0)
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError(f"'path' must end in .xlsx (got {str(path)!r})")
    frame, check = _schedule_and_check(product, rows)
    shown = frame if frame["due_date"].notna().any() else frame.drop(columns=["due_date"])
    flow = flow_column(product)
    wb = new_workbook()
    _summary_sheet(wb, product, frame, check, metadata or {})
    title = annuity_title(product)
    schedule = add_table_sheet(
        wb,
        SHEETS["schedule"],
        shown,
        title=f"Period by period: {title}",
        totals=[flow, "interest_credited"],
    )
    _checks_sheet(wb, check)
    _method_sheet(wb, product)
    add_annuity_charts(wb, schedule, shown, title=f"Charts: {title}")
    return save_workbook(wb, path, force=force)


def _schedule_and_check(product: Annuity, rows: int | None) -> tuple[pd.DataFrame, Any]:
    if isinstance(product, Payout):
        return product.schedule(rows), product.reconciliation(rows)
    if rows is not None:
        raise ExportError(f"'rows' is for perpetuities (got {rows!r})")
    return product.schedule(), product.reconciliation()


# -- the summary sheet ---------------------------------------------------------------------------


def _timing_words(product: Annuity) -> str:
    flow = flow_column(product)
    if product.advance:
        return f"in advance (each {flow} at the start of its period, annuity-due)"
    return f"in arrears (each {flow} at the end of its period)"


def _growth_rows(product: Annuity, word: str) -> Rows:
    if product.growth is not None:
        return [
            (f"{word} growth", product.growth, "percent"),
            (f"{word}s between increases", product.growth_every, "count"),
        ]
    if product.step is not None:
        return [
            (f"{word} step", product.step, "money"),
            (f"{word}s between steps", product.growth_every, "count"),
        ]
    return [(f"{word}s", "level", None)]


def _payout_rows(product: Payout, summary: Mapping[str, Any], shown: int) -> tuple[Rows, Rows]:
    horizon: Any = "for ever (a perpetuity)" if product.perpetuity else product.periods
    given: Rows = [
        ("fund", product.fund, "money"),
        ("payment (first, or level)", product.payment, "money"),
        ("annual rate (nominal)", product.annual_rate, "percent"),
        ("frequency", product.frequency.value, None),
        ("payments a year", product.frequency.per_year, "count"),
        ("horizon (periods, counting the deferral)", horizon, "count"),
        ("deferral (periods before the first payment period)", product.defer, "count"),
        ("timing", _timing_words(product), None),
        *_growth_rows(product, "payment"),
        ("residual (value left at the end)", product.residual, "money"),
        ("valuation date", product.start or "undated", "date" if product.start else None),
        ("solved for", product.solve_for, None),
    ]
    if product.perpetuity:
        key: Rows = [
            ("payment (first, or level)", summary["payment"], "money"),
            ("payments shown", f"the first {shown - product.defer:,} of a perpetuity", None),
        ]
    else:
        key = [
            ("payment (first, or level)", summary["payment"], "money"),
            ("number of payments", summary["number_of_payments"], "count"),
            ("final payment", summary["final_payment"], "money"),
            ("total paid", summary["total_paid"], "money"),
            ("interest credited", summary["total_interest_credited"], "money"),
            ("value left", summary["residual_left"], "money"),
        ]
    for label, name in (
        ("first payment", "first_payment_date"),
        ("last payment", "last_payment_date"),
    ):
        if summary[name] is not None:
            key.append((label, summary[name], "date"))
    return given, key


def _accumulation_rows(product: Accumulation, summary: Mapping[str, Any]) -> tuple[Rows, Rows]:
    given: Rows = [
        ("target", product.target, "money"),
        ("deposit (first, or level)", product.deposit, "money"),
        ("annual rate (nominal)", product.annual_rate, "percent"),
        ("frequency", product.frequency.value, None),
        ("deposits a year", product.frequency.per_year, "count"),
        ("number of deposits asked", product.periods, "count"),
        ("starting balance", product.balance, "money"),
        ("timing", _timing_words(product), None),
        *_growth_rows(product, "deposit"),
        ("valuation date", product.start or "undated", "date" if product.start else None),
        ("solved for", product.solve_for, None),
    ]
    key: Rows = [
        ("deposit (first, or level)", summary["deposit"], "money"),
        ("number of deposits", summary["number_of_deposits"], "count"),
        ("final deposit", summary["final_deposit"], "money"),
        ("value reached", summary["value_reached"], "money"),
        ("value by the closed form", summary["closed_form_value"], "money"),
        ("total deposited", summary["total_deposited"], "money"),
        ("interest credited", summary["total_interest_credited"], "money"),
    ]
    if summary["loan_payment"] is not None:
        key.append(("interest-only loan payment", summary["loan_payment"], "money"))
        key.append(("combined outlay a period", summary["combined_outlay"], "money"))
    for label, name in (
        ("first deposit", "first_deposit_date"),
        ("last deposit", "last_deposit_date"),
    ):
        if summary[name] is not None:
            key.append((label, summary[name], "date"))
    return given, key


def _summary_sheet(
    wb: Workbook, product: Annuity, frame: pd.DataFrame, check: Any, metadata: Mapping[str, str]
) -> Worksheet:
    summary = product.summary()
    if isinstance(product, Payout):
        given, key = _payout_rows(product, summary, len(frame))
        base = "(opening value - payment)" if product.advance else "opening value"
    else:
        given, key = _accumulation_rows(product, summary)
        base = "(opening value + deposit)" if product.advance else "opening value"
    flow = flow_column(product)
    rate = product.periodic_rate
    if isinstance(product, Payout) and product.perpetuity:
        last = "none: a perpetuity pays for ever (the schedule shows its first rows)"
    elif isinstance(product, Payout):
        last = "what leaves exactly the residual (the schedule's last row)"
    else:
        last = "the smallest that reaches the target (the schedule's last row)"
    conventions: Rows = [
        (f"rounding of the solved {flow}", _ROUNDING_WORDS[product.rounding.value], None),
        (
            "rounding of each period's interest",
            _ROUNDING_WORDS[product.interest_rounding.value],
            None,
        ),
        ("periodic rate (exact)", f"{rate.numerator}/{rate.denominator}", None),
        ("periodic rate", float(rate), "rate"),
        ("interest credited in a period", f"{base} x rate, rounded to the cent", None),
        (f"last {flow}", last, None),
    ]
    checks: Rows = [
        ("all checks pass", "yes" if check.passed else "NO: see the Reconciliation sheet", None),
        ("largest gap to the closed form", check.largest_gap, "money"),
        ("its bound", check.gap_bound, "money"),
    ]
    made: Rows = [
        ("made by", f"amort {__version__}", None),
        ("formulas", "none: figures as computed, in exact cents", None),
    ]
    about: Rows = [(str(k), str(v), "text") for k, v in metadata.items()]
    sections: list[tuple[str, Rows]] = [("About the client", about)] if about else []
    sections += [
        ("Terms as given", given),
        ("Conventions used", conventions),
        ("Key figures", key),
        ("Reconciliation", checks),
        ("About this workbook", made),
    ]
    ws, _ = add_pairs_sheet(wb, SHEETS["summary"], title=annuity_title(product), sections=sections)
    ws.column_dimensions["A"].width = 46
    ws.column_dimensions["B"].width = 46
    return ws


# -- reconciliation and closed form ---------------------------------------------------------------


def _checks_sheet(wb: Workbook, check: Any) -> None:
    ws, row = add_checks_sheet(wb, SHEETS["checks"], check.checks)
    details = [
        ("largest gap between cent and closed-form value", check.largest_gap),
        ("bound on that gap, u s_k (row by row)", check.gap_bound),
        ("final adjustment", check.final_adjustment),
        ("adjustment the closed form expects", check.expected_adjustment),
        ("bound on the difference", check.adjustment_bound),
    ]
    write_cell(ws, row, 1, "Figures (currency units)")
    ws.cell(row=row, column=1).font = Font(bold=True, color=ACCENT)
    for label, value in details:
        row += 1
        write_cell(ws, row, 1, label)
        write_cell(ws, row, 2, "none (no last flow to check)" if value is None else float(value))
        ws.cell(row=row, column=2).number_format = "#,##0.0000;-#,##0.0000"
    row += 2
    write_cell(
        ws,
        row,
        1,
        "The gap bound u s_k: u is half a cent for half-up and half-even interest rounding, "
        "one cent for up and down; s_k = ((1 + i)^k - 1) / i, each period's rounding error "
        "grown with interest since. The last flow takes up the drift, so it differs from "
        "the scheduled one by about what the closed form expects.",
    )
    ws.cell(row=row, column=1).alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=3)
    ws.row_dimensions[row].height = 60
    ws.column_dimensions["A"].width = 52
    ws.column_dimensions["B"].width = 40
    ws.column_dimensions["C"].width = 10


def _method_sheet(wb: Workbook, product: Annuity) -> None:
    ws = wb.create_sheet(SHEETS["method"])
    title_and_caution(ws, "The closed form behind this schedule", 8)
    row = CAUTION_ROW + 2
    write_cell(ws, row, 1, "In words and symbols")
    ws.cell(row=row, column=1).font = Font(bold=True, color=ACCENT)
    for line in method_lines(product):
        row += 1
        write_cell(ws, row, 1, line)
        ws.cell(row=row, column=1).alignment = Alignment(wrap_text=True, vertical="top")
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=2)
        ws.row_dimensions[row].height = 15 * max(1, -(-len(line) // 110))
    row += 2
    write_cell(ws, row, 1, "For these terms (float64 closed form)")
    ws.cell(row=row, column=1).font = Font(bold=True, color=ACCENT)
    for label, value, fmt in _method_figures(product):
        row += 1
        write_cell(ws, row, 1, label)
        write_cell(ws, row, 2, value)
        ws.cell(row=row, column=2).number_format = fmt
    ws.column_dimensions["A"].width = 80
    ws.column_dimensions["B"].width = 40


def _method_figures(product: Annuity) -> list[tuple[str, Any, str]]:
    figures = closed_form_figures(product)
    factor, money = "0.0000000000", "#,##0.0000;-#,##0.0000"
    payout = isinstance(product, Payout)
    word = "payment" if payout else "deposit"
    rows: list[tuple[str, Any, str]] = [
        ("periodic rate i", float(product.periodic_rate), factor),
        (
            "periods N (the horizon)" if payout else "periods n",
            "for ever" if figures["periods"] is None else figures["periods"],
            "0",
        ),
        (f"W: value at time 0 of a unit first {word}", figures["weight"], factor),
    ]
    if product.step is not None:
        rows.append(("S: value at time 0 of a unit step", figures["step_weight"], factor))
    if isinstance(product, Payout):
        rows += [
            ("R v^N: the residual's value at time 0", figures["residual_value"] or 0.0, money),
            ("first payment by the closed form, before rounding", figures["exact_flow"], money),
            ("first payment in the schedule", float(product.payment or 0), money),
            ("P_1 W + h S + R v^N: value of the schedule's payments", figures["value"], money),
            ("fund", float(product.fund or 0), money),
        ]
    else:
        rows += [
            ("first deposit by the closed form, before rounding", figures["exact_flow"], money),
            ("first deposit in the schedule", float(product.deposit or 0), money),
            ("(B_0 + D_1 W + h S) (1 + i)^n: value reached", figures["value"], money),
            ("target", float(product.target or 0), money),
        ]
    return rows


# -- charts -----------------------------------------------------------------------------------


def add_annuity_charts(
    wb: Workbook, schedule: Worksheet, frame: pd.DataFrame, *, title: str, name: str = "Charts"
) -> Worksheet:
    """Add a sheet of native charts drawn from the annuity table sheet ``schedule`` (``frame``).

    A line chart of ``closing_value`` by ``period`` and stacked columns of each
    period's parts (:func:`chart_parts`). A payout's ``drawn from the fund``
    is not a schedule column: it is written beside the charts (column P), in
    exact cents, and the chart reads it there.
    """
    ws = wb.create_sheet(name)
    title_and_caution(ws, title, 12)
    parts, (_, lower, upper), (_, lower_label, _) = chart_parts(frame)
    columns = list(frame.columns)
    first, last = FIRST_DATA_ROW, FIRST_DATA_ROW + len(frame) - 1

    def ref(sheet: Worksheet, j: int) -> Reference:
        return Reference(sheet, min_col=j, min_row=first - 1, max_row=last)

    if lower in columns:
        lower_ref = ref(schedule, columns.index(lower) + 1)
    else:
        j = _DATA_COLUMN
        for k, (label, column) in enumerate((("period", "period"), (lower_label, lower))):
            write_cell(ws, HEADER_ROW, j + k, label)
            style_header(ws.cell(row=HEADER_ROW, column=j + k))
            kind = "count" if column == "period" else "money"
            for r, value in enumerate(parts[column].tolist(), start=FIRST_DATA_ROW):
                write_cell(ws, r, j + k, value, kind)
            ws.column_dimensions[ws.cell(row=1, column=j + k).column_letter].width = 16
        write_cell(ws, CAUTION_ROW, j, "chart data: opening value - closing value")
        ws.cell(row=CAUTION_ROW, column=j).font = Font(italic=True, size=9)
        lower_ref = ref(ws, j + 1)
    periods = Reference(schedule, min_col=1, min_row=first, max_row=last)
    line = LineChart()
    line.title = "Value after each period"
    line.y_axis.title = "closing value (currency units)"
    line.x_axis.title = "period number"
    line.add_data(ref(schedule, columns.index("closing_value") + 1), titles_from_data=True)
    line.set_categories(periods)
    series = line.series[0]
    series.graphicalProperties.line.solidFill = ACCENT
    series.graphicalProperties.line.width = 28_000
    series.smooth = False
    bars = BarChart()
    bars.type = "col"
    bars.grouping = "stacked"
    bars.overlap = 100
    bars.gapWidth = 30
    bars.title = (
        "Each payment: interest credited and drawn from the fund"
        if lower == "drawn_from_fund"
        else "Each period's growth: deposit and interest credited"
    )
    bars.y_axis.title = "amount (currency units)"
    bars.x_axis.title = "period number"
    bars.add_data(lower_ref, titles_from_data=True)
    bars.add_data(ref(schedule, columns.index(upper) + 1), titles_from_data=True)
    bars.set_categories(periods)
    for k, colour in enumerate((ACCENT, LIGHT_GREY)):
        bars.series[k].graphicalProperties.solidFill = colour
        bars.series[k].graphicalProperties.line.solidFill = colour
    for chart in (line, bars):
        chart.height, chart.width = 9, 22
        chart.legend.position = "b"
        chart.x_axis.delete = False
        chart.y_axis.delete = False
        chart.y_axis.number_format = "#,##0"
    ws.add_chart(line, "A4")
    ws.add_chart(bars, "A23")
    return ws
