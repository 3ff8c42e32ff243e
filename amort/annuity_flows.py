"""What payouts and accumulations share: growth terms, flow paths, horizons, dates, frames.

A flow is a payment out of a fund (:class:`amort.annuity.Payout`) or a
deposit into a balance (:class:`amort.annuity_accumulation.Accumulation`).
Flow k (k = 1..n) is ``c_1 g^s`` (geometric, ``g = 1 + growth``) or
``c_1 + s h`` (arithmetic, step ``h``), ``s = floor((k - 1) / e)`` whole
growth steps of ``e`` flows before it, the default ``e`` being one year of
flows, so that ``growth`` is a yearly increase, as on :class:`amort.Loan`.
Each geometric flow is the rounded first flow grown exactly and rounded
again, ``round(c_1 g^s)``, the rule of :func:`amort.graduated.payment_path`.

Schedules are pandas frames in the long-table conventions of loans, with
columns named for what they are in an annuity:
``period, due_date, opening_value, payment | deposit, interest_credited,
closing_value``; money as float64 holding exact cents, ``due_date``
datetime64 (NaT when undated).
"""

from __future__ import annotations

import math
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from amort import solve
from amort.annuity_cents import PathTable
from amort.calendar import due_dates
from amort.conventions import Frequency
from amort.errors import InvalidTerms, NoSolution, describe
from amort.money import CENT, MAX_AMOUNT, Rounding, parse_number, round_fraction, to_cents
from amort.schedule import CentsTable

IntArray = npt.NDArray[np.int64]
FloatArray = npt.NDArray[np.float64]

#: Decimal places an implied annual rate is kept to (8 decimals of a percent, as amort rate).
RATE_PLACES = Decimal("1e-10")
#: Largest value a schedule may reach, in cents: float64 holds every cent below 2**53.
_EXACT_CENTS = 2**53
_LOG_EXACT = math.log(_EXACT_CENTS)


def parse_growth(value: object, field: str = "growth", *, percent: bool = False) -> Decimal:
    """Return a growth per step as a decimal fraction (``"2%"`` or 0.02); above -100 %.

    A string ending in ``%`` is percent; a bare number is a decimal fraction,
    or percent when ``percent`` (the CLI reads ``2`` as 2 %). In the API a
    bare number above 1 is refused as a likely slip for a percent, as for rates.

    >>> parse_growth("2%"), parse_growth(-0.01), parse_growth("2", percent=True)
    (Decimal('0.02'), Decimal('-0.01'), Decimal('0.02'))
    """
    text = value.strip() if isinstance(value, str) else value
    marked = isinstance(text, str) and text.endswith("%")
    number = parse_number(text[:-1] if marked and isinstance(text, str) else text, field)
    growth = number / 100 if (marked or percent) else number
    if not (marked or percent) and abs(growth) > 1:
        raise InvalidTerms(
            f"{field!r} is a decimal fraction and {describe(value)} would mean "
            f"{growth * 100:f} % a step; write {str(number) + '%'!r} instead"
        )
    if growth <= -1:
        raise InvalidTerms(f"{field!r} must be above -100 % (got {describe(value)})")
    return growth


def parse_step(value: object, field: str = "step") -> Decimal:
    """Return an arithmetic step in currency units: whole cents, either sign.

    >>> parse_step("-25.50")
    Decimal('-25.50')
    """
    step = parse_number(value, field)
    if step != step.quantize(CENT, rounding="ROUND_DOWN"):
        raise InvalidTerms(f"{field!r} must be a whole number of cents (got {describe(value)})")
    if abs(step) > MAX_AMOUNT:
        raise InvalidTerms(f"{field!r} must be at most {MAX_AMOUNT:,} (got {describe(value)})")
    return step


def parse_every(value: object, frequency: Frequency) -> int:
    """Return the flows between growth steps (default: one year of flows)."""
    if value is None:
        return frequency.per_year
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise InvalidTerms(
            f"'growth_every' must be a whole number of periods >= 1 (got {describe(value)})"
        )
    return int(value)


