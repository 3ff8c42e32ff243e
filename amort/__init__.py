"""amort: loan and annuity schedules in exact cents, solved in closed form.

The public names are re-exported here; everything else is implementation.

>>> from amort import Loan
>>> Loan(principal=250_000, annual_rate="6.5%", periods=360).payment
Decimal('1580.17')
"""

from __future__ import annotations

from amort import solve
from amort.caution import CAUTION
from amort.conventions import Frequency, Timing
from amort.errors import AmortError, ExportError, InvalidTerms, NoSolution
from amort.loan import Loan, Reconciliation
from amort.money import Rounding

__version__ = "0.1.0"

__all__ = [
    "CAUTION",
    "AmortError",
    "ExportError",
    "Frequency",
    "InvalidTerms",
    "Loan",
    "NoSolution",
    "Reconciliation",
    "Rounding",
    "Timing",
    "__version__",
    "solve",
]
