"""The ``amort`` command line: parse, call the library, print. Nothing is computed here.

Amounts are in currency units, rates in percent a year (``6.5`` or ``6.5%``).
Every verb prints a readable table, or a JSON object with ``--json``. Bad
input prints one sentence, ``Error: ...``, on standard error and exits
non-zero (2 invalid terms, 3 no solution, 4 file problems).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import Annotated, Any

import typer
from rich.table import Table

from amort import __version__, cli_annuity, cli_apr, cli_book, rates
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
    Formulas,
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
    OutFile,
    PaymentMonths,
    PaymentOpt,
    Periods,
    PlotFile,
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
    dated_or_none,
    dated_terms,
    loan_and_metadata,
    loan_from_command,
    periods_from,
    require,
)
from amort.cli_output import (
    caution,
    checks_table,
    emit_json,
    err,
    errors,
    figures_table,
    money,
    out,
    print_whole,
    schedule_table,
    terms_rows,
    totals_rows,
)
from amort.conventions import Frequency, Timing
from amort.errors import InvalidTerms
from amort.formula import check_against_schedule, formula_for
from amort.formula_segments import (
    SegmentCheck,
    SegmentedFormula,
    check_segments,
    segmented_formula_for,
)
from amort.io.csv import write_schedule_csv
from amort.io.files import check_target
from amort.money import Rounding, parse_amount, parse_rate
from amort.payoff import payoff_quote
from amort.quote import quote_payment, quote_principal, quote_rate, quote_term
from amort.rates import Compounding
from amort.rebates import rebates_for

app = typer.Typer(
    name="amort",
    help=(
        "Loan schedules in exact cents, solved in closed form and reconciled. "
        "Amounts in currency units, rates in percent a year."
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)

# -- verbs --------------------------------------------------------------------------------------


@app.command(
    epilog="Example: amort payment --principal 250000 --rate 6.5 --periods 360",
)
def payment(
    principal: Principal = None,
    rate: Rate = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
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
    cap: Cap = None,
    as_json: AsJson = False,
) -> None:
    """The level payment for a principal, rate and term."""
    with errors():
        freq = Frequency.parse(frequency)
        loan = build_loan(
            principal=principal,
            rate=rate,
            periods=periods_from(periods, years, freq, "payment"),
            frequency=freq,
            payment=None,
            balloon=balloon,
            advance=advance,
            rounding=rounding,
            interest_rounding=interest_rounding,
            verb="payment",
            structure=structure,
            interest_only=interest_only,
            growth=growth,
            step=step,
            growth_every=growth_every,
            cap=cap,
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
        figures = quote_payment(loan)
    if as_json:
        emit_json(figures)
        return
    out.print(figures_table("Loan", terms_rows(loan)))
    out.print()
    out.print(figures_table("Payment", totals_rows(figures)))
    caution()


@app.command(
    epilog="Example: amort term --principal 250000 --rate 6.5 --payment 2000",
)
def term(
    principal: Principal = None,
    rate: Rate = None,
    payment: PaymentOpt = None,
    frequency: FrequencyOpt = "monthly",
    balloon: Balloon = "0",
    advance: Advance = False,
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
    as_json: AsJson = False,
) -> None:
    """The number of payments (and the smaller final payment) a payment implies."""
    with errors():
        loan = build_loan(
            principal=principal,
            rate=rate,
            periods=None,
            frequency=Frequency.parse(frequency),
            payment=require(payment, "--payment", "term"),
            balloon=balloon,
            advance=advance,
            rounding="half-up",
            interest_rounding=interest_rounding,
            verb="term",
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
        figures = quote_term(loan)
    if as_json:
        emit_json(figures)
        return
    rows = totals_rows(figures)
    rows.insert(2, ("exact term (closed form)", f"{figures['periods_exact']:,.4f} periods"))
    rows.insert(3, ("years", f"{figures['years']:.2f}"))
    out.print(figures_table("Loan", terms_rows(loan)))
    out.print()
    out.print(figures_table("Term", rows))
    caution()


@app.command(
    epilog="Example: amort rate --principal 250000 --payment 1580.17 --periods 360",
)
def rate(
    principal: Principal = None,
    payment: PaymentOpt = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
    balloon: Balloon = "0",
    advance: Advance = False,
    start: Start = None,
    first_payment: FirstPayment = None,
    day_count: DayCountOpt = "equal",
    business_days: BusinessDays = "none",
    holidays: Holidays = None,
    odd_days: OddDaysOpt = "accrue",
    end_of_month: EndOfMonth = False,
    interest_dates: InterestDatesOpt = "unadjusted",
    semimonthly_days: SemimonthlyDays = "1,15",
    convert: Annotated[
        bool,
        typer.Option(
            "--convert", help="Convert --rate between nominal, effective and continuous forms."
        ),
    ] = False,
    rate_given: Annotated[
        str | None, typer.Option("--rate", help="With --convert: the rate to convert, percent.")
    ] = None,
    source: Annotated[
        str, typer.Option("--from", help="With --convert: nominal, effective or continuous.")
    ] = "nominal",
    compounding: CompoundingOpt = None,
    target: Annotated[
        str, typer.Option("--to", help="With --convert: nominal, effective or continuous.")
    ] = "effective",
    target_compounding: Annotated[
        str | None,
        typer.Option("--to-compounding", help="With --convert --to nominal: compoundings a year."),
    ] = None,
    as_json: AsJson = False,
) -> None:
    """The nominal annual rate at which a payment repays a principal over a term.

    With --convert: the same rate as nominal (at a compounding), effective annual and
    continuous, e.g. amort rate --convert --rate 6 --compounding semiannual --to effective.
    """
    if convert:
        _convert_rate(rate_given, source, compounding, target, target_compounding, as_json)
        return
    with errors():
        freq = Frequency.parse(frequency)
        figures = quote_rate(
            parse_amount(require(principal, "--principal", "rate"), "principal"),
            parse_amount(require(payment, "--payment", "rate"), "payment"),
            periods_from(periods, years, freq, "rate"),
            frequency=freq,
            balloon=parse_amount(balloon, "balloon", allow_zero=True),
            timing=Timing.ADVANCE if advance else Timing.ARREARS,
            compounding=None if compounding is None else Compounding.parse(compounding),
            dated=dated_or_none(
                start,
                first_payment,
                day_count,
                business_days,
                holidays,
                odd_days,
                end_of_month,
                interest_dates,
                semimonthly_days,
            ),
        )
    if as_json:
        emit_json(figures)
        return
    rows = [
        ("principal", money(figures["principal"])),
        ("payment", money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("frequency", figures["frequency"]),
        (
            f"annual rate (nominal, {figures['compounding'] or 'compounded each period'})",
            f"{figures['annual_rate_percent']:.6f} %",
        ),
        ("periodic rate", f"{figures['periodic_rate'] * 100:.8f} %"),
        ("effective annual rate", f"{figures['effective_annual_rate'] * 100:.6f} %"),
        ("payment at that rate (check)", money(figures["payment_at_rate"])),
    ]
    out.print(figures_table("Implied rate", rows))
    caution()


def _convert_rate(
    rate_given: str | None,
    source: str,
    compounding: str | None,
    target: str,
    target_compounding: str | None,
    as_json: bool,
) -> None:
    with errors():
        figures = rates.convert(
            require(rate_given, "--rate", "rate --convert"),
            source=source,
            source_compounding=compounding,
            target=target,
            target_compounding=target_compounding,
            percent=True,
        )
    if as_json:
        emit_json(figures)
        return
    percent = lambda x: f"{x * 100:.10f} %"  # noqa: E731
    rows = [
        (
            f"given ({figures['source']}, {figures['source_compounding']})",
            percent(figures["source_rate"]),
        ),
        (f"as {figures['target']} ({figures['target_compounding']})", percent(figures["rate"])),
        (f"nominal ({figures['nominal_compounding']})", percent(figures["nominal"])),
        ("effective annual", percent(figures["effective_annual"])),
        ("continuous", percent(figures["continuous"])),
        ("exact", "yes" if figures["exact"] else "no (nearest double of an irrational rate)"),
    ]
    out.print(figures_table("Rate conversion", rows))
    caution()


@app.command(
    name="principal",
    epilog="Example: amort principal --payment 1580.17 --rate 6.5 --periods 360",
)
def principal_(
    payment: PaymentOpt = None,
    rate: Rate = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
    balloon: Balloon = "0",
    advance: Advance = False,
    rounding: RoundingOpt = "half-up",
    start: Start = None,
    first_payment: FirstPayment = None,
    day_count: DayCountOpt = "equal",
    business_days: BusinessDays = "none",
    holidays: Holidays = None,
    odd_days: OddDaysOpt = "accrue",
    end_of_month: EndOfMonth = False,
    interest_dates: InterestDatesOpt = "unadjusted",
    semimonthly_days: SemimonthlyDays = "1,15",
    compounding: CompoundingOpt = None,
    as_json: AsJson = False,
) -> None:
    """The largest principal a payment repays (rounded down to the cent)."""
    with errors():
        freq = Frequency.parse(frequency)
        figures = quote_principal(
            parse_amount(require(payment, "--payment", "principal"), "payment"),
            parse_rate(require(rate, "--rate", "principal"), "rate", percent=True),
            periods_from(periods, years, freq, "principal"),
            frequency=freq,
            balloon=parse_amount(balloon, "balloon", allow_zero=True),
            timing=Timing.ADVANCE if advance else Timing.ARREARS,
            rounding=Rounding.parse(rounding, "rounding"),
            compounding=None if compounding is None else Compounding.parse(compounding),
            dated=dated_or_none(
                start,
                first_payment,
                day_count,
                business_days,
                holidays,
                odd_days,
                end_of_month,
                interest_dates,
                semimonthly_days,
            ),
        )
    if as_json:
        emit_json(figures)
        return
    rows = [
        ("principal", money(figures["principal"])),
        ("payment given", money(figures["payment_given"])),
        ("payment for that principal (check)", money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("total interest", money(figures["total_interest"])),
        ("total paid", money(figures["total_paid"])),
    ]
    out.print(figures_table("Principal", rows))
    caution()


@app.command(
    epilog=(
        "Examples: amort schedule --principal 18500 --rate 7.9 --years 5 ; "
        "amort schedule --principal 18500 --rate 7.9 --years 5 --out car.xlsx --formulas "
        "--plot car.png"
    ),
)
def schedule(
    terms: Annotated[
        Path | None,
        typer.Argument(
            help="A loan terms file (TOML, format = 1); see the README.", show_default=False
        ),
    ] = None,
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
    out_file: OutFile = None,
    force: Force = False,
    formulas: Formulas = False,
    plot: PlotFile = None,
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
    as_json: AsJson = False,
) -> None:
    """One loan's schedule to the cent, with its reconciliation against the closed form."""
    options = dict(locals())
    for name in ("terms", "out_file", "force", "formulas", "plot", "as_json"):
        options.pop(name)
    with errors():
        loan, metadata = loan_and_metadata(terms, "schedule", **options)
        frame = loan.schedule()
        figures = quote_payment(loan)
        check = loan.reconciliation()
        written = plotted = None
        kind = None if out_file is None else out_file.suffix.lower()
        if kind not in (None, ".csv", ".xlsx", ".parquet"):
            raise InvalidTerms(
                f"'--out' must name a .csv, .xlsx or .parquet file (got {str(out_file)!r})"
            )
        if formulas and kind != ".xlsx":
            raise InvalidTerms("'--formulas' needs '--out FILE.xlsx' (live spreadsheet formulas)")
        if plot is not None and plot.suffix.lower() != ".png":
            raise InvalidTerms(f"'--plot' must name a .png file (got {str(plot)!r})")
        for target in (out_file, plot):  # refuse before writing either file
            if target is not None:
                check_target(target, force=force)
        if out_file is not None and kind == ".xlsx":
            from amort.io.xlsx_loan import write_workbook

            written = write_workbook(
                loan, out_file, formulas=formulas, force=force, metadata=metadata
            )
        elif out_file is not None and kind == ".parquet":
            from amort.io.parquet import write_schedule_parquet

            written = write_schedule_parquet(frame, out_file, force=force, metadata=metadata)
        elif out_file is not None:
            written = write_schedule_csv(frame, out_file, force=force)
        if plot is not None:
            from amort.io.png import plot_loan

            plotted = plot_loan(loan, plot, force=force)
    if as_json:
        payload: dict[str, Any] = {**figures, "reconciliation": check.as_dict()}
        if plotted is not None:
            payload["plot"] = str(plotted)
        if written is not None:
            payload["written"] = str(written)
        else:
            shown = frame.copy()
            if shown["due_date"].notna().any():
                shown["due_date"] = shown["due_date"].dt.strftime("%Y-%m-%d")
            else:
                shown = shown.drop(columns=["due_date"])
            records = shown.to_dict(orient="records")
            payload["schedule"] = records
        emit_json(payload)
        return
    if written is None:
        print_whole(schedule_table(frame))
        out.print()
    out.print(figures_table("Loan", terms_rows(loan)))
    out.print()
    out.print(figures_table("Totals", totals_rows(figures)))
    out.print()
    out.print(checks_table(check))
    if written is not None:
        out.print(f"\nwrote {len(frame):,} rows to {written}")
    if plotted is not None:
        out.print(f"\ndrew the balance and payments to {plotted}")
    caution()


