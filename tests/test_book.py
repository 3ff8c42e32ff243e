"""Book files: the layout (format 1), the three readers, and every bad row reported and counted."""

from __future__ import annotations

import io
import zipfile
from decimal import Decimal
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from amort import ExportError, InvalidTerms
from amort.book import (
    EXACT_COLUMNS,
    RATE_DEN,
    REJECTED_COLUMNS,
    Book,
    BookRowError,
    book_from_frame,
    loan_from_row,
    read_book,
)

EXAMPLE = Path("example_books/tallowmere_book.csv")
HEADER = "loan_id,borrower,principal,annual_rate,term,disbursed_on,first_due_on,structure,balloon"


def write(path: Path, *lines: str) -> Path:
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def reconciles(book: Book) -> None:
    assert book.counts["read"] == book.counts["processed"] + book.counts["rejected"]
    assert set(book.rejected.columns) == set(REJECTED_COLUMNS)
    assert not set(book.loans["row"]) & set(book.rejected["row"])


# -- the layout and the readers ------------------------------------------------------------------


def test_the_example_book_reads_whole_in_every_format(tmp_path: Path) -> None:
    csv = read_book(EXAMPLE)
    xlsx = read_book(EXAMPLE.with_suffix(".xlsx"))
    assert csv.counts == {"read": 300, "processed": 300, "rejected": 0}
    assert list(csv.loans.columns[: len(EXACT_COLUMNS)]) == list(EXACT_COLUMNS)
    pd.testing.assert_frame_equal(csv.loans, xlsx.loans)
    # The same book as Parquet with typed columns (floats, integers, dates).
    raw = pd.read_csv(EXAMPLE, comment="#", dtype=str, keep_default_na=False)
    typed = raw.copy()
    typed["principal"] = raw["principal"].astype(float)
    typed["term"] = raw["term"].astype(int)
    typed["disbursed_on"] = pd.to_datetime(raw["disbursed_on"]).dt.date
    table = pa.Table.from_pandas(typed, preserve_index=False)
    table = table.replace_schema_metadata({b"amort_book_format": b"1"})
    pq.write_table(table, tmp_path / "book.parquet")
    parquet = read_book(tmp_path / "book.parquet")
    # Parquet has no comment rows: its rows are numbered from 2, the CSV's from 4.
    pd.testing.assert_frame_equal(csv.loans.drop(columns="row"), parquet.loans.drop(columns="row"))


def test_money_and_rates_are_exact_integers() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["A", "B"],
            "principal": ["250,000.00", 0.1 + 0.2],
            "annual_rate": ["6.125%", 7.9],
            "term": [360, "60.0"],
            "disbursed_on": ["2025-01-31"] * 2,
        }
    )
    book = book_from_frame(frame)
    # 0.1 + 0.2 is the float 0.30000000000000004: whole cents only, so it is refused.
    assert list(book.loans["principal_cents"]) == [25_000_000]
    assert list(book.loans["annual_rate_num"]) == [6_125_000]
    assert book.loans["principal_cents"].dtype == np.int64
    assert book.rejected["column"].tolist() == ["principal"]
    floats = book_from_frame(frame.assign(principal=["18500", 18500.25]))
    # A float cell is read through its shortest repr: 7.9 is 79/10 %, exactly.
    assert floats.loans["annual_rate_num"].iloc[1] == 7_900_000
    assert floats.loans["principal_cents"].iloc[1] == 1_850_025


def test_the_first_due_date_defaults_to_one_period_after_disbursement() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["A", "B"],
            "principal": ["1000", "1000"],
            "annual_rate": ["5", "5"],
            "term": ["4", "4"],
            "frequency": ["monthly", "quarterly"],
            "disbursed_on": ["2025-01-31", "2025-01-31"],
        }
    )
    first = book_from_frame(frame).loans["first_due_on"].dt.date.tolist()
    assert [str(d) for d in first] == ["2025-02-28", "2025-04-30"]


def test_each_row_becomes_the_loan_its_cells_say() -> None:
    book = read_book(EXAMPLE)
    row = book.loans.iloc[1]
    loan = loan_from_row(row)
    assert loan.principal == Decimal(int(row["principal_cents"])) / 100
    assert loan.annual_rate == Decimal(int(row["annual_rate_num"])) / RATE_DEN
    assert loan.periods == int(row["term"]) and loan.start_date == row["disbursed_on"].date()


