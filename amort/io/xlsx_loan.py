"""One loan's workbook: terms and totals, the schedule, the reconciliation, the closed form, charts.

:func:`write_workbook` lays one :class:`~amort.loan.Loan` out in five sheets
(names in :data:`SHEETS`):

- **Terms and totals**: the terms as given, the conventions used (rounding of
  the payment and of each period's interest, day count, compounding, the exact
  periodic rate), the key figures (payment, number of payments, final payment,
  balloon, total interest, total paid, maturity, APR where the caller knows it)
  and the caution. Its input cells carry workbook names (``principal_lent``,
  ``annual_rate``, ``payments_a_year``, ``periodic_rate``, ``level_payment``,
  ``balloon_due``) that the live formulas use;
- **Payment by payment**: one row a period, the columns of ``loan.schedule()``
  (``due_date`` left out when the loan is undated), a totals row; with
  ``formulas=True`` interest, principal and balances are spreadsheet formulas
  (:mod:`amort.io.xlsx_formulas`) with the engine's values cached;
- **Reconciliation**: every check of ``loan.reconciliation()`` with its
  figures and pass/fail, and with formulas, the identities recomputed live;
- **Closed form**: the loan's closed form in words and symbols
  (:func:`amort.formula.formula_for`) and the schedule's rules in words;
- **Charts**: native charts of the balance over time and of each payment's
  split into interest and principal.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
from openpyxl import Workbook
from openpyxl.chart import BarChart, LineChart, Reference
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.workbook.defined_name import DefinedName
from openpyxl.worksheet.worksheet import Worksheet

from amort import __version__
from amort.errors import ExportError, InvalidTerms
from amort.io.xlsx import (
    ACCENT,
    CAUTION_ROW,
    FIRST_DATA_ROW,
    FLOW_COLUMNS,
    LIGHT_GREY,
    Cached,
    add_checks_sheet,
    add_pairs_sheet,
    add_table_sheet,
    new_workbook,
    save_workbook,
    title_and_caution,
    write_cell,
)
from amort.io.xlsx_formulas import apply_live, plan_live, sum_formulas
from amort.loan import Loan
from amort.quote import quote_payment

#: The sheets of a one-loan workbook, in order.
SHEETS = {
    "summary": "Terms and totals",
    "schedule": "Payment by payment",
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


def write_workbook(
    loan: Loan,
    path: Path,
    *,
    formulas: bool = False,
    force: bool = False,
    apr: Decimal | float | None = None,
    metadata: Mapping[str, str] | None = None,
    extra_figures: Sequence[tuple[str, Any, str | None]] = (),
) -> Path:
    """Write ``loan``'s workbook to ``path`` (.xlsx), whole or not at all; return the path.

    formulas: write interest, principal and balances as live spreadsheet
        formulas on the terms cells (ROUND to the cent in the loan's interest
        rounding), with the engine's values cached. Refused with
        :class:`~amort.errors.ExportError` when a spreadsheet could not
        reproduce every cent (see :mod:`amort.io.xlsx_formulas`).
    force: replace an existing file (otherwise it is kept and ExportError raised).
    apr: the annual percentage rate as a decimal fraction, where the caller
        has computed it (``amort apr``); shown among the key figures.
    metadata: the terms file's ``borrower``, ``reference`` and ``note``
        (user text, written so that it never becomes a formula).
    extra_figures: more key figures, ``(label, value, kind)`` with kind a key
        of :data:`amort.io.xlsx.FORMATS` or None.

    Money is written as the float64 of exact cents the schedule holds.

    >>> import tempfile, pathlib
    >>> from amort import Loan
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> loan = Loan(principal=18_500, annual_rate="7.9%", periods=60)
    >>> write_workbook(loan, folder / "car.xlsx", formulas=True).name
    'car.xlsx'
    >>> import openpyxl
    >>> sheet = openpyxl.load_workbook(folder / "car.xlsx")["Payment by payment"]
    >>> sheet["D4"].value, sheet["E4"].value
    ('=ROUND(B4*periodic_rate,2)', '=ROUND(C4-D4,2)')
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError(f"'path' must end in .xlsx (got {str(path)!r})")
    frame = loan.schedule()
    if not frame["due_date"].notna().any():
        frame = frame.drop(columns=["due_date"])
    plan = plan_live(loan, frame) if formulas else None
    wb = new_workbook()
    cached = Cached()
    summary, inputs = _summary_sheet(wb, loan, apr, metadata or {}, extra_figures, formulas)
    _name_inputs(wb, summary, inputs)
    if plan is not None and plan.periodic_rate_formula is not None:
        cached.set(
            summary,
            inputs["periodic_rate"],
            "=" + plan.periodic_rate_formula,
            plan.periodic_rate_value,
        )
    totals = [c for c in frame.columns if c in FLOW_COLUMNS]
    schedule = add_table_sheet(
        wb,
        SHEETS["schedule"],
        frame,
        title=f"Payment by payment: {_terms_line(loan)}",
        totals=totals,
    )
    spans: dict[str, str] = {}
    if plan is not None:
        apply_live(schedule, frame, plan, cached)
        spans = sum_formulas(schedule, frame, totals, cached)
    _checks_sheet(wb, loan, frame, spans, cached)
    _method_sheet(wb, loan, formulas)
    add_charts_sheet(wb, schedule, frame, title=f"Charts: {_terms_line(loan)}")
    return save_workbook(wb, path, force=force, cached=cached)


