"""Annuity exports: workbook, Parquet and PNG read back and compared with the frames they came from.

Every number of the schedule sheet equals the DataFrame; the summary equals
``summary()``; the checks equal ``reconciliation()``; the closed-form sheet's
factors are checked against annuity tables (a(10, 5 %) = 7.721734929, a-due =
8.107821676, s(10, 5 %) = 12.57789254; textbook attribution from memory, as in
REFERENCES.md), numpy-financial's pmt/pv/fv and the OASIS OpenDocument Formula
definitions [text] (values computed from its equations). Also: formula
injection, --force, a read-only folder, the picture's size, and the CLI.
"""

from __future__ import annotations

import json
import os
import zipfile
from pathlib import Path

import numpy as np
import numpy_financial as npf
import openpyxl
import pandas as pd
import pyarrow.parquet as pq
import pytest
from PIL import Image
from typer.testing import CliRunner

from amort import CAUTION, ExportError
from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.cli import app
from amort.io.annuity_text import annuity_title, chart_parts, closed_form_figures
from amort.io.png import SIZE, plot_annuity
from amort.io.xlsx import ACCENT, FIRST_DATA_ROW, HEADER_ROW
from amort.io.xlsx_annuity import SHEETS, write_annuity_workbook
from amort.loan import Loan

PRODUCTS = {
    "payout-level": Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual"),
    "payout-growing-deferred-due": Payout(
        payment=1200, annual_rate="4%", periods=300, growth="2%", defer=24, timing="advance",
        start="2027-01-01",
    ),
    "payout-step-residual": Payout(
        fund=80_000, annual_rate="6%", periods=40, frequency="quarterly", step=50,
        growth_every=4, residual=5_000,
    ),
    "payout-horizon": Payout(fund=250_000, annual_rate="4%", payment=1500),
    "perpetuity": Payout(fund=250_000, annual_rate="4%", perpetuity=True),
    "accumulate-level": Accumulation(target=20_000, annual_rate="4%", periods=16,
                                     frequency="quarterly"),
    "accumulate-growing-due": Accumulation(
        deposit=300, annual_rate="3.5%", periods=60, growth="3%", timing="advance",
        start="2027-02-15", balance=1_000,
    ),
    "sinking-fund": Accumulation.sinking_fund(
        Loan(principal=60_000, annual_rate="7%", periods=60, structure="bullet"),
        annual_rate="4%",
    ),
}  # fmt: skip
TRIGGERS = ['=HYPERLINK("http://x","y")', "+1+2", "-3", "@SUM(A1)", "\tTAB", "\rCR", "plain"]
runner = CliRunner()


def cents(value: object) -> int:
    assert isinstance(value, (int, float)), value
    return round(float(value) * 100)


def frame_of(product: Payout | Accumulation) -> pd.DataFrame:
    return product.schedule()


def table(ws) -> tuple[list[str], list[tuple]]:
    """The header and the data rows of a table sheet (up to the totals row)."""
    header = [c.value for c in ws[HEADER_ROW]]
    while header and header[-1] is None:  # the caution row is merged over at least 6 columns
        header.pop()
    rows = []
    for row in ws.iter_rows(min_row=FIRST_DATA_ROW, max_col=len(header), values_only=True):
        if row[0] == "total" or row[0] is None:
            break
        rows.append(row)
    return header, rows


def pairs(ws) -> dict[str, object]:
    return {r[0]: r[1] for r in ws.iter_rows(min_row=3, values_only=True) if r[0]}


