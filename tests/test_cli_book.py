"""The ``amort book`` verb: exit codes, the counts, key lines, JSON, and the files written."""

from __future__ import annotations

import json
import struct
from pathlib import Path

import openpyxl
import pandas as pd
import pyarrow.parquet as pq
import pytest
from typer.testing import CliRunner

from amort import CAUTION
from amort.cli import app

runner = CliRunner()
BOOK = "example_books/tallowmere_book.csv"
PROBLEMS = "example_books/tallowmere_problems.csv"


def invoke(*args: str) -> tuple[int, str, str]:
    result = runner.invoke(app, ["book", *args])
    return result.exit_code, result.stdout, result.stderr


def test_positions_print_the_counts_the_totals_and_the_caution() -> None:
    code, stdout, _ = invoke(BOOK, "--as-of", "2025-06-30")
    assert code == 0
    for words in (
        "rows read",
        "processed",
        "rejected",
        "scheduled balance",
        "interest earned to date",
        "By segment",
        "First 10 loans",
        "TCL-10001",
    ):
        assert words in stdout
    assert "computed estimates" in stdout


def test_the_problems_book_lists_its_rejected_rows() -> None:
    code, stdout, _ = invoke(PROBLEMS, "--as-of", "2025-06-30", "--show", "20")
    assert code == 0
    assert "Rejected rows: 12 rows" in stdout
    assert "'6,5'" in stdout and "2025-02-30" in stdout


def test_json_carries_the_counts_totals_and_rejected_rows() -> None:
    code, stdout, _ = invoke(PROBLEMS, "--as-of", "2025-06-30", "--json")
    assert code == 0
    data = json.loads(stdout)
    assert data["counts"] == {"read": 14, "processed": 2, "rejected": 12}
    assert data["totals"]["loans"] == 2
    assert {r["column"] for r in data["rejected"]} >= {"principal", "annual_rate", "loan_id"}
    assert data["caution"] == CAUTION


def test_projection_by_year_and_json_by_month() -> None:
    code, stdout, _ = invoke(
        BOOK,
        "--as-of",
        "2025-06-30",
        "--project",
        "--psa",
        "150",
        "--cdr",
        "1",
        "--recovery",
        "40",
        "--lag",
        "6",
    )
    assert code == 0
    assert "150 % PSA" in stdout and "1 % CDR" in stdout and "40 % after 6 months" in stdout
    assert "By year" in stdout and "total" in stdout
    code, stdout, _ = invoke(
        BOOK, "--as-of", "2025-06-30", "--project", "--cpr", "6", "--json", "--months", "24"
    )
    data = json.loads(stdout)
    assert len(data["months"]) == 24 and data["assumptions"]["prepayment"] == "6 % CPR"


def test_projection_grouped_by_a_label() -> None:
    code, stdout, _ = invoke(
        BOOK, "--as-of", "2025-06-30", "--project", "--cpr", "5", "--group-by", "segment"
    )
    assert code == 0 and "By segment, whole projection" in stdout and "vehicle" in stdout


@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".parquet"])
def test_out_writes_the_table_and_the_rejected_rows(tmp_path: Path, suffix: str) -> None:
    target = tmp_path / f"positions{suffix}"
    code, stdout, stderr = invoke(PROBLEMS, "--as-of", "2025-06-30", "--out", str(target))
    assert code == 0, stderr
    assert f"wrote {target}" in stdout.replace("\n", "")
    if suffix == ".csv":
        text = target.read_text(encoding="utf-8")
        assert text.startswith(f"# {CAUTION}") and "# rejected: 12" in text
        table = pd.read_csv(target, comment="#")
        rejected = pd.read_csv(tmp_path / "positions.rejected.csv", comment="#")
        assert len(table) == 2 and rejected["row"].nunique() == 12
    elif suffix == ".xlsx":
        book = openpyxl.load_workbook(target, read_only=True)
        assert book.sheetnames[:4] == ["positions", "rejected rows", "about", "loan sheets"]
        assert len(book.sheetnames) == 4 + 2  # one schedule sheet for each of the 2 loans
        about = [tuple(r) for r in book["about"].iter_rows(values_only=True)]
        assert about[0] == ("caution", CAUTION)
        assert sum(1 for _ in book["rejected rows"].iter_rows()) == 1 + 13
    else:
        meta = pq.read_schema(target).metadata
        assert meta[b"caution"].decode() == CAUTION
        assert json.loads(meta[b"amort_notes"])["rejected"] == 12
        assert pq.read_table(tmp_path / "positions.rejected.parquet").num_rows == 13


def test_formula_text_is_written_as_text(tmp_path: Path) -> None:
    book = tmp_path / "book.csv"
    book.write_text(
        "loan_id,borrower,principal,annual_rate,term,disbursed_on\n"
        "=2+2,@Ridgeway,1000,5,12,2025-01-01\n",
        encoding="utf-8",
    )
    code, _, stderr = invoke(str(book), "--as-of", "2025-06-30", "--out", str(tmp_path / "p.xlsx"))
    assert code == 0, stderr
    ws = openpyxl.load_workbook(tmp_path / "p.xlsx")["positions"]
    assert ws["B2"].value == "'=2+2" and ws["C2"].value == "'@Ridgeway"


def test_an_existing_file_is_kept_unless_forced(tmp_path: Path) -> None:
    target = tmp_path / "p.csv"
    target.write_text("keep", encoding="utf-8")
    code, _, stderr = invoke(BOOK, "--as-of", "2025-06-30", "--out", str(target))
    assert code == 4 and "already exists" in stderr
    assert target.read_text(encoding="utf-8") == "keep"
    code, _, _ = invoke(BOOK, "--as-of", "2025-06-30", "--out", str(target), "--force")
    assert code == 0 and target.read_text(encoding="utf-8").startswith("#")


