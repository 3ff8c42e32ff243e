"""The ``amort apr`` verb: disclosure figures (APR or APRC, finance charge, amount financed,
total of payments, payment schedule). Parse, call :mod:`amort.disclosure`, print.

``--out FILE.csv`` writes the flows behind the rate; ``--out FILE.xlsx`` a disclosure
workbook (:mod:`amort.io.xlsx_disclosure`)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer
from rich.table import Table

from amort.apr import Method, Standard, YearBasis
from amort.cli_options import (
    Advance,
    AsJson,
    Balloon,
    BusinessDays,
    Cap,
    CompoundingOpt,
    CustomPayments,
    DayCountOpt,
    EndOfMonth,
    Extras,
    FirstPayment,
    Force,
    FrequencyOpt,
    Growth,
    GrowthEvery,
    Holidays,
    Holidays_,
    InterestDatesOpt,
    InterestOnly,
    InterestRounding,
    KeepPayment,
    OddDaysOpt,
    PaymentMonths,
    Periods,
    Principal,
    Rate,
    Recast,
    Resets,
    RoundingOpt,
    SemimonthlyDays,
    Start,
    Step,
    StructureOpt,
    Years,
    build_loan,
    dated_terms,
    parse_events,
    periods_from,
)
from amort.cli_output import caution, emit_json, errors, figures_table, money, out, terms_rows
from amort.conventions import Frequency
from amort.disclosure import WORDS, Disclosure, Fee, disclose, disclose_flows
from amort.errors import InvalidTerms
from amort.flows import FlowKind, Flows, read_flows
from amort.io.files import check_target, write_text_atomic
from amort.terms import read_terms

FEE_HELP = (
    "A fee NAME=AMOUNT (repeatable). It is a finance charge paid at closing unless marked: "
    "NAME=AMOUNT:financed adds it to the principal, :not-finance-charge leaves it out of the "
    "finance charge, :closing says it is paid at closing; e.g. origination=250:financed."
)
_MARKS = {
    "financed": ("financed", True),
    "closing": ("at_closing", True),
    "at-closing": ("at_closing", True),
    "not-finance-charge": ("finance_charge", False),
    "finance-charge": ("finance_charge", True),
}

TermsFile = Annotated[
    Path | None,
    typer.Argument(
        help="A loan terms file (TOML, format = 1), fee tables included.", show_default=False
    ),
]
FeeOpt = Annotated[list[str] | None, typer.Option("--fee", help=FEE_HELP)]
StandardOpt = Annotated[
    str,
    typer.Option(
        "--standard",
        help="us-regz (APR, Regulation Z Appendix J) or eu-ccd (APRC, Directive 2008/48/EC).",
    ),
]
Decimals = Annotated[
    int | None,
    typer.Option("--decimals", help="Decimal places of the rate disclosed (default 2 US, 1 EU)."),
]
MethodOpt = Annotated[
    str | None,
    typer.Option("--method", help="US only: actuarial (default) or us-rule."),
]
EuYear = Annotated[
    str | None,
    typer.Option(
        "--eu-year",
        help="EU only, how time is counted: days (365, or 366 in a leap year; default), "
        "365-days, months (12 equal months) or weeks (52).",
    ),
]
FlowsFile = Annotated[
    Path | None,
    typer.Option(
        "--flows",
        help="A CSV of dated flows (columns date, amount, kind = advance or payment, "
        "optional label) instead of a loan.",
    ),
]
AuditFile = Annotated[
    Path | None,
    typer.Option(
        "--out",
        help="Also write the flows behind the rate to FILE.csv, or a disclosure workbook "
        "(figures, fees, how the rate was found, flows, schedule) to FILE.xlsx "
        "(kept unless --force).",
    ),
]


def parse_fee(text: str) -> Fee:
    """Return the fee a ``--fee NAME=AMOUNT[:mark...]`` option describes."""
    name, sep, rest = text.partition("=")
    if not sep or not name.strip():
        raise InvalidTerms(
            f"'--fee' must be NAME=AMOUNT, optionally with :financed, :closing or "
            f":not-finance-charge (got {text!r})"
        )
    amount, *marks = rest.split(":")
    flags: dict[str, Any] = {}
    for mark in marks:
        key = "-".join(mark.strip().lower().replace("_", "-").split())
        if key not in _MARKS:
            raise InvalidTerms(
                f"'--fee' {text!r} has the unknown mark {mark.strip()!r}; the marks are "
                "financed, closing and not-finance-charge"
            )
        field, value = _MARKS[key]
        flags[field] = value
    return Fee(name, amount.strip(), **flags)  # type: ignore[arg-type]  # Fee parses the amount


def _choice_for(standard: Standard, method: str | None, eu_year: str | None) -> dict[str, Any]:
    if standard is Standard.EU_CCD and method is not None:
        raise InvalidTerms("'--method' applies to --standard us-regz only")
    if standard is Standard.US_REGZ and eu_year is not None:
        raise InvalidTerms("'--eu-year' applies to --standard eu-ccd only")
    return {
        "method": Method.parse(method or "actuarial", "--method"),
        "year_basis": YearBasis.parse(eu_year or "days", "--eu-year"),
    }


def register(app: typer.Typer) -> None:
    """Add ``amort apr`` to the ``amort`` app."""
    app.command(
        name="apr",
        epilog=(
            "Examples: amort apr --principal 5000 --rate 9 --periods 24 --fee origination=100 ; "
            "amort apr --flows examples/tallowmere_flows.csv --standard eu-ccd"
        ),
    )(apr)


def apr(
    terms: TermsFile = None,
    principal: Principal = None,
    rate: Rate = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
    payment: Annotated[
        str | None,
        typer.Option(
            "--payment", help="Fixed level payment; without --periods the term follows from it."
        ),
    ] = None,
    balloon: Balloon = "0",
    advance: Advance = False,
    rounding: RoundingOpt = "half-up",
    interest_rounding: InterestRounding = "half-up",
    start: Start = None,
    first_payment: FirstPayment = None,
    day_count: DayCountOpt = "equal",
    compounding: CompoundingOpt = None,
    business_days: BusinessDays = "none",
    holidays: Holidays = None,
    odd_days: OddDaysOpt = "accrue",
    end_of_month: EndOfMonth = False,
    interest_dates: InterestDatesOpt = "unadjusted",
    semimonthly_days: SemimonthlyDays = "1,15",
    structure: StructureOpt = "level",
    interest_only: InterestOnly = 0,
    growth: Growth = None,
    step: Step = None,
    growth_every: GrowthEvery = None,
    custom_payments: CustomPayments = None,
    payment_months: PaymentMonths = None,
    extra: Extras = None,
    recast: Recast = False,
    holiday: Holidays_ = None,
    reset: Resets = None,
    keep_payment: KeepPayment = False,
    cap: Cap = None,
    fee: FeeOpt = None,
    standard: StandardOpt = "us-regz",
    decimals: Decimals = None,
    method: MethodOpt = None,
    eu_year: EuYear = None,
    flows: FlowsFile = None,
    out_file: AuditFile = None,
    force: Force = False,
    as_json: AsJson = False,
) -> None:
    """Disclosure figures: APR (or EU APRC), finance charge, amount financed, total of payments."""
    with errors():
        chosen = Standard.parse(standard, "--standard")
        options = {"standard": chosen, "decimals": decimals, **_choice_for(chosen, method, eu_year)}
        fees = [parse_fee(text) for text in fee or []]
        if out_file is not None:  # refuse a wrong name or an existing file before computing
            if out_file.suffix.lower() not in (".csv", ".xlsx"):
                raise InvalidTerms(
                    "'--out' must name a .csv file (the flows) or an .xlsx workbook "
                    f"(got {str(out_file)!r})"
                )
            check_target(out_file, force=force)
        given = (principal, rate, periods, years, payment, custom_payments)
        metadata: dict[str, str] = {}
        loan = None
        listed: Flows | None = None
        if flows is not None:
            if terms is not None or any(v is not None for v in given):
                raise InvalidTerms(
                    "give the flows file or a loan (options or terms file), not both"
                )
            listed = read_flows(flows)
            figures = disclose_flows(listed, fees=fees, **options)
        else:
            if terms is not None:
                if any(v is not None for v in given):
                    raise InvalidTerms(
                        "give the loan in the terms file or as options, not both "
                        "(--principal, --rate, --periods, --years, --payment, --payments)"
                    )
                read = read_terms(terms)
                loan, fees, metadata = read.loan, [*read.fees, *fees], dict(read.metadata)
            else:
                freq = Frequency.parse(frequency)
                open_term = (payment is not None or custom_payments is not None) and (
                    periods is None and years is None
                )
                loan = build_loan(
                    principal=principal,
                    rate=rate,
                    periods=None if open_term else periods_from(periods, years, freq, "apr"),
                    frequency=freq,
                    payment=payment,
                    balloon=balloon,
                    advance=advance,
                    rounding=rounding,
                    interest_rounding=interest_rounding,
                    verb="apr",
                    structure=structure,
                    interest_only=interest_only,
                    growth=growth,
                    step=step,
                    growth_every=growth_every,
                    cap=cap,
                    custom_payments=custom_payments,
                    payment_months=payment_months,
                    events=parse_events(extra, recast, holiday, reset, keep_payment),
                    dated=dated_terms(
                        start,
                        first_payment,
                        day_count,
                        compounding,
                        business_days,
                        holidays,
                        odd_days,
                        end_of_month,
                        interest_dates,
                        semimonthly_days,
                    ),
                )
            figures = disclose(loan, fees=fees, **options)
        written = None
        if out_file is not None and out_file.suffix.lower() == ".xlsx":
            from amort.io.xlsx_disclosure import write_disclosure_workbook

            written = write_disclosure_workbook(
                figures, out_file, loan=loan, flows=listed, metadata=metadata, force=force
            )
        elif out_file is not None:
            written = write_text_atomic(out_file, figures.csv_text(), force=force)
    if as_json:
        payload = figures.as_dict()
        if written is not None:
            payload["written"] = str(written)
        emit_json(payload)
        return
    if loan is not None:
        out.print(figures_table("Loan", terms_rows(loan)))
    elif listed is not None:
        out.print(figures_table("Flows", _flows_rows(listed, flows)))
    out.print()
    _print_figures(figures)
    if written is not None and written.suffix.lower() == ".xlsx":
        out.print(f"\nwrote the disclosure workbook to {written}")
    elif written is not None:
        out.print(f"\nwrote {len(figures.apr.flows):,} flows to {written}")
    caution()


def _flows_rows(listed: Flows, path: Path | None) -> list[tuple[str, str]]:
    advances, payments = listed.advances, listed.payments
    return [
        ("file", str(path)),
        ("advances", f"{len(advances):,} totalling {money(listed.total(FlowKind.ADVANCE))}"),
        ("payments", f"{len(payments):,} totalling {money(listed.total(FlowKind.PAYMENT))}"),
        ("from", f"{listed.start} to {listed.items[-1].on}"),
    ]


def _percent(value: float, places: int = 6) -> str:
    return f"{value:.{places}f} %"


def _print_figures(figures: Disclosure) -> None:
    rate = figures.apr
    us = figures.standard is Standard.US_REGZ
    words = WORDS[figures.standard]
    title = words["title"]
    rows = [
        (words["rate"], f"{rate.apr} %"),
        (words["finance_charge"], money(figures.finance_charge)),
        (words["amount_financed"], money(figures.amount_financed)),
        (words["total_of_payments"], money(figures.total_of_payments)),
        ("interest", money(figures.interest)),
    ]
    if figures.prepaid_finance_charge:
        rows.append((words["prepaid"], money(figures.prepaid_finance_charge)))
    if any(fee.financed for fee in figures.fees):
        rows.append(("note amount (principal + financed fees)", money(figures.note_amount)))
    out.print(figures_table(title, rows))
    out.print()
    out.print(_schedule_table(figures))
    if figures.fees:
        out.print()
        out.print(_fees_table(figures.fees, us))
    out.print()
    out.print(figures_table("How the rate was found", _method_rows(figures)))
    if rate.ambiguous:
        out.print(
            "\nMore than one rate solves the equation; neither standard says which to disclose. "
            "amort shows the smallest rate >= 0.",
            markup=False,
        )


def _schedule_table(figures: Disclosure) -> Table:
    dated = figures.start is not None
    table = Table(title="Payment schedule", title_justify="left", header_style="bold cyan")
    ends = ("first due", "last due") if dated else ("from period", "to period")
    for column in ("payments", "amount", *ends):
        table.add_column(column, justify="right")
    for run in figures.payment_schedule:
        if dated:
            first, last = f"{run.first_due}", f"{run.last_due}"
        else:
            first, last = f"{run.first_period:,}", f"{run.first_period + run.count - 1:,}"
        table.add_row(f"{run.count:,}", money(run.amount), first, last)
    return table


def _fees_table(fees: tuple[Fee, ...], us: bool) -> Table:
    table = Table(title="Fees", title_justify="left", header_style="bold cyan")
    table.add_column("fee")
    table.add_column("amount", justify="right")
    table.add_column("finance charge" if us else "in the cost of credit")
    table.add_column("paid")
    for fee in fees:
        table.add_row(
            fee.name,
            money(fee.amount),
            "yes" if fee.finance_charge else "no",
            "financed" if fee.financed else ("at closing" if us else "at the start"),
        )
    return table


_BASES = {
    YearBasis.DAYS: "days over 365 (366 in a leap year), whole years counted back",
    YearBasis.DAYS_365: "days over 365",
    YearBasis.MONTHS: "12 equal months of 365/12 days",
    YearBasis.WEEKS: "52 weeks",
}


def _method_rows(figures: Disclosure) -> list[tuple[str, str]]:
    rate = figures.apr
    rows: list[tuple[str, str]] = []
    if rate.unit_period is not None and rate.method is not None:
        how = "actuarial method" if rate.method is Method.ACTUARIAL else "US Rule method"
        per_year = rate.unit_period.per_year
        count = f"{per_year}" if per_year.denominator == 1 else f"{float(per_year):.4f}"
        rows += [
            ("standard", f"12 CFR 1026 Appendix J, {how}"),
            ("unit-period", f"{rate.unit_period.name} ({count} a year)"),
            ("unit-period rate", _percent((rate.unit_period_rate or 0.0) * 100, 8)),
            ("APR before rounding (nominal)", _percent(rate.apr_unrounded)),
        ]
    else:
        assert figures.standard is Standard.EU_CCD
        basis = "equal periods" if rate.year_basis is None else _BASES[rate.year_basis]
        rows += [
            ("standard", "Directive 2008/48/EC Annex I"),
            ("time in years", basis),
            ("APRC before rounding (effective)", _percent(rate.apr_unrounded)),
        ]
    places = "place" if rate.decimals == 1 else "places"
    rows.append(("rounded", f"half-up to {rate.decimals} decimal {places}"))
    rules = rate.classification
    if rules is not None and figures.tolerance_range is not None:
        kind = "regular" if rules.regular else f"irregular ({', '.join(rules.features)})"
        low, high = figures.tolerance_range
        rows += [
            ("transaction", kind),
            ("tolerance", f"+/- {rules.tolerance} percentage point ({rules.rule})"),
            ("APRs within it", f"{low:.3f} % to {high:.3f} %"),
        ]
    if rate.ambiguous:
        rows.append(("rates that solve it", ", ".join(_percent(r, 4) for r in rate.roots)))
    return rows