@pytest.mark.parametrize("name", sorted(PRODUCTS))
def test_every_number_of_the_schedule_sheet_equals_the_frame(name: str, tmp_path: Path) -> None:
    product = PRODUCTS[name]
    wb = openpyxl.load_workbook(write_annuity_workbook(product, tmp_path / "a.xlsx"))
    assert wb.sheetnames == list(SHEETS.values())
    frame = frame_of(product)
    shown = [c for c in frame.columns if not (c == "due_date" and frame[c].isna().all())]
    header, rows = table(wb[SHEETS["schedule"]])
    assert header == [c.replace("_", " ") for c in shown]
    assert len(rows) == len(frame)
    for k, row in enumerate(rows):
        for column, got in zip(shown, row, strict=True):
            want = frame[column].iloc[k]
            if column == "due_date":
                assert got.date() == want.date()
            elif column == "period":
                assert got == int(want)
            else:
                assert cents(got) == round(float(want) * 100), (column, k)
    ws = wb[SHEETS["schedule"]]
    totals = next(r for r in ws.iter_rows(values_only=True) if r[0] == "total")
    flow = "payment" if "payment" in frame else "deposit"
    for column in (flow, "interest_credited"):
        assert cents(totals[header.index(column.replace("_", " "))]) == round(
            frame[column].sum() * 100
        )
    for sheet in wb.worksheets:  # numbers only: not one formula anywhere
        for r in sheet.iter_rows():
            assert not any(c.data_type == "f" for c in r), sheet.title


def test_a_perpetuity_shows_the_rows_asked(tmp_path: Path) -> None:
    product = PRODUCTS["perpetuity"]
    path = write_annuity_workbook(product, tmp_path / "p.xlsx", rows=30)
    wb = openpyxl.load_workbook(path)
    _, rows = table(wb[SHEETS["schedule"]])
    assert len(rows) == 30 and all(cents(r[2]) == 83_333 for r in rows)  # 250,000 x 4 % / 12
    assert pairs(wb[SHEETS["summary"]])["payments shown"] == "the first 30 of a perpetuity"
    with pytest.raises(ExportError, match="'rows' is for perpetuities"):
        write_annuity_workbook(PRODUCTS["accumulate-level"], tmp_path / "a.xlsx", rows=3)


@pytest.mark.parametrize("name", ["payout-level", "payout-growing-deferred-due", "payout-horizon"])
def test_payout_summary_holds_the_terms_and_key_figures(name: str, tmp_path: Path) -> None:
    product = PRODUCTS[name]
    got = pairs(openpyxl.load_workbook(write_annuity_workbook(product, tmp_path / "s.xlsx"))[
        SHEETS["summary"]])  # fmt: skip
    summary = product.summary()
    assert got["solved for"] == product.solve_for
    assert cents(got["fund"]) == round(summary["fund"] * 100)
    assert got["annual rate (nominal)"] == pytest.approx(float(summary["annual_rate"]))
    assert got["horizon (periods, counting the deferral)"] == summary["periods"]
    for label, key in [
        ("final payment", "final_payment"),
        ("total paid", "total_paid"),
        ("interest credited", "total_interest_credited"),
        ("value left", "residual_left"),
    ]:
        assert cents(got[label]) == round(summary[key] * 100), label
    assert got["number of payments"] == summary["number_of_payments"]
    assert got["periodic rate (exact)"] == (
        f"{summary['periodic_rate'].numerator}/{summary['periodic_rate'].denominator}"
    )
    assert got["all checks pass"] == "yes"
    if summary["first_payment_date"] is not None:
        assert got["first payment"].date() == summary["first_payment_date"]


def test_accumulation_summary_holds_the_terms_and_key_figures(tmp_path: Path) -> None:
    product = PRODUCTS["sinking-fund"]
    got = pairs(openpyxl.load_workbook(write_annuity_workbook(product, tmp_path / "s.xlsx"))[
        SHEETS["summary"]])  # fmt: skip
    summary = product.summary()
    for label, key in [
        ("deposit (first, or level)", "deposit"),
        ("final deposit", "final_deposit"),
        ("value reached", "value_reached"),
        ("total deposited", "total_deposited"),
        ("interest credited", "total_interest_credited"),
        ("interest-only loan payment", "loan_payment"),
        ("combined outlay a period", "combined_outlay"),
    ]:
        assert cents(got[label]) == round(summary[key] * 100), label
    assert got["value by the closed form"] == pytest.approx(summary["closed_form_value"])
    assert got["number of deposits"] == summary["number_of_deposits"] == 60


