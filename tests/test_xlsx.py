"""Workbook export: every number read back with openpyxl equals the DataFrame it came from.

Also: the live formulas and their cached values, the summary, checks and method sheets,
native charts, formula injection, --force, failed and refused writes. The recalculation
of the live formulas in a real spreadsheet application is in
tests/reference/test_libreoffice_recalc.py.
"""

from __future__ import annotations

import os
import zipfile
from decimal import ROUND_HALF_UP, Decimal
from fractions import Fraction
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from amort import CAUTION, ExportError, Loan
from amort.events import ExtraPrincipal, PaymentHoliday, RateReset
from amort.io import xlsx, xlsx_formulas
from amort.io.xlsx import FIRST_DATA_ROW, HEADER_ROW, write_frames
from amort.io.xlsx_loan import SHEETS, write_workbook
from amort.money import Rounding

DATED = {"start": "2027-01-15", "first_payment": "2027-03-01"}

LOANS = {
    "level": Loan(principal=18_500, annual_rate="7.9%", periods=60),
    "advance-balloon": Loan(
        principal=40_000, annual_rate="6%", periods=36, balloon=15_000, timing="advance"
    ),
    "arrears-balloon": Loan(principal=40_000, annual_rate="6%", periods=36, balloon=15_000),
    "actual-365": Loan(
        principal=12_000, annual_rate="8.25%", periods=6, day_count="actual/365", **DATED
    ),
    "isda-capitalise": Loan(
        principal=12_000,
        annual_rate="8.25%",
        periods=24,
        day_count="actual/actual-isda",
        odd_days="capitalise",
        **DATED,
    ),
    "events": Loan(
        principal=12_000,
        annual_rate="6%",
        periods=8,
        events=(
            PaymentHoliday(period=2, count=2),
            ExtraPrincipal(period=5, amount=1000),
            RateReset(period=6, annual_rate="9%"),
        ),
    ),
    "equal-principal": Loan(
        principal=12_000,
        annual_rate="6%",
        periods=6,
        structure="equal-principal",
        interest_only_periods=2,
    ),
    "compounded": Loan(
        principal=84_500,
        annual_rate="8.15%",
        periods=20,
        frequency="quarterly",
        compounding="monthly",
    ),
}


def cents(value: object) -> int:
    assert isinstance(value, (int, float)), value
    return round(float(value) * 100)


def table(ws: openpyxl.worksheet.worksheet.Worksheet) -> tuple[list[str], list[tuple]]:
    """The header and the data rows of a table sheet (up to the totals row)."""
    header = [c.value for c in ws[HEADER_ROW]]
    rows = []
    for row in ws.iter_rows(min_row=FIRST_DATA_ROW, values_only=True):
        if row[0] == "total" or row[0] is None:
            break
        rows.append(row)
    return header, rows


def assert_sheet_equals_frame(ws, frame: pd.DataFrame) -> None:
    header, rows = table(ws)
    shown = [c for c in frame.columns if not (c == "due_date" and frame[c].isna().all())]
    assert header == [c.replace("_", " ") for c in shown]
    assert len(rows) == len(frame)
    for k, row in enumerate(rows):
        for column, got in zip(shown, row, strict=True):
            want = frame[column].iloc[k]
            if column == "due_date":
                assert got.date() == want.date()
            elif column == "rate":
                assert got == pytest.approx(float(want), rel=1e-15)
            elif column in ("period", "days"):
                assert got == int(want)
            else:
                assert cents(got) == round(float(want) * 100), (column, k)


@pytest.mark.parametrize("name", sorted(LOANS))
def test_every_number_of_the_schedule_sheet_equals_the_frame(name: str, tmp_path: Path) -> None:
    loan = LOANS[name]
    path = write_workbook(loan, tmp_path / "plan.xlsx")
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == list(SHEETS.values())
    ws = wb[SHEETS["schedule"]]
    frame = loan.schedule()
    assert_sheet_equals_frame(ws, frame)
    # Values only: not one formula anywhere without formulas=True.
    for sheet in wb.worksheets:
        for row in sheet.iter_rows():
            assert not any(c.data_type == "f" for c in row), sheet.title
    totals = next(r for r in ws.iter_rows(values_only=True) if r[0] == "total")
    header = [c.value for c in ws[HEADER_ROW]]
    for column in ("payment", "interest", "principal"):
        assert cents(totals[header.index(column)]) == round(frame[column].sum() * 100)


