"""The disclosure workbook (`amort apr --out FILE.xlsx`): every number read back equals its figure.

Sources, with the sourcing marks of /work/shared/REFERENCES.md:

- US Regulation Z, 12 CFR 1026, Appendix J (c)(1) worked examples [memory/secondary;
  "reproduce exactly"]: (i) 5,000.00 by 24 monthly 230.00 from 1978-01-10: 9.69 %;
  (ii) 6,000.00 by 36 monthly 200.00 from 1978-02-10, first payment 1978-04-01
  (t_j = j, f = 19/30): 11.82 %. 12 CFR 1026.22(a)(2) [text]: 1/8 point for a
  regular transaction.
- EU: the Directive 98/7/EC proposal's Annex III example: +1,000 on day 0, -1,200
  after 546 days (year 365) -> 13.0 % [text]; with 50 retained for fees -> 16.9 %
  [memory].
- numpy-financial's ``irr``: the unit-period rate of a regular undated loan (whole
  periods, no fractions) is the internal rate of return of its cash flows.
- 12 CFR 1026.18 [text]: total of payments = amount financed + finance charge.
"""

from __future__ import annotations

import zipfile
from datetime import date
from decimal import Decimal
from pathlib import Path

import numpy_financial as npf
import openpyxl
import pytest
from typer.testing import CliRunner

from amort import CAUTION, ExportError, Loan
from amort.calendar import add_months
from amort.cli import app
from amort.disclosure import Fee, disclose, disclose_flows
from amort.flows import Flow, Flows
from amort.io.xlsx import FIRST_DATA_ROW, HEADER_ROW
from amort.io.xlsx_disclosure import SHEETS, write_disclosure_workbook

ROOT = Path(__file__).resolve().parents[1]
runner = CliRunner()


def monthly_flows(start: str, amount: str, first: date, count: int, payment: str) -> Flows:
    dates = [add_months(first, k) for k in range(count)]
    return Flows.of([(start, amount, "advance"), *((d, payment, "payment") for d in dates)])


def cents(value: object) -> int:
    assert isinstance(value, (int, float)), value
    return round(float(value) * 100)


def pairs(ws) -> dict[str, object]:
    return {r[0]: r[1] for r in ws.iter_rows(min_row=3, values_only=True) if r[0]}


def table(ws) -> tuple[list[str], list[tuple]]:
    header = [c.value for c in ws[HEADER_ROW]]
    while header and header[-1] is None:  # the caution row is merged over at least 6 columns
        header.pop()
    rows = []
    for row in ws.iter_rows(min_row=FIRST_DATA_ROW, max_col=len(header), values_only=True):
        if row[0] in ("total", "total of payments") or row[0] is None:
            break
        rows.append(row)
    return header, rows


def workbook(tmp_path: Path, figures, **given) -> openpyxl.Workbook:
    return openpyxl.load_workbook(write_disclosure_workbook(figures, tmp_path / "d.xlsx", **given))


@pytest.mark.parametrize(
    ("start", "amount", "first", "count", "payment", "fraction", "apr"),
    [
        ("1978-01-10", "5000", date(1978, 2, 10), 24, "230", "0/1", 0.0969),  # (c)(1)(i)
        ("1978-02-10", "6000", date(1978, 4, 1), 36, "200", "19/30", 0.1182),  # (c)(1)(ii)
    ],
    ids=["J(c)(1)(i)", "J(c)(1)(ii)"],
)
def test_appendix_j_examples_reach_the_workbook(
    start, amount, first, count, payment, fraction, apr, tmp_path: Path
) -> None:
    # Regulation Z Appendix J (c)(1) worked examples [memory/secondary].
    listed = monthly_flows(start, amount, first, count, payment)
    figures = disclose_flows(listed)
    wb = workbook(tmp_path, figures, flows=listed)
    summary = pairs(wb[SHEETS["summary"]])
    assert summary["annual percentage rate (APR)"] == pytest.approx(apr, abs=1e-12)
    assert (
        wb[SHEETS["summary"]]["B" + str(_row_of(wb, "annual percentage rate (APR)"))].number_format
        == "0.00%"
    )
    method = pairs(wb[SHEETS["method"]])
    assert method["unit-period"] == "month" and method["unit-periods a year"] == 12
    assert method["transaction"] == "regular"
    assert method["tolerance (percentage points either side)"] == 0.125  # 1026.22(a)(2) [text]
    assert method["unit-period rate"] * 12 == pytest.approx(figures.apr.apr_unrounded / 100)
    header, rows = table(wb[SHEETS["flows"]])
    assert header[:6] == ["date", "kind", "amount", "whole units", "fraction", "fraction value"]
    assert len(rows) == count + 1
    assert [r[3] for r in rows] == [0, *range(1, count + 1)]  # t_j = j
    assert {r[4] for r in rows[1:]} == {fraction}
    # The equation at the unrounded rate: the present values sum to zero.
    total = next(r for r in wb[SHEETS["flows"]].iter_rows(values_only=True) if r[0] == "total")
    assert abs(total[header.index("present value")]) < 1e-6
    assert summary["the rate's equation at the unrounded rate (sum of present values)"] == (
        pytest.approx(0, abs=1e-6)
    )


