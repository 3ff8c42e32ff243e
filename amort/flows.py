"""Dated cash flows: a loan's advances and payments, checked, read from CSV, and their rates.

A :class:`Flows` list holds dated amounts, each an *advance* (credit paid to or
for the borrower) or a *payment* (money paid back), exact decimals in currency
units; seen from the lender, advances are negative (:attr:`Flow.signed`). A rate
``x`` per unit of time solves the list when

    sum_k  s_k A_k / ((1 + f_k x) (1 + x)^t_k) = 0            (s_k = +1 payment, -1 advance)

``t_k`` the time of flow k, ``f_k`` a fraction of a unit earning simple interest
(Regulation Z's odd days; 0 elsewhere). :func:`equation_roots` solves it;
:func:`internal_rates` gives the internal rate of dated flows, effective a year of
365 days; :func:`us_rule_rate` the US Rule's rate.

The roots: in ``u = log(1 + x)`` each term is an exponential, evaluated in the log
domain scaled by the largest term (no overflow at 100,000 periods). Flows that,
netted date by date, change sign once (every ordinary loan) have one root
(Descartes' rule of signs; the simple-interest fractions keep a later flow's
discount falling against an earlier one's), found by Newton steps inside a
shrinking bracket. Otherwise a grid of ``u`` (step 0.002) is scanned for sign
changes and each is refined: *all* roots are reported (two closer than a step
can be missed). Neither Appendix J nor the EU Annex says which of several to
take; amort takes the smallest rate >= 0 (else the one nearest 0) and says the
answer is ambiguous.

The CSV layout of ``amort apr --flows FILE.csv`` (ours)::

    # lines that start with # are comments
    date,amount,kind,label
    2027-03-01,9800.00,advance,proceeds to the borrower
    2027-04-01,"1,700.00",payment,

``date`` YYYY-MM-DD, rows in date order (equal dates allowed); ``amount`` > 0 in
currency units, whole cents, dot decimal (thousands separators only inside
quotes); ``kind`` ``advance`` or ``payment``; ``label`` optional text. Columns in
any order, names in any case, no others. An error names the row (the file's line,
as a spreadsheet numbers it), the column and the value.

>>> flows = Flows.of([("2025-01-01", "1000", "advance"), ("2026-01-01", "1100", "payment")])
>>> round(internal_rates(flows).chosen, 12)
0.1
"""

from __future__ import annotations

import csv
import difflib
import enum
import io
import itertools
import math
import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from datetime import date
from decimal import Decimal, localcontext
from fractions import Fraction
from pathlib import Path
from typing import Any

import numpy as np
import numpy.typing as npt

from amort.calendar import parse_date
from amort.conventions import parse_choice
from amort.errors import AmortError, InvalidTerms, NoSolution
from amort.money import parse_amount

__all__ = [
    "Flow",
    "FlowKind",
    "Flows",
    "Roots",
    "equation_roots",
    "exact_value",
    "internal_rates",
    "parse_flows",
    "read_flows",
    "round_rate",
    "us_rule_balance",
    "us_rule_rate",
]

#: The largest flows file read, in bytes, and the most rows it may hold.
MAX_FILE_BYTES = 20_000_000
MAX_ROWS = 200_000

_EPS = float(np.finfo(float).eps)
# The grid of u = log(1 + x) scanned when more than one root is possible.
_GRID_STEP = 0.002


class FlowKind(enum.Enum):
    """Which way the money moves: to the borrower (advance) or back (payment)."""

    ADVANCE = "advance"
    PAYMENT = "payment"

    @classmethod
    def parse(cls, value: FlowKind | str, field: str = "kind") -> FlowKind:
        """Return the kind named by ``value`` (``"advance"`` or ``"payment"``)."""
        return parse_choice(cls, value, field)


@dataclass(frozen=True)
class Flow:
    """One dated amount: ``on`` (a date), ``amount`` (> 0, currency units), ``kind``, ``label``."""

    on: date
    amount: Decimal
    kind: FlowKind
    label: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "on", parse_date(self.on, "date"))
        object.__setattr__(self, "amount", parse_amount(self.amount, "amount"))
        object.__setattr__(self, "kind", FlowKind.parse(self.kind))
        if not isinstance(self.label, str):
            raise InvalidTerms(f"'label' must be text (got {self.label!r})")

    @property
    def signed(self) -> Decimal:
        """The amount seen from the lender: + for a payment, - for an advance."""
        return self.amount if self.kind is FlowKind.PAYMENT else -self.amount


