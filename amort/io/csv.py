"""CSV export of schedules: UTF-8, ISO dates, dot decimal, money to the cent.

The file opens with ``#`` comment lines carrying the caution, then a header
row with the DataFrame's exact column names. Read it back with
``pandas.read_csv(path, comment="#", parse_dates=["due_date"])``.
"""

from __future__ import annotations

import io
from pathlib import Path

import pandas as pd

from amort.caution import CAUTION
from amort.io.files import write_text_atomic

#: Columns written with exactly two decimals (money in currency units).
MONEY_COLUMNS = (
    "opening_balance",
    "payment",
    "interest",
    "principal",
    "closing_balance",
    "balloon",
)


def schedule_csv_text(frame: pd.DataFrame, *, caution: str = CAUTION) -> str:
    """Return ``frame`` as CSV text headed by the caution as ``#`` comment lines."""
    out = frame.copy()
    for column in MONEY_COLUMNS:
        if column in out.columns:
            out[column] = out[column].map(lambda x: f"{x:.2f}")
    if "due_date" in out.columns:
        out["due_date"] = out["due_date"].dt.strftime("%Y-%m-%d")
    buffer = io.StringIO()
    buffer.write(f"# {caution}\n")
    out.to_csv(buffer, index=False, lineterminator="\n")
    return buffer.getvalue()


def write_schedule_csv(frame: pd.DataFrame, path: Path, *, force: bool = False) -> Path:
    """Write ``frame`` to ``path`` as CSV, whole or not at all.

    An existing file is kept unless ``force``.
    """
    return write_text_atomic(Path(path), schedule_csv_text(frame), force=force)
