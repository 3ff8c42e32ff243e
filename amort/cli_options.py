"""The CLI's options and the parsing of their strings (typer declarations; no printing).

Each option is declared once as an ``Annotated`` type and shared by the verbs
of :mod:`amort.cli`; strings are turned into library values by the library's
own parsers, so a bad value gets the library's one-sentence message.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from amort.conventions import Frequency, Structure, Timing
from amort.daycount import DayCount
from amort.errors import InvalidTerms
from amort.events import Event, ExtraPrincipal, PaymentHoliday, RateReset
from amort.loan import AnnualRate, Loan, parse_periods
from amort.money import Rounding, parse_amount, parse_number, parse_rate

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


def dated_terms(
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
        "--out",
        help="Write the schedule to FILE.csv, FILE.xlsx (a client workbook) or FILE.parquet, "
        "by its extension (kept if it exists unless --force).",
    ),
]
Formulas = Annotated[
    bool,
    typer.Option(
        "--formulas",
        help="With --out FILE.xlsx: interest, principal and balances as live spreadsheet "
        "formulas on the terms cells (the engine's values cached beside them).",
    ),
]
PlotFile = Annotated[
    Path | None,
    typer.Option(
        "--plot",
        help="Also draw the balance and each payment's interest/principal split to FILE.png.",
    ),
]
StructureOpt = Annotated[
    str,
    typer.Option(
        "--structure",
        help="How principal is repaid: level, equal-principal (straight-line) or bullet.",
    ),
]
InterestOnly = Annotated[
    int,
    typer.Option("--interest-only", help="Interest-only payments before amortisation begins."),
]
Growth = Annotated[
    str | None,
    typer.Option("--growth", help="Graduated payments: grow by this percent every --growth-every."),
]
Step = Annotated[
    str | None,
    typer.Option("--step", help="Graduated payments: add this amount every --growth-every."),
]
GrowthEvery = Annotated[
    int | None,
    typer.Option("--growth-every", help="Periods between payment increases (default: a year)."),
]
CustomPayments = Annotated[
    str | None,
    typer.Option(
        "--payments",
        help="Every payment, comma-separated (the last pays what is left), e.g. 100,100,900.",
    ),
]
PaymentMonths = Annotated[
    str | None,
    typer.Option(
        "--payment-months",
        help="Seasonal loan: the months (1-12) payments fall in, e.g. 8,9,10,11; needs dates.",
    ),
]
Extras = Annotated[
    list[str] | None,
    typer.Option(
        "--extra",
        help="Extra principal PERIOD=AMOUNT, or PERIOD=AMOUNT/EVERY to repeat it (repeatable).",
    ),
]
Recast = Annotated[
    bool,
    typer.Option("--recast", help="After each extra payment, solve the payment again (same term)."),
]
Holidays_ = Annotated[
    list[str] | None,
    typer.Option(
        "--holiday",
        help="Payment holiday PERIOD or PERIODxCOUNT, interest capitalised (repeatable).",
    ),
]
Resets = Annotated[
    list[str] | None,
    typer.Option("--reset", help="Rate reset PERIOD=RATE (percent a year) (repeatable)."),
]
KeepPayment = Annotated[
    bool,
    typer.Option("--keep-payment", help="At a rate reset keep the payment and let the term move."),
]
Cap = Annotated[
    str | None,
    typer.Option(
        "--negative-amortisation-cap",
        help="Let graduated or listed payments below the interest grow the balance up to this "
        "amount or percent of the principal (e.g. 110%); then a level payment amortises it.",
    ),
]
Force = Annotated[
    bool, typer.Option("--force", help="Replace existing output files (--out, --plot).")
]


# -- parsing helpers (strings in, library values out) ----------------------------------------


def require(value: str | None, option: str, verb: str) -> str:
    if value is None or not str(value).strip():
        raise InvalidTerms(f"'{option}' is required for 'amort {verb}'")
    return value


def periods_from(periods: str | None, years: str | None, frequency: Frequency, verb: str) -> int:
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
    return parse_periods(require(periods, "--periods", verb))


def dated_or_none(
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
    terms = dated_terms(
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


def _month(text: str, field: str) -> int:
    try:
        return int(text.strip())
    except ValueError:
        raise InvalidTerms(f"{field!r} must list months 1 to 12 (got {text.strip()!r})") from None


def build_loan(
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
    structure: str = "level",
    interest_only: int = 0,
    growth: str | None = None,
    step: str | None = None,
    growth_every: int | None = None,
    custom_payments: str | None = None,
    payment_months: str | None = None,
    events: tuple[Event, ...] = (),
    cap: str | None = None,
) -> Loan:
    return Loan(
        events=events,
        negative_amortisation_cap=cap,  # type: ignore[arg-type]  # Loan parses amount or "110%"
        custom_payments=None
        if custom_payments is None
        else tuple(
            parse_amount(part, "payments", allow_zero=True) for part in custom_payments.split(",")
        ),
        payment_months=None
        if payment_months is None
        else tuple(_month(part, "payment-months") for part in payment_months.split(",")),
        payment_growth=None if growth is None else parse_rate(growth, "growth", percent=True),
        payment_step=None if step is None else parse_amount(step, "step"),
        growth_every=growth_every,
        **(dated or {}),
        structure=Structure.parse(structure),
        interest_only_periods=interest_only,
        principal=parse_amount(require(principal, "--principal", verb), "principal"),
        annual_rate=AnnualRate(parse_rate(require(rate, "--rate", verb), "rate", percent=True)),
        periods=periods,
        frequency=frequency,
        balloon=parse_amount(balloon, "balloon", allow_zero=True),
        timing=Timing.ADVANCE if advance else Timing.ARREARS,
        fixed_payment=None if payment is None else parse_amount(payment, "payment"),
        rounding=Rounding.parse(rounding, "rounding"),
        interest_rounding=Rounding.parse(interest_rounding, "interest-rounding"),
    )


def _whole(text: str, field: str) -> int:
    try:
        value = int(text.strip())
    except ValueError:
        raise InvalidTerms(
            f"{field!r} must be a whole period number (got {text.strip()!r})"
        ) from None
    return value


def _when(text: str, field: str) -> dict[str, Any]:
    """A period number, or a date written YYYY-MM-DD (for a dated loan)."""
    text = text.strip()
    if "-" in text:
        return {"on": text}
    return {"period": _whole(text, field)}


def parse_events(
    extras: list[str] | None,
    recast: bool,
    holidays: list[str] | None,
    resets: list[str] | None,
    keep_payment: bool,
) -> tuple[Event, ...]:
    """Return the events the --extra, --holiday and --reset options describe."""
    out: list[Event] = []
    for text in extras or []:
        period, sep, rest = text.partition("=")
        if not sep:
            raise InvalidTerms(
                f"'--extra' must be PERIOD=AMOUNT or PERIOD=AMOUNT/EVERY (got {text!r})"
            )
        amount, _, every = rest.partition("/")
        out.append(
            ExtraPrincipal(
                **_when(period, "--extra"),
                amount=parse_amount(amount, "--extra"),
                every=_whole(every, "--extra") if every else None,
                recast=recast,
            )
        )
    for text in holidays or []:
        period, _, count = text.lower().rpartition("x") if "x" in text.lower() else (text, "", "")
        out.append(
            PaymentHoliday(
                **_when(period, "--holiday"),
                count=_whole(count, "--holiday") if count else 1,
            )
        )
    for text in resets or []:
        period, sep, rate = text.partition("=")
        if not sep:
            raise InvalidTerms(f"'--reset' must be PERIOD=RATE (got {text!r})")
        out.append(
            RateReset(
                **_when(period, "--reset"),
                annual_rate=parse_rate(rate, "--reset", percent=True),
                reamortise=not keep_payment,
            )
        )
    return tuple(out)


def loan_from_command(terms: Path | None, verb: str, **options: Any) -> Loan:
    """Return the loan a verb describes: from a TOML terms file, or from its options.

    ``options`` are the verb's loan options by parameter name (those of
    ``amort schedule``; a verb may leave some out). Giving both a terms file
    and the loan's own options is refused, so nothing is silently ignored.
    """
    return loan_and_metadata(terms, verb, **options)[0]


def loan_and_metadata(terms: Path | None, verb: str, **options: Any) -> tuple[Loan, dict[str, str]]:
    """Like :func:`loan_from_command`, with the terms file's metadata (borrower, ...)."""
    from amort.terms import read_terms  # the TOML reader is only needed for files

    given = {k: options.get(k) for k in ("principal", "rate", "periods", "years", "payment")}
    if terms is not None:
        if any(v is not None for v in given.values()):
            raise InvalidTerms(
                "give the loan in the terms file or as options, not both "
                "(--principal, --rate, --periods, --years, --payment)"
            )
        read = read_terms(terms)
        return read.loan, dict(read.metadata)
    freq = Frequency.parse(options.get("frequency", "monthly"))
    periods, years, payment = given["periods"], given["years"], given["payment"]
    custom = options.get("custom_payments")
    open_term = (payment is not None or custom is not None) and periods is None and years is None
    loan = build_loan(
        principal=given["principal"],
        rate=given["rate"],
        periods=None if open_term else periods_from(periods, years, freq, verb),
        frequency=freq,
        payment=payment,
        balloon=options.get("balloon", "0"),
        advance=options.get("advance", False),
        rounding=options.get("rounding", "half-up"),
        interest_rounding=options.get("interest_rounding", "half-up"),
        verb=verb,
        structure=options.get("structure", "level"),
        interest_only=options.get("interest_only", 0),
        growth=options.get("growth"),
        step=options.get("step"),
        growth_every=options.get("growth_every"),
        cap=options.get("cap"),
        custom_payments=custom,
        payment_months=options.get("payment_months"),
        events=parse_events(
            options.get("extra"),
            options.get("recast", False),
            options.get("holiday"),
            options.get("reset"),
            options.get("keep_payment", False),
        ),
        dated=dated_terms(
            options.get("start"),
            options.get("first_payment"),
            options.get("day_count", "equal"),
            options.get("compounding"),
            options.get("business_days", "none"),
            options.get("holidays"),
            options.get("odd_days", "accrue"),
            options.get("end_of_month", False),
            options.get("interest_dates", "unadjusted"),
            options.get("semimonthly_days", "1,15"),
        ),
    )
    return loan, {}