def test_comments_declare_the_format_and_other_formats_are_refused(tmp_path: Path) -> None:
    good = write(
        tmp_path / "a.csv",
        "# book format: 1",
        "loan_id,principal,annual_rate,term,disbursed_on",
        "A,1000,5,12,2025-01-01",
    )
    assert read_book(good).counts["processed"] == 1
    bad = write(
        tmp_path / "b.csv", "# book format: 2", "loan_id,principal,annual_rate,term,disbursed_on"
    )
    with pytest.raises(InvalidTerms, match="book format '2'; this amort reads book format 1"):
        read_book(bad)


def test_other_columns_are_kept_as_labels(tmp_path: Path) -> None:
    path = write(
        tmp_path / "a.csv",
        "loan_id,principal,annual_rate,term,disbursed_on,Branch ",
        "A,1000,5,12,2025-01-01,north",
    )
    book = read_book(path)
    assert book.extra_columns == ("branch",)
    assert book.loans["branch"].tolist() == ["north"]


# -- bad files -----------------------------------------------------------------------------------


def test_missing_required_columns_are_named(tmp_path: Path) -> None:
    path = write(tmp_path / "a.csv", "loan_id,borrower,principal", "A,Ada,1000")
    with pytest.raises(InvalidTerms, match="'annual_rate', 'term', 'disbursed_on'"):
        read_book(path)


@pytest.mark.parametrize(
    ("name", "content", "message"),
    [
        ("empty.csv", b"", "is empty"),
        ("header.csv", b"loan_id,principal,annual_rate,term,disbursed_on\n", "no loan rows"),
        ("blank.xlsx", None, "no loan rows"),
    ],
)
def test_an_empty_book_is_refused(
    tmp_path: Path, name: str, content: bytes | None, message: str
) -> None:
    path = tmp_path / name
    if content is None:
        wb = openpyxl.Workbook()
        wb.active.append(["loan_id", "principal", "annual_rate", "term", "disbursed_on"])
        wb.save(path)
    else:
        path.write_bytes(content)
    with pytest.raises(InvalidTerms, match=message):
        read_book(path)


@pytest.mark.parametrize(
    ("name", "content", "message"),
    [
        ("book.csv", b"PK\x03\x04zipped", "not a CSV file: its content is a zip archive"),
        ("book.csv", b"PAR1\x00\x01", "not a CSV file: its content is a Parquet file"),
        ("book.csv", "loan_id,borrower\nA,Zoë\n".encode("latin-1"), "not UTF-8 text"),
        ("book.xlsx", b"loan_id,principal\nA,1\n", "not an XLSX workbook: its content is text"),
        ("book.parquet", b"loan_id,principal\n", "not a Parquet file: its content is text"),
        ("book.xlsx", b"PK\x03\x04not really a zip", "not a readable XLSX workbook"),
        ("book.txt", b"loan_id\n", "must be a .csv, .xlsx or .parquet file"),
    ],
)
def test_a_file_that_is_not_what_its_extension_says(
    tmp_path: Path, name: str, content: bytes, message: str
) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    with pytest.raises(ExportError, match=message):
        read_book(path)


def test_a_missing_file_is_a_file_problem(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match="cannot read"):
        read_book(tmp_path / "nowhere.csv")


def test_hostile_xml_in_a_workbook_is_refused_not_expanded(tmp_path: Path) -> None:
    # A "billion laughs" entity bomb in the sheet's XML: with defusedxml installed,
    # openpyxl parses with it, and it refuses entity declarations.
    import openpyxl.xml

    plain = tmp_path / "plain.xlsx"
    wb = openpyxl.Workbook()
    wb.active.append(["loan_id", "principal", "annual_rate", "term", "disbursed_on"])
    wb.active.append(["A", "1000", "5", "12", "2025-01-01"])
    wb.save(plain)
    entities = (
        '<!DOCTYPE worksheet [<!ENTITY a "aaaaaaaaaa">'
        '<!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;"><!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;">]>'
    )
    hostile = tmp_path / "hostile.xlsx"
    with zipfile.ZipFile(plain) as src, zipfile.ZipFile(hostile, "w") as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename == "xl/worksheets/sheet1.xml":
                data = (entities + data.decode().replace(">loan_id<", ">&c;<")).encode()
                assert b"&c;" in data
            dst.writestr(item, data)
    with pytest.raises(ExportError, match="not a readable XLSX workbook"):
        read_book(hostile)
    assert openpyxl.xml.DEFUSEDXML


# -- bad rows ------------------------------------------------------------------------------------


