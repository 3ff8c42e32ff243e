"""Live formulas for one loan's schedule sheet, checked to the cent before they are written.

With ``formulas=True`` the schedule sheet of :func:`amort.io.xlsx_loan.write_workbook`
holds, instead of numbers, the rules the engine follows (DESIGN.md, "Money and rounding"),
written against the named input cells of the summary sheet:

    opening balance   = principal_lent (first row), else the previous closing balance
    interest          = ROUND(opening balance x rate, 2)             (in arrears)
                        ROUND((opening balance - payment) x rate, 2) (in advance)
    principal         = ROUND(payment - interest, 2)
    closing balance   = ROUND(opening balance - principal - extra - balloon, 2)
    payment           = level_payment; the last one pays what is left

``rate`` is ``periodic_rate`` (= ``annual_rate / payments_a_year``), or for a
dated loan ``annual_rate x days / 360`` (or 365), or the exact year fraction
of its day count. ROUND stands for the loan's interest rounding: ROUND (half-up,
ties away from zero), ROUNDUP (up), ROUNDDOWN (down), or for half-even
``IF(MOD(ROUND(100x, 6), 2) = 0.5, ROUNDDOWN(x, 2), ROUND(x, 2))``. Payments
that a structure or an event sets (interest-only, equal principal, graduated,
listed, holidays) are written as the engine's numbers; so are rates of a
compounded loan and reset rates without an exact short form.

Before anything is written, :func:`plan_live` replays those rules in exact
integer cents and requires the engine's every cent back; then it replays each
interest product in float64, as a spreadsheet computes it, and refuses
(:class:`~amort.errors.ExportError`) if an exact product lies so close to a
rounding boundary (without being on it) that a spreadsheet's 15 significant
digits could not tell the two apart. So the cached values written beside the
formulas and the recalculated values agree to the cent (``tests/reference/
test_libreoffice_recalc.py`` recalculates in LibreOffice Calc to check).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from amort.dated import OddDays
from amort.daycount import DayCount
from amort.errors import ExportError
from amort.io.xlsx import FIRST_DATA_ROW, Cached
from amort.money import Rounding, round_ratio

if TYPE_CHECKING:
    from amort.loan import Loan

#: Names of the input cells the formulas refer to (defined names of the workbook).
INPUT_NAMES = (
    "principal_lent",
    "annual_rate",
    "payments_a_year",
    "periodic_rate",
    "level_payment",
    "balloon_due",
)

_ROUND = {Rounding.HALF_UP: "ROUND", Rounding.UP: "ROUNDUP", Rounding.DOWN: "ROUNDDOWN"}


def rounded(expression: str, mode: Rounding) -> str:
    """Return the spreadsheet formula text rounding ``expression`` to the cent under ``mode``.

    >>> rounded("C4*periodic_rate", Rounding.HALF_UP)
    'ROUND(C4*periodic_rate,2)'
    >>> rounded("C4*H4", Rounding.HALF_EVEN)
    'IF(MOD(ROUND((C4*H4)*100,6),2)=0.5,ROUNDDOWN(C4*H4,2),ROUND(C4*H4,2))'
    """
    if mode is Rounding.HALF_EVEN:
        # A tie on an even cent rounds down; every other value as half-up does.
        return (
            f"IF(MOD(ROUND(({expression})*100,6),2)=0.5,"
            f"ROUNDDOWN({expression},2),ROUND({expression},2))"
        )
    return f"{_ROUND[mode]}({expression},2)"


@dataclass(frozen=True)
class RateCell:
    """One row's rate: the formula text, its exact value and the double a spreadsheet gets."""

    formula: str | None  # None: the cell holds the number ``as_float``
    exact: Fraction
    as_float: float


@dataclass(frozen=True)
class LivePlan:
    """What the live schedule sheet holds: the input cells' values and each row's formulas."""

    periodic_rate_formula: str | None  # None: the periodic_rate cell holds a number
    periodic_rate_value: float
    cells: dict[tuple[int, str], str]  # (row index, column) -> formula text (no "=")
    rates: list[RateCell] | None  # per row, when the sheet has a rate column