def parse_count(value: object, field: str, *, minimum: int = 0) -> int:
    """Return a whole number of periods from ``minimum`` to 100,000."""
    limit = solve.MAX_PERIODS
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        try:
            number = parse_number(value, field)
        except InvalidTerms:
            number = Decimal("NaN")
        if not number.is_finite() or number != number.to_integral_value():
            raise InvalidTerms(
                f"{field!r} must be a whole number of periods (got {describe(value)})"
            ) from None
        value = int(number)
    count = int(value)
    if not minimum <= count <= limit:
        raise InvalidTerms(
            f"{field!r} must be a whole number from {minimum} to {limit:,} (got {describe(value)})"
        )
    return count


def periodic(annual_rate: Decimal, frequency: Frequency) -> Fraction:
    """Return the exact periodic rate: the nominal annual rate over the flows a year."""
    return Fraction(annual_rate) / frequency.per_year


def check_rate(annual_rate: Decimal, frequency: Frequency) -> None:
    """Refuse a rate above 100 % a period, where the closed forms are not tested."""
    if annual_rate > frequency.per_year:
        raise InvalidTerms(
            f"'annual_rate' must be at most {frequency.per_year * 100} % for "
            f"{frequency.value} flows (100 % a period) (got {annual_rate * 100:f} %)"
        )


def growth_fraction(growth: Decimal | None) -> Fraction | None:
    return None if growth is None else Fraction(growth)


def flow_path(
    first_cents: int,
    count: int,
    *,
    defer: int = 0,
    growth: Fraction | None = None,
    step_cents: int = 0,
    every: int = 1,
    mode: Rounding = Rounding.HALF_UP,
) -> IntArray:
    """Return each period's scheduled flow in cents: ``defer`` zeros, then ``count`` flows.

    >>> flow_path(10_000, 5, defer=1, growth=Fraction(1, 10), every=2).tolist()
    [0, 10000, 10000, 11000, 11000, 12100]
    """
    steps = (count + every - 1) // every
    if growth is not None:
        g = 1 + growth
        if first_cents and math.log(abs(first_cents)) + (steps - 1) * math.log(g) > _LOG_EXACT:
            raise InvalidTerms(
                f"'growth' {float(growth) * 100:g} % a step makes the flows grow past "
                f"{_EXACT_CENTS / 100:,.2f} over {count:,} flows, beyond exact float64 cents"
            )
        power = Fraction(first_cents)
        amounts = []
        for _ in range(steps):
            # The rounded first flow grown exactly, then rounded (one growth power a step).
            amounts.append(round_fraction(power, mode))
            power *= g
        per_step = np.asarray(amounts, dtype=np.int64)
    else:
        per_step = first_cents + step_cents * np.arange(steps, dtype=np.int64)
    flows = np.repeat(per_step, every)[:count]
    return np.concatenate([np.zeros(defer, dtype=np.int64), flows]).astype(np.int64)


def check_flows(flows: IntArray, first_cents: int, word: str) -> None:
    """Refuse a path whose step makes a later flow negative (mixed signs)."""
    if flows.size and int(flows.min()) < 0:
        k = int(np.flatnonzero(flows < 0)[0]) + 1
        raise InvalidTerms(
            f"the 'step' makes {word} {k} negative ({int(flows[k - 1]) / 100:,.2f}) after a first "
            f"{word} of {first_cents / 100:,.2f}; {word}s must stay >= 0 over the whole horizon"
        )


def float_path(first: float, count: int, *, growth: float, step: float, every: int) -> FloatArray:
    """Return ``count`` flows ``c_1 g^s`` or ``c_1 + s h`` in float64 (for horizon searches)."""
    s = np.arange(count, dtype=np.float64) // every
    with np.errstate(over="ignore"):
        if growth:
            return np.asarray(first * np.exp(s * math.log1p(growth)), dtype=np.float64)
        return np.asarray(first + s * step, dtype=np.float64)


def first_reaching(values: FloatArray, floor: float) -> int | None:
    """Return the first 1-based index where ``values >= floor``, or None."""
    hits = np.flatnonzero(values >= floor)
    return None if hits.size == 0 else int(hits[0]) + 1