@pytest.mark.parametrize("name", sorted(LOANS))
def test_live_formulas_carry_the_engines_values_cached(name: str, tmp_path: Path) -> None:
    loan = LOANS[name]
    path = write_workbook(loan, tmp_path / "live.xlsx", formulas=True)
    cached = openpyxl.load_workbook(path, data_only=True)[SHEETS["schedule"]]
    assert_sheet_equals_frame(cached, loan.schedule())
    live = openpyxl.load_workbook(path)[SHEETS["schedule"]]
    header = [c.value for c in live[HEADER_ROW]]
    for column in ("interest", "principal", "closing balance"):
        j = header.index(column) + 1
        for r in range(FIRST_DATA_ROW, FIRST_DATA_ROW + len(loan.schedule())):
            formula = live.cell(row=r, column=j).value
            assert isinstance(formula, str) and formula.startswith(("=ROUND", "=IF(MOD")), formula


def test_cached_cells_match_an_independent_decimal_schedule(tmp_path: Path) -> None:
    # Independent reference: Python's decimal, half-up to the cent (DESIGN.md's rules).
    loan = LOANS["level"]
    path = write_workbook(loan, tmp_path / "car.xlsx", formulas=True)
    ws = openpyxl.load_workbook(path, data_only=True)[SHEETS["schedule"]]
    _, rows = table(ws)
    rate = Decimal("0.079") / 12
    balance, pay = Decimal("18500.00"), Decimal("374.23")
    for k, row in enumerate(rows, start=1):
        interest = (balance * rate).quantize(Decimal("0.01"), ROUND_HALF_UP)
        payment = balance + interest if k == 60 else pay
        principal = payment - interest
        assert [cents(v) for v in row[1:6]] == [
            int(balance * 100),
            int(payment * 100),
            int(interest * 100),
            int(principal * 100),
            int((balance - principal) * 100),
        ]
        balance -= principal
    assert balance == 0


def test_formulas_refer_to_named_terms_cells(tmp_path: Path) -> None:
    loan = LOANS["level"]
    path = write_workbook(loan, tmp_path / "car.xlsx", formulas=True)
    wb = openpyxl.load_workbook(path)
    values = openpyxl.load_workbook(path, data_only=True)
    expected = {
        "principal_lent": 18_500,
        "annual_rate": 0.079,
        "payments_a_year": 12,
        "level_payment": 374.23,
        "balloon_due": 0,
        "periodic_rate": 0.079 / 12,
    }
    for name, want in expected.items():
        sheet, cell = next(wb.defined_names[name].destinations)
        assert sheet == SHEETS["summary"]
        assert values[sheet][cell.replace("$", "")].value == pytest.approx(want, rel=1e-15)
    summary = wb[SHEETS["summary"]]
    sheet, cell = next(wb.defined_names["periodic_rate"].destinations)
    assert summary[cell.replace("$", "")].value == "=annual_rate/payments_a_year"
    ws = wb[SHEETS["schedule"]]
    assert ws["B4"].value == "=principal_lent"
    assert ws["B5"].value == "=F4"
    assert ws["C4"].value == "=level_payment"
    assert ws["C63"].value == "=ROUND(B63+D63,2)"  # the last payment pays what is left
    assert ws["D63"].value == "=ROUND(B63*periodic_rate,2)"
    assert ws["C64"].value == "=SUM(C4:C63)"


@pytest.mark.parametrize(
    ("mode", "function"),
    [
        (Rounding.HALF_UP, "ROUND(x,2)"),
        (Rounding.UP, "ROUNDUP(x,2)"),
        (Rounding.DOWN, "ROUNDDOWN(x,2)"),
        (Rounding.HALF_EVEN, "IF(MOD(ROUND((x)*100,6),2)=0.5,ROUNDDOWN(x,2),ROUND(x,2))"),
    ],
)
def test_each_interest_rounding_has_its_spreadsheet_form(
    mode: Rounding, function: str, tmp_path: Path
) -> None:
    assert xlsx_formulas.rounded("x", mode) == function
    loan = Loan(principal=18_500, annual_rate="7.9%", periods=60, interest_rounding=mode)
    ws = openpyxl.load_workbook(write_workbook(loan, tmp_path / "m.xlsx", formulas=True))[
        SHEETS["schedule"]
    ]
    assert ws["D4"].value == "=" + xlsx_formulas.rounded("B4*periodic_rate", mode)


def test_dated_rates_are_formulas_on_the_annual_rate_and_the_days(tmp_path: Path) -> None:
    loan = LOANS["actual-365"]
    ws = openpyxl.load_workbook(write_workbook(loan, tmp_path / "d.xlsx", formulas=True))[
        SHEETS["schedule"]
    ]
    header = [c.value for c in ws[HEADER_ROW]]
    rate, days = header.index("rate") + 1, header.index("days") + 1
    letter = openpyxl.utils.get_column_letter(days)
    assert ws.cell(row=4, column=rate).value == f"=annual_rate*{letter}4/365"


