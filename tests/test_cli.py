"""The command line: exit codes, key lines, JSON figures and files written (CliRunner)."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from amort import CAUTION
from amort.cli import app

runner = CliRunner()


def invoke(*args: str) -> tuple[int, str, str]:
    result = runner.invoke(app, list(args))
    return result.exit_code, result.stdout, result.stderr


def as_json(*args: str) -> dict:
    code, stdout, stderr = invoke(*args, "--json")
    assert code == 0, stderr
    return json.loads(stdout)


def test_payment_prints_the_design_figure() -> None:
    # DESIGN.md: 250,000 at 6.5 % over 360 months pays 1,580.17 (also numpy-financial pmt).
    code, stdout, _ = invoke(
        "payment", "--principal", "250000", "--rate", "6.5", "--periods", "360"
    )
    assert code == 0
    assert "1,580.17" in stdout
    assert "computed estimates" in stdout


def test_payment_json_has_the_figures_and_the_caution() -> None:
    data = as_json("payment", "--principal", "250000", "--rate", "6.5%", "--periods", "360")
    assert data["payment"] == 1580.17
    assert data["number_of_payments"] == 360
    assert data["reconciled"] is True
    assert data["caution"] == CAUTION


def test_loan_estimate_sample_payment() -> None:
    # CFPB form H-24(B) [text]: 162,000 at 3.875 % for 30 years pays 761.78 a month.
    data = as_json("payment", "--principal", "162000", "--rate", "3.875", "--years", "30")
    assert data["payment"] == 761.78


def test_years_and_frequency() -> None:
    data = as_json(
        "payment", "--principal", "10000", "--rate", "8", "--years", "2", "--frequency", "quarterly"
    )
    assert data["number_of_payments"] == 8
    assert data["frequency"] == "quarterly"


def test_term_gives_whole_payments_and_the_smaller_last_one() -> None:
    data = as_json("term", "--principal", "250000", "--rate", "6.5", "--payment", "2000")
    assert data["number_of_payments"] == 210
    assert 0 < data["final_payment"] < 2000
    assert 209 < data["periods_exact"] < 210


def test_rate_recovers_the_quoted_rate() -> None:
    data = as_json("rate", "--principal", "250000", "--payment", "1580.17", "--periods", "360")
    assert abs(data["annual_rate_percent"] - 6.5) < 1e-4
    assert data["payment_at_rate"] == 1580.17


def test_principal_is_rounded_down_and_checked() -> None:
    data = as_json("principal", "--payment", "1580.17", "--rate", "6.5", "--periods", "360")
    assert data["principal"] == 249999.99
    assert data["payment"] <= data["payment_given"]


def test_schedule_on_screen_shows_rows_and_checks() -> None:
    code, stdout, _ = invoke("schedule", "--principal", "1000", "--rate", "6", "--periods", "3")
    assert code == 0
    assert "336.68" in stdout  # the final payment takes the rounding adjustment
    assert "Reconciliation" in stdout
    assert "FAIL" not in stdout


def test_schedule_json_rows_balance_to_zero() -> None:
    data = as_json("schedule", "--principal", "5000", "--rate", "9", "--periods", "24")
    rows = data["schedule"]
    assert len(rows) == 24
    assert rows[-1]["closing_balance"] == 0.0
    assert data["reconciliation"]["passed"] is True


def test_schedule_with_fixed_payment_lets_the_term_follow() -> None:
    data = as_json("schedule", "--principal", "5000", "--rate", "9", "--payment", "500")
    assert data["number_of_payments"] == 11
    assert data["schedule"][-1]["payment"] < 500


def test_schedule_csv_is_written_and_kept_without_force(tmp_path: Path) -> None:
    target = tmp_path / "plan.csv"
    args = (
        "schedule",
        "--principal",
        "5000",
        "--rate",
        "9",
        "--periods",
        "24",
        "--out",
        str(target),
    )
    code, stdout, _ = invoke(*args)
    assert code == 0 and "wrote 24 rows" in stdout
    frame = pd.read_csv(target, comment="#")
    assert list(frame.columns)[:7] == [
        "period",
        "due_date",
        "opening_balance",
        "payment",
        "interest",
        "principal",
        "closing_balance",
    ]
    assert frame["closing_balance"].iloc[-1] == 0
    assert target.read_text(encoding="utf-8").startswith("# " + CAUTION[:20])
    before = target.read_bytes()
    code, _, stderr = invoke(*args)
    assert code == 4
    assert "already exists" in stderr and "--force" in stderr
    assert target.read_bytes() == before
    code, _, _ = invoke(*args, "--force")
    assert code == 0


def test_schedule_out_needs_an_existing_folder(tmp_path: Path) -> None:
    target = tmp_path / "missing" / "plan.csv"
    code, _, stderr = invoke(
        "schedule", "--principal", "5000", "--rate", "9", "--periods", "24", "--out", str(target)
    )
    assert code == 4
    assert "does not exist" in stderr
    assert not target.exists()


BAD_INPUT = [
    (["payment", "--principal", "-5", "--rate", "6.5", "--periods", "360"], "principal", 2),
    (["payment", "--principal", "0", "--rate", "6.5", "--periods", "360"], "principal", 2),
    (["payment", "--principal", "abc", "--rate", "6.5", "--periods", "360"], "principal", 2),
    (["payment", "--principal", "1000", "--rate", "-1", "--periods", "12"], "rate", 2),
    (["payment", "--principal", "1000", "--rate", "nan", "--periods", "12"], "rate", 2),
    (["payment", "--principal", "inf", "--rate", "5", "--periods", "12"], "principal", 2),
    (["payment", "--principal", "1000", "--rate", "5", "--periods", "0"], "periods", 2),
    (["payment", "--principal", "1000", "--rate", "5", "--periods", "-3"], "periods", 2),
    (["payment", "--principal", "1000", "--rate", "5", "--periods", "12.5"], "periods", 2),
    (["payment", "--principal", "1000", "--rate", "5", "--periods", "200000"], "100,000", 2),
    (
        ["payment", "--principal", "1000", "--rate", "5", "--periods", "12", "--balloon", "2000"],
        "balloon",
        2,
    ),
    (
        ["term", "--principal", "100000", "--rate", "12", "--payment", "500"],
        "interest of 1,000.00",
        3,
    ),
    (
        [
            "payment",
            "--principal",
            "1000",
            "--rate",
            "5",
            "--periods",
            "12",
            "--frequency",
            "daily",
        ],
        "frequency",
        2,
    ),
    (
        ["payment", "--principal", "1000", "--rate", "5", "--periods", "12", "--rounding", "odd"],
        "rounding",
        2,
    ),
    (["payment", "--principal", "1000", "--rate", "5"], "--periods", 2),
    (["payment", "--principal", "1000", "--rate", "5", "--years", "1.3"], "years", 2),
    (
        ["rate", "--principal", "1000", "--payment", "10", "--periods", "12"],
        "less than the principal",
        3,
    ),
    (
        ["schedule", "--principal", "1000", "--rate", "5", "--periods", "12", "--out", "x.txt"],
        ".csv, .xlsx or .parquet",
        2,
    ),
]


@pytest.mark.parametrize(("args", "needle", "code"), BAD_INPUT)
def test_bad_input_gets_one_sentence_and_a_nonzero_exit(
    args: list[str], needle: str, code: int
) -> None:
    exit_code, stdout, stderr = invoke(*args)
    assert exit_code == code
    assert stderr.startswith("Error: ")
    assert needle in stderr
    assert "Traceback" not in stderr + stdout
    assert len(stderr.strip().splitlines()) == 1


@pytest.mark.parametrize("verb", ["payment", "term", "rate", "principal", "schedule"])
def test_every_verb_has_help_with_an_example(verb: str) -> None:
    code, stdout, _ = invoke(verb, "--help")
    assert code == 0
    assert "Example" in stdout
    assert "--json" in stdout


def test_dated_schedule_json_has_dates_days_and_rates() -> None:
    # Actual/365 Fixed: period 1 runs 45 days, 12,000 x 8.25 % x 45/365 = 122.05 (hand-derived).
    data = as_json(
        "schedule",
        "--principal", "12000", "--rate", "8.25", "--periods", "6",
        "--start", "2027-01-15", "--first-payment", "2027-03-01", "--day-count", "actual/365",
    )  # fmt: skip
    rows = data["schedule"]
    assert rows[0]["due_date"] == "2027-03-01"
    assert rows[0]["days"] == 45
    assert rows[0]["interest"] == 122.05
    assert data["maturity_date"] == "2027-08-01"
    assert data["reconciliation"]["passed"] is True


def test_dated_30_360_monthly_equals_the_undated_payment() -> None:
    undated = as_json("payment", "--principal", "250000", "--rate", "6.5", "--periods", "360")
    dated = as_json(
        "payment", "--principal", "250000", "--rate", "6.5", "--periods", "360",
        "--start", "2027-01-10", "--day-count", "30/360",
    )  # fmt: skip
    assert dated["payment"] == undated["payment"] == 1580.17
    assert dated["final_payment"] == undated["final_payment"]


def test_odd_days_separate_is_reported() -> None:
    data = as_json(
        "schedule", "--principal", "12000", "--rate", "8.25", "--periods", "6",
        "--start", "2027-01-15", "--first-payment", "2027-03-01", "--day-count", "actual/365",
        "--odd-days", "separate",
    )  # fmt: skip
    # 17 days from 15 January to 1 February: 12,000 x 8.25 % x 17/365 = 46.11 (hand-derived)
    assert data["odd_days_interest"] == 46.11
    assert data["schedule"][0]["odd_days_interest"] == 46.11


def test_rate_conversion_semiannual_to_effective() -> None:
    # (1 + 0.06/2)^2 - 1 = 0.0609 exactly (OpenDocument EFFECT's equation [text]).
    data = as_json("rate", "--convert", "--rate", "6", "--compounding", "semiannual")
    assert data["rate"] == 0.0609
    assert data["exact"] is True


DATED_BAD_INPUT = [
    (["--start", "2027-02-30"], "not a valid date"),
    (["--start", "2027-03-01", "--first-payment", "2027-03-01"], "must be after"),
    (["--start", "2027-03-01", "--day-count", "act/999"], "day_count"),
    (["--day-count", "actual/365"], "needs dates"),
    (["--start", "2027-03-01", "--business-days", "following", "--holidays", "XX"], "XX"),
    (["--start", "2027-03-01", "--compounding", "0"], "compounding"),
    (
        ["--frequency", "semimonthly", "--start", "2027-03-01", "--semimonthly-days", "15,15"],
        "semimonthly",
    ),
]


@pytest.mark.parametrize(("extra", "needle"), DATED_BAD_INPUT)
def test_dated_bad_input_gets_one_sentence(extra: list[str], needle: str) -> None:
    code, _, stderr = invoke(
        "schedule", "--principal", "1000", "--rate", "5", "--periods", "12", *extra
    )
    assert code == 2
    assert stderr.startswith("Error: ")
    assert needle in stderr
    assert "Traceback" not in stderr


def test_rate_and_principal_verbs_take_dates() -> None:
    dated = ["--start", "2027-01-15", "--first-payment", "2027-03-01", "--day-count", "actual/365"]
    # The schedule above pays 2,055.32 at 8.25 %: the rate verb must find 8.25 % back.
    rate = as_json("rate", "--principal", "12000", "--payment", "2055.32", "--periods", "6", *dated)
    assert abs(rate["annual_rate_percent"] - 8.25) < 1e-3
    assert rate["payment_at_rate"] == 2055.32
    principal = as_json(
        "principal", "--payment", "2055.32", "--rate", "8.25", "--periods", "6", *dated
    )
    assert 11_999.9 < principal["principal"] < 12_000.1
    assert principal["payment"] <= 2055.32


def test_graduated_and_structured_options() -> None:
    data = as_json(
        "schedule", "--principal", "60000", "--rate", "6", "--years", "5", "--growth", "4"
    )
    payments = [row["payment"] for row in data["schedule"]]
    # +4 % a year: month 13 pays the first payment x 1.04, rounded half-up (hand-derived rule).
    assert payments[12] == round(payments[0] * 1.04 + 1e-9, 2)
    assert data["reconciliation"]["passed"] is True
    bullet = as_json(
        "schedule", "--principal", "50000", "--rate", "7.2", "--periods", "12", "--structure",
        "bullet",
    )  # fmt: skip
    assert bullet["schedule"][0]["payment"] == 300.0
    assert bullet["schedule"][-1]["payment"] == 50_300.0


PAYOFF_LOAN = [
    "payoff", "--principal", "10000", "--rate", "7.3", "--periods", "12",
    "--start", "2027-01-15", "--day-count", "actual/365",
]  # fmt: skip


def test_payoff_quote_with_per_diem_and_day_table() -> None:
    data = as_json(*PAYOFF_LOAN, "--on", "2027-04-20", "--days", "3")
    # Hand-derived: 7,565.92 owed after the 15 April payment; 5 days at 7.3 % / 365
    # = 7,565.92 x 0.073 x 5 / 365 = 7.57; one day = 1.51.
    assert data["balance"] == 7565.92
    assert data["accrued_interest"] == 7.57
    assert data["payoff"] == 7573.49
    assert data["per_diem"] == 1.51
    assert len(data["table"]) == 4
    assert data["caution"] == CAUTION


def test_payoff_rebates_side_by_side() -> None:
    data = as_json(*PAYOFF_LOAN, "--on", "2027-04-20", "--precomputed")
    rebates = data["rebates"]
    # Rule of 78s [common practice formula]: F k (k+1) / (n (n+1)) = 398.16 x 90 / 156.
    assert rebates["rule_of_78s"] == round(398.16 * 90 / 156, 2)
    assert rebates["actuarial"] >= rebates["rule_of_78s"]
    assert "15 U.S.C. 1615" in rebates["caution"]


@pytest.mark.parametrize(
    ("extra", "needle"),
    [([], "--on"), (["--on", "2026-12-01"], "before"), (["--on", "2029-01-01"], "paid off")],
)
def test_payoff_bad_input(extra: list[str], needle: str) -> None:
    code, _, stderr = invoke(*PAYOFF_LOAN, *extra)
    assert code == 2
    assert needle in stderr


def test_formula_verb_states_root_fixed_point_and_check() -> None:
    code, stdout, _ = invoke(
        "formula", "--principal", "250000", "--rate", "6.5", "--periods", "360", "--latex"
    )
    assert code == 0
    assert "2413/2400" in stdout  # a = 1 + i with i = 6.5 % / 12 = 13/2400 exactly
    assert "B* = P/i" in stdout and "pays off" in stdout
    assert "\\begin{aligned}" in stdout
    assert "checked against the cent schedule" in stdout and "FAIL" not in stdout
    data = as_json("formula", "--principal", "250000", "--rate", "6.5", "--periods", "360")
    assert data["largest_gap_to_schedule"] <= data["gap_bound"]
    assert data["outcome"] == "pays off"


def test_custom_payments_and_seasonal_months() -> None:
    listed = ",".join(["100"] * 6 + ["900"] * 6)
    data = as_json("schedule", "--principal", "5000", "--rate", "9", "--payments", listed)
    assert data["number_of_payments"] == 12
    assert [row["payment"] for row in data["schedule"][:6]] == [100.0] * 6
    seasonal = as_json(
        "schedule", "--principal", "20000", "--rate", "8", "--periods", "24",
        "--start", "2027-01-10", "--payment-months", "8,9,10,11", "--day-count", "30/360",
    )  # fmt: skip
    months = {row["due_date"][5:7] for row in seasonal["schedule"] if row["payment"] > 0}
    assert months == {"08", "09", "10", "11"}
    assert seasonal["reconciliation"]["passed"] is True
    code, _, stderr = invoke(
        "schedule", "--principal", "1000", "--rate", "5", "--periods", "12",
        "--payment-months", "6",
    )  # fmt: skip
    assert code == 2 and "needs monthly payments and dates" in stderr


def test_schedule_reads_a_terms_file() -> None:
    data = as_json("schedule", "examples/tallowmere_equipment.toml")
    assert data["reconciliation"]["passed"] is True
    code, _, stderr = invoke("schedule", "examples/tallowmere_equipment.toml", "--rate", "5")
    assert code == 2 and "not both" in stderr
    code, _, stderr = invoke("schedule", "no-such-terms.toml")
    assert code == 2 and "no such terms file" in stderr


def test_schedule_events_from_options() -> None:
    data = as_json(
        "schedule", "--principal", "20000", "--rate", "6", "--periods", "24",
        "--extra", "6=5000", "--holiday", "3x2", "--reset", "13=9", "--keep-payment",
    )  # fmt: skip
    rows = data["schedule"]
    assert rows[5]["extra_principal"] == 5000.0
    assert rows[2]["payment"] == 0.0 and rows[2]["capitalised"] == rows[2]["interest"]
    assert rows[12]["rate"] == 0.0075  # 9 % / 12 from period 13
    assert data["number_of_payments"] < 24  # the payment stays, so the extra shortens the term
    assert data["reconciliation"]["passed"] is True
    code, _, stderr = invoke(
        "schedule", "--principal", "1000", "--rate", "5", "--periods", "12", "--extra", "six"
    )
    assert code == 2 and "--extra" in stderr


def test_negative_amortisation_cap_option() -> None:
    data = as_json(
        "payment", "--principal", "100000", "--rate", "12", "--years", "30", "--growth", "7.5",
        "--negative-amortisation-cap", "105%",
    )  # fmt: skip
    assert data["negative_amortisation"] is True
    assert data["cap_reached_period"] == 11
    assert data["reconciled"] is True
    code, _, stderr = invoke(
        "payment", "--principal", "100000", "--rate", "12", "--years", "30", "--growth", "7.5"
    )
    assert code == 2 and "negative_amortisation_cap" in stderr