def plan_live(loan: Loan, frame: pd.DataFrame) -> LivePlan:
    """Return the formulas of ``frame``'s sheet, after checking that they give every cent.

    ``frame`` is the schedule as the sheet shows it (``loan.schedule()``,
    perhaps without an empty ``due_date``). Raises
    :class:`~amort.errors.ExportError` when a spreadsheet could not reproduce
    the engine's cents with these formulas.
    """
    columns = list(frame.columns)
    col = {c: get_column_letter(j) for j, c in enumerate(columns, start=1)}
    n = len(frame)
    cents = {c: _cents(frame[c]) for c in columns if c in _MONEY}
    mode = loan.interest_rounding
    advance = loan.advance
    annual = Fraction(loan.annual_rate)
    per_year = loan.frequency.per_year
    plain_rate = loan.compounding is None
    periodic = loan.periodic_rate
    p_formula = "annual_rate/payments_a_year" if plain_rate else None
    p_float = float(annual) / per_year if plain_rate else float(periodic)
    exact_rates = _exact_rates(loan, n)
    rates = _rate_cells(loan, frame, exact_rates, col, p_float) if "rate" in columns else None
    odd_cap = (
        loan.dated and loan.odd_days is OddDays.CAPITALISE and "capitalised" in cents and n > 0
    )
    holiday = np.zeros(n, dtype=bool)
    if "capitalised" in cents:
        holiday = cents["capitalised"] > 0
        if odd_cap:
            holiday[0] = False
    level = round(loan.payment * 100)
    cells: dict[tuple[int, str], str] = {}
    opening = round(loan.principal * 100)
    for k in range(n):
        r = FIRST_DATA_ROW + k
        last = k == n - 1

        def ref(column: str, r: int = r) -> str:
            return f"{col[column]}{r}"

        def value(column: str, k: int = k) -> int:
            return int(cents[column][k]) if column in cents else 0

        cells[(k, "opening_balance")] = (
            "principal_lent" if k == 0 else ref("closing_balance", r - 1)
        )
        cap_here = "capitalised" in cents and (holiday[k] or (odd_cap and k == 0))
        extra = value("extra_principal")
        balloon = value("balloon")
        # The payment: the level payment, what is left (last row), or the engine's number.
        payment = value("payment")
        pay_formula: str | None = None
        if last and not advance:
            parts = [ref("opening_balance")]
            if cap_here and not holiday[k]:
                parts.append("+" + ref("capitalised"))
            parts.append("+" + ref("interest"))
            if "extra_principal" in cents:
                parts.append("-" + ref("extra_principal"))
            if "balloon" in cents:
                parts.append("-" + ref("balloon"))
            pay_formula = f"ROUND({''.join(parts)},2)"
        elif last and advance and "balloon" not in cents and not loan.structured:
            pay_formula = ref("opening_balance")
        elif not loan.structured and payment == level:
            pay_formula = "level_payment"
        # The interest on its base, exactly as the engine computes it.
        rate = exact_rates[k]
        base = (
            opening - payment
            if advance
            else opening + (value("capitalised") if odd_cap and k == 0 else 0)
        )
        interest = round_ratio(base * rate.numerator, rate.denominator, mode)
        rate_ref = ref("rate") if rates is not None else "periodic_rate"
        # The same base as the spreadsheet computes it, in float64 from the cells' doubles.
        if advance:
            base_text = f"({ref('opening_balance')}-{ref('payment')})"
            base_float = opening / 100 - payment / 100
        elif odd_cap and k == 0:
            base_text = f"({ref('opening_balance')}+{ref('capitalised')})"
            base_float = opening / 100 + value("capitalised") / 100
        else:
            base_text = ref("opening_balance")
            base_float = opening / 100
        cells[(k, "interest")] = rounded(f"{base_text}*{rate_ref}", mode)
        rate_float = rates[k].as_float if rates is not None else p_float
        _check_margin(k + 1, base, base_float * rate_float, rate, mode)
        if pay_formula is not None:
            if last and not advance:
                payment = opening + (value("capitalised") if odd_cap and k == 0 else 0)
                payment += interest - extra - balloon
            elif last and advance:
                payment = opening
            cells[(k, "payment")] = pay_formula
        cap = value("capitalised")
        if holiday[k]:
            cap = interest
            cells[(k, "capitalised")] = ref("interest")
        principal = payment - interest + (cap if holiday[k] else 0)
        cells[(k, "principal")] = (
            f"ROUND({ref('payment')}-{ref('interest')}+{ref('capitalised')},2)"
            if holiday[k]
            else f"ROUND({ref('payment')}-{ref('interest')},2)"
        )
        if last and advance and "balloon" in cents:
            balloon = opening - payment + interest
            cells[(k, "balloon")] = (
                f"ROUND({ref('opening_balance')}-{ref('payment')}+{ref('interest')},2)"
            )
        elif last and "balloon" in cents:
            balloon = round(loan.balloon * 100)
            cells[(k, "balloon")] = "balloon_due"
        closing = opening + (cap if cap_here else 0) - principal - extra - balloon
        parts = [ref("opening_balance")]
        if cap_here:
            parts.append("+" + ref("capitalised"))
        parts.append("-" + ref("principal"))
        if "extra_principal" in cents:
            parts.append("-" + ref("extra_principal"))
        if "balloon" in cents:
            parts.append("-" + ref("balloon"))
        cells[(k, "closing_balance")] = f"ROUND({''.join(parts)},2)"
        replayed = {
            "opening_balance": opening,
            "payment": payment,
            "interest": interest,
            "principal": principal,
            "closing_balance": closing,
            "capitalised": cap,
            "balloon": balloon,
        }
        for column, got in replayed.items():
            if column in cents and got != int(cents[column][k]):
                raise ExportError(
                    f"live formulas cannot reproduce this schedule: period {k + 1}'s "
                    f"{column.replace('_', ' ')} would be {got / 100:,.2f}, not the engine's "
                    f"{int(cents[column][k]) / 100:,.2f}; write the workbook without formulas"
                )
        opening = closing
    if rates is not None:
        for k, cell in enumerate(rates):
            if cell.formula is not None:
                cells[(k, "rate")] = cell.formula
    return LivePlan(p_formula, p_float, cells, rates)


