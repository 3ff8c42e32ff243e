"""The ``amort book`` verb: positions and projections of a loan book (parse, call, print).

``amort book FILE --as-of DATE`` reads and validates the book, prints the row counts,
the book's positions (totals, by segment, the first loans) and the rejected rows;
``--project`` prints the projected collections by year instead. ``--out`` writes the
full table (and the rejected rows; a positions workbook adds schedule sheets for the
first loans, a projection workbook a charts sheet), ``--schedules`` every loan's
schedule to Parquet, ``--plot`` (with ``--project``) a picture of the projection.
Nothing is computed here.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Any

import pandas as pd
import typer
from rich import box
from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn
from rich.table import Table

from amort.book import Book, BookRowError, read_book
from amort.book_positions import positions, positions_totals
from amort.cli_options import AsJson
from amort.cli_output import caution, emit_json, err, errors, figures_table, out, print_whole
from amort.errors import InvalidTerms
from amort.io.book_export import LOAN_SHEETS, export_table, export_targets
from amort.io.book_parquet import write_schedules
from amort.io.files import check_target
from amort.io.png import plot_projection
from amort.io.xlsx_book import projection_by_month
from amort.money import parse_rate
from amort.projection import project

#: Books at least this large show a progress bar (on a terminal).
PROGRESS_FROM = 100_000

BookFile = Annotated[
    Path, typer.Argument(help="The loan book: FILE.csv, FILE.xlsx or FILE.parquet (format 1).")
]
AsOf = Annotated[str, typer.Option("--as-of", help="The date of the positions, YYYY-MM-DD.")]
Force = Annotated[
    bool,
    typer.Option("--force", help="Replace existing output files (--out, --schedules, --plot)."),
]


def register(app: typer.Typer) -> None:
    """Add the ``book`` verb to the ``amort`` app."""
    app.command(
        "book",
        epilog=(
            "Examples: amort book example_books/tallowmere_book.csv --as-of 2025-06-30 ; "
            "amort book example_books/tallowmere_book.csv --as-of 2025-06-30 --project "
            "--psa 150 --cdr 1 --recovery 40 --lag 6"
        ),
    )(book)


def book(
    file: BookFile,
    as_of: AsOf,
    project_: Annotated[
        bool, typer.Option("--project", help="Project the monthly cash flows instead.")
    ] = False,
    cpr: Annotated[
        str | None, typer.Option("--cpr", help="Prepayment, constant percent a year (CPR).")
    ] = None,
    psa: Annotated[
        str | None,
        typer.Option("--psa", help="Prepayment on the PSA ramp, percent (100 = 100 % PSA)."),
    ] = None,
    cdr: Annotated[
        str | None, typer.Option("--cdr", help="Defaults, constant percent a year (CDR).")
    ] = None,
    sda: Annotated[
        str | None,
        typer.Option("--sda", help="Defaults on the SDA curve, percent (100 = 100 % SDA)."),
    ] = None,
    recovery: Annotated[
        str | None, typer.Option("--recovery", help="Percent of a defaulted balance recovered.")
    ] = None,
    lag: Annotated[int, typer.Option("--lag", help="Months from a default to its recovery.")] = 0,
    group_by: Annotated[
        str | None, typer.Option("--group-by", help="A label column to total by, e.g. segment.")
    ] = None,
    months: Annotated[
        int | None, typer.Option("--months", help="Months to project (default: to the end).")
    ] = None,
    strict: Annotated[
        bool,
        typer.Option("--strict", help="Stop at the first bad row instead of setting it aside."),
    ] = False,
    out_file: Annotated[
        Path | None,
        typer.Option(
            "--out",
            help=(
                "Write the full table to FILE.csv, FILE.xlsx or FILE.parquet. A positions "
                f"workbook adds a schedule sheet for each of the first {LOAN_SHEETS} loans "
                "and, for a larger book, every schedule in FILE.schedules.parquet beside it; "
                "a projection workbook adds a charts sheet."
            ),
        ),
    ] = None,
    schedules: Annotated[
        Path | None,
        typer.Option("--schedules", help="Stream every loan's schedule to FILE.parquet."),
    ] = None,
    plot: Annotated[
        Path | None,
        typer.Option(
            "--plot",
            help="With --project: draw the projected balance and monthly collections to FILE.png.",
        ),
    ] = None,
    show: Annotated[int, typer.Option("--show", help="Loans (or rejected rows) to list.")] = 10,
    force: Force = False,
    as_json: AsJson = False,
) -> None:
    """Positions of a loan book as of a date, or its projected cash flows (--project)."""
    with errors():
        if plot is not None and not project_:
            raise InvalidTerms(
                f"--plot draws a projection and needs --project (got --plot {plot} without it)"
            )
        loaded = _read(file, strict)
        notes: dict[str, Any] = {"book": str(file), **loaded.counts, "as_of": as_of}
        written: list[Path] = []
        if project_:
            assumptions = _assumptions(cpr, psa, cdr, sda, recovery, lag)
            with _progress(len(loaded.loans), "projecting") as tick:
                table = project(
                    loaded, as_of, group_by=group_by, months=months, progress=tick, **assumptions
                )
            notes.update(_described(assumptions))
            sheet = "projection"
        else:
            if any(v is not None for v in (cpr, psa, cdr, sda, recovery)) or months:
                raise InvalidTerms(
                    "--cpr, --psa, --cdr, --sda, --recovery and --months need --project"
                )
            with _progress(len(loaded.loans), "positions") as tick:
                table = positions(loaded, as_of, progress=tick)
            sheet = "positions"
            labels = [c for c in table.columns if table[c].dtype == "str" and c != "loan_id"]
            if group_by is not None and group_by not in [*labels, "status"]:
                raise InvalidTerms(
                    f"--group-by must be a label column of the book: one of "
                    f"{', '.join(repr(c) for c in [*labels, 'status'])} (got {group_by!r})"
                )
        _check_targets(loaded, sheet, out_file, schedules, plot, force)
        if out_file is not None:
            written += export_table(
                table,
                out_file,
                sheet=sheet,
                rejected=loaded.rejected,
                notes=notes,
                force=force,
                loans=loaded.loans,
            )
        if schedules is not None:
            with _progress(len(loaded.loans), "schedules") as tick:
                write_schedules(loaded, schedules, force=force, progress=tick)
            written.append(schedules)
        if plot is not None:
            written.append(
                plot_projection(
                    projection_by_month(table), plot, title=_plot_title(file, notes), force=force
                )
            )
    if as_json:
        _json(loaded, table, project_, notes, group_by, written)
        return
    _counts(file, loaded, as_of)
    if project_:
        _print_projection(table, notes, group_by)
    else:
        _print_positions(table, group_by, show)
    _print_rejected(loaded, show)
    for path in written:
        out.print(f"wrote {path}")
    caution()


def _check_targets(
    loaded: Book,
    sheet: str,
    out_file: Path | None,
    schedules: Path | None,
    plot: Path | None,
    force: bool,
) -> None:
    """Check every file this run would write before any is written (and that none repeats)."""
    targets: list[Path] = []
    if out_file is not None:
        targets += export_targets(
            out_file, sheet=sheet, rejected=loaded.rejected, loans=loaded.loans
        )
    if schedules is not None:
        targets.append(schedules)
    if plot is not None:
        if plot.suffix.lower() != ".png":
            raise InvalidTerms(f"--plot must name a .png file (got {str(plot)!r})")
        targets.append(plot)
    seen: set[Path] = set()
    for target in targets:
        resolved = target.resolve()
        if resolved in seen:
            raise InvalidTerms(
                f"two outputs would be written to {str(target)!r}; name another file"
            )
        seen.add(resolved)
        check_target(target, force=force)


def _plot_title(file: Path, notes: dict[str, Any]) -> str:
    return (
        f"Projection of {file.name} as of {notes['as_of']}: prepayment {notes['prepayment']}, "
        f"defaults {notes['defaults']}, recovery {notes['recovery']}"
    )


def _read(file: Path, strict: bool) -> Book:
    try:
        return read_book(file, strict=strict)
    except BookRowError as exc:
        counts = exc.counts
        err.print(
            f"rows read {counts['read']:,}, processed {counts['processed']:,}, "
            f"rejected {counts['rejected']:,} (--strict stops at the first bad row)",
            markup=False,
        )
        raise


def _assumptions(cpr, psa, cdr, sda, recovery, lag) -> dict[str, Any]:
    rate = lambda v, f: None if v is None else parse_rate(v, f, percent=True)  # noqa: E731
    return {
        "cpr": rate(cpr, "cpr") or 0,
        "psa": psa,
        "cdr": rate(cdr, "cdr") or 0,
        "sda": sda,
        "recovery": rate(recovery, "recovery") or 0,
        "lag": lag,
    }


def _described(a: dict[str, Any]) -> dict[str, str]:
    pct = lambda v: f"{float(v) * 100:g} %"  # noqa: E731
    prepay = f"{a['psa']} % PSA" if a["psa"] is not None else f"{pct(a['cpr'])} CPR"
    default = f"{a['sda']} % SDA" if a["sda"] is not None else f"{pct(a['cdr'])} CDR"
    return {
        "prepayment": prepay,
        "defaults": default,
        "recovery": f"{pct(a['recovery'])} after {a['lag']} months",
    }


@contextmanager
def _progress(total: int, label: str) -> Iterator[Any]:
    """A progress bar on the screen (stderr) for large books only."""
    if total < PROGRESS_FROM or not err.is_terminal:
        yield None
        return
    bar = Progress(
        TextColumn(label),
        BarColumn(),
        MofNCompleteColumn(),
        TimeElapsedColumn(),
        console=err,
        transient=True,
    )
    with bar:
        task = bar.add_task(label, total=total)
        yield lambda done, _total: bar.update(task, completed=done)


def _money(value: float) -> str:
    return f"{value:,.2f}"


def _counts(file: Path, loaded: Book, as_of: str) -> None:
    counts = loaded.counts
    rows = [
        ("file", str(file)),
        ("rows read", f"{counts['read']:,}"),
        ("processed", f"{counts['processed']:,}"),
        ("rejected", f"{counts['rejected']:,}"),
        ("as of", as_of),
    ]
    if loaded.extra_columns:
        rows.append(("other columns (labels)", ", ".join(loaded.extra_columns)))
    out.print(figures_table("Book", rows))
    out.print()


def _print_positions(table: pd.DataFrame, group_by: str | None, show: int) -> None:
    total = positions_totals(table).iloc[0]
    status = table["status"].value_counts()
    made = int(table["payments_made"].sum())
    rows = [
        ("loans", f"{int(total['loans']):,}"),
        (
            "open / repaid / not disbursed",
            f"{status.get('open', 0):,} / {status.get('repaid', 0):,} / "
            f"{status.get('not disbursed', 0):,}",
        ),
        ("principal lent", _money(total["principal"])),
        ("scheduled balance", _money(total["scheduled_balance"])),
        ("payments made to date", f"{made:,}"),
        ("paid to date", _money(total["paid_to_date"])),
        ("interest earned to date", _money(total["interest_to_date"])),
        ("next payments due", _money(total["next_payment"])),
        ("total interest over the life", _money(total["total_interest"])),
    ]
    out.print(figures_table("Positions (as scheduled)", rows))
    out.print()
    by = group_by or ("segment" if (table["segment"] != "").any() else None)
    if by is not None:
        groups = positions_totals(table, by=by)
        grid = _grid(
            f"By {by}",
            [by, "loans", "open", "scheduled balance", "interest to date", "next payments"],
        )
        for _, g in groups.iterrows():
            grid.add_row(
                str(g[by]) or "(none)",
                f"{int(g['loans']):,}",
                f"{int(g['open']):,}",
                _money(g["scheduled_balance"]),
                _money(g["interest_to_date"]),
                _money(g["next_payment"]),
            )
        print_whole(grid)
        out.print()
    head = table.head(show)
    grid = _grid(
        f"First {len(head)} loans of {len(table):,} (--out writes them all)",
        [
            "loan id",
            "segment",
            "status",
            "balance",
            "made",
            "next due",
            "next payment",
            "left",
            "maturity",
        ],
        left=3,
    )
    for _, p in head.iterrows():
        grid.add_row(
            str(p["loan_id"]),
            str(p["segment"]),
            str(p["status"]),
            _money(p["scheduled_balance"]),
            f"{int(p['payments_made']):,}",
            _date(p["next_due_date"]),
            "" if pd.isna(p["next_payment"]) else _money(p["next_payment"]),
            f"{int(p['remaining_payments']):,}",
            _date(p["maturity_date"]),
        )
    print_whole(grid)


def _date(value: Any) -> str:
    return "" if pd.isna(value) else f"{pd.Timestamp(value):%Y-%m-%d}"


def _grid(title: str, columns: list[str], *, left: int = 1) -> Table:
    """A table whose first ``left`` columns (text) are left-justified, the rest right."""
    grid = Table(
        title=title,
        title_justify="left",
        header_style="bold cyan",
        box=box.SIMPLE_HEAD,
        show_edge=False,
    )
    for k, name in enumerate(columns):
        grid.add_column(name, justify="left" if k < left else "right")
    return grid


def _print_projection(table: pd.DataFrame, notes: dict[str, Any], group_by: str | None) -> None:
    first = table[table["month"] == 1]
    rows = [
        ("prepayment", notes["prepayment"]),
        ("defaults", notes["defaults"]),
        ("recovery", notes["recovery"]),
        (f"balance at {notes['as_of']}", _money(first["opening_balance"].sum())),
        ("months", f"{int(table['month'].max()):,}"),
        ("collections", _money(table["collections"].sum())),
        ("losses", _money(table["loss"].sum())),
    ]
    out.print(figures_table("Projection", rows))
    out.print()
    flows = table.copy()
    flows["year"] = (flows["month"] - 1) // 12 + 1
    summed = flows.groupby("year", sort=True)
    yearly = summed[["interest", "principal", "prepayment", "default", "recovery"]].sum()
    closing = (
        summed["closing_balance"].last()
        if group_by is None
        else (flows.groupby(["year", "month"])["closing_balance"].sum().groupby("year").last())
    )
    grid = _grid(
        "By year (months 1-12 are year 1; --out writes every month)",
        ["year", "interest", "principal", "prepaid", "defaults", "recovered", "closing balance"],
    )
    ends = closing.to_dict()
    for year, row in yearly.iterrows():
        grid.add_row(str(year), *(_money(row[c]) for c in yearly.columns), _money(ends[year]))
    grid.add_row("total", *(_money(yearly[c].sum()) for c in yearly.columns), "")
    print_whole(grid)
    if group_by is not None:
        out.print()
        groups = table.groupby(group_by, sort=True)[
            ["collections", "interest", "prepayment", "default", "loss"]
        ].sum()
        grid = _grid(
            f"By {group_by}, whole projection",
            [group_by, "collections", "interest", "prepaid", "defaults", "losses"],
        )
        for name, row in groups.iterrows():
            grid.add_row(str(name) or "(none)", *(_money(v) for v in row))
        print_whole(grid)


def _print_rejected(loaded: Book, show: int) -> None:
    rejected = loaded.rejected
    if rejected.empty:
        return
    out.print()
    head = rejected.head(show)
    grid = _grid(
        f"Rejected rows: {loaded.rejected_rows:,} rows, {len(rejected):,} problems "
        f"(first {len(head)}; --out writes them all)",
        ["row", "loan id", "column", "problem"],
        left=4,
    )
    for _, r in head.iterrows():
        grid.add_row(f"{int(r['row']):,}", str(r["loan_id"]), str(r["column"]), str(r["problem"]))
    grid.columns[3].overflow = "fold"
    out.print(grid)


def _json(
    loaded: Book,
    table: pd.DataFrame,
    projected: bool,
    notes: dict[str, Any],
    group_by: str | None,
    written: list[Path],
) -> None:
    payload: dict[str, Any] = {
        "file": notes["book"],
        "counts": loaded.counts,
        "as_of": notes["as_of"],
        "rejected": loaded.rejected.head(100).to_dict(orient="records"),
        "rejected_shown": min(100, len(loaded.rejected)),
        "files": [str(p) for p in written],
    }
    if projected:
        payload["assumptions"] = {k: notes[k] for k in ("prepayment", "defaults", "recovery")}
        months = table.copy()
        months["month_end"] = months["month_end"].dt.strftime("%Y-%m-%d")
        payload["months"] = months.to_dict(orient="records")
    else:
        totals = positions_totals(table).iloc[0].drop("book").to_dict()
        payload["totals"] = {
            k: (int(v) if k in ("loans", "open") else float(v)) for k, v in totals.items()
        }
        if group_by is not None:
            groups = positions_totals(table, by=group_by)
            payload["groups"] = groups.to_dict(orient="records")
    emit_json(payload)