def _terms_line(loan: Loan) -> str:
    rate = f"{(loan.annual_rate * 100).normalize():f} %"
    count = loan.number_of_payments
    return (
        f"{loan.principal:,.2f} at {rate} a year, {count:,} {loan.frequency.value} payments "
        f"in {loan.timing.value}"
    )


def _summary_sheet(
    wb: Workbook,
    loan: Loan,
    apr: Decimal | float | None,
    metadata: Mapping[str, str],
    extra: Sequence[tuple[str, Any, str | None]],
    formulas: bool,
) -> tuple[Worksheet, dict[str, str]]:
    figures = quote_payment(loan)
    summary = loan.summary()
    check = loan.reconciliation()
    rows_about: Rows = [
        (k, metadata[k], "text") for k in ("borrower", "reference", "note") if k in metadata
    ]
    given: list[tuple[str, Any, str | None]] = [
        ("principal lent", loan.principal, "money"),
        ("annual rate (nominal)", loan.annual_rate, "percent"),
        ("frequency", loan.frequency.value, None),
        ("payments a year", loan.frequency.per_year, "count"),
        (
            "number of payments asked",
            loan.periods if loan.periods is not None else "follows from the payment",
            "count",
        ),
    ]
    if loan.fixed_payment is not None:
        given.append(("payment asked", loan.fixed_payment, "money"))
    given += [
        ("balloon", loan.balloon, "money"),
        (
            "timing",
            "in advance (start of each period, annuity-due)"
            if loan.advance
            else "in arrears (end of each period)",
            None,
        ),
    ]
    given += _structure_rows(loan)
    if loan.dated:
        given += [
            ("start (disbursement)", loan.start_date, "date"),
            ("first payment", summary["first_payment_date"], "date"),
            ("end-of-month rule", "yes" if loan.end_of_month else "no", None),
            ("business days", loan.business_days.value, None),
            ("odd first period", loan.odd_days.value, None),
        ]
        if loan.holidays:
            holidays = loan.holidays
            shown = holidays if isinstance(holidays, str) else ", ".join(holidays)
            given.append(("holiday calendar", shown, None))
    rate = loan.periodic_rate
    conventions: list[tuple[str, Any, str | None]] = [
        ("rounding of the level payment", _ROUNDING_WORDS[loan.rounding.value], None),
        ("rounding of each period's interest", _ROUNDING_WORDS[loan.interest_rounding.value], None),
        (
            "day count",
            loan.day_count.value if loan.dated else "equal periods (1/p of a year each)",
            None,
        ),
        (
            "compounding",
            "once a payment period" if loan.compounding is None else str(loan.compounding.name),
            None,
        ),
        ("periodic rate (exact)", f"{rate.numerator}/{rate.denominator}", None),
        ("periodic rate", float(rate), "rate"),
        ("interest of a period", "opening balance x rate, rounded to the cent", None),
        ("last payment", "pays what is left, so the balance closes at 0", None),
    ]
    maturity = summary["maturity_date"] or f"period {summary['maturity_period']:,}"
    key: list[tuple[str, Any, str | None]] = [
        ("level payment", figures["payment"], "money"),
        ("number of payments", figures["number_of_payments"], "count"),
        ("final payment", figures["final_payment"], "money"),
        ("balloon paid", figures["balloon"], "money"),
        ("total interest", figures["total_interest"], "money"),
        ("total paid", figures["total_paid"], "money"),
    ]
    if summary["odd_days_interest"]:
        key.append(
            (f"odd-days interest ({loan.odd_days.value})", summary["odd_days_interest"], "money")
        )
    key.append(("maturity", maturity, "date" if summary["maturity_date"] else None))
    key.append(
        ("APR", float(apr), "percent")
        if apr is not None
        else ("APR", "not computed in this workbook (see amort apr)", None)
    )
    key += list(extra)
    checks: Rows = [
        ("all checks pass", "yes" if check.passed else "NO: see the Reconciliation sheet", None),
        ("largest gap to the closed form", check.largest_gap, "money"),
        ("its bound", check.gap_bound, "money"),
    ]
    made: Rows = [
        ("made by", f"amort {__version__}", None),
        (
            "live formulas",
            "yes: interest, principal and balances recompute from the terms above"
            if formulas
            else "no: figures as computed",
            None,
        ),
    ]
    sections: list[tuple[str, Rows]] = [("Loan", rows_about)] if rows_about else []
    sections += [
        ("Terms as given", given),
        ("Conventions used", conventions),
        ("Key figures", key),
        ("Reconciliation", checks),
        ("About this workbook", made),
    ]
    ws, where = add_pairs_sheet(
        wb, SHEETS["summary"], title=f"Loan: {_terms_line(loan)}", sections=sections
    )
    ws.column_dimensions["B"].width = 44
    inputs = {
        "principal_lent": where["principal lent"],
        "annual_rate": where["annual rate (nominal)"],
        "payments_a_year": where["payments a year"],
        "periodic_rate": where["periodic rate"],
        "level_payment": where["level payment"],
        "balloon_due": where["balloon"],
    }
    return ws, inputs