def apply_live(ws: Worksheet, frame: pd.DataFrame, plan: LivePlan, cached: Cached) -> None:
    """Put ``plan``'s formulas into the schedule sheet ``ws``, each with its engine value cached."""
    columns = list(frame.columns)
    col = {c: get_column_letter(j) for j, c in enumerate(columns, start=1)}
    for (k, column), formula in plan.cells.items():
        value = float(frame[column].iloc[k])
        cached.set(ws, f"{col[column]}{FIRST_DATA_ROW + k}", "=" + formula, value)


def sum_formulas(
    ws: Worksheet, frame: pd.DataFrame, totals: list[str], cached: Cached
) -> dict[str, str]:
    """Replace the totals row's numbers by SUM formulas (cached: the exact cent sums)."""
    columns = list(frame.columns)
    row = FIRST_DATA_ROW + len(frame)
    where = {}
    for column in totals:
        letter = get_column_letter(columns.index(column) + 1)
        span = f"{letter}{FIRST_DATA_ROW}:{letter}{row - 1}"
        total = int(_cents(frame[column]).sum()) / 100
        cached.set(ws, f"{letter}{row}", f"=SUM({span})", total)
        where[column] = span
    return where


_MONEY = (
    "opening_balance",
    "payment",
    "interest",
    "principal",
    "closing_balance",
    "balloon",
    "extra_principal",
    "capitalised",
    "odd_days_interest",
)


def _cents(series: pd.Series) -> np.ndarray:
    return np.rint(series.to_numpy(dtype=np.float64) * 100).astype(np.int64)


def _exact_rates(loan: Loan, rows: int) -> list[Fraction]:
    """Each row's exact periodic rate, as the engine applies it."""
    terms = loan.batch_terms()
    if terms.period_rate_num is not None and terms.period_rate_den is not None:
        return [
            Fraction(int(terms.period_rate_num[k, 0]), int(terms.period_rate_den[k, 0]))
            for k in range(rows)
        ]
    return [Fraction(int(terms.rate_num[0]), int(terms.rate_den[0]))] * rows


