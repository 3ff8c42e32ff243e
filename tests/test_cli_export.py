"""`amort schedule --out FILE.xlsx|.parquet|.csv`, `--formulas` and `--plot`, via CliRunner."""

from __future__ import annotations

import json
from pathlib import Path

import openpyxl
import pandas as pd
import pytest
from PIL import Image
from typer.testing import CliRunner

from amort import Loan
from amort.cli import app
from amort.io.xlsx import HEADER_ROW
from amort.io.xlsx_loan import SHEETS

ROOT = Path(__file__).resolve().parents[1]
CAR = ["schedule", "--principal", "18500", "--rate", "7.9", "--years", "5"]
runner = CliRunner()


def run(*args: str):
    return runner.invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def test_out_xlsx_writes_the_workbook_with_live_formulas(tmp_path: Path) -> None:
    target = tmp_path / "car.xlsx"
    result = run(*CAR, "--out", str(target), "--formulas")
    assert result.exit_code == 0, result.output
    assert f"wrote 60 rows to {target}" in result.output
    assert "These figures are computed estimates" in result.output
    wb = openpyxl.load_workbook(target)
    assert wb.sheetnames == list(SHEETS.values())
    ws = wb[SHEETS["schedule"]]
    assert [c.value for c in ws[HEADER_ROW]][3] == "interest"
    assert ws["D4"].value == "=ROUND(B4*periodic_rate,2)"
    cached = openpyxl.load_workbook(target, data_only=True)[SHEETS["schedule"]]
    assert cached["D4"].value == 121.79


def test_out_xlsx_without_formulas_holds_numbers(tmp_path: Path) -> None:
    target = tmp_path / "car.xlsx"
    assert run(*CAR, "--out", str(target)).exit_code == 0
    ws = openpyxl.load_workbook(target)[SHEETS["schedule"]]
    assert ws["D4"].value == 121.79


def test_out_parquet_holds_the_frame(tmp_path: Path) -> None:
    target = tmp_path / "car.parquet"
    result = run(*CAR, "--out", str(target), "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["written"] == str(target)
    expected = Loan(principal=18_500, annual_rate="7.9%", periods=60).schedule()
    pd.testing.assert_frame_equal(pd.read_parquet(target), expected, check_exact=True)


def test_out_csv_still_works(tmp_path: Path) -> None:
    target = tmp_path / "car.csv"
    assert run(*CAR, "--out", str(target)).exit_code == 0
    back = pd.read_csv(target, comment="#")
    assert back["payment"].iloc[0] == 374.23 and len(back) == 60


def test_plot_draws_the_picture_and_still_prints_the_table(tmp_path: Path) -> None:
    target = tmp_path / "car.png"
    result = run(*CAR, "--plot", str(target))
    assert result.exit_code == 0, result.output
    assert "drew the balance and payments to" in result.output
    assert "│      1 │" in result.output  # the table is printed as without --plot
    with Image.open(target) as image:
        assert image.format == "PNG" and image.size == (1200, 800)


def test_json_names_both_files(tmp_path: Path) -> None:
    out, png = tmp_path / "car.xlsx", tmp_path / "car.png"
    result = run(*CAR, "--out", str(out), "--plot", str(png), "--json")
    payload = json.loads(result.output)
    assert payload["written"] == str(out) and payload["plot"] == str(png)
    assert payload["caution"].startswith("These figures")


def test_terms_file_metadata_reaches_the_workbook(tmp_path: Path) -> None:
    target = tmp_path / "press.xlsx"
    terms = ROOT / "examples" / "tallowmere_equipment.toml"
    result = run("schedule", str(terms), "--out", str(target), "--formulas")
    assert result.exit_code == 0, result.output
    ws = openpyxl.load_workbook(target)[SHEETS["summary"]]
    pairs = {r[0]: r[1] for r in ws.iter_rows(min_row=3, values_only=True) if r[0]}
    assert pairs["borrower"] == "Quillfeather Print & Bindery"
    assert pairs["reference"] == "TCL-EQ-2027-0118"


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--out", "car.txt"], "'--out' must name a .csv, .xlsx or .parquet file"),
        (["--out", "car.csv", "--formulas"], "'--formulas' needs '--out FILE.xlsx'"),
        (["--formulas"], "'--formulas' needs '--out FILE.xlsx'"),
        (["--plot", "car.svg"], "'--plot' must name a .png file"),
    ],
)
def test_wrong_options_get_one_sentence_and_exit_2(
    extra: list[str], message: str, tmp_path: Path, monkeypatch
) -> None:
    monkeypatch.chdir(tmp_path)
    result = run(*CAR, *extra)
    assert result.exit_code == 2
    assert message in result.output
    assert list(tmp_path.iterdir()) == []


def test_an_existing_file_is_kept_and_nothing_else_written(tmp_path: Path) -> None:
    out, png = tmp_path / "car.xlsx", tmp_path / "car.png"
    png.write_bytes(b"keep me")
    result = run(*CAR, "--out", str(out), "--plot", str(png))
    assert result.exit_code == 4
    assert "already exists; pass --force" in result.output
    assert png.read_bytes() == b"keep me" and not out.exists()
    assert run(*CAR, "--out", str(out), "--plot", str(png), "--force").exit_code == 0
    assert png.read_bytes()[:4] == b"\x89PNG" and out.exists()


def test_written_files_get_the_usual_mode_not_a_private_one(tmp_path: Path) -> None:
    # A client file in a shared folder must be readable as any new file would be
    # (0666 less the umask), not 0600 as the temporary file was made.
    import os

    from amort.io.files import write_text_atomic

    target = write_text_atomic(tmp_path / "plain.txt", "x")
    mask = os.umask(0o022)
    os.umask(mask)
    assert target.stat().st_mode & 0o777 == 0o666 & ~mask
