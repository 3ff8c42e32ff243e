"""A disclosure workbook: the figures disclosed, how the rate was found, the flows behind it.

:func:`write_disclosure_workbook` lays one :class:`~amort.disclosure.Disclosure`
out in sheets (names in :data:`SHEETS`), with the generic writer of
:mod:`amort.io.xlsx`:

- **Disclosure**: the borrower, reference and note (user text, never a
  formula), the loan's terms (or the flows' totals and dates), the
  disclosure figures under the standard's own words (US Regulation Z, 12 CFR
  1026.18: APR, finance charge, amount financed, total of payments; EU
  Directive 2008/48/EC: APRC, total cost of credit, ...) and two checks:
  total of payments = amount financed + finance charge, and the rate's
  equation balanced at the unrounded rate;
- **Payment schedule**: the runs of equal payments (how many, amount, first
  and last due date or period);
- **Fees**: each fee with its amount, whether it is a finance charge (in the
  cost of credit) and whether it is paid at closing or financed;
- **How the rate was found**: the standard and method, the unit-period and
  its rate (US) or the time basis (EU), the unrounded rate and its rounding,
  the transaction's class and tolerance (12 CFR 1026.22(a)) with the APRs
  within it, every root of the equation;
- **Flows behind the rate**: each dated (or numbered) flow as placed in
  time, whole unit-periods and fraction (US) or years (EU), its discount
  factor and present value at the unrounded rate; the present values sum
  to zero (to float precision), the equation the rate solves;
- **Payment by payment** (a loan only): the note's schedule (principal plus
  financed fees), one row a period, with a totals row.

An amortising loan's full workbook (live formulas, closed form, charts) is
:func:`amort.io.xlsx_loan.write_workbook`; this one is about the disclosure.
Money is written as the float64 of exact cents; every sheet carries the caution.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from decimal import Decimal
from pathlib import Path
from typing import Any

import pandas as pd
from openpyxl import Workbook

from amort import __version__
from amort.apr import AprResult, Method, Standard, TimedFlow, YearBasis
from amort.disclosure import WORDS, Disclosure
from amort.errors import ExportError
from amort.flows import FlowKind, Flows
from amort.io.xlsx import (
    FIRST_DATA_ROW,
    add_pairs_sheet,
    add_table_sheet,
    new_workbook,
    save_workbook,
    write_cell,
)
from amort.loan import Loan

#: The sheets of a disclosure workbook, in order (the schedule only for a loan).
SHEETS = {
    "summary": "Disclosure",
    "runs": "Payment schedule",
    "fees": "Fees",
    "method": "How the rate was found",
    "flows": "Flows behind the rate",
    "schedule": "Payment by payment",
}

#: The figures' names under each standard: the same sums, each regulation's words.
_BASES = {
    YearBasis.DAYS: "days over 365 (366 in a leap year), whole years counted back",
    YearBasis.DAYS_365: "days over 365",
    YearBasis.MONTHS: "12 equal months of 365/12 days",
    YearBasis.WEEKS: "52 weeks",
}
_FACTOR = "0.0000000000"
_MONEY4 = "#,##0.0000;-#,##0.0000"

Rows = list[tuple[str, Any, str | None]]


def write_disclosure_workbook(
    figures: Disclosure,
    path: Path,
    *,
    loan: Loan | None = None,
    flows: Flows | None = None,
    metadata: Mapping[str, str] | None = None,
    force: bool = False,
) -> Path:
    """Write the disclosure workbook of ``figures`` to ``path`` (.xlsx); return the path.

    loan: the loan the figures were computed from (:func:`amort.disclosure.disclose`):
        its terms are shown and the note's schedule gets its own sheet.
    flows: the flows list they were computed from (:func:`amort.disclosure.disclose_flows`):
        its totals are shown and its labels beside each flow.
    metadata: the terms file's ``borrower``, ``reference`` and ``note`` (user
        text, written so that it never becomes a formula).
    force: replace an existing file (otherwise it is kept and ExportError raised).

    >>> import tempfile, pathlib, openpyxl
    >>> from amort import Loan
    >>> from amort.disclosure import Fee, disclose
    >>> loan = Loan(principal=5000, annual_rate="9%", periods=24)
    >>> figures = disclose(loan, fees=[Fee("origination", 100)])
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "apr.xlsx"
    >>> wb = openpyxl.load_workbook(write_disclosure_workbook(figures, path, loan=loan))
    >>> pairs = {r[0]: r[1] for r in wb["Disclosure"].iter_rows(values_only=True) if r[0]}
    >>> pairs["annual percentage rate (APR)"], pairs["amount financed"]
    (0.1102, 4900)
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError(f"'path' must end in .xlsx (got {str(path)!r})")
    if loan is not None and flows is not None:
        raise ExportError("give the loan or the flows the figures came from, not both")
    note = None if loan is None else _note(loan, figures)
    wb = new_workbook()
    _summary_sheet(wb, figures, loan, flows, metadata or {})
    _runs_sheet(wb, figures)
    _fees_sheet(wb, figures)
    add_pairs_sheet(
        wb, SHEETS["method"], title="How the rate was found", sections=method_sections(figures.apr)
    )
    wb[SHEETS["method"]].column_dimensions["A"].width = 40
    wb[SHEETS["method"]].column_dimensions["B"].width = 64
    add_table_sheet(
        wb,
        SHEETS["flows"],
        flows_frame(figures.apr, flows),
        title="Flows behind the rate, as placed in time",
        totals=["present_value"],
        kinds=_FLOW_KINDS,
    )
    _format_flows(wb, figures.apr)
    if note is not None:
        frame = note.schedule()
        if not frame["due_date"].notna().any():
            frame = frame.drop(columns=["due_date"])
        add_table_sheet(
            wb,
            SHEETS["schedule"],
            frame,
            title=f"Payment by payment: the note of {note.principal:,.2f} "
            "(principal and financed fees)",
        )
    return save_workbook(wb, path, force=force)


