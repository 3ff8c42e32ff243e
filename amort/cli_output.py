"""The CLI's output: tables on the screen, JSON for scripts, errors as one sentence.

Nothing here computes; it formats what the library returns.
"""

from __future__ import annotations

import contextlib
import json
import sys
from collections.abc import Iterator
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd
import typer
from rich.console import Console
from rich.measure import Measurement
from rich.table import Table

from amort.caution import CAUTION
from amort.errors import AmortError
from amort.loan import Loan

out = Console(highlight=False, soft_wrap=False)
err = Console(stderr=True, highlight=False, soft_wrap=True)

# -- output helpers ---------------------------------------------------------------------------


def plain(value: Any) -> Any:
    """Return ``value`` as a JSON-ready value (Decimal and Fraction to float, dates to ISO)."""
    if isinstance(value, (Decimal, Fraction)):
        return float(value)
    if isinstance(value, (date, pd.Timestamp)):
        return value.isoformat()[:10]
    if isinstance(value, dict):
        return {k: plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [plain(v) for v in value]
    return value


def emit_json(payload: dict[str, Any]) -> None:
    payload = {**plain(payload), "caution": CAUTION}
    sys.stdout.write(json.dumps(payload, indent=2) + "\n")


def money(value: Any) -> str:
    return f"{Decimal(value):,.2f}"


def figures_table(title: str, rows: list[tuple[str, str]]) -> Table:
    table = Table(title=title, show_header=False, title_justify="left", box=None, pad_edge=False)
    table.add_column("figure", style="bold")
    table.add_column("value", justify="right")
    for name, value in rows:
        table.add_row(name, value)
    return table


def terms_rows(loan: Loan) -> list[tuple[str, str]]:
    rows = [
        ("principal", money(loan.principal)),
        ("annual rate", f"{(loan.annual_rate * 100).normalize():f} %"),
        ("frequency", loan.frequency.value),
        ("timing", loan.timing.value),
    ]
    if loan.compounding is not None:
        rows.append(("compounding", str(loan.compounding)))
    if loan.structure.value != "level":
        rows.append(("structure", loan.structure.value))
    if loan.interest_only_periods:
        rows.append(("interest-only payments", f"{loan.interest_only_periods:,}"))
    if loan.payment_growth is not None:
        growth = (loan.payment_growth * 100).normalize()
        rows.append(("payment growth", f"{growth:f} % every {loan.growth_every} periods"))
    if loan.negative_amortisation_cap is not None:
        rows.append(("negative amortisation cap", money(loan.negative_amortisation_cap)))
    if loan.payment_months is not None:
        rows.append(("payment months", ", ".join(str(m) for m in loan.payment_months)))
    if loan.custom_payments is not None:
        rows.append(("payments", "as listed"))
    if loan.payment_step is not None:
        rows.append(
            ("payment step", f"{money(loan.payment_step)} every {loan.growth_every} periods")
        )
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
                (f"odd-days interest ({loan.odd_days.value})", money(summary["odd_days_interest"]))
            )
    return rows


def totals_rows(figures: dict[str, Any]) -> list[tuple[str, str]]:
    rows = [
        ("payment", money(figures["payment"])),
        ("number of payments", f"{figures['number_of_payments']:,}"),
        ("final payment", money(figures["final_payment"])),
    ]
    if figures["balloon"]:
        rows.append(("balloon", money(figures["balloon"])))
    rows += [
        ("total interest", money(figures["total_interest"])),
        ("total paid", money(figures["total_paid"])),
        ("reconciled", "yes" if figures["reconciled"] else "NO - see amort schedule"),
    ]
    if figures.get("negative_amortisation"):
        reached = figures.get("cap_reached_period")
        rows.append(
            (
                "negative amortisation",
                "yes" + (f", capped from period {reached}" if reached else ""),
            )
        )
    return rows


def caution() -> None:
    out.print(f"\n[dim]{CAUTION}[/dim]")


@contextlib.contextmanager
def errors() -> Iterator[None]:
    """Turn an :class:`AmortError` into one sentence on stderr and its exit code."""
    try:
        yield
    except AmortError as exc:
        err.print(f"Error: {exc}", markup=False)
        raise typer.Exit(exc.exit_code) from None


def cell(column: str, value: Any) -> str:
    if column == "period" or column == "days":
        return f"{int(value):,}"
    if column == "due_date":
        return "" if value is None or value != value else f"{value:%Y-%m-%d}"
    if column == "rate":
        return f"{value * 100:.4f} %"
    return f"{value:,.2f}"


def schedule_table(frame: Any) -> Table:
    table = Table(title="Schedule", title_justify="left", header_style="bold cyan")
    dated = bool(frame["due_date"].notna().any())
    columns = [c for c in frame.columns if c != "due_date" or dated]
    for column in columns:
        table.add_column(column.replace("_", " "), justify="right")
    for record in frame.itertuples(index=False):
        values = record._asdict()
        table.add_row(*(cell(c, values[c]) for c in columns))
    return table


def checks_table(check: Any) -> Table:
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


def print_whole(table: Table) -> None:
    """Print ``table`` without ever cutting a figure: wider than the screen if need be."""
    needed = Measurement.get(out, out.options.update(max_width=10_000), table).maximum
    if needed <= out.width:
        out.print(table)
        return
    wide = Console(highlight=False, soft_wrap=False, width=needed, file=out.file)
    wide.print(table)