def _row_of(wb, label: str) -> int:
    ws = wb[SHEETS["summary"]]
    return next(c.row for c in ws["A"] if c.value == label)


@pytest.mark.parametrize(("fees", "aprc"), [((), 0.130), ((Fee("arrangement", 50),), 0.169)])
def test_the_eu_annex_example_reaches_the_workbook(fees, aprc, tmp_path: Path) -> None:
    # Directive 98/7/EC proposal, Annex III: 13.0 % [text]; with 50 for fees 16.9 % [memory].
    listed = Flows.of([("2025-01-01", 1000, "advance"), ("2026-07-01", 1200, "payment")])
    figures = disclose_flows(listed, fees=fees, standard="eu-ccd")
    wb = workbook(tmp_path, figures, flows=listed)
    summary = pairs(wb[SHEETS["summary"]])
    assert summary["annual percentage rate of charge (APRC)"] == pytest.approx(aprc, abs=1e-12)
    assert cents(summary["credit advanced, net of charges"]) == 100_000 - 100 * sum(
        int(f.amount) for f in fees
    )
    assert cents(summary["total of repayments"]) == 120_000
    header, rows = table(wb[SHEETS["flows"]])
    assert header[:4] == ["date", "kind", "amount", "years"]
    assert rows[1][3] == pytest.approx(546 / 365, rel=1e-15)  # 2025-01-01 -> 2026-07-01
    assert pairs(wb[SHEETS["method"]])["standard"] == "Directive 2008/48/EC Annex I"


LOAN = Loan(principal=12_000, annual_rate="8.25%", periods=24, start="2027-01-15",
            first_payment="2027-03-01")  # fmt: skip
FEES = [Fee("origination", 240, financed=True), Fee("appraisal", 400, finance_charge=False),
        Fee("documentation", 95)]  # fmt: skip


def test_every_figure_of_a_loan_equals_the_disclosure(tmp_path: Path) -> None:
    figures = disclose(LOAN, fees=FEES)
    wb = workbook(tmp_path, figures, loan=LOAN, metadata={"borrower": "Ridgeway Farm"})
    assert wb.sheetnames == list(SHEETS.values())
    got = pairs(wb[SHEETS["summary"]])
    assert got["borrower"] == "Ridgeway Farm"
    assert cents(got["principal (before fees)"]) == 1_200_000
    for label, value in [
        ("finance charge", figures.finance_charge),
        ("amount financed", figures.amount_financed),
        ("total of payments", figures.total_of_payments),
        ("interest", figures.interest),
        ("prepaid finance charge (fees)", figures.prepaid_finance_charge),
        ("note amount (principal + financed fees)", figures.note_amount),
    ]:
        assert cents(got[label]) == round(value * 100), label
    assert got["annual percentage rate (APR)"] == pytest.approx(float(figures.apr.apr) / 100)
    # 12 CFR 1026.18 [text]: total of payments = amount financed + finance charge.
    assert figures.total_of_payments == figures.amount_financed + figures.finance_charge
    assert got["total of payments = amount financed + finance charge"] == "pass"
    # Payment schedule: the runs, as the disclosure has them.
    _, runs = table(wb[SHEETS["runs"]])
    assert [(r[0], cents(r[1]), r[2].date(), r[3].date()) for r in runs] == [
        (run.count, round(run.amount * 100), run.first_due, run.last_due)
        for run in figures.payment_schedule
    ]
    # Fees: name, amount, finance charge, how paid.
    header, fees = table(wb[SHEETS["fees"]])
    assert header == ["fee", "amount", "finance charge", "paid"]
    assert [(r[0], cents(r[1]), r[2], r[3]) for r in fees] == [
        ("origination", 24_000, "yes", "financed"),
        ("appraisal", 40_000, "no", "at closing"),
        ("documentation", 9_500, "yes", "at closing"),
    ]
    # The note's schedule: principal plus the financed fee, every cent as the engine has it.
    frame = Loan(principal=12_240, annual_rate="8.25%", periods=24, start="2027-01-15",
                 first_payment="2027-03-01").schedule()  # fmt: skip
    header, rows = table(wb[SHEETS["schedule"]])
    assert len(rows) == len(frame) == 24
    for column in ("opening_balance", "payment", "interest", "principal", "closing_balance"):
        j = header.index(column.replace("_", " "))
        assert [cents(r[j]) for r in rows] == [round(x * 100) for x in frame[column]], column