def _note(loan: Loan, figures: Disclosure) -> Loan:
    """The loan whose schedule the disclosure used: principal plus the financed fees."""
    financed = sum((fee.amount for fee in figures.fees if fee.financed), Decimal(0))
    note = dataclasses.replace(loan, principal=loan.principal + financed) if financed else loan
    if note.principal.quantize(Decimal("0.01")) != figures.note_amount:
        raise ExportError(
            f"the loan's principal {loan.principal:,.2f} (plus financed fees {financed:,.2f}) "
            f"does not match the disclosed note amount {figures.note_amount:,.2f}"
        )
    return note


# -- the Disclosure sheet ----------------------------------------------------------------------


def _loan_rows(loan: Loan) -> Rows:
    summary = loan.summary()
    rows: Rows = [
        ("principal (before fees)", loan.principal, "money"),
        ("annual rate (nominal)", loan.annual_rate, "percent"),
        ("frequency", loan.frequency.value, None),
        ("number of payments", loan.number_of_payments, "count"),
        ("timing", f"in {loan.timing.value}", None),
    ]
    if loan.balloon:
        rows.append(("balloon", loan.balloon, "money"))
    if loan.structure.value != "level":
        rows.append(("structure", loan.structure.value, None))
    if loan.dated:
        rows += [
            ("start (disbursement)", loan.start_date, "date"),
            ("first payment", summary["first_payment_date"], "date"),
            ("day count", loan.day_count.value, None),
            ("maturity", summary["maturity_date"], "date"),
        ]
    return rows


def _flows_rows(flows: Flows) -> Rows:
    advances, payments = flows.advances, flows.payments
    return [
        ("advances", len(advances), "count"),
        ("advanced in total", flows.total(FlowKind.ADVANCE), "money"),
        ("payments", len(payments), "count"),
        ("paid in total", flows.total(FlowKind.PAYMENT), "money"),
        ("first flow", flows.start, "date"),
        ("last flow", flows.items[-1].on, "date"),
    ]


