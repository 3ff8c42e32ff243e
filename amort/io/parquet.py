"""Parquet export of schedule-like DataFrames (pyarrow), with the caution in the file's metadata.

The file holds the DataFrame's exact column names and dtypes (``period``
int64, ``due_date`` datetime64[ns] with NaT for undated rows, money float64
holding exact cents, as :mod:`amort.frames` makes them), so
``pandas.read_parquet(path)`` returns an equal DataFrame. The schema's
key-value metadata carries :data:`CAUTION_KEY` (the caution) and
:data:`VERSION_KEY` (the amort version that wrote it), beside pandas' own
``pandas`` entry; read them with ``pyarrow.parquet.read_schema(path).metadata``.
Files are written whole or not at all, and an existing file is kept unless
``force``.
"""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

from amort import __version__
from amort.caution import CAUTION
from amort.errors import ExportError
from amort.io.files import write_atomic

#: Schema metadata keys (bytes, as Parquet stores them).
CAUTION_KEY = b"amort.caution"
VERSION_KEY = b"amort.version"


def schedule_table(frame: pd.DataFrame, *, metadata: Mapping[str, str] | None = None) -> pa.Table:
    """Return ``frame`` as a pyarrow Table with the caution (and ``metadata``) in its schema.

    ``metadata`` adds ``amort.<key>`` entries (e.g. a terms file's borrower
    and reference); its values are stored as given (Parquet metadata is never
    evaluated as a formula).

    >>> import pandas as pd
    >>> table = schedule_table(pd.DataFrame({"period": [1], "payment": [374.23]}))
    >>> table.schema.metadata[CAUTION_KEY].decode()[:30]
    'These figures are computed est'
    """
    try:
        table = pa.Table.from_pandas(frame, preserve_index=False)
    except (pa.ArrowInvalid, pa.ArrowTypeError) as exc:
        raise ExportError(f"cannot write the frame as Parquet: {exc}") from exc
    extra = {CAUTION_KEY: CAUTION.encode(), VERSION_KEY: __version__.encode()}
    for key, value in (metadata or {}).items():
        extra[f"amort.{key}".encode()] = str(value).encode()
    return table.replace_schema_metadata({**(table.schema.metadata or {}), **extra})


def write_schedule_parquet(
    frame: pd.DataFrame,
    path: Path,
    *,
    force: bool = False,
    metadata: Mapping[str, str] | None = None,
) -> Path:
    """Write ``frame`` to ``path`` (.parquet), whole or not at all; return the path.

    >>> import pandas as pd, tempfile, pathlib
    >>> from amort import Loan
    >>> frame = Loan(principal=18_500, annual_rate="7.9%", periods=60).schedule()
    >>> out = write_schedule_parquet(frame, pathlib.Path(tempfile.mkdtemp()) / "car.parquet")
    >>> back = pd.read_parquet(out)
    >>> back.equals(frame), list(back.dtypes.astype(str))[:3]
    (True, ['int64', 'datetime64[ns]', 'float64'])
    """
    path = Path(path)
    if path.suffix.lower() != ".parquet":
        raise ExportError(f"'path' must end in .parquet (got {str(path)!r})")
    table = schedule_table(frame, metadata=metadata)

    def write(tmp: Path) -> None:
        pq.write_table(table, tmp)

    return write_atomic(path, write, force=force)
