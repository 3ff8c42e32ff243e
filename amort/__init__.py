"""amort: loan and annuity schedules in exact cents, solved in closed form.

The public names are re-exported here; everything else is implementation.

>>> from amort import Loan
>>> Loan(principal=250_000, annual_rate="6.5%", periods=360).payment
Decimal('1580.17')
"""

from __future__ import annotations

from amort import solve
from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_cents import AnnuityCheck
from amort.apr import Standard
from amort.book import Book, read_book
from amort.book_positions import positions
from amort.calendar import BusinessDay
from amort.caution import CAUTION
from amort.conventions import Frequency, Timing
from amort.dated import InterestDates, OddDays
from amort.daycount import DayCount
from amort.disclosure import Disclosure, Fee, disclose, disclose_flows
from amort.errors import AmortError, ExportError, InvalidTerms, NoSolution
from amort.flows import Flow, Flows, read_flows
from amort.loan import Loan, Reconciliation
from amort.money import Rounding
from amort.projection import project
from amort.rates import Compounding

__version__ = "0.1.0"


def __getattr__(name: str) -> object:
    # Writers that need openpyxl load on first use, so that importing amort stays light.
    if name == "write_workbook":
        from amort.io.xlsx_loan import write_workbook

        return write_workbook
    if name == "write_annuity_workbook":
        from amort.io.xlsx_annuity import write_annuity_workbook

        return write_annuity_workbook
    if name == "write_disclosure_workbook":
        from amort.io.xlsx_disclosure import write_disclosure_workbook

        return write_disclosure_workbook
    raise AttributeError(f"module 'amort' has no attribute {name!r}")


__all__ = [
    "CAUTION",
    "Accumulation",
    "AmortError",
    "AnnuityCheck",
    "Book",
    "BusinessDay",
    "Compounding",
    "DayCount",
    "Disclosure",
    "ExportError",
    "Fee",
    "Flow",
    "Flows",
    "Frequency",
    "InterestDates",
    "InvalidTerms",
    "Loan",
    "NoSolution",
    "OddDays",
    "Payout",
    "Reconciliation",
    "Rounding",
    "Standard",
    "Timing",
    "__version__",
    "disclose",
    "disclose_flows",
    "positions",
    "project",
    "read_book",
    "read_flows",
    "solve",
    "write_annuity_workbook",
    "write_disclosure_workbook",
    "write_workbook",
]
