"""The ``amort`` command line: parse, call the library, print. Nothing is computed here.

Amounts are in currency units, rates in percent a year (``6.5`` or ``6.5%``).
Every verb prints a readable table, or a JSON object with ``--json``. Bad
input prints one sentence, ``Error: ...``, on standard error and exits
non-zero (2 invalid terms, 3 no solution, 4 file problems).
"""

from __future__ import annotations

import contextlib
import json
import os
import sys
from collections.abc import Iterator
from datetime import date
from decimal import Decimal
from fractions import Fraction
from pathlib import Path
from typing import Annotated, Any

import pandas as pd
import typer
from rich.console import Console
from rich.table import Table

from amort import __version__, rates
from amort.caution import CAUTION
from amort.conventions import Frequency, Timing
from amort.daycount import DayCount
from amort.errors import AmortError, InvalidTerms
from amort.io.csv import write_schedule_csv
from amort.loan import Loan, parse_periods
from amort.money import Rounding, parse_amount, parse_number, parse_rate
from amort.quote import quote_payment, quote_principal, quote_rate, quote_term
from amort.rates import Compounding

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

out = Console(highlight=False, soft_wrap=False)
err = Console(stderr=True, highlight=False, soft_wrap=True)

FREQUENCIES = ", ".join(f.value for f in Frequency)
ROUNDINGS = ", ".join(r.value for r in Rounding)

Principal = Annotated[str | None, typer.Option("--principal", help="Amount lent, e.g. 250000.")]
Rate = Annotated[
    str | None, typer.Option("--rate", help="Nominal annual rate in percent, e.g. 6.5 or 6.5%.")
]
Periods = Annotated[str | None, typer.Option("--periods", help="Number of payments, e.g. 360.")]
Years = Annotated[
    str | None,
    typer.Option(
        "--years", help="Term in years instead of --periods (periods = years x frequency)."
    ),
]
FrequencyOpt = Annotated[str, typer.Option("--frequency", help=f"Payments a year: {FREQUENCIES}.")]
PaymentOpt = Annotated[str | None, typer.Option("--payment", help="Level payment per period.")]
Balloon = Annotated[
    str, typer.Option("--balloon", help="Balance left to pay with the last payment (default 0).")
]
Advance = Annotated[
    bool,
    typer.Option("--advance", help="Payments at the start of each period (annuity-due)."),
]
RoundingOpt = Annotated[
    str, typer.Option("--rounding", help=f"Rounding of the level payment: {ROUNDINGS}.")
]
InterestRounding = Annotated[
    str,
    typer.Option("--interest-rounding", help=f"Rounding of each period's interest: {ROUNDINGS}."),
]
AsJson = Annotated[bool, typer.Option("--json", help="Print a JSON object instead of tables.")]
DAY_COUNTS = ", ".join(d.value for d in DayCount)
Start = Annotated[
    str | None,
    typer.Option("--start", help="Disbursement date, YYYY-MM-DD (makes the loan dated)."),
]
FirstPayment = Annotated[
    str | None, typer.Option("--first-payment", help="First due date, YYYY-MM-DD.")
]
DayCountOpt = Annotated[str, typer.Option("--day-count", help=f"Interest day count: {DAY_COUNTS}.")]
CompoundingOpt = Annotated[
    str | None,
    typer.Option(
        "--compounding",
        help="Compoundings a year when they differ from payments: a number, a frequency "
        "name or 'continuous' (equal day count only).",
    ),
]
BusinessDays = Annotated[
    str,
    typer.Option(
        "--business-days",
        help="Move due dates off weekends and holidays: none, following, "
        "modified-following, preceding.",
    ),
]
Holidays = Annotated[
    str | None,
    typer.Option("--holidays", help="Holiday calendar by country[-subdivision] code, e.g. US-NY."),
]
OddDaysOpt = Annotated[
    str,
    typer.Option(
        "--odd-days",
        help="Interest of the extra days of a long first period: accrue, separate, capitalise.",
    ),
]
EndOfMonth = Annotated[
    bool,
    typer.Option("--end-of-month", help="A first due date at a month end stays at month ends."),
]
InterestDatesOpt = Annotated[
    str,
    typer.Option(
        "--interest-dates",
        help="Interest runs to the 'unadjusted' (scheduled) or 'adjusted' due dates.",
    ),
]
SemimonthlyDays = Annotated[
    str,
    typer.Option(
        "--semimonthly-days", help="The two due days of a semimonthly loan, e.g. 1,15 or 15,end."
    ),
]