def _summary_sheet(
    wb: Workbook,
    figures: Disclosure,
    loan: Loan | None,
    flows: Flows | None,
    metadata: Mapping[str, str],
) -> None:
    words = WORDS[figures.standard]
    rate = figures.apr
    places = "0." + "0" * rate.decimals + "%" if rate.decimals else "0%"
    shown: Rows = [
        (words["rate"], rate.apr / 100, "percent"),
        (words["finance_charge"], figures.finance_charge, "money"),
        (words["amount_financed"], figures.amount_financed, "money"),
        (words["total_of_payments"], figures.total_of_payments, "money"),
        ("interest", figures.interest, "money"),
        (words["prepaid"], figures.prepaid_finance_charge, "money"),
        (
            "note amount (the advances)"
            if flows is not None
            else "note amount (principal + financed fees)",
            figures.note_amount,
            "money",
        ),
    ]
    balances = figures.total_of_payments == figures.amount_financed + figures.finance_charge
    residual = float(flows_frame(rate, flows)["present_value"].sum())
    checks: Rows = [
        (
            f"{words['total_of_payments']} = {words['amount_financed']} + "
            f"{words['finance_charge']}",
            "pass" if balances else "FAIL",
            None,
        ),
        (
            "the rate's equation at the unrounded rate (sum of present values)",
            "not applicable (US Rule: no discount factors)"
            if rate.method is Method.US_RULE
            else residual,
            None if rate.method is Method.US_RULE else "money",
        ),
    ]
    about: Rows = [(k, str(metadata[k]), "text") for k in metadata]
    sections: list[tuple[str, Rows]] = [("Loan", about)] if about else []
    if loan is not None:
        sections.append(("Terms", _loan_rows(loan)))
    elif flows is not None:
        sections.append(("Flows", _flows_rows(flows)))
    made: Rows = [("made by", f"amort {__version__}", None)]
    sections += [(words["title"], shown), ("Checks", checks), ("About this workbook", made)]
    ws, where = add_pairs_sheet(wb, SHEETS["summary"], title=words["title"], sections=sections)
    ws[where[words["rate"]]].number_format = places
    if rate.method is not Method.US_RULE:
        ws[where[checks[1][0]]].number_format = _MONEY4
    ws.column_dimensions["A"].width = 62
    ws.column_dimensions["B"].width = 44


# -- payment schedule and fees -------------------------------------------------------------------


def runs_frame(figures: Disclosure) -> pd.DataFrame:
    """Return the payment schedule as a DataFrame: one row a run of equal payments.

    Columns ``payments``, ``amount`` (float64 of exact cents) and ``first_due``,
    ``last_due`` (datetime64) for a dated loan or flows, ``from_period``,
    ``to_period`` for an undated loan.
    """
    runs = figures.payment_schedule
    frame = pd.DataFrame(
        {
            "payments": [run.count for run in runs],
            "amount": [float(run.amount) for run in runs],
        }
    )
    if figures.start is not None:
        frame["first_due"] = pd.to_datetime([str(run.first_due) for run in runs])
        frame["last_due"] = pd.to_datetime([str(run.last_due) for run in runs])
    else:
        frame["from_period"] = [run.first_period for run in runs]
        frame["to_period"] = [run.first_period + run.count - 1 for run in runs]
    return frame


def _runs_sheet(wb: Workbook, figures: Disclosure) -> None:
    frame = runs_frame(figures)
    ws = add_table_sheet(
        wb,
        SHEETS["runs"],
        frame,
        title="Payment schedule: runs of equal payments",
        totals=(),
        kinds={"payments": "count", "amount": "money"},
    )
    row = FIRST_DATA_ROW + len(frame) + 1
    write_cell(ws, row, 1, "total of payments")
    write_cell(ws, row, 2, figures.total_of_payments, "money")