def _structure_rows(loan: Loan) -> list[tuple[str, Any, str | None]]:
    rows: list[tuple[str, Any, str | None]] = []
    if loan.structure.value != "level":
        rows.append(("structure", loan.structure.value, None))
    if loan.interest_only_periods:
        rows.append(("interest-only payments", loan.interest_only_periods, "count"))
    if loan.payment_growth is not None:
        rows.append(("payment growth", loan.payment_growth, "percent"))
    if loan.payment_step is not None:
        rows.append(("payment step", loan.payment_step, "money"))
    if loan.graduated:
        rows.append(("periods between increases", loan.growth_every, "count"))
    if loan.custom_payments is not None:
        rows.append(("payments", "as listed (see the schedule)", None))
    if loan.payment_months is not None:
        rows.append(("payment months", ", ".join(str(m) for m in loan.payment_months), None))
    if loan.negative_amortisation_cap is not None:
        rows.append(("negative amortisation cap", loan.negative_amortisation_cap, "money"))
    if loan.events:
        kinds = sorted({type(e).__name__ for e in loan.events})
        rows.append(("events", f"{len(loan.events)} ({', '.join(kinds)})", None))
    return rows


def _name_inputs(wb: Workbook, ws: Worksheet, inputs: Mapping[str, str]) -> None:
    """Give each input cell a workbook name, so formulas read ``C4*periodic_rate``."""
    for name, coordinate in inputs.items():
        column = "".join(ch for ch in coordinate if ch.isalpha())
        row = coordinate[len(column) :]
        wb.defined_names[name] = DefinedName(name, attr_text=f"'{ws.title}'!${column}${row}")


