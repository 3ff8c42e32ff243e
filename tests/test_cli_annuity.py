"""``amort annuity payout`` and ``amort annuity accumulate``: exit codes, key lines, JSON, files."""

from __future__ import annotations

import json
from pathlib import Path

import numpy_financial as npf
import pandas as pd
import pytest
from typer.testing import CliRunner

from amort import CAUTION
from amort.cli import app

runner = CliRunner()


def invoke(*args: str) -> tuple[int, str, str]:
    result = runner.invoke(app, ["annuity", *args])
    return result.exit_code, result.stdout, result.stderr


def as_json(*args: str) -> dict:
    code, stdout, stderr = invoke(*args, "--json")
    assert code == 0, stderr
    return json.loads(stdout)


def test_payout_json_gives_the_issue_figure() -> None:
    # Issue 6: 100,000 at 5 % over 10 years pays 12,950.46 a year (numpy-financial pmt).
    data = as_json("payout", "--fund", "100000", "--rate", "5", "--periods", "10",
                   "--frequency", "annual")  # fmt: skip
    assert data["payment"] == 12950.46 == round(-npf.pmt(0.05, 10, 100_000), 2)
    assert data["solved_for"] == "payment"
    assert data["reconciled"] is True and data["reconciliation"]["passed"] is True
    assert data["caution"] == CAUTION
    assert len(data["schedule"]) == 10
    assert set(data["schedule"][0]) == {
        "period", "opening_value", "payment", "interest_credited", "closing_value"
    }  # fmt: skip


def test_payout_prints_the_schedule_the_figures_and_the_caution() -> None:
    code, stdout, _ = invoke("payout", "--fund", "100000", "--rate", "5", "--periods", "10",
                             "--frequency", "annual")  # fmt: skip
    assert code == 0
    assert "payment (solved)" in stdout and "12,950.46" in stdout
    assert "interest credited" in stdout and "closing value" in stdout
    assert "Reconciliation against the closed form" in stdout
    assert "computed estimates" in stdout


@pytest.mark.parametrize(
    ("args", "solved"),
    [
        (["--fund", "250000", "--rate", "4", "--payment", "1500"], "periods"),
        (["--payment", "1500", "--rate", "4", "--years", "20"], "fund"),
        (["--fund", "250000", "--payment", "1500", "--years", "20"], "annual_rate"),
        (["--fund", "250000", "--rate", "4", "--perpetuity"], "payment"),
    ],
)
def test_payout_solves_whichever_figure_is_left_out(args: list[str], solved: str) -> None:
    data = as_json("payout", *args)
    assert data["solved_for"] == solved
    assert data["reconciled"] is True