def fees_frame(figures: Disclosure) -> pd.DataFrame:
    """Return the fees as a DataFrame: name (user text), amount, in the charge, how paid."""
    words = WORDS[figures.standard]
    return pd.DataFrame(
        {
            "fee": [fee.name for fee in figures.fees],
            "amount": [float(fee.amount) for fee in figures.fees],
            words["in_charge"]: ["yes" if fee.finance_charge else "no" for fee in figures.fees],
            "paid": ["financed" if fee.financed else words["closing"] for fee in figures.fees],
        },
        columns=["fee", "amount", words["in_charge"], "paid"],
    )


def _fees_sheet(wb: Workbook, figures: Disclosure) -> None:
    frame = fees_frame(figures)
    kinds = {c: "text" for c in frame.columns} | {"amount": "money"}
    ws = add_table_sheet(wb, SHEETS["fees"], frame, title="Fees", totals=["amount"], kinds=kinds)
    if frame.empty:
        write_cell(ws, FIRST_DATA_ROW, 1, "no fees were given")


# -- how the rate was found and the flows behind it ----------------------------------------------


def method_sections(rate: AprResult) -> list[tuple[str, Rows]]:
    """Return the sections of the rate's working: standard, unrounded rate, tolerance, roots."""
    rows: Rows = []
    if rate.unit_period is not None and rate.method is not None:
        how = "actuarial method" if rate.method is Method.ACTUARIAL else "US Rule method"
        rows += [
            ("standard", f"12 CFR 1026 Appendix J, {how}", None),
            ("unit-period", rate.unit_period.name, None),
            ("unit-periods a year", float(rate.unit_period.per_year), None),
            ("unit-period rate", rate.unit_period_rate, "rate"),
            ("APR before rounding (nominal a year)", rate.apr_unrounded / 100, "rate"),
        ]
        equation = (
            "sum of A_k / ((1 + e_k i) (1 + i)^q_k) over the advances = sum of P_j / ((1 + "
            "f_j i) (1 + i)^t_j) over the payments; q, t whole unit-periods and e, f fractions "
            "counted back from each flow's date to the start; APR = i x unit-periods a year."
            if rate.method is Method.ACTUARIAL
            else "US Rule: simple interest each payment period on the unpaid balance, "
            "interest never added to principal."
        )
    else:
        basis = "equal periods" if rate.year_basis is None else _BASES[rate.year_basis]
        rows += [
            ("standard", "Directive 2008/48/EC Annex I", None),
            ("time in years", basis, None),
            ("APRC before rounding (effective a year)", rate.apr_unrounded / 100, "rate"),
        ]
        equation = (
            "sum of C_k (1 + X)^-t_k over the drawdowns = sum of D_l (1 + X)^-s_l over the "
            "repayments; X the annual effective rate, t and s in years from the first drawdown."
        )
    places = "place" if rate.decimals == 1 else "places"
    rows += [
        ("disclosed", rate.apr / 100, "rate"),
        ("rounded", f"half-up to {rate.decimals} decimal {places} of a percent", None),
    ]
    tolerance: Rows = []
    rules = rate.classification
    if rules is not None:
        width = float(rules.tolerance)
        tolerance = [
            ("transaction", "regular" if rules.regular else "irregular", None),
            ("irregular features", ", ".join(rules.features) or "none", None),
            ("tolerance (percentage points either side)", float(rules.tolerance), None),
            ("rule", rules.rule, None),
            ("lowest APR within it", (rate.apr_unrounded - width) / 100, "rate"),
            ("highest APR within it", (rate.apr_unrounded + width) / 100, "rate"),
        ]
    roots: Rows = [
        ("rates that solve the equation", ", ".join(f"{r:.6f} %" for r in rate.roots), None),
        (
            "one answer",
            "no: the smallest rate >= 0 is taken; neither standard says which to disclose"
            if rate.ambiguous
            else "yes",
            None,
        ),
        ("the equation", equation, "text"),
    ]
    sections = [("Rate", rows)]
    if tolerance:
        sections.append(("Tolerance, 12 CFR 1026.22(a)", tolerance))
    return [*sections, ("Roots", roots)]


