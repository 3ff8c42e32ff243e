"""The ``amort annuity`` verbs: ``payout`` and ``accumulate``. Parse, call the library, print.

Each verb solves for whichever of its four figures is left out (exactly
one), prints the terms, the figures, the schedule and its reconciliation
(or ``--json``), and can write the schedule with ``--out FILE.csv``, a client
workbook with ``--out FILE.xlsx`` (:mod:`amort.io.xlsx_annuity`), the frame
with ``--out FILE.parquet``, and a picture with ``--plot FILE.png``.
Amounts are in currency units; rates and growth in percent (``4`` or
``4%``): the rate a year, the growth a step of ``--growth-every`` payments
(default a year of them, so ``--growth 2`` is +2 % a year).
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import pandas as pd
import typer

from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_flows import parse_growth, parse_step
from amort.cli_options import (
    AsJson,
    Force,
    FrequencyOpt,
    GrowthEvery,
    InterestRounding,
    OutFile,
    Rate,
    RoundingOpt,
    Years,
    periods_from,
)
from amort.cli_output import (
    caution,
    checks_table,
    emit_json,
    errors,
    figures_table,
    money,
    out,
    print_whole,
    schedule_table,
)
from amort.conventions import Frequency, Structure, Timing
from amort.errors import InvalidTerms
from amort.io.csv import MONEY_COLUMNS, schedule_csv_text
from amort.io.files import check_target, write_text_atomic
from amort.loan import AnnualRate, Loan
from amort.money import parse_amount, parse_rate

annuity_app = typer.Typer(
    name="annuity",
    help="Payout and accumulation annuities: solve the figure left out, schedule to the cent.",
    no_args_is_help=True,
)

Fund = Annotated[
    str | None, typer.Option("--fund", help="Value of the fund at the start, e.g. 250000.")
]
PayoutPayment = Annotated[
    str | None, typer.Option("--payment", help="First (or level) payment out of the fund.")
]
Horizon = Annotated[
    str | None,
    typer.Option("--periods", help="Horizon in periods, counting any --defer periods, e.g. 300."),
]
Perpetuity = Annotated[
    bool, typer.Option("--perpetuity", help="Pay for ever (no horizon, no residual).")
]
Advance = Annotated[
    bool,
    typer.Option("--advance", help="Flows at the start of each period (annuity-due)."),
]
Growth = Annotated[
    str | None,
    typer.Option(
        "--growth",
        help="Geometric growth in percent a step of --growth-every flows (default a year's), "
        "e.g. 2 for +2 %% a year.",
    ),
]
Step = Annotated[
    str | None,
    typer.Option("--step", help="Arithmetic change of the flow each --growth-every (may be < 0)."),
]
Defer = Annotated[
    int, typer.Option("--defer", help="Periods the fund grows before the first payment period.")
]
Residual = Annotated[
    str, typer.Option("--residual", help="Value left in the fund at the end (default 0).")
]
Valuation = Annotated[
    str | None,
    typer.Option("--start", help="Valuation date YYYY-MM-DD (dates every row)."),
]
Rows = Annotated[
    int | None,
    typer.Option("--rows", help="Payments to show of a perpetuity (default one year's)."),
]
Deposit = Annotated[
    str | None, typer.Option("--deposit", help="First (or level) deposit, e.g. 500.")
]
Target = Annotated[str | None, typer.Option("--target", help="Value to reach, e.g. 60000.")]
Balance = Annotated[str, typer.Option("--balance", help="Starting balance (default 0).")]
Deposits = Annotated[
    str | None, typer.Option("--periods", help="Number of deposits, one a period, e.g. 60.")
]
LoanRate = Annotated[
    str | None,
    typer.Option(
        "--loan-rate",
        help="Sinking fund: pair the deposits with an interest-only loan of --target at this "
        "rate (percent a year) and show the combined outlay.",
    ),
]


AnnuityPlot = Annotated[
    Path | None,
    typer.Option(
        "--plot",
        help="Also draw the value over time and each period's interest split to FILE.png.",
    ),
]


def register(app: typer.Typer) -> None:
    """Add the ``annuity`` verbs to the ``amort`` app."""
    app.add_typer(annuity_app, name="annuity")


def _one_missing(options: dict[str, bool], horizon: str) -> None:
    """Refuse unless exactly one of the four figures is left out (named as options)."""
    missing = [name for name, given in options.items() if not given]
    listed = ", ".join(options)
    if len(missing) != 1:
        how = "all are given" if not missing else f"missing: {', '.join(missing)}"
        raise InvalidTerms(
            f"give three of {listed} ({horizon}); the one left out is solved ({how})"
        )


def _count(periods: str | None, years: str | None, frequency: Frequency) -> int | None:
    if periods is None and years is None:
        return None
    return periods_from(periods, years, frequency, "annuity")


def _percent_growth(growth: str | None) -> Any:
    return None if growth is None else parse_growth(growth, percent=True)


def _check_targets(out_file: Path | None, plot: Path | None, force: bool) -> None:
    """Refuse a wrong extension or an existing file before anything is written."""
    if out_file is not None and out_file.suffix.lower() not in (".csv", ".xlsx", ".parquet"):
        raise InvalidTerms(
            "'--out' must name a .csv file, an .xlsx workbook or a .parquet file "
            f"(got {str(out_file)!r})"
        )
    if plot is not None and plot.suffix.lower() != ".png":
        raise InvalidTerms(f"'--plot' must name a .png file (got {str(plot)!r})")
    for target in (out_file, plot):
        if target is not None:
            check_target(target, force=force)


def _write(
    product: Payout | Accumulation,
    frame: pd.DataFrame,
    path: Path,
    force: bool,
    rows: int | None = None,
) -> Path:
    kind = path.suffix.lower()
    if kind == ".xlsx":
        from amort.io.xlsx_annuity import write_annuity_workbook

        return write_annuity_workbook(product, path, force=force, rows=rows)
    if kind == ".parquet":
        from amort.io.parquet import write_schedule_parquet

        about = {"product": type(product).__name__.lower(), "solved_for": str(product.solve_for)}
        return write_schedule_parquet(frame, path, force=force, metadata=about)
    shown = frame.copy()
    for column in shown.columns:
        # Money to two decimals, as the CSV writer does for the loan columns it knows.
        if column not in ("period", "due_date", *MONEY_COLUMNS):
            shown[column] = shown[column].map(lambda x: f"{x:.2f}")
    return write_text_atomic(path, schedule_csv_text(shown), force=force)


def _plot(product: Payout | Accumulation, path: Path, force: bool, rows: int | None) -> Path:
    from amort.io.png import plot_annuity

    return plot_annuity(product, path, force=force, rows=rows)


def _payload(
    summary: dict[str, Any],
    check: Any,
    frame: pd.DataFrame,
    written: Path | None,
    plotted: Path | None = None,
) -> dict[str, Any]:
    payload: dict[str, Any] = {**summary, "reconciliation": check.as_dict()}
    if plotted is not None:
        payload["plot"] = str(plotted)
    if written is not None:
        payload["written"] = str(written)
        return payload
    shown = frame.copy()
    if shown["due_date"].notna().any():
        shown["due_date"] = shown["due_date"].dt.strftime("%Y-%m-%d")
    else:
        shown = shown.drop(columns=["due_date"])
    payload["schedule"] = shown.to_dict(orient="records")
    return payload


def _say_written(rows: int, written: Path | None, plotted: Path | None) -> None:
    if written is not None:
        out.print(f"\nwrote {rows:,} rows to {written}")
    if plotted is not None:
        out.print(f"\ndrew the value and each period's interest split to {plotted}")


def _rate_text(rate: Any) -> str:
    return f"{(rate * 100).normalize():f} %"


def _changes(summary: dict[str, Any], word: str) -> list[tuple[str, str]]:
    every = summary["growth_every"]
    if summary["growth"] is not None:
        return [(f"{word} growth", f"{_rate_text(summary['growth'])} every {every} {word}s")]
    if summary["step"] is not None:
        return [(f"{word} step", f"{money(summary['step'])} every {every} {word}s")]
    return []


def _mark(name: str, solved: str, label: str) -> str:
    return f"{label} (solved)" if name == solved else label


@annuity_app.command(
    epilog=(
        "Examples: amort annuity payout --fund 100000 --rate 5 --periods 10 --frequency annual ; "
        "amort annuity payout --fund 250000 --rate 4 --payment 1500 ; "
        "amort annuity payout --payment 1200 --rate 4 --years 25 --growth 2 --defer 24 --advance"
    ),
)
def payout(
    fund: Fund = None,
    payment: PayoutPayment = None,
    rate: Rate = None,
    periods: Horizon = None,
    years: Years = None,
    perpetuity: Perpetuity = False,
    frequency: FrequencyOpt = "monthly",
    advance: Advance = False,
    growth: Growth = None,
    growth_every: GrowthEvery = None,
    step: Step = None,
    defer: Defer = 0,
    residual: Residual = "0",
    start: Valuation = None,
    rounding: RoundingOpt = "half-up",
    interest_rounding: InterestRounding = "half-up",
    rows: Rows = None,
    as_json: AsJson = False,
    out_file: OutFile = None,
    plot: AnnuityPlot = None,
    force: Force = False,
) -> None:
    """A fund paid out level or growing: solve the payment, horizon, fund or rate left out."""
    with errors():
        _check_targets(out_file, plot, force)
        freq = Frequency.parse(frequency)
        count = _count(periods, years, freq)
        if perpetuity and count is not None:
            raise InvalidTerms("give '--periods' (or '--years') or '--perpetuity', not both")
        _one_missing(
            {
                "--fund": fund is not None,
                "--payment": payment is not None,
                "--periods": count is not None or perpetuity,
                "--rate": rate is not None,
            },
            "--years or --perpetuity stand for --periods",
        )
        product = Payout(
            fund=None if fund is None else parse_amount(fund, "fund"),
            payment=None if payment is None else parse_amount(payment, "payment"),
            periods=count,
            annual_rate=None
            if rate is None
            else AnnualRate(parse_rate(rate, "rate", percent=True)),
            frequency=freq,
            timing=Timing.ADVANCE if advance else Timing.ARREARS,
            growth=_percent_growth(growth),
            step=None if step is None else parse_step(step),
            growth_every=growth_every,
            defer=defer,
            residual=parse_amount(residual, "residual", allow_zero=True),
            perpetuity=perpetuity,
            start=start,  # type: ignore[arg-type]  # Payout parses YYYY-MM-DD
            rounding=rounding,  # type: ignore[arg-type]  # parsed on construction
            interest_rounding=interest_rounding,  # type: ignore[arg-type]
        )
        frame = product.schedule(rows)
        summary = product.summary()
        check = product.reconciliation(rows)
        written = None if out_file is None else _write(product, frame, out_file, force, rows)
        plotted = None if plot is None else _plot(product, plot, force, rows)
    if as_json:
        emit_json(_payload(summary, check, frame, written, plotted))
        return
    if written is None:
        print_whole(schedule_table(frame))
        out.print()
    solved = product.solve_for or ""
    horizon = "for ever" if perpetuity else f"{summary['periods']:,} periods"
    terms = [
        (_mark("fund", solved, "fund"), money(summary["fund"])),
        (_mark("annual_rate", solved, "annual rate"), _rate_text(summary["annual_rate"])),
        ("frequency", summary["frequency"]),
        ("timing", summary["timing"]),
        (_mark("periods", solved, "horizon"), horizon),
    ]
    if summary["defer"]:
        terms.append(("deferral", f"{summary['defer']:,} periods"))
    terms += _changes(summary, "payment")
    if summary["residual"]:
        terms.append(("residual", money(summary["residual"])))
    if summary["start"] is not None:
        terms.append(("start", f"{summary['start']}"))
        terms.append(("first payment", f"{summary['first_payment_date']}"))
    out.print(figures_table("Payout", terms))
    out.print()
    figures = [(_mark("payment", solved, "payment"), money(summary["payment"]))]
    if perpetuity:
        figures.append(("payments shown", f"the first {len(frame) - summary['defer']:,}"))
    else:
        figures += [
            ("number of payments", f"{summary['number_of_payments']:,}"),
            ("final payment", money(summary["final_payment"])),
            ("total paid", money(summary["total_paid"])),
            ("interest credited", money(summary["total_interest_credited"])),
            ("value left", money(summary["residual_left"])),
        ]
    if summary["last_payment_date"] is not None:
        figures.append(("last payment", f"{summary['last_payment_date']}"))
    figures.append(("reconciled", "yes" if check.passed else "NO - see the checks"))
    out.print(figures_table("Figures", figures))
    out.print()
    out.print(checks_table(check))
    _say_written(len(frame), written, plotted)
    caution()


@annuity_app.command(
    epilog=(
        "Examples: amort annuity accumulate --target 60000 --rate 4 --periods 60 ; "
        "amort annuity accumulate --deposit 500 --target 60000 --rate 4 ; "
        "amort annuity accumulate --target 60000 --rate 4 --years 5 --loan-rate 7"
    ),
)
def accumulate(
    deposit: Deposit = None,
    target: Target = None,
    rate: Rate = None,
    periods: Deposits = None,
    years: Years = None,
    balance: Balance = "0",
    frequency: FrequencyOpt = "monthly",
    advance: Advance = False,
    growth: Growth = None,
    growth_every: GrowthEvery = None,
    step: Step = None,
    start: Valuation = None,
    loan_rate: LoanRate = None,
    rounding: RoundingOpt = "half-up",
    interest_rounding: InterestRounding = "half-up",
    as_json: AsJson = False,
    out_file: OutFile = None,
    plot: AnnuityPlot = None,
    force: Force = False,
) -> None:
    """Deposits towards a target: solve the deposit, the number of deposits, target or rate."""
    with errors():
        _check_targets(out_file, plot, force)
        freq = Frequency.parse(frequency)
        count = _count(periods, years, freq)
        _one_missing(
            {
                "--deposit": deposit is not None,
                "--target": target is not None,
                "--periods": count is not None,
                "--rate": rate is not None,
            },
            "--years stands for --periods",
        )
        options: dict[str, Any] = {
            "balance": parse_amount(balance, "balance", allow_zero=True),
            "growth": _percent_growth(growth),
            "step": None if step is None else parse_step(step),
            "growth_every": growth_every,
            "rounding": rounding,
            "interest_rounding": interest_rounding,
        }
        timing = Timing.ADVANCE if advance else Timing.ARREARS
        annual = None if rate is None else AnnualRate(parse_rate(rate, "rate", percent=True))
        if loan_rate is not None:
            if deposit is not None or target is None or count is None or annual is None:
                raise InvalidTerms(
                    "'--loan-rate' pairs the deposits with an interest-only loan of --target: "
                    "give --target, --rate and --periods (or --years) and leave out --deposit"
                )
            loan = Loan(
                principal=parse_amount(target, "target"),
                annual_rate=AnnualRate(parse_rate(loan_rate, "loan-rate", percent=True)),
                periods=count,
                frequency=freq,
                structure=Structure.BULLET,
                start=start,  # type: ignore[arg-type]  # Loan parses YYYY-MM-DD
            )
            product = Accumulation.sinking_fund(loan, annual_rate=annual, timing=timing, **options)
        else:
            product = Accumulation(
                deposit=None if deposit is None else parse_amount(deposit, "deposit"),
                target=None if target is None else parse_amount(target, "target"),
                periods=count,
                annual_rate=annual,
                frequency=freq,
                timing=timing,
                start=start,  # type: ignore[arg-type]  # parsed on construction
                **options,
            )
        frame = product.schedule()
        summary = product.summary()
        check = product.reconciliation()
        written = None if out_file is None else _write(product, frame, out_file, force)
        plotted = None if plot is None else _plot(product, plot, force, None)
    if as_json:
        emit_json(_payload(summary, check, frame, written, plotted))
        return
    if written is None:
        print_whole(schedule_table(frame))
        out.print()
    solved = product.solve_for or ""
    terms = [
        (_mark("target", solved, "target"), money(summary["target"])),
        (_mark("annual_rate", solved, "annual rate"), _rate_text(summary["annual_rate"])),
        ("frequency", summary["frequency"]),
        ("timing", summary["timing"]),
        (_mark("periods", solved, "deposits"), f"{summary['periods']:,}"),
    ]
    if summary["balance"]:
        terms.append(("starting balance", money(summary["balance"])))
    terms += _changes(summary, "deposit")
    if summary["start"] is not None:
        terms.append(("start", f"{summary['start']}"))
    out.print(figures_table("Accumulation", terms))
    out.print()
    figures = [
        (_mark("deposit", solved, "deposit"), money(summary["deposit"])),
        ("number of deposits", f"{summary['number_of_deposits']:,}"),
        ("final deposit", money(summary["final_deposit"])),
        ("value reached", money(summary["value_reached"])),
    ]
    if solved in ("deposit", "target"):
        figures.append(("exact value (closed form)", f"{summary['closed_form_value']:,.4f}"))
    figures += [
        ("total deposited", money(summary["total_deposited"])),
        ("interest credited", money(summary["total_interest_credited"])),
    ]
    if summary["loan_payment"] is not None:
        figures.append(("interest-only loan payment", money(summary["loan_payment"])))
        figures.append(("combined outlay a period", money(summary["combined_outlay"])))
    if summary["last_deposit_date"] is not None:
        figures.append(("last deposit", f"{summary['last_deposit_date']}"))
    figures.append(("reconciled", "yes" if summary["reconciled"] else "NO - see the checks"))
    out.print(figures_table("Figures", figures))
    out.print()
    out.print(checks_table(check))
    _say_written(len(frame), written, plotted)
    caution()