def test_payout_horizon_matches_numpy_financial_nper() -> None:
    # numpy-financial nper: 1,500 a month out of 250,000 at 4 % lasts ceil(nper) payments.
    data = as_json("payout", "--fund", "250000", "--rate", "4", "--payment", "1500")
    nper = float(npf.nper(0.04 / 12, 1500, -250_000))
    assert data["number_of_payments"] == -(-nper // 1)
    assert data["final_payment"] < 1500


def test_payout_growth_deferral_advance_and_dates() -> None:
    data = as_json("payout", "--payment", "1200", "--rate", "4", "--years", "25", "--growth",
                   "2", "--defer", "24", "--advance", "--start", "2027-01-01")  # fmt: skip
    assert data["growth"] == 0.02 and data["growth_every"] == 12
    assert data["number_of_payments"] == 276
    assert data["first_payment_date"] == "2029-01-01"  # in advance, at time 24
    assert data["schedule"][24]["payment"] == 1200.0
    assert data["schedule"][36]["payment"] == 1224.0  # +2 % after a year of payments


def test_perpetuity_rows() -> None:
    data = as_json("payout", "--fund", "250000", "--rate", "4", "--perpetuity", "--rows", "3")
    assert len(data["schedule"]) == 3
    assert data["number_of_payments"] is None


def test_accumulate_json_and_sinking_fund_view() -> None:
    data = as_json("accumulate", "--target", "60000", "--rate", "4", "--years", "5",
                   "--loan-rate", "7")  # fmt: skip
    # numpy-financial pmt: the level deposit that reaches 60,000 in 60 months at 4 %.
    assert data["deposit"] == round(-npf.pmt(0.04 / 12, 60, 0, 60_000), 2)
    assert data["loan_payment"] == 350.0  # 60,000 x 7 % / 12, interest only
    assert data["combined_outlay"] == round(350.0 + data["deposit"], 2)
    assert data["value_reached"] == 60_000.0
    assert data["schedule"][-1]["closing_value"] == 60_000.0


@pytest.mark.parametrize(
    ("args", "solved"),
    [
        (["--target", "60000", "--rate", "4", "--periods", "60"], "deposit"),
        (["--deposit", "500", "--target", "60000", "--rate", "4"], "periods"),
        (["--deposit", "500", "--rate", "4", "--periods", "120", "--advance"], "target"),
        (["--deposit", "500", "--target", "80000", "--periods", "120"], "annual_rate"),
    ],
)
def test_accumulate_solves_whichever_figure_is_left_out(args: list[str], solved: str) -> None:
    data = as_json("accumulate", *args)
    assert data["solved_for"] == solved
    assert data["reconciled"] is True


def test_accumulate_prints_the_figures() -> None:
    code, stdout, _ = invoke("accumulate", "--deposit", "500", "--target", "6000", "--rate",
                             "4", "--advance", "--start", "2027-01-15")  # fmt: skip
    assert code == 0
    assert "deposits (solved)" in stdout
    assert "2027-12-15" in stdout  # the twelfth deposit, at the start of its period
    assert "computed estimates" in stdout


def test_out_writes_csv_with_the_caution_and_keeps_an_existing_file(tmp_path: Path) -> None:
    target = tmp_path / "payout.csv"
    args = ["payout", "--fund", "100000", "--rate", "5", "--periods", "10", "--frequency",
            "annual", "--out", str(target)]  # fmt: skip
    code, stdout, _ = invoke(*args)
    assert code == 0 and "wrote 10 rows" in stdout
    text = target.read_text(encoding="utf-8")
    assert text.startswith(f"# {CAUTION}")
    frame = pd.read_csv(target, comment="#")
    assert list(frame.columns) == [
        "period", "due_date", "opening_value", "payment", "interest_credited", "closing_value"
    ]  # fmt: skip
    assert frame["payment"].iloc[0] == 12950.46
    assert "12950.46" in text  # money written with two decimals
    code, _, stderr = invoke(*args)
    assert code == 4 and "already exists" in stderr
    code, _, _ = invoke(*args, "--force")
    assert code == 0


@pytest.mark.parametrize(
    ("args", "code", "words"),
    [
        (["payout", "--fund", "100000", "--rate", "5"], 2, "give three of --fund"),
        (["payout", "--fund", "1", "--payment", "1", "--rate", "5", "--periods", "3"], 2,
         "all are given"),
        (["payout", "--fund", "-5", "--rate", "5", "--periods", "10"], 2, "'fund' must be > 0"),
        (["payout", "--fund", "5000", "--rate", "5", "--periods", "0"], 2,
         "must be a whole number of payments from 1"),
        (["payout", "--fund", "5000", "--rate", "5", "--periods", "10", "--defer", "12"], 2,
         "'defer' 12 must be less than 'periods' 10"),
        (["payout", "--fund", "5000", "--rate", "3", "--perpetuity", "--growth", "3.5"], 3,
         "no finite value"),
        (["payout", "--fund", "5000", "--rate", "6", "--payment", "20"], 3,
         "would never be exhausted"),
        (["payout", "--fund", "5000", "--rate", "5", "--periods", "10", "--perpetuity"], 2,
         "not both"),
        (["accumulate", "--deposit", "-1", "--rate", "4", "--periods", "10"], 2,
         "'deposit' must be > 0"),
        (["accumulate", "--target", "1000", "--balance", "5000", "--rate", "4", "--periods",
          "10"], 2, "deposits can only add to a balance"),
        (["accumulate", "--deposit", "100", "--target", "500", "--periods", "10"], 3,
         "only a negative rate would fit"),
        (["accumulate", "--deposit", "100", "--target", "5000", "--rate", "4", "--loan-rate",
          "7"], 2, "leave out --deposit"),
        (["payout", "--fund", "100000", "--rate", "5", "--periods", "10", "--out", "x.txt"], 2,
         "must name a .csv file"),
    ],
)  # fmt: skip
def test_bad_input_is_one_sentence_and_an_exit_code(args: list[str], code: int, words: str):
    got, stdout, stderr = invoke(*args)
    assert got == code
    assert stderr.startswith("Error: ") and words in stderr
    assert "Traceback" not in stdout + stderr
    assert len(stderr.strip().splitlines()) <= 2  # one sentence (wrapped at most once)


def test_help_shows_examples() -> None:
    code, stdout, _ = invoke("payout", "--help")
    assert code == 0 and "amort annuity payout --fund 100000" in stdout
    code, stdout, _ = invoke("accumulate", "--help")
    assert code == 0 and "--loan-rate" in stdout