@dataclass(frozen=True)
class Flows:
    """A checked list of dated advances and payments, in date order.

    It needs at least one advance and one payment (else no rate balances it),
    and its dates may not go backwards.

    >>> Flows.of([("2027-01-01", 100, "payment")])
    Traceback (most recent call last):
    ...
    amort.errors.InvalidTerms: the flows need at least one advance and one payment (got 0 ...)
    """

    items: tuple[Flow, ...]

    def __post_init__(self) -> None:
        items = tuple(self.items)
        object.__setattr__(self, "items", items)
        if not all(isinstance(item, Flow) for item in items):
            raise InvalidTerms("'flows' must hold Flow items")
        for number, (before, after) in enumerate(itertools.pairwise(items), start=2):
            if after.on < before.on:
                raise InvalidTerms(
                    f"flow {number} on {after.on} comes before flow {number - 1} on "
                    f"{before.on}; list the flows in date order"
                )
        lent = sum(1 for item in items if item.kind is FlowKind.ADVANCE)
        paid = len(items) - lent
        if not lent or not paid:
            got = f"{lent} advance{'s' * (lent != 1)} and {paid} payment{'s' * (paid != 1)}"
            raise InvalidTerms(f"the flows need at least one advance and one payment (got {got})")

    @classmethod
    def of(cls, rows: Iterable[tuple[object, object, object] | Flow]) -> Flows:
        """Return flows from ``(date, amount, kind)`` triples (or :class:`Flow` items)."""
        return cls(tuple(row if isinstance(row, Flow) else Flow(*row) for row in rows))  # type: ignore[arg-type]  # Flow parses

    def __iter__(self) -> Iterator[Flow]:
        return iter(self.items)

    def __len__(self) -> int:
        return len(self.items)

    @property
    def start(self) -> date:
        """The date of the first flow."""
        return self.items[0].on

    @property
    def advances(self) -> tuple[Flow, ...]:
        return tuple(item for item in self.items if item.kind is FlowKind.ADVANCE)

    @property
    def payments(self) -> tuple[Flow, ...]:
        return tuple(item for item in self.items if item.kind is FlowKind.PAYMENT)

    def total(self, kind: FlowKind | str) -> Decimal:
        """The sum of the amounts of one kind, currency units."""
        wanted = FlowKind.parse(kind)
        return sum((item.amount for item in self.items if item.kind is wanted), Decimal(0))

    def by_date(self, kind: FlowKind | str) -> list[tuple[date, Decimal]]:
        """The amounts of one kind summed date by date, in date order."""
        wanted = FlowKind.parse(kind)
        out: dict[date, Decimal] = {}
        for item in self.items:
            if item.kind is wanted:
                out[item.on] = out.get(item.on, Decimal(0)) + item.amount
        return sorted(out.items())


# -- the CSV layout ---------------------------------------------------------------------------

_COLUMNS = ("date", "amount", "kind", "label")
_REQUIRED = ("date", "amount", "kind")


