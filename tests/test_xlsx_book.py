"""Book workbooks: per-loan schedule sheets, the Parquet beside them, and the projection charts."""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pyarrow.parquet as pq
import pytest

from amort import CAUTION
from amort.book import book_from_frame, loan_from_row, read_book
from amort.book_positions import positions
from amort.errors import ExportError
from amort.io.book_export import export_table, schedules_path
from amort.io.xlsx_book import LOAN_SHEETS, loan_sheet_names
from amort.projection import project

BOOK = "example_books/tallowmere_book.csv"
AS_OF = "2025-06-30"
CENT = Decimal("0.01")


@pytest.fixture(scope="module")
def book():  # type: ignore[no-untyped-def]
    return read_book(BOOK)


@pytest.fixture(scope="module")
def positions_book(book, tmp_path_factory) -> Path:  # type: ignore[no-untyped-def]
    path = tmp_path_factory.mktemp("pos") / "positions.xlsx"
    table = positions(book, AS_OF)
    export_table(table, path, sheet="positions", rejected=book.rejected, loans=book.loans)
    return path


def _sheet_frame(ws) -> pd.DataFrame:  # type: ignore[no-untyped-def]
    rows = list(ws.iter_rows(values_only=True))
    # Row 1 the loan, row 2 empty, row 3 the header.
    return pd.DataFrame(rows[3:], columns=list(rows[2]))


def test_sheet_names_keep_the_spreadsheet_rules() -> None:
    # Sheet-name rules of spreadsheet files (at most 31 characters, none of []:*?/\,
    # no leading or trailing apostrophe, unique without regard to case) [memory].
    ids = ["=HYPERLINK(1)", "loan[7]:a/b", "LOAN[7]:A/B", "'quoted'", "x" * 40, "x" * 40, "History"]
    names = loan_sheet_names(ids, taken=["positions"])
    for name in names:
        assert 1 <= len(name) <= 31
        assert not set(name) & set("[]:*?/\\")
        assert not name.startswith(("'", "=", "+", "-", "@"))
        assert not name.endswith("'")
    assert len({n.casefold() for n in names} | {"positions"}) == len(names) + 1
    assert "history" not in {n.casefold() for n in names}
    assert names[0] == "_=HYPERLINK(1)" and names[2] == "LOAN_7__A_B (2)"
    assert names[5] == "x" * 27 + " (2)"


def test_positions_workbook_has_a_sheet_for_each_of_the_first_loans(positions_book: Path) -> None:
    wb = openpyxl.load_workbook(positions_book)
    assert wb.sheetnames[:4] == ["positions", "rejected rows", "about", "loan sheets"]
    index = list(wb["loan sheets"].iter_rows(values_only=True))
    assert index[0][0] == "note" and f"first {LOAN_SHEETS} of 300 loans" in index[0][1]
    assert "positions.schedules.parquet" in index[0][1]
    assert index[1] == ("caution", CAUTION)
    assert len(index) - 4 == LOAN_SHEETS == len(wb.sheetnames) - 4
    about = dict(wb["about"].iter_rows(values_only=True))
    assert about["loan sheets"] == "the first 25 of 300 loans (limit 25)"
    assert about["every schedule"] == "positions.schedules.parquet"


def test_loan_sheets_equal_the_loans_own_schedules(book, positions_book: Path) -> None:  # type: ignore[no-untyped-def]
    wb = openpyxl.load_workbook(positions_book)
    index = list(wb["loan sheets"].iter_rows(min_row=5, values_only=True))
    loans = book.loans.set_index("loan_id", drop=False)
    for loan_id, sheet in index:
        expected = loan_from_row(loans.loc[loan_id]).schedule()
        got = _sheet_frame(wb[sheet])
        assert len(got) == len(expected)
        for column in ("opening_balance", "payment", "interest", "principal", "closing_balance"):
            cents = np.round(got[column].astype(float).to_numpy() * 100)
            assert (cents == np.round(expected[column].to_numpy() * 100)).all(), (loan_id, column)
        assert (pd.to_datetime(got["due_date"]) == expected["due_date"]).all()


def test_first_loan_sheet_matches_an_independent_decimal_annuity(positions_book: Path) -> None:
    # Reference: the level-payment annuity formula A = P r / (1 - (1 + r)^-n) and
    # interest = balance x r, each rounded half-up to the cent, in Python decimal
    # (TCL-10001: 24,900.00 at 8.60 % a year, 60 monthly payments, equal periods).
    r = Decimal("0.086") / 12
    payment = (Decimal(24900) * r / (1 - (1 + r) ** -60)).quantize(CENT, ROUND_HALF_UP)
    got = _sheet_frame(openpyxl.load_workbook(positions_book)["TCL-10001"])
    balance = Decimal("24900.00")
    for k in range(12):
        interest = (balance * r).quantize(CENT, ROUND_HALF_UP)
        assert Decimal(str(got["payment"][k])) == payment
        assert Decimal(str(got["interest"][k])) == interest
        balance -= payment - interest
        assert Decimal(str(got["closing_balance"][k])) == balance


