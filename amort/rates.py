"""Rate conversions between periodic, nominal annual and effective annual rates (float64).

The undated convention of amort: periodic rate ``i = j / p`` for a nominal
annual rate ``j`` and ``p`` payments a year. The effective annual rate of a
periodic rate is ``(1 + i)^p - 1``, computed as ``expm1(p log1p(i))`` so that
it stays exact to a few ulps for tiny rates.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

FloatArray = npt.NDArray[np.float64]


def nominal_annual(periodic: npt.ArrayLike, per_year: int) -> FloatArray:
    """Return the nominal annual rate ``j = i p`` of a periodic rate (decimal fractions).

    >>> round(float(nominal_annual(0.005, 12)), 12)
    0.06
    """
    return np.asarray(periodic, dtype=np.float64) * per_year


def effective_annual(periodic: npt.ArrayLike, per_year: int) -> FloatArray:
    """Return the effective annual rate ``(1 + i)^p - 1`` of a periodic rate.

    >>> round(float(effective_annual(0.06 / 12, 12)), 11)
    0.06167781186
    """
    i = np.asarray(periodic, dtype=np.float64)
    return np.expm1(per_year * np.log1p(i))
