"""Outside check: LibreOffice Calc recalculates the live-formula workbooks to the engine's cents.

Source: a real spreadsheet application, LibreOffice Calc, run headless. Its ROUND,
ROUNDUP and ROUNDDOWN follow OASIS OpenDocument Formula (ODF 1.2 part 2, ROUND: half
away from zero; ROUNDUP away from zero; ROUNDDOWN toward zero) [memory]. Each workbook
written with ``formulas=True`` is loaded with recalculation on load forced (a throwaway
profile sets Calc's "recalculation on file load" for Excel 2007+ files to "always"),
saved again as .xlsx, and every recalculated money cell is compared with
``loan.schedule()``'s cents. Two controls show that the recalculation really happens:
a workbook whose cached values were corrupted comes back with the engine's figures, and
a workbook whose annual-rate input was changed comes back with the schedule an
independent Python ``decimal`` computation in this file gives for the new rate.

Skipped only where LibreOffice is not installed (``.ci/run`` installs libreoffice-calc
with apt-get when ``soffice`` is missing).
"""

from __future__ import annotations

import re
import shutil
import subprocess
import zipfile
from decimal import ROUND_HALF_UP, Decimal
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

from amort import Loan
from amort.events import ExtraPrincipal, PaymentHoliday, RateReset
from amort.io.xlsx import FIRST_DATA_ROW, HEADER_ROW
from amort.io.xlsx_loan import SHEETS, write_workbook

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
pytestmark = pytest.mark.skipif(
    SOFFICE is None,
    reason="LibreOffice Calc (soffice) is not installed here; .ci/run installs it with "
    "apt-get install libreoffice-calc",
)

DATED = {"start": "2027-01-15", "first_payment": "2027-03-01"}
MODES = ("half-up", "half-even", "up", "down")

LOANS: dict[str, Loan] = {
    "mortgage-360": Loan(principal=250_000, annual_rate="6.5%", periods=360),
    "advance-balloon": Loan(
        principal=40_000, annual_rate="6%", periods=36, balloon=15_000, timing="advance"
    ),
    "arrears-balloon": Loan(principal=40_000, annual_rate="6%", periods=36, balloon=15_000),
    "actual-365": Loan(
        principal=12_000, annual_rate="8.25%", periods=12, day_count="actual/365", **DATED
    ),
    "isda-capitalise": Loan(
        principal=12_000,
        annual_rate="8.25%",
        periods=24,
        day_count="actual/actual-isda",
        odd_days="capitalise",
        **DATED,
    ),
    "30-360-separate": Loan(
        principal=9_000,
        annual_rate="11%",
        periods=18,
        day_count="30/360",
        odd_days="separate",
        **DATED,
    ),
    "events": Loan(
        principal=12_000,
        annual_rate="6%",
        periods=12,
        events=(
            PaymentHoliday(period=2, count=2),
            ExtraPrincipal(period=5, amount=1000),
            RateReset(period=6, annual_rate="9%"),
        ),
    ),
    "equal-principal": Loan(
        principal=12_000,
        annual_rate="6%",
        periods=8,
        structure="equal-principal",
        interest_only_periods=2,
    ),
    "graduated": Loan(principal=30_000, annual_rate="7%", periods=48, payment_growth="4%"),
    "compounded": Loan(
        principal=84_500,
        annual_rate="8.15%",
        periods=20,
        frequency="quarterly",
        compounding="monthly",
    ),
    "continuous": Loan(
        principal=84_500,
        annual_rate="8.15%",
        periods=20,
        frequency="quarterly",
        compounding="continuous",
    ),
    "fixed-payment": Loan(principal=12_000, annual_rate="6%", fixed_payment=700),
}
for mode in MODES:
    LOANS[f"car-{mode}"] = Loan(
        principal=18_500, annual_rate="7.9%", periods=60, interest_rounding=mode
    )
    # Every period's interest an exact tie: 12,344.50 x 1 % = 123.445 (half-up 123.45,
    # half-even 123.44); and 1,004.00 x 1 % = 10.04 exactly, whose double is a hair above
    # 10.04 (ROUNDUP must still give 10.04).
    LOANS[f"ties-{mode}"] = Loan(
        principal="12344.50",
        annual_rate="12%",
        periods=12,
        structure="bullet",
        interest_rounding=mode,
    )
    LOANS[f"exact-{mode}"] = Loan(
        principal=1004, annual_rate="12%", periods=6, structure="bullet", interest_rounding=mode
    )