PROBLEMS = [
    # (row cells, column, words in the sentence)
    ("A1,Ada,-5,6,12,2025-01-01,,,", "principal", "must be > 0 (got '-5')"),
    ("A2,Bram,1000.005,6,12,2025-01-01,,,", "principal", "whole number of cents"),
    ("A3,Cleo,18 500,6,12,2025-01-01,,,", "principal", "must be a number (got '18 500')"),
    ("A4,Dario,1000,6%%,12,2025-01-01,,,", "annual_rate", "at most 6 decimals (got '6%%')"),
    ("A5,Edda,1000,650,12,2025-01-01,,,", "annual_rate", "from 0 to 100"),
    ('A6,Fenn,1000,"6,5",12,2025-01-01,,,', "annual_rate", "decimal point, not a comma"),
    ("A7,Greta,1000,6,0,2025-01-01,,,", "term", "from 1 to 1,200"),
    ("A8,Hollis,1000,6,12.5,2025-01-01,,,", "term", "from 1 to 1,200"),
    ("A9,Ines,1000,6,1000,2025-01-01,,,", "term", "at most 60 years"),
    ("A10,Jory,1000,6,12,2025-02-30,,,", "disbursed_on", "not a valid date: 2025-02-30"),
    ("A11,Kasia,1000,6,12,15/01/2025,,,", "disbursed_on", "YYYY-MM-DD"),
    ("A12,Lorne,1000,6,12,2025-03-01,2025-02-01,,", "first_due_on", "must be after 'disbursed_on'"),
    ("A13,Mabry,1000,6,12,2025-03-01,2027-01-01,,", "first_due_on", "at most 12 monthly periods"),
    ("A14,Nils,1000,6,12,2025-03-01,,bullet,100", "balloon", "bullet loan"),
    ("A15,Odile,1000,6,12,2025-03-01,,level,1000", "balloon", "below the principal"),
    ("A16,Pell,1000,6,12,2025-03-01,,straight,", "structure", "must be one of"),
    (",Quinn,1000,6,12,2025-03-01,,,", "loan_id", "is required"),
]


def test_every_bad_row_is_reported_with_its_row_column_value_and_rule(tmp_path: Path) -> None:
    good = "G1,Rhea,1000,6,12,2025-03-01,,,"
    lines = [HEADER, good, *(cells for cells, _, _ in PROBLEMS), "G2,Soren,2000,7,24,2025-03-01,,,"]
    book = read_book(write(tmp_path / "book.csv", *lines))
    reconciles(book)
    assert book.counts == {"read": len(PROBLEMS) + 2, "processed": 2, "rejected": len(PROBLEMS)}
    for offset, (_, column, words) in enumerate(PROBLEMS):
        row = offset + 3  # the header is row 1, the good loan row 2
        found = book.rejected[book.rejected["row"] == row]
        assert column in found["column"].tolist(), (row, found)
        message = found[found["column"] == column]["problem"].iloc[0]
        assert words in message, (row, message)
    assert book.rejected[book.rejected["row"] == 4]["value"].iloc[0] == "1000.005"


def test_duplicate_identifiers_reject_every_copy_across_chunks(tmp_path: Path) -> None:
    rows = [f"L{k},B,1000,6,12,2025-03-01,,," for k in range(10)] + ["L3,B,1000,6,12,2025-03-01,,,"]
    book = read_book(write(tmp_path / "book.csv", HEADER, *rows), chunk_rows=4)
    reconciles(book)
    twice = book.rejected[book.rejected["loan_id"] == "L3"]
    assert sorted(twice["row"]) == [5, 12]
    assert "is on rows 5 and 12" in twice["problem"].iloc[0]
    assert book.counts == {"read": 11, "processed": 9, "rejected": 2}


def test_a_record_with_the_wrong_number_of_fields_is_a_rejected_row(tmp_path: Path) -> None:
    path = write(
        tmp_path / "book.csv",
        HEADER,
        "A,B,1000,6,12,2025-03-01,,,",
        "C,D,1000",
        "E,F,1000,6,12,2025-03-01,,,,extra",
        "G,H,1000,6,12,2025-03-01,,,",
    )
    book = read_book(path)
    reconciles(book)
    assert book.rejected["row"].tolist() == [3, 4]
    assert "has 3 fields; the header has 9" in book.rejected["problem"].iloc[0]
    assert book.loans["row"].tolist() == [2, 5]


def test_a_huge_csv_is_read_in_chunks_and_counts_reconcile(tmp_path: Path) -> None:
    lines = [HEADER] + [
        f"L{k},B,{1000 + k},6,12,2025-03-01,,," if k % 97 else f"L{k},B,-1,6,12,2025-03-01,,,"
        for k in range(2_000)
    ]
    path = write(tmp_path / "book.csv", *lines)
    from amort import book_read

    sizes: list[int] = []
    original = book_read.chunks

    def spy(p: Path, rows: int):  # type: ignore[no-untyped-def]
        for chunk in original(p, rows):
            sizes.append(len(chunk.rows))
            yield chunk

    book_read_chunks = pytest.MonkeyPatch()
    book_read_chunks.setattr(book_read, "chunks", spy)
    try:
        book = read_book(path, chunk_rows=300)
    finally:
        book_read_chunks.undo()
    assert max(sizes) <= 300 and len(sizes) >= 7
    reconciles(book)
    assert book.counts["rejected"] == 21 and book.counts["processed"] == 1_979
    assert book.rejected["row"].tolist() == [2 + k for k in range(0, 2_000, 97)]