def _dated(
    start: str | None,
    first_payment: str | None,
    day_count: str,
    compounding: str | None,
    business_days: str,
    holidays: str | None,
    odd_days: str,
    end_of_month: bool,
    interest_dates: str,
    semimonthly_days: str,
) -> dict[str, Any]:
    """Return the Loan keywords of the dated options (the library validates them)."""
    return {
        "start": start,
        "first_payment": first_payment,
        "day_count": day_count,
        "compounding": compounding,
        "business_days": business_days,
        "holidays": holidays,
        "odd_days": odd_days,
        "end_of_month": end_of_month,
        "interest_dates": interest_dates,
        "semimonthly_days": tuple(part.strip() for part in semimonthly_days.split(",")),
    }


OutFile = Annotated[
    Path | None,
    typer.Option(
        "--out", help="Write the schedule to FILE.csv (kept if it exists unless --force)."
    ),
]
Force = Annotated[bool, typer.Option("--force", help="Replace an existing --out file.")]


# -- parsing helpers (strings in, library values out) ----------------------------------------


def _require(value: str | None, option: str, verb: str) -> str:
    if value is None or not str(value).strip():
        raise InvalidTerms(f"'{option}' is required for 'amort {verb}'")
    return value


def _periods(periods: str | None, years: str | None, frequency: Frequency, verb: str) -> int:
    if periods is not None and years is not None:
        raise InvalidTerms("give either '--periods' or '--years', not both")
    if years is not None:
        span = parse_number(years, "years")
        if span <= 0:
            raise InvalidTerms(f"'years' must be > 0 (got {years!r})")
        count = span * frequency.per_year
        if count != count.to_integral_value():
            raise InvalidTerms(
                f"'years' {years} is not a whole number of {frequency.value} payments "
                f"({count} payments)"
            )
        return parse_periods(int(count), "years x frequency")
    return parse_periods(_require(periods, "--periods", verb))


def _dated_or_none(
    start: str | None,
    first_payment: str | None,
    day_count: str,
    business_days: str,
    holidays: str | None,
    odd_days: str,
    end_of_month: bool,
    interest_dates: str,
    semimonthly_days: str,
) -> dict[str, Any] | None:
    """Return the dated Loan keywords, or None when the loan is undated and plain."""
    terms = _dated(
        start,
        first_payment,
        day_count,
        None,
        business_days,
        holidays,
        odd_days,
        end_of_month,
        interest_dates,
        semimonthly_days,
    )
    terms.pop("compounding")
    plain = start is None and first_payment is None and day_count == "equal"
    return None if plain else terms


# -- output helpers ---------------------------------------------------------------------------


def _plain(value: Any) -> Any:
    """Return ``value`` as a JSON-ready value (Decimal and Fraction to float, dates to ISO)."""
    if isinstance(value, (Decimal, Fraction)):
        return float(value)
    if isinstance(value, (date, pd.Timestamp)):
        return value.isoformat()[:10]
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    return value


def _emit_json(payload: dict[str, Any]) -> None:
    payload = {**_plain(payload), "caution": CAUTION}
    sys.stdout.write(json.dumps(payload, indent=2) + "\n")


def _money(value: Any) -> str:
    return f"{Decimal(value):,.2f}"


def _figures_table(title: str, rows: list[tuple[str, str]]) -> Table:
    table = Table(title=title, show_header=False, title_justify="left", box=None, pad_edge=False)
    table.add_column("figure", style="bold")
    table.add_column("value", justify="right")
    for name, value in rows:
        table.add_row(name, value)
    return table


def _terms_rows(loan: Loan) -> list[tuple[str, str]]:
    rows = [
        ("principal", _money(loan.principal)),
        ("annual rate", f"{(loan.annual_rate * 100).normalize():f} %"),
        ("frequency", loan.frequency.value),
        ("timing", loan.timing.value),
    ]
    if loan.compounding is not None:
        rows.append(("compounding", str(loan.compounding)))
    if loan.dated:
        summary = loan.summary()
        rows += [
            ("start", f"{loan.start_date}"),
            ("first payment", f"{summary['first_payment_date']}"),
            ("day count", loan.day_count.value),
            ("maturity", f"{summary['maturity_date']}"),
        ]
        if summary["odd_days_interest"]:
            rows.append(
                (f"odd-days interest ({loan.odd_days.value})", _money(summary["odd_days_interest"]))
            )
    return rows