def _rate_cells(
    loan: Loan,
    frame: pd.DataFrame,
    rates: list[Fraction],
    col: dict[str, str],
    p_float: float,
) -> list[RateCell]:
    """Each row's rate cell: a formula on the inputs where one gives the exact rate."""
    annual = Fraction(loan.annual_rate)
    a_float = float(annual)
    per_year = loan.frequency.per_year
    periodic = loan.periodic_rate
    base = loan.dated_plan().rates if loan.dated else None
    days = frame["days"].tolist() if "days" in frame.columns else None
    out = []
    for k, rate in enumerate(rates):
        r = FIRST_DATA_ROW + k
        unreset = base is not None and k < len(base) and base[k] == rate
        cell = RateCell(None, rate, float(rate))
        if unreset and annual > 0 and loan.compounding is None:
            share = rate / annual
            counted = loan.day_count is not DayCount.EQUAL and days is not None
            for basis in (360, 365):
                if counted and days is not None and share == Fraction(int(days[k]), basis):
                    ref = f"{col['days']}{r}"
                    cell = RateCell(
                        f"annual_rate*{ref}/{basis}", rate, a_float * int(days[k]) / basis
                    )
                    break
            else:
                if rate == periodic:
                    cell = RateCell("periodic_rate", rate, p_float)
                elif share.denominator < 10**9 and share.numerator < 10**9:
                    cell = RateCell(
                        f"annual_rate*{share.numerator}/{share.denominator}",
                        rate,
                        a_float * share.numerator / share.denominator,
                    )
        elif rate == periodic:
            cell = RateCell("periodic_rate", rate, p_float)
        elif loan.compounding is None:
            yearly = rate * per_year
            text = _short_decimal(yearly)
            if text is not None:
                cell = RateCell(f"{text}/payments_a_year", rate, float(Decimal(text)) / per_year)
        out.append(cell)
    return out


def _short_decimal(value: Fraction) -> str | None:
    """``value`` as a decimal of at most 12 places, or None when it has no such form."""
    scaled = value * 10**12
    if scaled.denominator != 1:
        return None
    return f"{Decimal(scaled.numerator).scaleb(-12).normalize():f}"


def _check_margin(period: int, base: int, computed: float, rate: Fraction, mode: Rounding) -> None:
    """Refuse when a spreadsheet's float64 product could round otherwise than the exact one.

    ``base`` in cents; the exact interest is ``X = base x rate`` cents, the
    spreadsheet's is ``computed`` (currency units), the float64 product of the
    cells' doubles. A spreadsheet rounds the cents to 15 significant digits
    before it rounds to the cent (LibreOffice and others do, so ROUND(2.675, 2)
    is 2.68); an exact tie must survive that, and a non-tie must stay clear of
    the boundary by more than that grid.
    """
    exact = base * rate
    if exact == 0:
        return
    error = abs(Fraction(computed) * 100 - exact)
    magnitude = abs(exact)
    grid = Fraction(10) ** (math.floor(math.log10(magnitude)) - 14)
    step = Fraction(1, 2) if mode.half_unit else Fraction(1)
    offset = Fraction(1, 2) if mode.half_unit else Fraction(0)
    nearest = round((exact - offset) / step) * step + offset  # the nearest rounding boundary
    distance = abs(exact - nearest)
    if distance == 0:
        ok = error <= grid / 4
    else:
        ok = distance > grid + error
        if mode is Rounding.HALF_EVEN:  # the formula also tests ties at 6 decimals of a cent
            ok = ok and distance > Fraction(1, 10**6) + error
    if not ok:
        raise ExportError(
            f"live formulas cannot reproduce period {period}'s interest to the cent: the exact "
            f"figure {float(exact) / 100:.12f} lies too close to a rounding boundary for a "
            "spreadsheet's 15-digit arithmetic; write the workbook without formulas"
        )