def read_flows(path: str | os.PathLike[str]) -> Flows:
    """Return the flows a CSV file lists (UTF-8, the layout in this module's documentation).

    Every problem is one :class:`~amort.errors.InvalidTerms` sentence naming
    the file, and for a bad value the row, the column and the value.
    """
    source = Path(path)
    shown = str(path)
    if source.is_dir():
        raise InvalidTerms(f"{shown} is a folder, not a flows file")
    try:
        with source.open("rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise InvalidTerms(f"{shown}: no such flows file") from None
    except OSError as exc:
        raise InvalidTerms(f"{shown} cannot be read ({exc.strerror or exc})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise InvalidTerms(f"{shown} is larger than {MAX_FILE_BYTES:,} bytes")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InvalidTerms(f"{shown} row {line}: the file is not UTF-8 text") from None
    return parse_flows(text, source=shown)


def parse_flows(text: str, *, source: str = "<flows>") -> Flows:
    """Return the flows CSV ``text`` lists; ``source`` names it in errors.

    >>> flows = parse_flows("date,amount,kind\\n2027-01-01,500,advance\\n2027-02-01,505,payment\\n")
    >>> [str(item.signed) for item in flows]
    ['-500', '505']
    >>> parse_flows("date,amount,kind\\n2027-01-01,5x,advance\\n", source="f.csv")
    Traceback (most recent call last):
    ...
    amort.errors.InvalidTerms: f.csv row 2: 'amount' must be a number (got '5x')
    """
    # Comment lines become blank lines, so the reader's line numbers stay the file's.
    lines = ["" if line.lstrip().startswith("#") else line for line in text.splitlines()]
    reader = csv.reader(io.StringIO("\n".join(lines)))
    columns: dict[str, int] | None = None
    items: list[Flow] = []
    previous: tuple[date, int] | None = None
    try:
        for record in reader:
            row = reader.line_num
            if not any(cell.strip() for cell in record):
                continue
            if columns is None:
                columns = _header(record, source, row)
                continue
            if len(items) >= MAX_ROWS:
                raise InvalidTerms(f"{source} holds more than {MAX_ROWS:,} flows")
            item = _row(record, columns, source, row)
            if previous is not None and item.on < previous[0]:
                raise InvalidTerms(
                    f"{source} row {row}: 'date' {item.on} comes before {previous[0]} on row "
                    f"{previous[1]}; list the flows in date order"
                )
            previous = (item.on, row)
            items.append(item)
    except csv.Error as exc:
        raise InvalidTerms(f"{source} row {reader.line_num}: not valid CSV ({exc})") from None
    if columns is None:
        raise InvalidTerms(f"{source} is empty: it needs a header row 'date,amount,kind'")
    try:
        return Flows(tuple(items))
    except InvalidTerms as exc:
        raise InvalidTerms(f"{source}: {exc}") from None


def _header(record: list[str], source: str, row: int) -> dict[str, int]:
    columns: dict[str, int] = {}
    for index, cell in enumerate(record):
        name = cell.strip().lower()
        if name not in _COLUMNS:
            near = difflib.get_close_matches(name, _COLUMNS, n=1)
            hint = f"; did you mean {near[0]!r}?" if near else f"; the columns are {_COLUMNS}"
            raise InvalidTerms(f"{source} row {row}: unknown column {cell.strip()!r}{hint}")
        if name in columns:
            raise InvalidTerms(f"{source} row {row}: column {name!r} appears twice")
        columns[name] = index
    missing = [name for name in _REQUIRED if name not in columns]
    if missing:
        raise InvalidTerms(
            f"{source} row {row}: the header needs the column(s) {', '.join(missing)} "
            "(date,amount,kind[,label])"
        )
    return columns


def _row(record: list[str], columns: dict[str, int], source: str, row: int) -> Flow:
    if len(record) > len(columns):
        raise InvalidTerms(
            f"{source} row {row} has {len(record)} fields; the header has {len(columns)}"
        )
    cells = {name: (record[i] if i < len(record) else "").strip() for name, i in columns.items()}
    for name in _REQUIRED:
        if not cells[name]:
            raise InvalidTerms(f"{source} row {row}: {name!r} is empty")
    try:
        return Flow(cells["date"], cells["amount"], cells["kind"], cells.get("label", ""))  # type: ignore[arg-type]  # Flow parses its strings
    except AmortError as exc:
        raise InvalidTerms(f"{source} row {row}: {exc}") from None


# -- the equation and its roots ---------------------------------------------------------------


@dataclass(frozen=True)
class Roots:
    """Every rate that solves the equation in the range searched, ascending.

    rates: decimal fractions per unit of time (float64 values).
    slopes: the sign of the value's slope at each root (-1 for an ordinary loan).
    sign_changes: of the flows in time order, netted time by time; 1: a unique root.
    """

    rates: tuple[float, ...]
    slopes: tuple[int, ...]
    sign_changes: int

    @property
    def chosen(self) -> float | None:
        """The smallest rate >= 0, or when every root is negative the one nearest 0."""
        positive = [r for r in self.rates if r >= 0]
        if positive:
            return positive[0]
        return self.rates[-1] if self.rates else None

    @property
    def ambiguous(self) -> bool:
        """True when more than one rate solves the equation."""
        return len(self.rates) > 1

    def slope_at(self, rate: float) -> int:
        """The slope sign at one of :attr:`rates`."""
        return self.slopes[self.rates.index(rate)]


class _Equation:
    """``sum a_k / ((1 + f_k x)(1 + x)^t_k)`` in ``u = log(1 + x)``, scaled by its largest term."""

    def __init__(self, amounts: Sequence[Any], times: Sequence[Any], fractions: Sequence[Any]):
        # Net equal times exactly: Decimal sums of cents at 60 digits, else Fractions.
        fast = all(isinstance(a, (Decimal, int)) for a in amounts)
        zero: Any = Decimal(0) if fast else Fraction(0)
        net: dict[tuple[Any, Any], Any] = {}
        with localcontext() as ctx:
            ctx.prec = 60
            for a, t, f in zip(amounts, times, fractions, strict=True):
                net[(t, f)] = net.get((t, f), zero) + (a if fast else Fraction(a))
        kept = sorted((float(t) + float(f), t, f, a) for (t, f), a in net.items() if a != 0)
        self.signs = np.array([1.0 if k[3] > 0 else -1.0 for k in kept])
        self.log_size = np.array([np.log(float(abs(k[3]))) for k in kept])
        self.t = np.array([float(k[1]) for k in kept])
        self.f = np.array([float(k[2]) for k in kept])
        self.simple = bool(self.f.any())
        with localcontext() as ctx:
            ctx.prec = 60
            self.total = sum((k[3] for k in kept), zero)  # exact: 0 means a root at x = 0
        self.sign_changes = int(np.count_nonzero(np.diff(self.signs) != 0))

    def __call__(self, u: npt.NDArray[np.float64]) -> tuple[npt.NDArray[np.float64], ...]:
        """Return the scaled value and derivative (in u) at each u (1-d array)."""
        grow = np.expm1(u)[:, None]
        w = self.log_size[None, :] - self.t[None, :] * u[:, None]
        if self.simple:
            w = w - np.log1p(self.f[None, :] * grow)
        terms = np.exp(w - w.max(axis=1, keepdims=True)) * self.signs[None, :]
        rate_of = -self.t[None, :]
        if self.simple:
            rate_of = rate_of - self.f[None, :] * (1 + grow) / (1 + self.f[None, :] * grow)
        return terms.sum(axis=1), (terms * rate_of).sum(axis=1)

    def at(self, u: float) -> tuple[float, float]:
        value, slope = self(np.array([u]))
        return float(value[0]), float(slope[0])

    def scan(self, grid: npt.NDArray[np.float64]) -> npt.NDArray[np.float64]:
        """Return the scaled value at each grid point, in chunks that keep memory small."""
        rows = max(1, 2_000_000 // max(1, self.t.size))
        return np.concatenate([self(grid[k : k + rows])[0] for k in range(0, grid.size, rows)])

    def refine(self, lo: float, hi: float) -> tuple[float, int]:
        """Return the root in ``[lo, hi]`` (values of opposite sign at the ends) and its slope."""
        g_lo, _ = self.at(lo)
        if g_lo == 0:
            return lo, int(np.sign(self.at(lo)[1]))
        rising = g_lo < 0
        x = min(max(0.0, lo), hi) if lo < 0 < hi else 0.5 * (lo + hi)
        for _ in range(400):
            g, dg = self.at(x)
            if g == 0:
                break
            if (g < 0) == rising:
                lo = x
            else:
                hi = x
            step = x - g / dg if dg != 0 else np.nan
            new = step if lo < step < hi else 0.5 * (lo + hi)
            close = abs(new - x) <= 2 * _EPS * abs(x) + 1e-17
            x = new
            if close or hi - lo <= 2 * _EPS * max(abs(lo), abs(hi)) + 1e-17:
                break
        return x, 1 if rising else -1


def equation_roots(
    amounts: Sequence[Decimal | Fraction | int],
    times: Sequence[Fraction | int],
    fractions: Sequence[Fraction | int] | None = None,
    *,
    low: float = -0.99,
    high: float = 100.0,
) -> Roots:
    """Return every rate ``x`` in ``[low, high]`` with ``sum a_k / ((1 + f_k x)(1 + x)^t_k) = 0``.

    amounts: signed amounts (+ payments, - advances), exact. times: ``t_k >= 0`` in
    units of time (whole unit-periods, or years); fractions: ``f_k`` in [0, 1] earning
    simple interest (default 0). Flows at the same ``(t, f)`` are netted first. The
    rates are per unit of time, decimal fractions (float64, a few ulps).

    Raises :class:`~amort.errors.NoSolution` when the netted flows never change sign.

    >>> roots = equation_roots([-1000, 2300, -1320], [0, 1, 2])   # x = 10 % and 20 %
    >>> [round(r, 12) for r in roots.rates], round(roots.chosen, 12)
    ([0.1, 0.2], 0.1)
    """
    # Zero fractions as plain 0 and whole times as ints: exact, and far cheaper than Fractions.
    f = [0] * len(amounts) if fractions is None else [v if v else 0 for v in fractions]
    times = [t.numerator if isinstance(t, Fraction) and t.denominator == 1 else t for t in times]
    if not len(amounts) == len(times) == len(f):
        raise InvalidTerms("'amounts', 'times' and 'fractions' must have the same length")
    if any(t < 0 for t in times) or any(not 0 <= v <= 1 for v in f):
        raise InvalidTerms("'times' must be >= 0 and 'fractions' between 0 and 1")
    if not -1 < low < high:
        raise InvalidTerms(f"the range must have -1 < low < high (got {low}, {high})")
    equation = _Equation(amounts, times, f)
    if equation.sign_changes == 0:
        raise NoSolution(
            "the flows never change sign (netted date by date they are all advances or all "
            "payments); no rate balances them"
        )
    u_lo, u_hi = float(np.log1p(low)), float(np.log1p(high))
    if equation.sign_changes == 1:
        if equation.total == 0 and low < 0 < high:
            return Roots((0.0,), (int(np.sign(equation.at(0.0)[1])),), 1)
        ends = equation.scan(np.array([u_lo, u_hi]))
        if ends[0] == 0 or ends[1] == 0 or np.sign(ends[0]) != np.sign(ends[1]):
            u, slope = equation.refine(u_lo, u_hi)
            return Roots((float(np.expm1(u)),), (slope,), 1)
        return Roots((), (), 1)
    count = int(np.ceil((u_hi - u_lo) / _GRID_STEP)) + 1
    grid = np.union1d(np.linspace(u_lo, u_hi, count), [0.0])
    values = equation.scan(grid)
    if equation.total == 0:
        values[grid == 0] = 0.0  # the exact value, not the float sum's noise
    found: list[tuple[float, int]] = []
    for k in range(grid.size - 1):
        if values[k] == 0:
            found.append((grid[k], int(np.sign(equation.at(grid[k])[1]))))
        elif values[k + 1] != 0 and np.sign(values[k]) != np.sign(values[k + 1]):
            found.append(equation.refine(float(grid[k]), float(grid[k + 1])))
    if values[-1] == 0:
        found.append((grid[-1], int(np.sign(equation.at(grid[-1])[1]))))
    rates = tuple(float(np.expm1(u)) for u, _ in found)
    return Roots(rates, tuple(s for _, s in found), equation.sign_changes)


def internal_rates(flows: Flows, *, high: float = 1000.0) -> Roots:
    """Return the internal rates of dated flows, effective a year (time in days / 365).

    Time runs from the first flow, a year is 365 days (Actual/365 Fixed). Every root in
    ``[-99 %, high]`` is reported; :attr:`Roots.chosen` picks one. NoSolution when the
    flows, netted date by date, never change sign.

    >>> flows = Flows.of([("2025-01-01", 1000, "advance"), ("2026-01-01", 2300, "payment"),
    ...                   ("2027-01-01", 1320, "advance")])
    >>> [round(r, 10) for r in internal_rates(flows).rates]
    [0.1, 0.2]
    """
    times = [Fraction((item.on - flows.start).days, 365) for item in flows]
    return equation_roots([item.signed for item in flows], times, high=high)


def _decimal(value: Fraction) -> Decimal:
    return Decimal(value.numerator) / Decimal(value.denominator)


def exact_value(
    amounts: Sequence[Decimal | Fraction | int],
    times: Sequence[Fraction | int],
    fractions: Sequence[Fraction | int],
    rate: Fraction,
) -> Decimal:
    """Return ``sum a_k / ((1 + f_k x)(1 + x)^t_k)`` at the exact ``rate``, in 60-digit decimals.

    Whole ``t_k`` are raised exactly, fractional ones by Decimal's power (last-digit accuracy).

    >>> exact_value([-1000, 1210], [0, 2], [0, 0], Fraction(1, 10))   # 1210 / 1.1^2 = 1000
    Decimal('0')
    >>> round(exact_value([-1000, 1100], [0, Fraction(1, 2)], [0, 0], Fraction(1, 10)), 6)
    Decimal('48.808848')
    """
    with localcontext() as ctx:
        ctx.prec = 60
        x = _decimal(Fraction(rate))
        total = Decimal(0)
        for a, t, f in zip(amounts, times, fractions, strict=True):
            t = Fraction(t)
            power = (1 + x) ** int(t) if t.denominator == 1 else (1 + x) ** _decimal(t)
            total += _decimal(Fraction(a)) / ((1 + _decimal(Fraction(f)) * x) * power)
        return +total


def round_rate(value: float, decimals: int, side: Callable[[Fraction], int]) -> Decimal:
    """Return ``value`` (a positive rate in percent) rounded half-up to ``decimals`` places.

    Within 1e-9 of a tie the float cannot tell, so ``side(tie)`` decides: +1 (or 0, on it)
    when the true rate is at or above the tie, -1 below (the caller's exact evaluation).

    >>> round_rate(12.2499999999999, 1, lambda tie: 0)  # exactly 12.25 % in fact
    Decimal('12.3')
    """
    scale = 10**decimals
    q = Fraction(value) * scale
    base = math.floor(q)
    tie = Fraction(base) + Fraction(1, 2)
    if abs(q - tie) <= Fraction(1, 10**9) * max(1, abs(q)):
        up = side(tie / scale) >= 0
    else:
        up = q >= tie
    return Decimal(base + int(up)).scaleb(-decimals)


# -- the US Rule ------------------------------------------------------------------------------


def us_rule_balance(
    steps: Sequence[tuple[Any, bool, Any]], i: Any, zero: Any = 0.0
) -> tuple[Any, Any]:
    """Return what is left owing at rate ``i`` under the US Rule, and its derivative in ``i``.

    steps: ``(time, is a payment, amount)`` in time order. Each span earns simple
    interest on the principal only; a payment pays the interest first and the rest
    repays principal, and a payment short of the interest leaves the rest unpaid,
    never added to principal (Regulation Z, Appendix J (a)(3) [text]). Generic in the
    number type: float64 for a search, Decimal for an exact check.

    >>> us_rule_balance([(0, False, 1000.0), (1, True, 50.0), (2, True, 1150.0)], 0.1)[0]
    0.0
    """
    owed = unpaid = d_owed = d_unpaid = last = zero
    for at, paying, amount in steps:
        span, last = at - last, at
        unpaid, d_unpaid = unpaid + owed * i * span, d_unpaid + (d_owed * i + owed) * span
        if not paying:
            owed += amount
        elif amount >= unpaid:
            owed, d_owed = owed - (amount - unpaid), d_owed + d_unpaid
            unpaid = d_unpaid = zero
        else:
            unpaid -= amount
    return owed + unpaid, d_owed + d_unpaid


def us_rule_rate(steps: Sequence[tuple[float, bool, float]], *, high: float = 10.0) -> float:
    """Return the rate in ``[0, high]`` at which the US Rule leaves nothing owing (what is
    left rises with the rate: bracketed Newton). NoSolution when none >= 0 does."""
    left, _ = us_rule_balance(steps, 0.0)
    if left > 0:
        paid = sum(a for _, p, a in steps if p)
        raise NoSolution(
            f"the payments total {paid:,.2f}, less than the {paid + left:,.2f} advanced; "
            "no rate >= 0 balances them"
        )
    if left == 0:
        return 0.0
    lo, hi = 0.0, min(1.0, high)
    while us_rule_balance(steps, hi)[0] < 0:
        if hi >= high:
            raise NoSolution(f"the US Rule rate is above {high * 100:,.0f} % a unit of time")
        lo, hi = hi, min(2 * hi, high)
    x = min(hi / 2, 0.01)
    for _ in range(400):
        value, slope = us_rule_balance(steps, x)
        if value == 0:
            return x
        lo, hi = (x, hi) if value < 0 else (lo, x)
        step = x - value / slope if slope > 0 else -1.0
        new = step if lo < step < hi else 0.5 * (lo + hi)
        if abs(new - x) <= 4e-16 * x or hi - lo <= 4e-16 * hi:
            return new
        x = new
    return x  # pragma: no cover - the bracket halves at least every other step
