"""The caution every report and export of amort carries."""

from __future__ import annotations

CAUTION = (
    "These figures are computed estimates, not financial, legal or tax advice. "
    "Disclosure rules (APR and its tolerances) differ by jurisdiction; the local "
    "regulation and the loan agreement govern. Have a qualified person check the "
    "figures before they are given to a borrower."
)