# Calc's "recalculation on file load" (Excel 2007+ and ODF files): 0 = always recalculate.
_ITEM = (
    '<item oor:path="/org.openoffice.Office.Calc/Formula/Load">'
    '<prop oor:name="{}" oor:op="fuse"><value>0</value></prop></item>'
)
_PROFILE = (
    '<?xml version="1.0" encoding="UTF-8"?>\n'
    '<oor:items xmlns:oor="http://openoffice.org/2001/registry" '
    'xmlns:xs="http://www.w3.org/2001/XMLSchema" '
    'xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">\n'
    + _ITEM.format("OOXMLRecalcMode")
    + _ITEM.format("ODFRecalcMode")
    + "\n</oor:items>\n"
)


def patch(path: Path, part: str, cells: dict[str, str]) -> None:
    """Set the stored value (cached or plain) of ``cells`` in one sheet part of ``path``."""
    with zipfile.ZipFile(path) as archive:
        items = [(i, archive.read(i.filename)) for i in archive.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for info, data in items:
            if info.filename == part:
                xml = data.decode()
                for ref, text in cells.items():
                    xml, count = re.subn(
                        rf'(<c r="{ref}"[^>]*>(?:<f>[^<]*</f>)?<v>)[^<]*(</v>)',
                        rf"\g<1>{text}\2",
                        xml,
                    )
                    assert count == 1, ref
                data = xml.encode()
            out.writestr(info, data)


def recalculate(files: list[Path], folder: Path) -> Path:
    profile = folder / "profile"
    (profile / "user").mkdir(parents=True)
    (profile / "user" / "registrymodifications.xcu").write_text(_PROFILE, encoding="utf-8")
    out = folder / "recalculated"
    out.mkdir()
    assert SOFFICE is not None
    subprocess.run(
        [
            SOFFICE,
            f"-env:UserInstallation={profile.as_uri()}",
            "--headless",
            "--norestore",
            "--nolockcheck",
            "--convert-to",
            "xlsx",
            "--outdir",
            str(out),
            *map(str, files),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    return out


@pytest.fixture(scope="module")
def recalculated(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    folder = tmp_path_factory.mktemp("calc")
    written = {
        name: write_workbook(loan, folder / f"{name}.xlsx", formulas=True)
        for name, loan in LOANS.items()
    }
    # Control 1: every cached schedule figure corrupted; only a recalculation restores them.
    corrupt = write_workbook(LOANS["car-half-up"], folder / "control-corrupt.xlsx", formulas=True)
    cells = {f"{c}{r}": "999999" for r in range(FIRST_DATA_ROW, FIRST_DATA_ROW + 60) for c in "DEF"}
    patch(corrupt, "xl/worksheets/sheet2.xml", cells)
    assert (
        openpyxl.load_workbook(corrupt, data_only=True)[SHEETS["schedule"]]["D10"].value == 999999
    )
    # Control 2: the client changes the annual rate from 7.9 % to 8.5 %.
    changed = write_workbook(LOANS["car-half-up"], folder / "control-rate.xlsx", formulas=True)
    sheet, cell = next(openpyxl.load_workbook(changed).defined_names["annual_rate"].destinations)
    assert sheet == SHEETS["summary"]
    patch(changed, "xl/worksheets/sheet1.xml", {cell.replace("$", ""): "0.085"})
    out = recalculate([*written.values(), corrupt, changed], folder)
    results = {name: out / path.name for name, path in written.items()}
    results["control-corrupt"] = out / corrupt.name
    results["control-rate"] = out / changed.name
    for path in results.values():
        assert path.exists(), f"LibreOffice did not write {path.name}"
    return results


def sheet_rows(path: Path) -> tuple[list[str], list[tuple]]:
    ws = openpyxl.load_workbook(path, data_only=True)[SHEETS["schedule"]]
    header = [str(c.value).replace(" ", "_") for c in ws[HEADER_ROW] if c.value is not None]
    rows = []
    for row in ws.iter_rows(min_row=FIRST_DATA_ROW, max_col=len(header), values_only=True):
        if row[0] == "total" or row[0] is None:
            break
        rows.append(row)
    return header, rows


def assert_engine_cents(path: Path, frame: pd.DataFrame) -> int:
    """Every recalculated cell equals the engine's figure (money to the cent); return the count."""
    header, rows = sheet_rows(path)
    assert len(rows) == len(frame)
    checked = 0
    for k, row in enumerate(rows):
        for column, got in zip(header, row, strict=True):
            want = frame[column].iloc[k]
            if column == "due_date":
                continue
            if column == "rate":
                assert got == pytest.approx(float(want), rel=1e-13), (path.name, k, column)
            else:
                assert isinstance(got, (int, float)), (path.name, k, column, got)
                assert round(got * 100) == round(float(want) * 100), (path.name, k + 1, column)
            checked += 1
    return checked


@pytest.mark.parametrize("name", sorted(LOANS))
def test_libreoffice_recalculates_every_cell_to_the_engines_cents(
    name: str, recalculated: dict[str, Path]
) -> None:
    loan = LOANS[name]
    frame = loan.schedule()
    assert assert_engine_cents(recalculated[name], frame) >= 5 * len(frame)
    wb = openpyxl.load_workbook(recalculated[name], data_only=True)
    live = [
        r[2] for r in wb[SHEETS["checks"]].iter_rows(values_only=True) if r[2] in ("pass", "FAIL")
    ]
    assert live and set(live) == {"pass"}
    totals = next(r for r in wb[SHEETS["schedule"]].iter_rows(values_only=True) if r[0] == "total")
    header, _ = sheet_rows(recalculated[name])
    assert round(totals[header.index("interest")] * 100) == round(frame["interest"].sum() * 100)


def test_tie_cases_really_differ_between_rounding_modes() -> None:
    # The tie loans test something: the four modes give different interest (12,344.5 cents).
    interest = {mode: LOANS[f"ties-{mode}"].schedule()["interest"].iloc[0] for mode in MODES}
    assert interest == {"half-up": 123.45, "half-even": 123.44, "up": 123.45, "down": 123.44}


def test_control_corrupted_cached_values_are_recalculated(recalculated: dict[str, Path]) -> None:
    assert_engine_cents(recalculated["control-corrupt"], LOANS["car-half-up"].schedule())


def test_control_a_changed_rate_gives_the_decimal_schedule(recalculated: dict[str, Path]) -> None:
    # Independent reference: Python's decimal with DESIGN.md's rules, the payment kept at
    # 374.23 and the last payment paying what is left, at 8.5 % a year.
    header, rows = sheet_rows(recalculated["control-rate"])
    rate = Decimal("0.085") / 12
    balance, level = Decimal("18500.00"), Decimal("374.23")
    for k, row in enumerate(rows, start=1):
        got = dict(zip(header, row, strict=True))
        interest = (balance * rate).quantize(Decimal("0.01"), ROUND_HALF_UP)
        payment = balance + interest if k == len(rows) else level
        principal = payment - interest
        assert round(got["opening_balance"] * 100) == int(balance * 100)
        assert round(got["interest"] * 100) == int(interest * 100), k
        assert round(got["payment"] * 100) == int(payment * 100), k
        assert round(got["principal"] * 100) == int(principal * 100), k
        balance -= principal
        assert round(got["closing_balance"] * 100) == int(balance * 100), k
    assert balance == 0 and len(rows) == 60
    assert round(rows[0][3] * 100) == 13104  # 18,500 x 8.5 % / 12 = 131.041..., not 121.79