@pytest.mark.parametrize("name", ["payout-horizon", "perpetuity", "accumulate-growing-due"])
def test_checks_sheet_shows_each_reconciliation_check(name: str, tmp_path: Path) -> None:
    product = PRODUCTS[name]
    wb = openpyxl.load_workbook(write_annuity_workbook(product, tmp_path / "c.xlsx"))
    _, rows = table(wb[SHEETS["checks"]])
    check = product.reconciliation()
    assert [(r[0], r[1], r[2]) for r in rows] == [
        (label, figures, "pass" if ok else "FAIL") for label, figures, ok in check.checks
    ]
    figures = pairs(wb[SHEETS["checks"]])
    # openpyxl stores floats to 16 significant digits.
    gap = figures["largest gap between cent and closed-form value"]
    assert gap == pytest.approx(check.largest_gap, rel=1e-15)
    bound = figures["bound on that gap, u s_k (row by row)"]
    assert bound == pytest.approx(check.gap_bound, rel=1e-15)


def method(product: Payout | Accumulation, tmp_path: Path) -> dict[str, object]:
    wb = openpyxl.load_workbook(write_annuity_workbook(product, tmp_path / "m.xlsx"))
    return pairs(wb[SHEETS["method"]])


def test_closed_form_of_a_level_payout_matches_tables_and_numpy_financial(tmp_path: Path) -> None:
    got = method(PRODUCTS["payout-level"], tmp_path)
    # Annuity table, i = 5 %, n = 10: a = 7.721734929 (textbook attribution from memory).
    assert got["W: value at time 0 of a unit first payment"] == pytest.approx(
        7.721734929, abs=5e-10
    )
    # numpy-financial pmt: the level payment 100,000 buys over 10 years at 5 %.
    exact = -npf.pmt(0.05, 10, 100_000)
    assert got["first payment by the closed form, before rounding"] == pytest.approx(
        exact, rel=1e-13
    )
    assert got["first payment in the schedule"] == 12_950.46
    # OASIS ODF PV(0.05; 10; -12950.46) (computed from the standard's equation [text]).
    pv = npf.pv(0.05, 10, -12_950.46)
    assert got["P_1 W + h S + R v^N: value of the schedule's payments"] == pytest.approx(
        pv, rel=1e-13
    )


def test_closed_form_of_a_deferred_due_payout_matches_numpy_financial(tmp_path: Path) -> None:
    product = Payout(fund=50_000, annual_rate="5%", periods=13, defer=3, timing="advance",
                     frequency="annual")  # fmt: skip
    figures = closed_form_figures(product)
    # a-due(10, 5 %) = 8.107821676 (annuity table, from memory), deferred 3 years: x v^3.
    assert figures["weight"] == pytest.approx(8.107821676 / 1.05**3, abs=1e-9)
    # numpy-financial pv with when="begin", discounted over the deferral.
    due = -npf.pv(0.05, 10, float(product.payment), when="begin") / 1.05**3
    assert figures["value"] == pytest.approx(due, rel=1e-12)
    got = method(product, tmp_path)
    assert got["periods N (the horizon)"] == 13
    assert got["fund"] == 50_000