def test_a_product_too_close_to_a_rounding_boundary_is_refused() -> None:
    # 0.5 cent + 1e-20: exact arithmetic rounds half-up to 1 cent, a double cannot tell.
    rate = Fraction(1, 2) + Fraction(1, 10**20)
    with pytest.raises(ExportError, match="too close to a rounding boundary"):
        xlsx_formulas._check_margin(1, 1, 0.005, rate, Rounding.HALF_UP)
    xlsx_formulas._check_margin(1, 1, 0.005, Fraction(1, 2), Rounding.HALF_UP)  # a true tie


def test_summary_sheet_holds_terms_conventions_key_figures_and_apr(tmp_path: Path) -> None:
    loan = Loan(principal=12_000, annual_rate="8.25%", periods=6, day_count="actual/365", **DATED)
    path = write_workbook(
        loan, tmp_path / "s.xlsx", apr=Decimal("0.0831"), metadata={"borrower": "Ridgeway Farm"}
    )
    ws = openpyxl.load_workbook(path)[SHEETS["summary"]]
    pairs = {r[0]: r[1] for r in ws.iter_rows(min_row=3, values_only=True) if r[0]}
    summary = loan.summary()
    assert pairs["borrower"] == "Ridgeway Farm"
    assert pairs["principal lent"] == 12_000
    assert pairs["annual rate (nominal)"] == pytest.approx(0.0825)
    assert pairs["day count"] == "actual/365"
    assert pairs["rounding of each period's interest"].startswith("half-up")
    assert cents(pairs["level payment"]) == 205_532
    assert cents(pairs["final payment"]) == round(summary["final_payment"] * 100)
    assert cents(pairs["total interest"]) == round(summary["total_interest"] * 100)
    assert cents(pairs["total paid"]) == round(summary["total_paid"] * 100)
    assert pairs["number of payments"] == 6
    assert pairs["maturity"].date() == summary["maturity_date"]
    assert pairs["APR"] == pytest.approx(0.0831)
    assert pairs["all checks pass"] == "yes"


def test_every_sheet_carries_the_caution_and_a_footer(tmp_path: Path) -> None:
    wb = openpyxl.load_workbook(write_workbook(LOANS["level"], tmp_path / "c.xlsx"))
    for ws in wb.worksheets:
        assert ws["A2"].value == CAUTION, ws.title
        assert "caution" in ws.oddFooter.center.text


def test_checks_sheet_shows_each_reconciliation_check(tmp_path: Path) -> None:
    loan = LOANS["advance-balloon"]
    wb = openpyxl.load_workbook(write_workbook(loan, tmp_path / "c.xlsx", formulas=True))
    _, rows = table(wb[SHEETS["checks"]])
    assert [(r[0], r[2]) for r in rows] == [
        (name, "pass" if ok else "FAIL") for name, _, ok in loan.reconciliation().checks
    ]
    live = openpyxl.load_workbook(tmp_path / "c.xlsx", data_only=True)[SHEETS["checks"]]
    results = [r[2] for r in live.iter_rows(values_only=True) if r[2] in ("pass", "FAIL")]
    assert results.count("pass") == len(rows) + 3  # the table and three live identities


def test_method_sheet_holds_the_closed_form_or_says_why_not(tmp_path: Path) -> None:
    from amort.formula import formula_for

    wb = openpyxl.load_workbook(write_workbook(LOANS["level"], tmp_path / "f.xlsx"))
    text = [r[0] for r in wb[SHEETS["method"]].iter_rows(values_only=True) if r[0]]
    for line in formula_for(LOANS["level"]).text.splitlines():
        assert line in text
    wb = openpyxl.load_workbook(write_workbook(LOANS["equal-principal"], tmp_path / "e.xlsx"))
    text = [r[0] for r in wb[SHEETS["method"]].iter_rows(values_only=True) if r[0]]
    assert any(str(t).startswith("Not shown for this loan") for t in text)


def test_native_charts_of_balance_and_stacked_split(tmp_path: Path) -> None:
    path = write_workbook(LOANS["level"], tmp_path / "g.xlsx")
    with zipfile.ZipFile(path) as archive:
        charts = sorted(n for n in archive.namelist() if n.startswith("xl/charts/chart"))
        xml = [archive.read(n).decode() for n in charts]
    assert len(charts) == 2
    assert "<lineChart>" in xml[0] and "'Payment by payment'!$F$4:$F$63" in xml[0]
    assert '<grouping val="stacked"' in xml[1] and "'Payment by payment'!$D$4:$D$63" in xml[1]
    assert '<barDir val="col"' in xml[1] and "'Payment by payment'!$E$4:$E$63" in xml[1]


