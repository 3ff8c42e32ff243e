"""Write the bundled example book, or a synthetic book of any size, for Tallowmere.

Tallowmere Cooperative Lending is an invented lender and its borrowers are invented;
the books come from :func:`amort.book_synth.synthetic_book` (seeded, so the same
arguments give the same file). Run from the repository root:

    .venv/bin/python example_books/generate.py      # example_books/tallowmere_book.csv, .xlsx
    .venv/bin/python example_books/generate.py --rows 1000000 --seed 1 --out /tmp/big.csv

A .xlsx output holds typed cells (numbers, dates), a .parquet output typed columns,
as a lender's own files would; every output declares book format 1.
"""

from __future__ import annotations

import argparse
from datetime import date
from pathlib import Path

import pandas as pd

from amort.book_synth import LENDER, synthetic_book

HERE = Path(__file__).resolve().parent
NOTE = f"# {LENDER}: an invented lender's demo book; every borrower is invented."


def write_csv(frame: pd.DataFrame, path: Path) -> None:
    with path.open("w", encoding="utf-8", newline="") as handle:
        handle.write(NOTE + "\n# book format: 1\n")
        frame.to_csv(handle, index=False, lineterminator="\n")


def typed(frame: pd.DataFrame) -> pd.DataFrame:
    """The book with numbers as numbers and dates as dates (as a spreadsheet holds them)."""
    out = frame.astype(object)
    for name in ("principal", "annual_rate", "balloon", "payment", "rate_margin", "fees"):
        out[name] = [float(v) if v else None for v in frame[name]]
    for name in ("term", "interest_only"):
        out[name] = [int(v) if v else None for v in frame[name]]
    for name in ("disbursed_on", "first_due_on"):
        out[name] = [date.fromisoformat(v) if v else None for v in frame[name]]
    return out


def write_xlsx(frame: pd.DataFrame, path: Path) -> None:
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "loans"
    sheet.append([NOTE])
    sheet.append(["# book format: 1"])
    sheet.append(list(frame.columns))
    for row in typed(frame).itertuples(index=False):
        sheet.append(list(row))
    for cell in sheet["H"][3:] + sheet["I"][3:]:
        cell.number_format = "yyyy-mm-dd"
    book.save(path)


def write_parquet(frame: pd.DataFrame, path: Path) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(frame, preserve_index=False)
    table = table.replace_schema_metadata({b"amort_book_format": b"1", b"lender": LENDER.encode()})
    pq.write_table(table, path)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=300)
    parser.add_argument("--seed", type=int, default=2025)
    parser.add_argument("--out", type=Path, default=None, help=".csv, .xlsx or .parquet")
    args = parser.parse_args()
    frame = synthetic_book(args.rows, seed=args.seed)
    targets = (
        [args.out] if args.out else [HERE / "tallowmere_book.csv", HERE / "tallowmere_book.xlsx"]
    )
    for target in targets:
        writer = {".csv": write_csv, ".xlsx": write_xlsx, ".parquet": write_parquet}[target.suffix]
        writer(frame, target)
        print(f"wrote {target} ({len(frame):,} loans)")


if __name__ == "__main__":
    main()