def test_strict_stops_at_the_first_bad_row_with_the_counts_so_far(tmp_path: Path) -> None:
    path = write(
        tmp_path / "book.csv",
        HEADER,
        "A,B,1000,6,12,2025-03-01,,,",
        "C,D,1000,6,0,2025-03-01,,,",
        "E,F,-1,6,12,2025-03-01,,,",
    )
    with pytest.raises(BookRowError, match=r"^row 3: 'term' must be") as caught:
        read_book(path, strict=True)
    assert caught.value.counts == {"read": 2, "processed": 1, "rejected": 1}
    clean = read_book(EXAMPLE, strict=True)
    assert clean.counts["rejected"] == 0


def test_a_loan_the_loan_model_refuses_is_rejected_with_its_sentence() -> None:
    # 24 % a year over 30 years with a balloon of 90 %: the payment does not cover the
    # interest of a 31-day month under Actual/365 (the Loan's own rule).
    frame = pd.DataFrame(
        {
            "loan_id": ["A"],
            "principal": ["10000"],
            "annual_rate": ["24"],
            "term": ["360"],
            "disbursed_on": ["2025-01-01"],
            "day_count": ["actual/365"],
            "balloon": ["9000"],
        }
    )
    book = book_from_frame(frame)
    assert book.counts["rejected"] == 1
    assert book.rejected["column"].iloc[0] == "(row)"
    assert "does not cover" in book.rejected["problem"].iloc[0]


def test_semimonthly_and_holiday_calendar_rows_are_checked_as_loans() -> None:
    frame = pd.DataFrame(
        {
            "loan_id": ["S1", "S2", "D1", "H1"],
            "principal": ["3000"] * 4,
            "annual_rate": ["3"] * 4,
            "term": ["24"] * 4,
            "frequency": ["semimonthly", "semimonthly", "monthly", "monthly"],
            "disbursed_on": ["2025-01-01", "2025-01-01", "2025-01-31", "2025-01-31"],
            "first_due_on": ["2025-01-15", "2025-01-20", "", ""],
            "business_days": ["", "", "following", "following"],
            "holidays": ["", "", "", "US"],
        }
    )
    book = book_from_frame(frame)
    assert book.loans["loan_id"].tolist() == ["S1", "D1", "H1"]
    # Weekend-only business-day rules run vectorised; a holiday calendar one by one.
    assert book.loans["per_loan"].tolist() == [True, False, True]
    assert "semimonthly days" in book.rejected["problem"].iloc[0]


def test_formula_text_passes_through_unchanged() -> None:
    # Guarding formula triggers is the exporters' job; the book keeps the text as given.
    frame = pd.DataFrame(
        {
            "loan_id": ["=1+1"],
            "borrower": ["@Ridgeway"],
            "principal": ["100"],
            "annual_rate": ["5"],
            "term": ["2"],
            "disbursed_on": ["2025-01-01"],
        }
    )
    loans = book_from_frame(frame).loans
    assert loans["loan_id"].tolist() == ["=1+1"] and loans["borrower"].tolist() == ["@Ridgeway"]


def test_xlsx_rows_are_numbered_as_the_sheet_shows_them(tmp_path: Path) -> None:
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "loans"
    ws.append(["# a comment row"])
    ws.append(["loan_id", "principal", "annual_rate", "term", "disbursed_on"])
    ws.append(["A", 1000, 5, 12, "2025-01-01"])
    ws.append([None, None, None, None, None])
    ws.append(["B", 1000, 5, 0, "2025-01-01"])
    wb.save(tmp_path / "book.xlsx")
    book = read_book(tmp_path / "book.xlsx")
    assert book.loans["row"].tolist() == [3] and book.rejected["row"].tolist() == [5]
    reconciles(book)


def test_a_frame_partition_is_validated_alone() -> None:
    raw = pd.read_csv(EXAMPLE, comment="#", dtype=str, keep_default_na=False)
    whole = book_from_frame(raw)
    parts = [book_from_frame(raw.iloc[k : k + 100], first_row=2 + k) for k in (0, 100, 200)]
    joined = pd.concat([p.loans for p in parts], ignore_index=True)
    pd.testing.assert_frame_equal(whole.loans, joined)
    assert io.StringIO  # the module is used above for nothing else