TRIGGERS = ['=HYPERLINK("http://x","y")', "+1+2", "-3", "@SUM(A1)", "\tTAB", "\rCR", "plain"]


@pytest.mark.parametrize("text", TRIGGERS)
def test_user_text_never_becomes_a_formula(text: str, tmp_path: Path) -> None:
    path = write_workbook(
        LOANS["level"], tmp_path / "t.xlsx", metadata={"borrower": text, "note": text}
    )
    ws = openpyxl.load_workbook(path)[SHEETS["summary"]]
    cell = next(r[1] for r in ws.iter_rows(min_row=3) if r[0].value == "borrower")
    # XML reads a carriage return back as a line break; the text is otherwise as given.
    shown = text.replace("\r", "\n")
    assert cell.data_type == "s" and cell.value == shown
    assert cell.quotePrefix is (text != "plain")
    with zipfile.ZipFile(path) as archive:
        assert "<f>" not in archive.read("xl/worksheets/sheet1.xml").decode()
    frames = write_frames(tmp_path / "f.xlsx", {"Ids": pd.DataFrame({"id": [text]})}, title="t")
    cell = openpyxl.load_workbook(frames)["Ids"]["A4"]
    assert cell.data_type == "s" and cell.value == shown and cell.quotePrefix is (text != "plain")


def test_write_frames_formats_columns_by_kind(tmp_path: Path) -> None:
    frame = pd.DataFrame(
        {
            "period": [1, 2],
            "due_date": pd.to_datetime(["2027-01-31", "2027-02-28"]),
            "payment": [374.23, 374.14],
            "rate": [0.0065, 0.0066],
        }
    )
    ws = openpyxl.load_workbook(write_frames(tmp_path / "k.xlsx", {"P": frame}, title="k"))["P"]
    assert [ws.cell(row=4, column=j).number_format for j in range(1, 5)] == [
        xlsx.FORMATS["count"],
        xlsx.FORMATS["date"],
        xlsx.FORMATS["money"],
        xlsx.FORMATS["rate"],
    ]
    assert ws.freeze_panes == "A4" and ws.auto_filter.ref == "A3:D5"
    assert ws["C6"].value == pytest.approx(748.37)  # totals row of the flow column


def test_an_existing_file_is_kept_without_force(tmp_path: Path) -> None:
    target = tmp_path / "plan.xlsx"
    target.write_bytes(b"the client's own file")
    with pytest.raises(ExportError, match="already exists"):
        write_workbook(LOANS["level"], target)
    assert target.read_bytes() == b"the client's own file"
    write_workbook(LOANS["level"], target, force=True)
    assert openpyxl.load_workbook(target).sheetnames == list(SHEETS.values())


def test_a_failed_write_leaves_no_partial_file(tmp_path: Path, monkeypatch) -> None:
    def broken_save(self, filename):  # writes half a file, then the disk fills up
        Path(filename).write_bytes(b"PK half")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(openpyxl.Workbook, "save", broken_save)
    with pytest.raises(ExportError, match="No space left on device"):
        write_workbook(LOANS["level"], tmp_path / "plan.xlsx")
    assert list(tmp_path.iterdir()) == []


def read_only_folder(tmp_path: Path) -> Path:
    """A folder no file can be created in: chmod 0o500, or where root ignores that, /proc."""
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    if not os.access(folder, os.W_OK):
        return folder
    folder.chmod(0o700)
    proc = Path("/proc/self")  # root writes through chmod; no one creates files in procfs
    if not proc.is_dir():
        pytest.skip("running as root (chmod does not stop writes) and no /proc to try instead")
    return proc


def test_a_read_only_folder_is_refused_in_one_sentence(tmp_path: Path) -> None:
    folder = read_only_folder(tmp_path)
    before = set(os.listdir(folder))
    with pytest.raises(ExportError, match=r"^cannot write .*plan\.xlsx") as caught:
        write_workbook(LOANS["level"], folder / "plan.xlsx")
    assert "\n" not in str(caught.value)
    assert set(os.listdir(folder)) == before


def test_the_path_must_be_an_xlsx(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match=r"must end in \.xlsx"):
        write_workbook(LOANS["level"], tmp_path / "plan.xls")
