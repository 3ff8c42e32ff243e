"""Parquet export: the API's exact column names and dtypes, every value back, the caution inside."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from amort import CAUTION, ExportError, Loan
from amort.events import ExtraPrincipal, PaymentHoliday
from amort.io.parquet import CAUTION_KEY, VERSION_KEY, write_schedule_parquet

LOANS = {
    "undated": Loan(principal=18_500, annual_rate="7.9%", periods=60),
    "dated": Loan(
        principal=12_000,
        annual_rate="8.25%",
        periods=6,
        start="2027-01-15",
        first_payment="2027-03-01",
        day_count="actual/365",
        odd_days="capitalise",
    ),
    "balloon-events": Loan(
        principal=40_000,
        annual_rate="6%",
        periods=36,
        balloon=15_000,
        events=(PaymentHoliday(period=3), ExtraPrincipal(period=7, amount=500)),
    ),
}


@pytest.mark.parametrize("name", sorted(LOANS))
def test_every_value_and_dtype_comes_back(name: str, tmp_path: Path) -> None:
    frame = LOANS[name].schedule()
    path = write_schedule_parquet(frame, tmp_path / "plan.parquet")
    back = pd.read_parquet(path)
    assert list(back.columns) == list(frame.columns)
    assert list(back.dtypes) == list(frame.dtypes)
    pd.testing.assert_frame_equal(back, frame, check_exact=True)


def test_arrow_types_are_int64_timestamp_and_double(tmp_path: Path) -> None:
    path = write_schedule_parquet(LOANS["dated"].schedule(), tmp_path / "plan.parquet")
    schema = pq.read_schema(path)
    assert schema.field("period").type == pa.int64()
    assert schema.field("due_date").type == pa.timestamp("ns")
    for name in ("opening_balance", "payment", "interest", "principal", "closing_balance"):
        assert schema.field(name).type == pa.float64()


def test_the_caution_and_metadata_are_in_the_file(tmp_path: Path) -> None:
    path = write_schedule_parquet(
        LOANS["undated"].schedule(),
        tmp_path / "plan.parquet",
        metadata={"borrower": "=cmd|' /C calc'!A0"},
    )
    meta = pq.read_schema(path).metadata
    assert meta[CAUTION_KEY].decode() == CAUTION
    assert meta[VERSION_KEY]
    assert meta[b"amort.borrower"].decode() == "=cmd|' /C calc'!A0"  # stored as given
    assert b"pandas" in meta  # pandas' own entry is kept


def test_an_existing_file_is_kept_without_force(tmp_path: Path) -> None:
    target = tmp_path / "plan.parquet"
    target.write_bytes(b"keep")
    with pytest.raises(ExportError, match="already exists"):
        write_schedule_parquet(LOANS["undated"].schedule(), target)
    assert target.read_bytes() == b"keep"
    write_schedule_parquet(LOANS["undated"].schedule(), target, force=True)
    assert len(pd.read_parquet(target)) == 60


def test_a_failed_write_leaves_no_partial_file(tmp_path: Path, monkeypatch) -> None:
    def broken(table, where, **kwargs):
        Path(where).write_bytes(b"PAR1 half")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(pq, "write_table", broken)
    with pytest.raises(ExportError, match="No space left on device"):
        write_schedule_parquet(LOANS["undated"].schedule(), tmp_path / "plan.parquet")
    assert list(tmp_path.iterdir()) == []


def test_the_path_must_be_a_parquet(tmp_path: Path) -> None:
    with pytest.raises(ExportError, match=r"must end in \.parquet"):
        write_schedule_parquet(LOANS["undated"].schedule(), tmp_path / "plan.pq")