def _checks_sheet(
    wb: Workbook, loan: Loan, frame: pd.DataFrame, spans: Mapping[str, str], cached: Cached
) -> None:
    check = loan.reconciliation()
    ws, row = add_checks_sheet(wb, SHEETS["checks"], check.checks)
    details: list[tuple[str, float | Decimal]] = [
        ("largest gap between cent and closed-form balance", check.largest_gap),
        ("bound on that gap, u s_k (row by row)", check.gap_bound),
        ("final-payment adjustment", check.final_adjustment),
        ("adjustment the closed form expects", check.expected_adjustment),
        ("bound on the difference", check.adjustment_bound),
        ("balloon paid", check.balloon_paid),
        ("balloon paid less balloon asked", check.balloon_adjustment),
    ]
    write_cell(ws, row, 1, "Figures (currency units)")
    ws.cell(row=row, column=1).font = Font(bold=True, color=ACCENT)
    for label, value in details:
        row += 1
        write_cell(ws, row, 1, label)
        write_cell(ws, row, 2, float(value), "money")
        ws.cell(row=row, column=2).number_format = "#,##0.0000;-#,##0.0000"
    row += 2
    write_cell(
        ws,
        row,
        1,
        "The gap bound u s_k: u is half a cent for half-up and half-even interest "
        "rounding, one cent for up and down; s_k = ((1 + i)^k - 1) / i, each period's "
        "rounding error grown with interest since.",
    )
    ws.cell(row=row, column=1).alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=3)
    ws.row_dimensions[row].height = 45
    if spans:
        _live_checks(ws, row + 2, frame, spans, cached)
    ws.column_dimensions["A"].width = 52
    ws.column_dimensions["B"].width = 40
    ws.column_dimensions["C"].width = 10


def _live_checks(
    ws: Worksheet, row: int, frame: pd.DataFrame, spans: Mapping[str, str], cached: Cached
) -> None:
    """Identities recomputed by the spreadsheet from the schedule's live formulas."""
    sheet = f"'{SHEETS['schedule']}'!"
    write_cell(ws, row, 1, "Recomputed live from the schedule's formulas")
    ws.cell(row=row, column=1).font = Font(bold=True, color=ACCENT)

    def total(column: str) -> int:
        return round(float(frame[column].sum()) * 100) if column in frame else 0

    def sums(*columns: str) -> str:
        return "+".join(f"SUM({sheet}{spans[c]})" for c in columns if c in spans) or "0"

    repaid = ("principal", "extra_principal", "balloon")
    added = ("capitalised",)
    closing_letter = get_column_letter(list(frame.columns).index("closing_balance") + 1)
    last = f"{sheet}{closing_letter}{FIRST_DATA_ROW + len(frame) - 1}"
    checks = [
        (
            "principal repaid = principal lent + interest capitalised",
            f"ROUND({sums(*repaid)}-({sums(*added)})-principal_lent,2)=0",
            sum(total(c) for c in repaid) - total("capitalised")
            == round(float(frame["opening_balance"].iloc[0]) * 100),
        ),
        (
            "balance closes at 0",
            f"ROUND({last},2)=0",
            float(frame["closing_balance"].iloc[-1]) == 0,
        ),
    ]
    if "capitalised" not in frame:
        checks.append(
            (
                "sum(payment) = sum(interest) + sum(principal)",
                f"ROUND({sums('payment')}-{sums('interest')}-{sums('principal')},2)=0",
                total("payment") == total("interest") + total("principal"),
            )
        )
    for label, test, ok in checks:
        row += 1
        write_cell(ws, row, 1, label)
        coordinate = f"C{row}"
        cached.set(ws, coordinate, f'=IF({test},"pass","FAIL")', "pass" if ok else "FAIL")