def test_every_flow_equals_the_rates_flows(tmp_path: Path) -> None:
    figures = disclose(LOAN, fees=FEES)
    _, rows = table(workbook(tmp_path, figures, loan=LOAN)[SHEETS["flows"]])
    timed = figures.apr.flows
    assert len(rows) == len(timed)
    for row, flow in zip(rows, timed, strict=True):
        assert row[0].date() == flow.on and row[1] == flow.kind.value
        assert cents(row[2]) == round(flow.amount * 100)
        assert row[3] == flow.whole
        assert row[4] == f"{flow.fraction.numerator}/{flow.fraction.denominator}"
    assert cents(rows[0][2]) == round(figures.amount_financed * 100)  # the advance


def test_an_undated_loans_rate_is_numpy_financial_irr(tmp_path: Path) -> None:
    loan = Loan(principal=5000, annual_rate="9%", periods=24)
    figures = disclose(loan, fees=[Fee("origination", 100)])
    wb = workbook(tmp_path, figures, loan=loan)
    flows = [-float(figures.amount_financed), *(float(p) for p in loan.schedule()["payment"])]
    # numpy-financial irr: with whole unit-periods the Appendix J equation is the IRR's.
    irr = npf.irr(flows)
    method = pairs(wb[SHEETS["method"]])
    assert method["unit-period rate"] == pytest.approx(irr, rel=1e-9)
    assert method["APR before rounding (nominal a year)"] == pytest.approx(irr * 12, rel=1e-9)
    header, rows = table(wb[SHEETS["flows"]])
    assert header[0] == "period" and [r[0] for r in rows] == list(range(25))
    _, runs = table(wb[SHEETS["runs"]])
    assert [(r[0], r[2], r[3]) for r in runs] == [(23, 1, 23), (1, 24, 24)]


def test_us_rule_has_no_present_values(tmp_path: Path) -> None:
    figures = disclose(Loan(principal=5000, annual_rate="9%", periods=24), method="us-rule")
    wb = workbook(tmp_path, figures)
    assert pairs(wb[SHEETS["summary"]])[
        "the rate's equation at the unrounded rate (sum of present values)"
    ].startswith("not applicable")
    header, _ = table(wb[SHEETS["flows"]])
    assert "discount factor" not in header


def test_every_sheet_carries_the_caution(tmp_path: Path) -> None:
    wb = workbook(tmp_path, disclose(LOAN, fees=FEES), loan=LOAN)
    for ws in wb.worksheets:
        assert ws["A2"].value == CAUTION, ws.title
        assert "caution" in ws.oddFooter.center.text


TRIGGERS = ['=HYPERLINK("http://x","y")', "+1+2", "-3", "@SUM(A1)"]