@app.command(
    epilog=(
        "Example: amort payoff --principal 10000 --rate 7.3 --periods 12 --start 2027-01-15 "
        "--day-count actual/365 --on 2027-04-20 --days 5"
    ),
)
def payoff(
    principal: Principal = None,
    rate: Rate = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
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
    on: Annotated[
        str | None, typer.Option("--on", help="Payoff date, YYYY-MM-DD (required).")
    ] = None,
    days: Annotated[
        int, typer.Option("--days", help="Also list the payoff for each of the next N days.")
    ] = 0,
    precomputed: Annotated[
        bool,
        typer.Option(
            "--precomputed",
            help="Precomputed-interest loan: show the rebate of unearned interest by the "
            "actuarial method and by the Rule of 78s.",
        ),
    ] = False,
    as_json: AsJson = False,
) -> None:
    """The amount that closes a dated loan on a date, with the per-diem and a day table."""
    with errors():
        freq = Frequency.parse(frequency)
        loan = build_loan(
            principal=principal,
            rate=rate,
            periods=periods_from(periods, years, freq, "payoff"),
            frequency=freq,
            payment=None,
            balloon=balloon,
            advance=advance,
            rounding=rounding,
            interest_rounding=interest_rounding,
            verb="payoff",
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
        quote = payoff_quote(loan, require(on, "--on", "payoff"), days=days)
        rebate_figures = rebates_for(loan, quote.on) if precomputed else None
    if as_json:
        payload = quote.as_dict()
        if rebate_figures is not None:
            payload["rebates"] = rebate_figures.as_dict()
        emit_json(payload)
        return
    rows = [
        ("payoff date", f"{quote.on}"),
        ("last due date", f"{quote.last_due_date or '-'} ({quote.payments_made} payments made)"),
        ("balance", money(quote.balance)),
        (f"interest since {quote.interest_from}", money(quote.accrued_interest)),
    ]
    if quote.scheduled_unpaid:
        rows.append(("scheduled amounts not yet paid", money(quote.scheduled_unpaid)))
    rows += [
        ("payoff amount", money(quote.payoff)),
        ("per diem", money(quote.per_diem)),
        ("day count", quote.day_count),
        ("maturity", f"{quote.maturity_date}"),
    ]
    out.print(figures_table("Payoff", rows))
    if days:
        table = Table(title="Payoff by day", title_justify="left", header_style="bold cyan")
        for name in ("date", "balance", "interest", "payoff"):
            table.add_column(name, justify="right")
        for day in quote.table:
            table.add_row(
                f"{day.on}", money(day.balance), money(day.accrued_interest), money(day.payoff)
            )
        out.print()
        out.print(table)
    if rebate_figures is not None:
        out.print()
        out.print(
            figures_table(
                "Rebate of unearned interest",
                [
                    ("finance charge", money(rebate_figures.finance_charge)),
                    (
                        "instalments unmatured",
                        f"{rebate_figures.unmatured} of {rebate_figures.instalments}",
                    ),
                    ("actuarial method", money(rebate_figures.actuarial)),
                    ("Rule of 78s (sum of the digits)", money(rebate_figures.rule_of_78s)),
                    ("difference", money(rebate_figures.difference)),
                ],
            )
        )
        out.print(f"\n[dim]{rebate_figures.caution}[/dim]")
        return
    out.print(f"\n[dim]{quote.note}[/dim]")
    caution()


@app.command(
    name="formula",
    epilog=(
        "Examples: amort formula --principal 250000 --rate 6.5 --periods 360 --latex ; "
        "amort formula --principal 12000 --rate 6 --periods 24 --interest-only 6"
    ),
)
def formula_(
    terms: Annotated[
        Path | None,
        typer.Argument(
            help="A loan terms file (TOML, format = 1); see the README.", show_default=False
        ),
    ] = None,
    principal: Principal = None,
    rate: Rate = None,
    periods: Periods = None,
    years: Years = None,
    frequency: FrequencyOpt = "monthly",
    payment: PaymentOpt = None,
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
    latex: Annotated[bool, typer.Option("--latex", help="Also print the LaTeX form.")] = False,
    as_json: AsJson = False,
) -> None:
    """The closed form of a loan's balance, derived with sympy from its recurrence.

    A structured loan (interest-only periods, equal principal, graduated or listed
    payments, events) gets one closed form for each run of one payment rule.
    """
    options = dict(locals())
    for name in ("terms", "latex", "as_json"):
        options.pop(name)
    with errors():
        loan = loan_from_command(terms, "formula", **options)
        if loan.structured:
            segmented = segmented_formula_for(loan)
            checks = check_segments(loan, formula=segmented)
        else:
            found = formula_for(loan)
            gap = check_against_schedule(loan, formula=found)
            bound = loan.reconciliation().gap_bound
    if loan.structured:
        _print_segments(segmented, checks, latex=latex, as_json=as_json)
        return
    if as_json:
        emit_json(
            {
                "text": found.text,
                "latex": found.latex,
                "characteristic_root": str(found.characteristic_root),
                "fixed_point": None if found.fixed_point is None else str(found.fixed_point),
                "outcome": found.outcome,
                "largest_gap_to_schedule": gap,
                "gap_bound": bound,
            }
        )
        return
    out.print(found.text, markup=False, highlight=False, soft_wrap=True)
    if latex:
        out.print()
        out.print(found.latex, markup=False, highlight=False)
    out.print(
        f"\nchecked against the cent schedule: largest gap {gap:.4f} <= bound {bound:.4f}"
        + ("" if gap <= bound else "  FAIL"),
        markup=False,
    )
    caution()


def _print_segments(
    found: SegmentedFormula, checks: tuple[SegmentCheck, ...], *, latex: bool, as_json: bool
) -> None:
    gap = max((c.largest_gap for c in checks), default=0.0)
    passed = all(c.passed for c in checks)
    if as_json:
        emit_json(
            {
                "text": found.text,
                "latex": found.latex,
                "segments": [
                    {
                        "first_period": seg.first,
                        "last_period": seg.last,
                        "kind": seg.kind,
                        "opening_balance": float(seg.opening),
                        "parameters": {k: str(v) for k, v in seg.parameters.items()},
                        "fixed_point": None if seg.fixed_point is None else str(seg.fixed_point),
                        "outcome": seg.outcome,
                        "largest_gap_to_schedule": check.largest_gap,
                        "gap_bound": check.gap_bound,
                    }
                    for seg, check in zip(found.segments, checks, strict=True)
                ],
                "final_payment": float(found.final_payment),
                "largest_gap_to_schedule": gap,
                "passed": passed,
            }
        )
        return
    out.print(found.text, markup=False, highlight=False, soft_wrap=True)
    if latex:
        out.print()
        out.print(found.latex, markup=False, highlight=False)
    bound = max((c.gap_bound for c in checks), default=0.0)
    verdict = "every row within its segment's bound" if passed else "FAIL: a row passes its bound"
    out.print(
        f"\nchecked against the cent schedule, segment by segment:\n"
        f"  largest gap {gap:.4f}; {verdict} (the largest bound {bound:.4f})",
        markup=False,
    )
    caution()


cli_apr.register(app)
cli_annuity.register(app)
cli_book.register(app)


@app.callback(invoke_without_command=True)
def _root(
    version: Annotated[bool, typer.Option("--version", help="Print the version and exit.")] = False,
) -> None:
    if version:
        out.print(f"amort {__version__}")
        raise typer.Exit(0)


def main() -> None:
    """Entry point of the ``amort`` console script: no traceback reaches the user."""
    try:
        app()
    except SystemExit:
        raise
    except KeyboardInterrupt:
        err.print("Error: interrupted")
        sys.exit(130)
    except Exception as exc:
        if os.environ.get("AMORT_DEBUG"):
            raise
        err.print(
            f"Error: internal error ({type(exc).__name__}: {exc}); this is a bug in amort, "
            "please report it (set AMORT_DEBUG=1 for the traceback)",
            markup=False,
        )
        sys.exit(70)


if __name__ == "__main__":  # pragma: no cover
    main()