def _method_sheet(wb: Workbook, loan: Loan, formulas: bool) -> None:
    from amort.formula import formula_for  # imports sympy: only when a workbook is written

    ws = wb.create_sheet(SHEETS["method"])
    title_and_caution(ws, "The closed form behind this schedule", 8)
    lines: list[tuple[str, str]] = []
    try:
        found = formula_for(loan)
        lines += [("head", "In words and symbols (from amort formula)")]
        lines += [("mono", line) for line in found.text.splitlines()]
        lines += [("gap", ""), ("head", "LaTeX")]
        lines += [("mono", line) for line in found.latex.splitlines()]
    except InvalidTerms as exc:
        lines += [("head", "Closed form"), ("text", f"Not shown for this loan: {exc}.")]
    lines += [("gap", ""), ("head", "The schedule's rules")]
    rules = [
        f"Interest of a period: the opening balance{' less the payment' if loan.advance else ''} "
        f"times the period's rate, rounded {loan.interest_rounding.value} to the cent.",
        "Principal of a period: the payment less the interest.",
        "Closing balance: the opening balance less the principal (and any extra principal "
        "or balloon), plus any interest capitalised.",
        f"Level payment: the closed form's exact payment, rounded {loan.rounding.value} to "
        "the cent. The last payment pays what is left, so the balance closes at exactly 0.",
        "Every cent is what exact decimal arithmetic under these roundings gives.",
    ]
    if formulas:
        rules.append(
            "Live formulas: the Payment by payment sheet computes interest, principal and "
            "balances from the named cells of Terms and totals (principal_lent, annual_rate, "
            "payments_a_year, periodic_rate, level_payment, balloon_due); change one and the "
            "schedule follows, the last payment taking up the difference."
        )
    lines += [("text", rule) for rule in rules]
    row = CAUTION_ROW + 2
    for style, text in lines:
        write_cell(ws, row, 1, text or None)
        cell = ws.cell(row=row, column=1)
        if style == "head":
            cell.font = Font(bold=True, color=ACCENT)
        elif style == "mono":
            cell.font = Font(name="Courier New", size=10)
        row += 1
    ws.column_dimensions["A"].width = 120


def add_charts_sheet(
    wb: Workbook, schedule: Worksheet, frame: pd.DataFrame, *, title: str, name: str = "Charts"
) -> Worksheet:
    """Add a sheet of native charts drawn from the table sheet ``schedule`` that holds ``frame``.

    A line chart of ``closing_balance`` and stacked columns of ``interest`` and
    ``principal``, by ``period`` (the first column); ``schedule`` must have been
    laid out by :func:`amort.io.xlsx.add_table_sheet`. Annuity payouts and book
    projections with those columns reuse it.
    """
    ws = wb.create_sheet(name)
    title_and_caution(ws, title, 12)
    columns = list(frame.columns)
    first, last = FIRST_DATA_ROW, FIRST_DATA_ROW + len(frame) - 1

    def ref(column: str) -> Reference:
        j = columns.index(column) + 1
        return Reference(schedule, min_col=j, min_row=first - 1, max_row=last)

    periods = Reference(schedule, min_col=1, min_row=first, max_row=last)
    line = LineChart()
    line.title = "Balance after each payment"
    line.y_axis.title = "closing balance (currency units)"
    line.x_axis.title = "payment number"
    line.add_data(ref("closing_balance"), titles_from_data=True)
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
    bars.title = "Each payment: interest and principal"
    bars.y_axis.title = "amount (currency units)"
    bars.x_axis.title = "payment number"
    bars.add_data(ref("interest"), titles_from_data=True)
    bars.add_data(ref("principal"), titles_from_data=True)
    bars.set_categories(periods)
    bars.series[0].graphicalProperties.solidFill = LIGHT_GREY
    bars.series[0].graphicalProperties.line.solidFill = LIGHT_GREY
    bars.series[1].graphicalProperties.solidFill = ACCENT
    bars.series[1].graphicalProperties.line.solidFill = ACCENT
    for chart in (line, bars):
        chart.height, chart.width = 9, 22
        chart.legend.position = "b"
        chart.x_axis.delete = False
        chart.y_axis.delete = False
        chart.y_axis.number_format = "#,##0"
    ws.add_chart(line, "A4")
    ws.add_chart(bars, "A23")
    return ws