def test_the_parquet_beside_holds_every_loan_and_agrees_with_the_sheets(
    book,  # type: ignore[no-untyped-def]
    positions_book: Path,
) -> None:
    table = pq.read_table(schedules_path(positions_book)).to_pandas()
    assert set(table["loan_id"]) == set(book.loans["loan_id"])
    assert len(table) == int(book.loans["term"].sum())  # one row a payment of every loan
    # The vectorised engine's rows against the per-loan sheets (built by amort.Loan).
    wb = openpyxl.load_workbook(positions_book)
    for loan_id, sheet in list(wb["loan sheets"].iter_rows(min_row=5, values_only=True))[:5]:
        got = _sheet_frame(wb[sheet])
        rows = table[table["loan_id"] == loan_id]
        assert np.allclose(rows["closing_balance"].to_numpy(), got["closing_balance"].astype(float))


def test_a_small_book_gets_no_parquet_and_ids_are_written_safely(tmp_path: Path) -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["=cmd|'/c calc'!A1", "[East]:7", "@Ridge"],
            "principal": ["1000", "2000", "3000"],
            "annual_rate": ["5", "6", "7"],
            "term": ["12", "12", "24"],
            "disbursed_on": ["2025-01-01"] * 3,
        }
    )
    small = book_from_frame(frame)
    path = tmp_path / "p.xlsx"
    written = export_table(positions(small, AS_OF), path, sheet="positions", loans=small.loans)
    assert written == [path] and not schedules_path(path).exists()
    wb = openpyxl.load_workbook(path)
    index = list(wb["loan sheets"].iter_rows(min_row=5, values_only=True))
    assert index == [
        ("'=cmd|'/c calc'!A1", "_=cmd|'_c calc'!A1"),
        ("[East]:7", "_East__7"),
        ("'@Ridge", "_@Ridge"),
    ]
    assert wb["_=cmd|'_c calc'!A1"]["A1"].value == "Schedule of loan '=cmd|'/c calc'!A1"
    assert wb["_=cmd|'_c calc'!A1"]["A1"].data_type == "s"
    note = wb["loan sheets"]["B1"].value
    assert "first 3 of 3 loans" in note and "parquet" not in note


def test_a_limit_below_the_book_writes_the_parquet(tmp_path: Path) -> None:
    small = read_book("example_books/tallowmere_problems.csv")  # 2 valid loans
    path = tmp_path / "p.xlsx"
    table = positions(small, AS_OF)
    written = export_table(table, path, sheet="positions", loans=small.loans, loan_sheets=1)
    assert written == [path, schedules_path(path)]
    assert len(openpyxl.load_workbook(path).sheetnames) == 5
    assert pq.read_table(schedules_path(path)).column("loan_id").to_pylist().count(
        small.loans["loan_id"].iloc[1]
    ) == int(small.loans["term"].iloc[1])


def test_every_target_is_checked_before_any_is_written(book, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "p.xlsx"
    schedules_path(path).write_text("keep", encoding="utf-8")
    with pytest.raises(ExportError, match="already exists"):
        export_table(positions(book, AS_OF), path, sheet="positions", loans=book.loans)
    assert not path.exists() and schedules_path(path).read_text(encoding="utf-8") == "keep"
    assert not list(tmp_path.glob(".*.part"))


def test_projection_workbook_has_native_charts_of_the_monthly_totals(
    book,  # type: ignore[no-untyped-def]
    tmp_path: Path,
) -> None:
    notes = {"book": BOOK, "as_of": AS_OF, "prepayment": "6 % CPR"}
    grouped = project(book, AS_OF, cpr=0.06, cdr=0.01, recovery=0.4, lag=6, group_by="segment")
    whole = project(book, AS_OF, cpr=0.06, cdr=0.01, recovery=0.4, lag=6)
    path = tmp_path / "proj.xlsx"
    export_table(grouped, path, sheet="projection", notes=notes)
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == ["projection", "rejected rows", "about", "charts"]
    ws = wb["charts"]
    assert (
        ws["A1"].value == "Projection of tallowmere_book.csv as of 2025-06-30: 6 % CPR prepayment"
    )
    assert ws["B2"].value == CAUTION
    rows = list(ws.iter_rows(min_row=4, max_col=9, values_only=True))
    monthly = pd.DataFrame(rows[1:], columns=list(rows[0]))
    # The grouped months summed on the sheet equal the ungrouped projection (linearity).
    assert len(monthly) == len(whole)
    for column in ("closing_balance", "interest", "principal", "prepayment", "recovery"):
        assert np.allclose(monthly[column].astype(float), whole[column], atol=1e-6), column
    charts = ws._charts
    assert [type(c).__name__ for c in charts] == ["LineChart", "BarChart"]
    line, bars = charts
    assert bars.grouping == "stacked" and len(bars.series) == 4
    assert [s.tx.v for s in bars.series] == [
        "interest",
        "scheduled principal",
        "prepaid",
        "recovered",
    ]
    last = 4 + len(monthly)
    assert line.series[0].val.numRef.f == f"'charts'!$D$5:$D${last}"
    assert line.series[0].tx.strRef.f == "'charts'!D4"  # the header "closing_balance"
    assert ws["D4"].value == "closing_balance" and ws["G4"].value == "prepayment"
    assert bars.series[2].val.numRef.f == f"'charts'!$G$5:$G${last}"
    assert "currency units" in line.y_axis.title.tx.rich.p[0].r[0].t