def test_schedules_stream_to_parquet(tmp_path: Path) -> None:
    target = tmp_path / "schedules.parquet"
    code, _, stderr = invoke(BOOK, "--as-of", "2025-06-30", "--schedules", str(target))
    assert code == 0, stderr
    table = pq.read_table(target)
    assert table.column_names[:3] == ["loan_id", "period", "due_date"]
    assert len(set(table.column("loan_id").to_pylist())) == 300
    assert not list(tmp_path.glob(".*.part"))  # no temporary file left behind


def test_strict_fails_with_the_counts_and_the_first_bad_row() -> None:
    code, _, stderr = invoke(PROBLEMS, "--as-of", "2025-06-30", "--strict")
    assert code == 2
    assert "rows read 2, processed 1, rejected 1" in stderr
    assert "Error: row 5: 'principal' must be a number" in stderr and "(got '18,5OO')" in stderr


@pytest.mark.parametrize(
    ("args", "code", "words"),
    [
        (["nowhere.csv", "--as-of", "2025-06-30"], 4, "cannot read"),
        (["README.md", "--as-of", "2025-06-30"], 4, "must be a .csv, .xlsx or .parquet"),
        ([BOOK, "--as-of", "30/06/2025"], 2, "'as_of' must be a date"),
        ([BOOK, "--as-of", "2025-06-30", "--cpr", "5"], 2, "need --project"),
        ([BOOK, "--as-of", "2025-06-30", "--project", "--cpr", "5", "--psa", "100"], 2, "not both"),
        ([BOOK, "--as-of", "2025-06-30", "--group-by", "colour"], 2, "label column"),
    ],
)
def test_bad_input_is_one_sentence_and_an_exit_code(args: list[str], code: int, words: str) -> None:
    got, _, stderr = invoke(*args)
    assert got == code
    assert words in stderr and stderr.startswith("Error:")


PROJECT = ("--as-of", "2025-06-30", "--project", "--psa", "150", "--cdr", "1", "--recovery", "40")


def _png_size(path: Path) -> tuple[int, int]:
    # PNG file format (ISO/IEC 15948): an 8-byte signature, then the IHDR chunk whose
    # first two 4-byte big-endian fields are the width and height [memory].
    head = path.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n" and head[12:16] == b"IHDR"
    width, height = struct.unpack(">II", head[16:24])
    return width, height


def test_plot_draws_the_projection_at_the_default_size(tmp_path: Path) -> None:
    target = tmp_path / "book.png"
    code, stdout, stderr = invoke(BOOK, *PROJECT, "--plot", str(target))
    assert code == 0, stderr
    assert f"wrote {target}" in stdout.replace("\n", "")
    assert _png_size(target) == (1200, 800)


def test_plot_title_states_the_book_and_the_assumptions() -> None:
    from amort.cli_book import _plot_title

    notes = {"as_of": "2025-06-30", "prepayment": "150 % PSA", "defaults": "1 % CDR"}
    notes["recovery"] = "40 % after 6 months"
    assert _plot_title(Path(BOOK), notes) == (
        "Projection of tallowmere_book.csv as of 2025-06-30: prepayment 150 % PSA, "
        "defaults 1 % CDR, recovery 40 % after 6 months"
    )


def test_plot_needs_project() -> None:
    code, _, stderr = invoke(BOOK, "--as-of", "2025-06-30", "--plot", "x.png")
    assert code == 2
    assert stderr.startswith("Error: --plot draws a projection and needs --project")


def test_plot_must_be_a_png_and_no_file_is_written(tmp_path: Path) -> None:
    out = tmp_path / "p.xlsx"
    code, _, stderr = invoke(BOOK, *PROJECT, "--out", str(out), "--plot", str(tmp_path / "p.jpg"))
    assert code == 2 and "--plot must name a .png file" in stderr
    assert list(tmp_path.iterdir()) == []


def test_every_target_is_checked_before_any_is_written(tmp_path: Path) -> None:
    plot, out = tmp_path / "p.png", tmp_path / "p.xlsx"
    plot.write_text("keep", encoding="utf-8")
    code, _, stderr = invoke(BOOK, *PROJECT, "--out", str(out), "--plot", str(plot))
    assert code == 4 and "already exists" in stderr
    assert not out.exists() and plot.read_text(encoding="utf-8") == "keep"
    code, _, stderr = invoke(BOOK, *PROJECT, "--out", str(out), "--plot", str(plot), "--force")
    assert code == 0, stderr
    assert _png_size(plot) == (1200, 800)
    assert openpyxl.load_workbook(out).sheetnames[-1] == "charts"


def test_the_same_file_twice_is_refused(tmp_path: Path) -> None:
    target = tmp_path / "s.parquet"
    code, _, stderr = invoke(
        BOOK, "--as-of", "2025-06-30", "--out", str(target), "--schedules", str(target)
    )
    assert code == 2 and "two outputs would be written" in stderr and not target.exists()


def test_positions_workbook_of_a_large_book_writes_every_schedule_beside(tmp_path: Path) -> None:
    out = tmp_path / "p.xlsx"
    code, stdout, stderr = invoke(BOOK, "--as-of", "2025-06-30", "--out", str(out))
    assert code == 0, stderr
    beside = tmp_path / "p.schedules.parquet"
    assert f"wrote {beside}" in stdout.replace("\n", "")
    assert len(set(pq.read_table(beside).column("loan_id").to_pylist())) == 300


def test_help_states_the_loan_sheet_limit() -> None:
    result = runner.invoke(app, ["book", "--help"], env={"COLUMNS": "200"})
    assert "first 25 loans" in result.stdout and "FILE.schedules.parquet" in result.stdout
    assert "--plot" in result.stdout