def quantized_rate(periodic_rate: float, frequency: Frequency) -> Decimal:
    """Return the nominal annual rate of a solved periodic rate, to 8 decimals of a percent."""
    annual = Decimal(repr(periodic_rate * frequency.per_year)).quantize(RATE_PLACES)
    if annual <= 0:
        raise NoSolution("the implied rate rounds to 0 at 8 decimals of a percent")
    return annual


def from_engine(table: CentsTable) -> PathTable:
    """Return a loan-engine table as annuity rows: the balloon paid is the value left."""
    return PathTable(
        annuity=table.loan,
        period=table.period,
        opening=table.opening,
        flow=table.payment,
        interest=table.interest,
        closing=table.closing + table.balloon,
        rows=table.rows,
        final_flow=table.final_payment,
        final_needed=table.final_payment,
    )


def dates_for(start: date | None, rows: int, frequency: Frequency, *, advance: bool) -> pd.Series:
    """Return each row's due date: a flow falls at its period's end (its start in advance)."""
    if start is None or rows == 0:
        return pd.Series(np.full(rows, np.datetime64("NaT"), dtype="datetime64[ns]"))
    dates = due_dates(start, rows + 1, frequency).unadjusted
    chosen = dates[:rows] if advance else dates[1:]
    return pd.Series(pd.to_datetime(list(chosen))).astype("datetime64[ns]")


def frame(table: PathTable, flow_column: str, dates: pd.Series) -> pd.DataFrame:
    """Return the rows of one annuity as a DataFrame (money as float64 holding exact cents)."""
    widest = int(np.abs(table.closing).max(initial=0))
    if widest > _EXACT_CENTS:
        raise InvalidTerms(
            f"the value reaches {widest / 100:,.2f}, beyond what float64 holds to the cent "
            f"({_EXACT_CENTS / 100:,.2f})"
        )
    cents = lambda a: a.astype(np.float64) / 100.0  # noqa: E731
    data: dict[str, Any] = {
        "period": table.period,
        "due_date": dates.to_numpy(dtype="datetime64[ns]"),
        "opening_value": cents(table.opening),
        flow_column: cents(table.flow),
        "interest_credited": cents(table.interest),
        "closing_value": cents(table.closing),
    }
    out = pd.DataFrame(data)
    out["due_date"] = out["due_date"].astype("datetime64[ns]")
    return out


def money(cents: int) -> Decimal:
    """Return integer cents as an exact two-place Decimal."""
    return (Decimal(int(cents)) / 100).quantize(CENT)


def cents_of(amount: Decimal | None) -> int:
    return 0 if amount is None else to_cents(amount)


def growth_words(growth: Decimal | None, step: Decimal | None, every: int) -> str:
    """Return how the flows change, for summaries: 'level', '2 % every 12', ..."""
    if growth is not None:
        return f"{(growth * 100).normalize():f} % every {every}"
    if step is not None:
        return f"{step:,} every {every}"
    return "level"


def unknown_figure(terms: Any, figures: tuple[str, ...], *, given: dict[str, bool]) -> str:
    """Return the figure to solve for: ``terms.solve_for``, or the one figure left out.

    ``given`` marks figures that count as given without a value (a
    perpetuity's horizon). Anything else is one sentence saying what to give.
    """
    listed = ", ".join(repr(f) for f in figures)
    named = terms.solve_for
    missing = [f for f in figures if getattr(terms, f) is None and not given.get(f, False)]
    if named is not None:
        if named not in figures:
            raise InvalidTerms(f"'solve_for' must be one of {listed} (got {describe(named)})")
        if given.get(named):
            raise InvalidTerms(f"a perpetuity has no {named!r} to solve for")
        others = [f for f in missing if f != named]
        if others:
            raise InvalidTerms(f"give {', '.join(repr(f) for f in others)} to solve for {named!r}")
        return str(named)
    if len(missing) == 1:
        return missing[0]
    if not missing:
        raise InvalidTerms(
            f"all of {listed} are given: leave out the one to solve for "
            "(or name it with 'solve_for')"
        )
    raise InvalidTerms(
        f"leave out exactly one of {listed} to solve for it "
        f"({', '.join(repr(f) for f in missing)} are all missing)"
    )
