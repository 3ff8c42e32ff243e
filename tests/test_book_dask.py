"""The book functions under dask.dataframe's map_partitions (local synchronous scheduler).

Each partition of a book is validated, positioned and projected on its own; the
partitions' results must be the single-machine results: positions row for row, and
projections added up with combine_projections (scheduled cents exactly, the float
assumption-driven columns to 1e-12 relative).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

dd = pytest.importorskip("dask.dataframe")

from amort.book import book_from_frame  # noqa: E402
from amort.book_positions import positions  # noqa: E402
from amort.book_synth import synthetic_book  # noqa: E402
from amort.projection import PROJECTION_COLUMNS, combine_projections, project  # noqa: E402

AS_OF = "2025-06-30"


def raw_book() -> pd.DataFrame:
    return synthetic_book(240, seed=19)


def loans_of(part: pd.DataFrame) -> pd.DataFrame:
    """Validate one partition (rows numbered by the partition's own index)."""
    first = int(part.index[0]) + 2 if len(part) else 2
    return book_from_frame(part, first_row=first).loans


def test_positions_by_partition_equal_the_single_machine_result() -> None:
    raw = raw_book()
    single = positions(book_from_frame(raw), AS_OF)
    parts = dd.from_pandas(raw, npartitions=4)
    meta_loans = loans_of(raw.iloc[:0])
    loans = parts.map_partitions(loans_of, meta=meta_loans)
    meta = positions(meta_loans, AS_OF)
    result = loans.map_partitions(positions, AS_OF, meta=meta).compute(scheduler="synchronous")
    result = result.reset_index(drop=True)
    pd.testing.assert_frame_equal(result, single.reset_index(drop=True))


def test_projections_by_partition_add_up_to_the_single_machine_result() -> None:
    raw = raw_book()
    options = {"psa": 150, "cdr": 0.02, "recovery": 0.4, "lag": 6, "months": 240}
    single = project(book_from_frame(raw), AS_OF, **options)
    parts = dd.from_pandas(raw, npartitions=3)
    loans = parts.map_partitions(loans_of, meta=loans_of(raw.iloc[:0]))
    meta = project(loans_of(raw.iloc[:0]), AS_OF, **options).iloc[:0]
    pieces = loans.map_partitions(project, AS_OF, **options, meta=meta)
    frames = [pieces.get_partition(k).compute(scheduler="synchronous") for k in range(3)]
    joined = combine_projections(frames)
    for column in ("scheduled_interest", "scheduled_principal", "scheduled_balance"):
        assert np.array_equal(np.rint(joined[column] * 100), np.rint(single[column] * 100))
    for column in PROJECTION_COLUMNS[2:]:
        assert np.allclose(joined[column], single[column], rtol=1e-12, atol=1e-7), column
    assert (joined["month_end"] == single["month_end"]).all()