@pytest.mark.parametrize("text", TRIGGERS)
def test_fee_names_labels_and_borrower_never_become_formulas(text: str, tmp_path: Path) -> None:
    listed = Flows(
        (
            Flow("2027-01-01", 1000, "advance", text),
            Flow("2027-07-01", 1050, "payment", text),
        )
    )
    figures = disclose_flows(listed, fees=[Fee(text, 10)])
    path = write_disclosure_workbook(
        figures, tmp_path / "t.xlsx", flows=listed, metadata={"borrower": text + "\tx\r"}
    )
    wb = openpyxl.load_workbook(path)
    fee = wb[SHEETS["fees"]].cell(row=FIRST_DATA_ROW, column=1)
    header = [c.value for c in wb[SHEETS["flows"]][HEADER_ROW]]
    label = wb[SHEETS["flows"]].cell(row=FIRST_DATA_ROW, column=header.index("label") + 1)
    borrower = next(
        r[1] for r in wb[SHEETS["summary"]].iter_rows(min_row=3) if r[0].value == "borrower"
    )
    for cell, want in ((fee, text), (label, text), (borrower, text + "\tx\n")):
        assert cell.data_type == "s" and cell.value == want and cell.quotePrefix is True
    with zipfile.ZipFile(path) as archive:
        for name in archive.namelist():
            if name.startswith("xl/worksheets/sheet"):
                assert "<f>" not in archive.read(name).decode(), name


def test_an_existing_file_is_kept_and_mismatches_refused(tmp_path: Path) -> None:
    figures = disclose(LOAN, fees=FEES)
    target = tmp_path / "d.xlsx"
    target.write_bytes(b"the client's own file")
    with pytest.raises(ExportError, match="already exists"):
        write_disclosure_workbook(figures, target, loan=LOAN)
    assert target.read_bytes() == b"the client's own file"
    write_disclosure_workbook(figures, target, loan=LOAN, force=True)
    assert openpyxl.load_workbook(target).sheetnames[0] == SHEETS["summary"]
    other = Loan(principal=11_000, annual_rate="8.25%", periods=24)
    with pytest.raises(ExportError, match=r"does not match the disclosed note amount 12,240\.00"):
        write_disclosure_workbook(figures, tmp_path / "x.xlsx", loan=other)
    with pytest.raises(ExportError, match=r"must end in \.xlsx"):
        write_disclosure_workbook(figures, tmp_path / "x.xls", loan=LOAN)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["d.xlsx"]


# -- the command line -----------------------------------------------------------------------------


def run(*args: str):
    return runner.invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def test_cli_writes_the_disclosure_workbook_with_the_terms_files_borrower(tmp_path: Path) -> None:
    target = tmp_path / "vans.xlsx"
    result = run("apr", str(ROOT / "examples" / "tallowmere_fees.toml"), "--out", str(target))
    assert result.exit_code == 0, result.output
    assert "wrote the disclosure workbook to" in result.output
    got = pairs(openpyxl.load_workbook(target)[SHEETS["summary"]])
    assert got["borrower"] == "Hollin Vale Couriers"
    assert got["reference"] == "TCL-VH-2027-0307"
    assert got["annual percentage rate (APR)"] == pytest.approx(0.0896)
    _, fees = table(openpyxl.load_workbook(target)[SHEETS["fees"]])
    assert [r[0] for r in fees] == ["origination", "documentation", "title registration"]


def test_cli_flows_workbook_keeps_the_labels(tmp_path: Path) -> None:
    target = tmp_path / "press.xlsx"
    flows = ROOT / "examples" / "tallowmere_flows.csv"
    result = run(
        "apr", "--flows", str(flows), "--standard", "eu-ccd", "--out", str(target), "--json"
    )
    assert result.exit_code == 0, result.output
    wb = openpyxl.load_workbook(target)
    assert SHEETS["schedule"] not in wb.sheetnames  # flows have no loan schedule
    header, rows = table(wb[SHEETS["flows"]])
    assert rows[0][header.index("label")] == "first stage: press and tanks"


def test_cli_refuses_an_existing_file_or_a_wrong_name(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    loan = ["apr", "--principal", "12000", "--rate", "8.25", "--periods", "24"]
    Path("d.xlsx").write_bytes(b"keep me")
    result = run(*loan, "--out", "d.xlsx")
    assert result.exit_code == 4 and "already exists; pass --force" in result.output
    assert Path("d.xlsx").read_bytes() == b"keep me"
    result = run(*loan, "--out", "d.pdf")
    assert result.exit_code == 2
    assert "'--out' must name a .csv file (the flows) or an .xlsx workbook" in result.output
    assert run(*loan, "--out", "d.xlsx", "--force").exit_code == 0
    assert sorted(p.name for p in tmp_path.iterdir()) == ["d.xlsx"]
    assert Decimal(
        str(
            pairs(openpyxl.load_workbook("d.xlsx")[SHEETS["summary"]])[
                "annual percentage rate (APR)"
            ]
        )
    ) == Decimal("0.0825")  # no fees: APR = note rate