def test_closed_form_of_a_growing_payout_matches_a_plain_sum(tmp_path: Path) -> None:
    # Independent reference: the definition PV = sum_k P_1 g^s v^(d + k - 1), in fractions.
    from fractions import Fraction

    product = PRODUCTS["payout-growing-deferred-due"]
    v, g = Fraction(300, 301), Fraction(102, 100)
    n, d = 276, 24
    weight = sum(g ** ((k - 1) // 12) * v ** (d + k - 1) for k in range(1, n + 1))
    assert closed_form_figures(product)["weight"] == pytest.approx(float(weight), rel=1e-13)


def test_closed_form_of_an_accumulation_matches_tables_and_odf_fv(tmp_path: Path) -> None:
    product = Accumulation(deposit=100, annual_rate="5%", periods=10, frequency="annual")
    got = method(product, tmp_path)
    # s(10, 5 %) = 12.57789254 (annuity table, from memory) = W (1 + i)^n.
    w = got["W: value at time 0 of a unit first deposit"]
    assert w * 1.05**10 == pytest.approx(12.57789254, abs=5e-9)
    # OASIS ODF FV(0.05; 10; -100) = 1257.78925355 (computed from its equation [text]).
    assert got["(B_0 + D_1 W + h S) (1 + i)^n: value reached"] == pytest.approx(1257.78925355)
    assert npf.fv(0.05, 10, -100, 0) == pytest.approx(1257.78925355)


def test_method_sheet_says_the_closed_form_in_words(tmp_path: Path) -> None:
    wb = openpyxl.load_workbook(
        write_annuity_workbook(PRODUCTS["payout-step-residual"], tmp_path / "w.xlsx")
    )
    text = " ".join(str(r[0]) for r in wb[SHEETS["method"]].iter_rows(values_only=True) if r[0])
    assert "V_k = (1 + i) V_{k-1} - P_k" in text
    assert "A step h every e = 4 flows adds h S" in text
    assert "Solved for the payment: P_1 = (F - R v^N - h S) / W" in text


def test_native_charts_of_value_and_stacked_parts(tmp_path: Path) -> None:
    path = write_annuity_workbook(PRODUCTS["accumulate-level"], tmp_path / "g.xlsx")
    with zipfile.ZipFile(path) as archive:
        xml = [archive.read(f"xl/charts/chart{k}.xml").decode() for k in (1, 2)]
    # Undated: period, opening value, deposit, interest credited, closing value (A..E), 16 rows.
    assert "<lineChart>" in xml[0] and "'Period by period'!$E$4:$E$19" in xml[0]
    assert '<grouping val="stacked"' in xml[1]
    assert "'Period by period'!$C$4:$C$19" in xml[1] and "'Period by period'!$D$4:$D$19" in xml[1]
    assert f'<a:srgbClr val="{ACCENT}"' in xml[1]


def test_a_payouts_chart_reads_the_part_drawn_from_the_fund(tmp_path: Path) -> None:
    product = PRODUCTS["payout-growing-deferred-due"]
    path = write_annuity_workbook(product, tmp_path / "g.xlsx")
    frame = product.schedule()
    ws = openpyxl.load_workbook(path)[SHEETS["charts"]]
    drawn = [ws.cell(row=FIRST_DATA_ROW + k, column=17).value for k in range(len(frame))]
    # Exact cents: drawn from the fund = payment - interest credited, row by row.
    want = [round(p * 100) - round(i * 100) for p, i in zip(frame["payment"],
            frame["interest_credited"], strict=True)]  # fmt: skip
    assert [cents(x) for x in drawn] == want
    assert want[0] < 0 < want[-1]  # the fund grows while deferred
    with zipfile.ZipFile(path) as archive:
        bars = archive.read("xl/charts/chart2.xml").decode()
    assert f"'Charts'!$Q$4:$Q${3 + len(frame)}" in bars


@pytest.mark.parametrize("timing", ["arrears", "advance"])
def test_chart_parts_add_up_to_each_payment(timing: str) -> None:
    frame = Payout(fund=10_000, annual_rate="7%", periods=12, timing=timing).schedule()
    parts, columns, labels = chart_parts(frame)
    assert columns == ("closing_value", "drawn_from_fund", "interest_credited")
    total = np.round((parts["drawn_from_fund"] + parts["interest_credited"]) * 100)
    assert (total == np.round(frame["payment"] * 100)).all()
    assert labels[0] == "value"


def test_every_sheet_carries_the_caution_and_a_footer(tmp_path: Path) -> None:
    wb = openpyxl.load_workbook(
        write_annuity_workbook(PRODUCTS["payout-level"], tmp_path / "c.xlsx")
    )
    for ws in wb.worksheets:
        assert ws["A2"].value == CAUTION, ws.title
        assert "caution" in ws.oddFooter.center.text


@pytest.mark.parametrize("text", TRIGGERS)
def test_user_text_never_becomes_a_formula(text: str, tmp_path: Path) -> None:
    path = write_annuity_workbook(
        PRODUCTS["payout-level"], tmp_path / "t.xlsx", metadata={"client": text, text: "note"}
    )
    ws = openpyxl.load_workbook(path)[SHEETS["summary"]]
    shown = text.replace("\r", "\n")  # XML reads a carriage return back as a line break
    value = next(r[1] for r in ws.iter_rows(min_row=3) if r[0].value == "client")
    label = next(r[0] for r in ws.iter_rows(min_row=3) if r[1].value == "note")
    for cell in (value, label):
        assert cell.data_type == "s" and cell.value == shown
        assert cell.quotePrefix is (text != "plain")
    with zipfile.ZipFile(path) as archive:
        assert "<f>" not in archive.read("xl/worksheets/sheet1.xml").decode()


def test_an_existing_file_is_kept_without_force(tmp_path: Path) -> None:
    target = tmp_path / "a.xlsx"
    target.write_bytes(b"the client's own file")
    with pytest.raises(ExportError, match="already exists"):
        write_annuity_workbook(PRODUCTS["payout-level"], target)
    assert target.read_bytes() == b"the client's own file"
    write_annuity_workbook(PRODUCTS["payout-level"], target, force=True)
    assert openpyxl.load_workbook(target).sheetnames == list(SHEETS.values())
    with pytest.raises(ExportError, match=r"must end in \.xlsx"):
        write_annuity_workbook(PRODUCTS["payout-level"], tmp_path / "a.xls")


def test_a_read_only_folder_is_refused_in_one_sentence(tmp_path: Path) -> None:
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    if os.access(folder, os.W_OK):  # root writes through chmod; no one creates files in procfs
        folder.chmod(0o700)
        folder = Path("/proc/self")
        if not folder.is_dir():
            pytest.skip("running as root (chmod does not stop writes) and no /proc to try")
    before = set(os.listdir(folder))
    with pytest.raises(ExportError, match=r"^cannot write .*a\.xlsx") as caught:
        write_annuity_workbook(PRODUCTS["payout-level"], folder / "a.xlsx")
    assert "\n" not in str(caught.value)
    assert set(os.listdir(folder)) == before


# -- pictures -------------------------------------------------------------------------------------


def accent_pixels(path: Path) -> int:
    pixels = np.asarray(Image.open(path).convert("RGB")).reshape(-1, 3).astype(int)
    accent = np.array([int(ACCENT[i : i + 2], 16) for i in (0, 2, 4)])
    return int((np.abs(pixels - accent).sum(axis=1) < 12).sum())


@pytest.mark.parametrize("name", ["payout-growing-deferred-due", "accumulate-level", "perpetuity"])
def test_the_picture_opens_with_the_default_size(name: str, tmp_path: Path) -> None:
    path = plot_annuity(PRODUCTS[name], tmp_path / "a.png")
    with Image.open(path) as image:
        assert image.format == "PNG" and image.size == SIZE
    assert accent_pixels(path) > 2_000  # the value line (and the lower bars)


def test_the_picture_has_the_size_asked_and_keeps_an_existing_file(tmp_path: Path) -> None:
    target = tmp_path / "a.png"
    path = plot_annuity(PRODUCTS["payout-level"], target, size=(640, 400))
    with Image.open(path) as image:
        assert image.size == (640, 400)
    with pytest.raises(ExportError, match="already exists"):
        plot_annuity(PRODUCTS["payout-level"], target)


def test_titles_state_the_terms() -> None:
    assert annuity_title(PRODUCTS["payout-level"]) == (
        "Payout of 100,000.00 at 5 % a year: 10 annual payments of 12,950.46 in arrears"
    )
    assert annuity_title(PRODUCTS["payout-growing-deferred-due"]).endswith(
        "in advance, after 24 periods deferred, growing 2 % every 12 payments"
    )
    assert annuity_title(PRODUCTS["accumulate-growing-due"]).endswith(
        "from a balance of 1,000.00, growing 3 % every 12 deposits"
    )


# -- the command line -----------------------------------------------------------------------------

PAYOUT = ["annuity", "payout", "--fund", "100000", "--rate", "5", "--periods", "10",
          "--frequency", "annual"]  # fmt: skip
SAVER = ["annuity", "accumulate", "--target", "20000", "--rate", "4", "--periods", "16",
         "--frequency", "quarterly"]  # fmt: skip


def run(*args: str):
    return runner.invoke(app, list(args), env={"COLUMNS": "100", "NO_COLOR": "1"})


def test_cli_writes_the_workbook_and_the_picture(tmp_path: Path) -> None:
    out, png = tmp_path / "pension.xlsx", tmp_path / "pension.png"
    result = run(*PAYOUT, "--out", str(out), "--plot", str(png))
    assert result.exit_code == 0, result.output
    assert f"wrote 10 rows to {out}" in result.output
    assert "drew the value and each period's interest split to" in result.output
    assert "computed estimates" in result.output
    ws = openpyxl.load_workbook(out)[SHEETS["schedule"]]
    assert ws["C4"].value == 12_950.46 and ws["D4"].value == 5_000
    with Image.open(png) as image:
        assert image.size == SIZE


def test_cli_parquet_holds_the_frame_with_its_dtypes(tmp_path: Path) -> None:
    target = tmp_path / "saver.parquet"
    result = run(*SAVER, "--out", str(target), "--json")
    assert result.exit_code == 0, result.output
    assert json.loads(result.output)["written"] == str(target)
    expected = PRODUCTS["accumulate-level"].schedule()
    back = pd.read_parquet(target)
    pd.testing.assert_frame_equal(back, expected, check_exact=True)
    assert list(back.dtypes.astype(str)) == [
        "int64", "datetime64[ns]", "float64", "float64", "float64", "float64"
    ]  # fmt: skip
    meta = pq.read_schema(target).metadata
    assert meta[b"amort.caution"].decode() == CAUTION
    assert meta[b"amort.product"] == b"accumulation" and meta[b"amort.solved_for"] == b"deposit"


def test_cli_json_names_both_files(tmp_path: Path) -> None:
    out, png = tmp_path / "p.xlsx", tmp_path / "p.png"
    payload = json.loads(run(*PAYOUT, "--out", str(out), "--plot", str(png), "--json").output)
    assert payload["written"] == str(out) and payload["plot"] == str(png)
    assert payload["caution"] == CAUTION


def test_cli_checks_both_targets_before_writing_either(tmp_path: Path) -> None:
    out, png = tmp_path / "p.xlsx", tmp_path / "p.png"
    png.write_bytes(b"keep me")
    result = run(*SAVER, "--out", str(out), "--plot", str(png))
    assert result.exit_code == 4 and "already exists; pass --force" in result.output
    assert png.read_bytes() == b"keep me" and not out.exists()
    assert run(*SAVER, "--out", str(out), "--plot", str(png), "--force").exit_code == 0
    assert png.read_bytes()[:4] == b"\x89PNG" and out.exists()


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--out", "p.txt"], "'--out' must name a .csv file, an .xlsx workbook or a .parquet"),
        (["--plot", "p.svg"], "'--plot' must name a .png file"),
    ],
)
def test_cli_wrong_names_get_one_sentence_and_exit_2(
    extra: list[str], message: str, tmp_path: Path, monkeypatch
) -> None:
    monkeypatch.chdir(tmp_path)
    result = run(*PAYOUT, *extra)
    assert result.exit_code == 2 and message in result.output
    assert list(tmp_path.iterdir()) == []


def test_cli_perpetuity_workbook_has_the_rows_shown(tmp_path: Path) -> None:
    out = tmp_path / "p.xlsx"
    args = ["annuity", "payout", "--fund", "250000", "--rate", "4", "--perpetuity", "--rows", "6"]
    assert run(*args, "--out", str(out)).exit_code == 0
    _, rows = table(openpyxl.load_workbook(out)[SHEETS["schedule"]])
    assert len(rows) == 6
