"""pandas frames of cent schedules, in the column order of DESIGN.md."""

from __future__ import annotations

import numpy as np
import pandas as pd

from amort.errors import InvalidTerms
from amort.schedule import CentsTable

#: The schedule columns every table has, in this order.
SCHEDULE_COLUMNS = [
    "period",
    "due_date",
    "opening_balance",
    "payment",
    "interest",
    "principal",
    "closing_balance",
]


#: Largest integer number of cents float64 holds exactly (2**53).
_EXACT_CENTS = 2**53


def _money(cents: np.ndarray) -> np.ndarray:
    # cents / 100 is the float64 nearest the exact decimal amount, as float("1580.17") is.
    return cents.astype(np.float64) / 100.0


def schedule_frame(table: CentsTable, *, with_loan: bool = False) -> pd.DataFrame:
    """Return the rows of ``table`` as a DataFrame (money as float64 holding exact cents).

    Columns: :data:`SCHEDULE_COLUMNS`, then ``balloon`` when any row pays one.
    ``due_date`` is datetime64 (NaT for undated schedules). With
    ``with_loan`` a leading ``loan`` column holds each row's batch index.
    """
    size = table.period.size
    widest = max((int(np.abs(a).max(initial=0)) for a in (table.opening, table.closing)), default=0)
    if widest > _EXACT_CENTS:
        raise InvalidTerms(
            f"the balance reaches {widest / 100:,.2f}, beyond what float64 holds to the cent "
            f"({_EXACT_CENTS / 100:,.2f}); the terms let the balance grow far past the principal"
        )
    data: dict[str, object] = {}
    if with_loan:
        data["loan"] = table.loan
    data["period"] = table.period
    data["due_date"] = pd.Series(np.full(size, np.datetime64("NaT"), dtype="datetime64[ns]"))
    data["opening_balance"] = _money(table.opening)
    data["payment"] = _money(table.payment)
    data["interest"] = _money(table.interest)
    data["principal"] = _money(table.principal)
    data["closing_balance"] = _money(table.closing)
    if table.balloon.any():
        data["balloon"] = _money(table.balloon)
    frame = pd.DataFrame(data)
    frame["due_date"] = frame["due_date"].astype("datetime64[ns]")
    return frame
