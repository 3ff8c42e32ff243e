"""``amort apr`` on the command line: JSON keys, tables, files, exit codes (CliRunner).

The figures are checked against Regulation Z Appendix J (c)(1)(i) [memory/secondary]
(9.69 %) and the Directive 98/7/EC proposal's Annex III example [text] (13.0 %).
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import pytest
from typer.testing import CliRunner

from amort import CAUTION
from amort.cli import app

runner = CliRunner()
ROOT = Path(__file__).resolve().parents[1]
LOAN = ("apr", "--principal", "12000", "--rate", "8.25", "--periods", "24")


def invoke(*args: str) -> tuple[int, str, str]:
    result = runner.invoke(app, list(args))
    return result.exit_code, result.stdout, result.stderr


def as_json(*args: str) -> dict:
    code, stdout, stderr = invoke(*args, "--json")
    assert code == 0, stderr
    return json.loads(stdout)


def write(path: Path, text: str) -> Path:
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


APPENDIX_J_I = "date,amount,kind\n1978-01-10,5000,advance\n" + "".join(
    f"{1978 + (k + 1) // 12}-{(k + 1) % 12 + 1:02d}-10,230,payment\n" for k in range(24)
)


def test_json_has_the_rate_unrounded_figures_tolerance_and_caution() -> None:
    data = as_json(*LOAN, "--fee", "origination=240")
    assert data["apr"] == 10.26
    assert abs(data["apr_unrounded"] - 10.2635) < 1e-4
    assert data["amount_financed"] == 11760.0 and data["prepaid_finance_charge"] == 240.0
    assert data["total_of_payments"] == pytest.approx(
        data["amount_financed"] + data["finance_charge"], abs=1e-9
    )
    assert (data["transaction"], data["tolerance_points"]) == ("regular", 0.125)
    assert data["standard"] == "us-regz" and data["unit_period"] == "month"
    assert data["fees"][0] == {
        "name": "origination",
        "amount": 240.0,
        "finance_charge": True,
        "financed": False,
        "at_closing": True,
    }
    assert data["caution"] == CAUTION


def test_the_table_shows_the_apr_and_the_caution() -> None:
    code, stdout, _ = invoke(*LOAN, "--fee", "origination=240")
    assert code == 0
    assert "annual percentage rate (APR)" in stdout and "10.26 %" in stdout
    assert "finance charge" in stdout and "12 CFR 1026.22(a)(2)" in stdout
    assert "computed estimates" in stdout


def test_fee_marks() -> None:
    data = as_json(
        *LOAN, "--fee", "origination=240:financed", "--fee", "appraisal=400:not-finance-charge"
    )
    assert data["note_amount"] == 12240.0 and data["amount_financed"] == 12000.0
    marks = {fee["name"]: (fee["finance_charge"], fee["financed"]) for fee in data["fees"]}
    assert marks == {"origination": (True, True), "appraisal": (False, False)}


def test_flows_file_reproduces_appendix_j(tmp_path: Path) -> None:
    # Appendix J (c)(1)(i) [memory/secondary]: 9.69 %.
    path = write(tmp_path / "j.csv", APPENDIX_J_I)
    data = as_json("apr", "--flows", str(path))
    assert data["apr"] == 9.69 and data["total_of_payments"] == 5520.0


def test_eu_standard_with_a_year_basis(tmp_path: Path) -> None:
    # Directive 98/7/EC proposal, Annex III [text]: 12.96 %, shown 13.0 %.
    path = write(tmp_path / "eu.csv", "date,amount,kind\n2025-01-01,1000,advance\n")
    path.write_text(path.read_text() + "2026-07-01,1200,payment\n")
    data = as_json("apr", "--flows", str(path), "--standard", "eu-ccd", "--eu-year", "365-days")
    assert data["apr"] == 13.0 and data["year_basis"] == "365-days"
    assert data["tolerance_points"] is None
    code, stdout, _ = invoke("apr", "--flows", str(path), "--standard", "eu-ccd")
    assert code == 0 and "APRC" in stdout and "total cost of credit" in stdout


def test_us_rule_method_and_decimals() -> None:
    data = as_json(*LOAN, "--method", "us-rule", "--decimals", "3")
    assert data["method"] == "us-rule" and data["apr"] == 8.25 and data["decimals"] == 3


def test_terms_file_with_fees(tmp_path: Path) -> None:
    path = write(
        tmp_path / "loan.toml",
        """\
        format = 1
        [loan]
        principal = 12000
        rate = 8.25
        periods = 24

        [[fees]]
        name = "origination"
        amount = 240
        """,
    )
    assert as_json("apr", str(path))["apr"] == as_json(*LOAN, "--fee", "origination=240")["apr"]
    both = as_json("apr", str(path), "--fee", "courier=20")
    assert [fee["name"] for fee in both["fees"]] == ["origination", "courier"]


def test_the_example_terms_and_flows_files_run() -> None:
    assert as_json("apr", str(ROOT / "examples" / "tallowmere_fees.toml"))["apr"] > 7.9
    flows = as_json("apr", "--flows", str(ROOT / "examples" / "tallowmere_flows.csv"))
    assert flows["transaction"] == "irregular" and flows["tolerance_points"] == 0.25


def test_out_writes_the_flows_behind_the_rate(tmp_path: Path) -> None:
    target = tmp_path / "apr.csv"
    code, stdout, _ = invoke(*LOAN, "--out", str(target))
    assert code == 0 and "wrote 25 flows" in stdout
    lines = target.read_text(encoding="utf-8").splitlines()
    assert lines[0] == f"# {CAUTION}" and lines[1].startswith("date,period,kind,amount")
    code, _, stderr = invoke(*LOAN, "--out", str(target))
    assert code == 4 and "already exists" in stderr
    assert invoke(*LOAN, "--out", str(target), "--force")[0] == 0


@pytest.mark.parametrize(
    ("args", "code", "needle"),
    [
        ((*LOAN, "--standard", "uk"), 2, "'--standard' must be one of 'us-regz', 'eu-ccd'"),
        ((*LOAN, "--fee", "origination"), 2, "'--fee' must be NAME=AMOUNT"),
        ((*LOAN, "--fee", "a=10:waived"), 2, "unknown mark 'waived'"),
        ((*LOAN, "--fee", "a=10:financed:closing"), 2, "both financed and paid at closing"),
        ((*LOAN, "--fee", "a=-10"), 2, "'amount' must be > 0"),
        ((*LOAN, "--fee", "a=10", "--fee", "A=5"), 2, "given twice"),
        ((*LOAN, "--standard", "eu-ccd", "--method", "us-rule"), 2, "'--method' applies"),
        ((*LOAN, "--eu-year", "weeks"), 2, "'--eu-year' applies"),
        ((*LOAN, "--decimals", "12"), 2, "'decimals' must be a whole number"),
        (
            (*LOAN, "--out", "x.pdf"),
            2,
            "'--out' must name a .csv file (the flows) or an .xlsx workbook",
        ),
        (("apr", "--rate", "5", "--periods", "12"), 2, "'--principal' is required"),
        (("apr", "--flows", "missing.csv"), 2, "no such flows file"),
        (("apr", "--flows", "x.csv", "--principal", "1000"), 2, "not both"),
    ],
)
def test_bad_input_gets_one_sentence_and_an_exit_code(args: tuple, code: int, needle: str) -> None:
    exit_code, stdout, stderr = invoke(*args)
    assert exit_code == code
    assert stderr.startswith("Error: ") and needle in stderr
    assert "Traceback" not in stderr + stdout
    assert len(stderr.strip().splitlines()) == 1


def test_flows_repaying_less_than_the_advance_are_no_solution(tmp_path: Path) -> None:
    path = write(tmp_path / "short.csv", "date,amount,kind\n2027-01-01,1000,advance\n")
    path.write_text(path.read_text() + "2028-01-01,900,payment\n")
    code, _, stderr = invoke("apr", "--flows", str(path))
    assert code == 3
    assert "less than the 1,000.00 advanced" in stderr and "-10.0000 %" in stderr


def test_flows_row_error_names_the_row(tmp_path: Path) -> None:
    path = write(tmp_path / "bad.csv", "date,amount,kind\n2027-01-01,1000,advance\n")
    path.write_text(path.read_text() + "2027-02-01,12.3x,payment\n")
    code, _, stderr = invoke("apr", "--flows", str(path))
    assert code == 2 and "row 3: 'amount' must be a number (got '12.3x')" in stderr