_FLOW_KINDS = {
    "date": "date",
    "period": "count",
    "kind": "text",
    "amount": "money",
    "whole_units": "count",
    "fraction": "text",
    "fraction_value": "number",
    "years": "number",
    "discount_factor": "number",
    "present_value": "money",
    "label": "text",
}


def _discount(rate: AprResult, flow: TimedFlow) -> float | None:
    """The flow's discount factor at the unrounded rate (None under the US Rule)."""
    if rate.method is Method.US_RULE:
        return None
    if flow.years is not None:
        return float((1 + rate.apr_unrounded / 100) ** -float(flow.years))
    i = rate.unit_period_rate or 0.0
    return 1 / ((1 + float(flow.fraction) * i) * (1 + i) ** flow.whole)


def flows_frame(rate: AprResult, flows: Flows | None = None) -> pd.DataFrame:
    """Return the flows behind the rate as a DataFrame, one row a flow.

    Columns: ``date`` (dated) or ``period`` (undated); ``kind``; ``amount``
    (currency units; an advance net of the fees that come off it); US:
    ``whole_units`` and ``fraction`` (text, e.g. ``17/30``) with its value;
    EU: ``years``; ``discount_factor`` and ``present_value`` (the amount
    signed, payments +, advances -, times the factor) at the unrounded rate
    (none under the US Rule); ``label`` from ``flows`` where each flow lines
    up with one of its items.
    """
    timed = rate.flows
    data: dict[str, list[Any]] = {}
    dates = [f.on for f in timed]
    if all(d is not None for d in dates):
        data["date"] = [pd.Timestamp(str(d)) for d in dates]
    else:
        data["period"] = [f.period for f in timed]
    data["kind"] = [f.kind.value for f in timed]
    data["amount"] = [float(f.amount) for f in timed]
    if rate.standard is Standard.US_REGZ:
        data["whole_units"] = [f.whole for f in timed]
        data["fraction"] = [f"{f.fraction.numerator}/{f.fraction.denominator}" for f in timed]
        data["fraction_value"] = [float(f.fraction) for f in timed]
    else:
        data["years"] = [float(f.years or 0) for f in timed]
    factors = [_discount(rate, f) for f in timed]
    if rate.method is not Method.US_RULE:
        data["discount_factor"] = [float(x or 0) for x in factors]
        data["present_value"] = [
            float(f.signed) * float(x or 0) for f, x in zip(timed, factors, strict=True)
        ]
    else:
        data["present_value"] = [float("nan")] * len(timed)
    if flows is not None and len(flows.items) == len(timed):
        pairs = zip(flows.items, timed, strict=True)
        if all(item.on == f.on and item.kind is f.kind for item, f in pairs):
            data["label"] = [item.label for item in flows.items]
    return pd.DataFrame(data)


def _format_flows(wb: Workbook, rate: AprResult) -> None:
    ws = wb[SHEETS["flows"]]
    header = [c.value for c in ws[FIRST_DATA_ROW - 1]]
    formats = {"discount factor": _FACTOR, "fraction value": "0.000000", "years": "0.0000000000"}
    for name, fmt in formats.items():
        if name in header:
            j = header.index(name) + 1
            for (cell,) in ws.iter_rows(min_row=FIRST_DATA_ROW, min_col=j, max_col=j):
                if isinstance(cell.value, float):
                    cell.number_format = fmt
    if "present value" in header:
        j = header.index("present value") + 1
        for (cell,) in ws.iter_rows(min_row=FIRST_DATA_ROW, min_col=j, max_col=j):
            cell.number_format = _MONEY4
    last = FIRST_DATA_ROW + len(rate.flows)
    write_cell(ws, last + 1, 1, "present values at the unrounded rate; their sum (the total) is 0")