def _totals_rows(figures: dict[str, Any]) -> list[tuple[str, str]]:
    rows = [
        ("payment", _money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("final payment", _money(figures["final_payment"])),
    ]
    if figures["balloon"]:
        rows.append(("balloon", _money(figures["balloon"])))
    rows += [
        ("total interest", _money(figures["total_interest"])),
        ("total paid", _money(figures["total_paid"])),
        ("reconciled", "yes" if figures["reconciled"] else "NO - see amort schedule"),
    ]
    return rows


def _caution() -> None:
    out.print(f"\n[dim]{CAUTION}[/dim]")


@contextlib.contextmanager
def _errors() -> Iterator[None]:
    """Turn an :class:`AmortError` into one sentence on stderr and its exit code."""
    try:
        yield
    except AmortError as exc:
        err.print(f"Error: {exc}", markup=False)
        raise typer.Exit(exc.exit_code) from None


def _loan(
    *,
    principal: str | None,
    rate: str | None,
    periods: int | None,
    frequency: Frequency,
    payment: str | None,
    balloon: str,
    advance: bool,
    rounding: str,
    interest_rounding: str,
    verb: str,
    dated: dict[str, Any] | None = None,
) -> Loan:
    return Loan(
        **(dated or {}),
        principal=parse_amount(_require(principal, "--principal", verb), "principal"),
        annual_rate=parse_rate(_require(rate, "--rate", verb), "rate", percent=True),
        periods=periods,
        frequency=frequency,
        balloon=parse_amount(balloon, "balloon", allow_zero=True),
        timing=Timing.ADVANCE if advance else Timing.ARREARS,
        fixed_payment=None if payment is None else parse_amount(payment, "payment"),
        rounding=Rounding.parse(rounding, "rounding"),
        interest_rounding=Rounding.parse(interest_rounding, "interest-rounding"),
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
    as_json: AsJson = False,
) -> None:
    """The level payment for a principal, rate and term."""
    with _errors():
        freq = Frequency.parse(frequency)
        loan = _loan(
            principal=principal,
            rate=rate,
            periods=_periods(periods, years, freq, "payment"),
            frequency=freq,
            payment=None,
            balloon=balloon,
            advance=advance,
            rounding=rounding,
            interest_rounding=interest_rounding,
            verb="payment",
            dated=_dated(
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
        _emit_json(figures)
        return
    out.print(_figures_table("Loan", _terms_rows(loan)))
    out.print()
    out.print(_figures_table("Payment", _totals_rows(figures)))
    _caution()


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
    with _errors():
        loan = _loan(
            principal=principal,
            rate=rate,
            periods=None,
            frequency=Frequency.parse(frequency),
            payment=_require(payment, "--payment", "term"),
            balloon=balloon,
            advance=advance,
            rounding="half-up",
            interest_rounding=interest_rounding,
            verb="term",
            dated=_dated(
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
        _emit_json(figures)
        return
    rows = _totals_rows(figures)
    rows.insert(2, ("exact term (closed form)", f"{figures['periods_exact']:,.4f} periods"))
    rows.insert(3, ("years", f"{figures['years']:.2f}"))
    out.print(_figures_table("Loan", _terms_rows(loan)))
    out.print()
    out.print(_figures_table("Term", rows))
    _caution()


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
    with _errors():
        freq = Frequency.parse(frequency)
        figures = quote_rate(
            parse_amount(_require(principal, "--principal", "rate"), "principal"),
            parse_amount(_require(payment, "--payment", "rate"), "payment"),
            _periods(periods, years, freq, "rate"),
            frequency=freq,
            balloon=parse_amount(balloon, "balloon", allow_zero=True),
            timing=Timing.ADVANCE if advance else Timing.ARREARS,
            compounding=None if compounding is None else Compounding.parse(compounding),
            dated=_dated_or_none(
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
        _emit_json(figures)
        return
    rows = [
        ("principal", _money(figures["principal"])),
        ("payment", _money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("frequency", figures["frequency"]),
        (
            f"annual rate (nominal, {figures['compounding'] or 'compounded each period'})",
            f"{figures['annual_rate_percent']:.6f} %",
        ),
        ("periodic rate", f"{figures['periodic_rate'] * 100:.8f} %"),
        ("effective annual rate", f"{figures['effective_annual_rate'] * 100:.6f} %"),
        ("payment at that rate (check)", _money(figures["payment_at_rate"])),
    ]
    out.print(_figures_table("Implied rate", rows))
    _caution()


def _convert_rate(
    rate_given: str | None,
    source: str,
    compounding: str | None,
    target: str,
    target_compounding: str | None,
    as_json: bool,
) -> None:
    with _errors():
        figures = rates.convert(
            _require(rate_given, "--rate", "rate --convert"),
            source=source,
            source_compounding=compounding,
            target=target,
            target_compounding=target_compounding,
            percent=True,
        )
    if as_json:
        _emit_json(figures)
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
    out.print(_figures_table("Rate conversion", rows))
    _caution()


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
    with _errors():
        freq = Frequency.parse(frequency)
        figures = quote_principal(
            parse_amount(_require(payment, "--payment", "principal"), "payment"),
            parse_rate(_require(rate, "--rate", "principal"), "rate", percent=True),
            _periods(periods, years, freq, "principal"),
            frequency=freq,
            balloon=parse_amount(balloon, "balloon", allow_zero=True),
            timing=Timing.ADVANCE if advance else Timing.ARREARS,
            rounding=Rounding.parse(rounding, "rounding"),
            compounding=None if compounding is None else Compounding.parse(compounding),
            dated=_dated_or_none(
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
        _emit_json(figures)
        return
    rows = [
        ("principal", _money(figures["principal"])),
        ("payment given", _money(figures["payment_given"])),
        ("payment for that principal (check)", _money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("total interest", _money(figures["total_interest"])),
        ("total paid", _money(figures["total_paid"])),
    ]
    out.print(_figures_table("Principal", rows))
    _caution()


@app.command(
    epilog=(
        "Examples: amort schedule --principal 18500 --rate 7.9 --years 5 ; "
        "amort schedule --principal 18500 --rate 7.9 --years 5 --out car.csv"
    ),
)
def schedule(
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
    """One loan's schedule to the cent, with its reconciliation against the closed form."""
    with _errors():
        freq = Frequency.parse(frequency)
        count = (
            None
            if payment is not None and periods is None and years is None
            else (_periods(periods, years, freq, "schedule"))
        )
        loan = _loan(
            principal=principal,
            rate=rate,
            periods=count,
            frequency=freq,
            payment=payment,
            balloon=balloon,
            advance=advance,
            rounding=rounding,
            interest_rounding=interest_rounding,
            verb="schedule",
            dated=_dated(
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
        frame = loan.schedule()
        figures = quote_payment(loan)
        check = loan.reconciliation()
        written = None
        if out_file is not None:
            if out_file.suffix.lower() != ".csv":
                raise InvalidTerms(
                    f"'--out' must name a .csv file in this version (got {str(out_file)!r})"
                )
            written = write_schedule_csv(frame, out_file, force=force)
    if as_json:
        payload: dict[str, Any] = {**figures, "reconciliation": check.as_dict()}
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
        _emit_json(payload)
        return
    if written is None:
        out.print(_schedule_table(frame))
        out.print()
    out.print(_figures_table("Loan", _terms_rows(loan)))
    out.print()
    out.print(_figures_table("Totals", _totals_rows(figures)))
    out.print()
    out.print(_checks_table(check))
    if written is not None:
        out.print(f"\nwrote {len(frame):,} rows to {written}")
    _caution()


def _cell(column: str, value: Any) -> str:
    if column == "period" or column == "days":
        return f"{int(value):,}"
    if column == "due_date":
        return "" if value is None or value != value else f"{value:%Y-%m-%d}"
    if column == "rate":
        return f"{value * 100:.4f} %"
    return f"{value:,.2f}"


def _schedule_table(frame: Any) -> Table:
    table = Table(title="Schedule", title_justify="left", header_style="bold cyan")
    dated = bool(frame["due_date"].notna().any())
    columns = [c for c in frame.columns if c != "due_date" or dated]
    for column in columns:
        table.add_column(column.replace("_", " "), justify="right")
    for record in frame.itertuples(index=False):
        values = record._asdict()
        table.add_row(*(_cell(c, values[c]) for c in columns))
    return table


def _checks_table(check: Any) -> Table:
    table = Table(
        title="Reconciliation against the closed form",
        title_justify="left",
        header_style="bold cyan",
    )
    table.add_column("check")
    table.add_column("figures", justify="right")
    table.add_column("result")
    for name, figures, passed in check.checks:
        table.add_row(name, figures, "pass" if passed else "[bold red]FAIL[/bold red]")
    return table


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
