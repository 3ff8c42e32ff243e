"""The rules of book format 1: each row checked cell by cell, then across its cells.

:class:`Checker` takes a book chunk after chunk (:class:`amort.book_read.TextChunk`),
parses the cells (:class:`amort.book_cells.Cells`), applies the rules between them
(term span, first due date after the disbursement and within 12 periods, the
structures' rules, balloon below the principal, a margin only with an index) and
keeps the good rows in the book's exact form; duplicate identifiers are found across
the whole book. Rows the vectorised engine cannot take, and level loans whose payment
comes near the interest of their longest period, are built as :class:`amort.loan.Loan`
and refused with its sentence when it refuses them. With ``strict`` the first bad
row raises :class:`amort.book.BookRowError`.
"""

from __future__ import annotations

from collections.abc import Iterable
from datetime import date
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa

from amort import recurrence
from amort.book import (
    FIRST_DAY,
    LAST_DAY,
    MAX_FIRST_PERIODS,
    MAX_TERM,
    MAX_YEARS,
    RATE_DEN,
    REQUIRED,
    SCHEMA,
    Book,
    BookRowError,
    add_months64,
    loan_from_row,
    step_of,
)
from amort.book_cells import Cells, Problems
from amort.book_read import TextChunk
from amort.calendar import BusinessDay, parse_holiday_calendar
from amort.conventions import Frequency, Structure
from amort.daycount import DayCount
from amort.errors import InvalidTerms, NoSolution

__all__ = ["Checker"]


_TERM_RULE = f"'term' must be a whole number of payments from 1 to {MAX_TERM:,}"
_ONLY_RULE = "'interest_only' must be a whole number of payments >= 0"
_ROW = "(row)"  # problems of the loan as a whole, found by building it


def _per_year(frequency: np.ndarray) -> np.ndarray:
    out = np.full(frequency.size, 12, dtype=np.int64)
    for name in pd.unique(frequency):
        out[frequency == name] = Frequency(name).per_year
    return out


def _parse_holidays(value: str) -> str:
    parse_holiday_calendar(value, "holidays")
    return value


class Checker:
    """Validates chunk after chunk; keeps the good loans' exact columns and every problem."""

    def __init__(self, *, strict: bool, source: str | None) -> None:
        self.strict = strict
        self.source = source
        self.problems = Problems()
        self.parts: list[pd.DataFrame] = []
        self.ids: list[np.ndarray] = []
        self.id_rows: list[np.ndarray] = []
        self.read = 0
        self.processed = 0
        self.extra: tuple[str, ...] | None = None
        self.seen: dict[str, int] = {}

    def add(self, chunk: TextChunk) -> None:
        if self.extra is None and chunk.columns:
            missing = [c for c in REQUIRED if c not in chunk.columns]
            if missing:
                where = f"the book {self.source!r}" if self.source else "the book"
                raise InvalidTerms(
                    f"{where} lacks the required column(s) "
                    + ", ".join(repr(c) for c in missing)
                    + "; found "
                    + (", ".join(repr(c) for c in chunk.columns) or "none")
                )
            self.extra = tuple(c for c in chunk.columns if c not in SCHEMA)
        before = len(self.problems)
        for row, message in chunk.malformed:
            self.problems.add([row], _ROW, [""], [message])
        self.read += len(chunk.rows) + len(chunk.malformed)
        cells = Cells(chunk, self.problems)
        loans = _check(cells, self.extra or ())
        ids = np.asarray(cells.column("loan_id").to_numpy(zero_copy_only=False), dtype=object)
        self.ids.append(ids)
        self.id_rows.append(chunk.rows)
        if self.strict:
            self._strict(cells, ids, before, [r for r, _ in chunk.malformed])
        if len(loans):
            self.parts.append(loans)
        self.processed += len(loans)

    def _strict(self, cells: Cells, ids: np.ndarray, before: int, malformed: list[int]) -> None:
        for k, loan_id in enumerate(ids):
            if loan_id and loan_id in self.seen and cells.ok[k]:
                first = self.seen[loan_id]
                rule = f"'loan_id' {loan_id!r} is also on row {first}; each loan needs its own"
                self.problems.add([cells.rows[k]], "loan_id", [loan_id], [rule])
                cells.ok[k] = False
            elif loan_id and loan_id not in self.seen:
                self.seen[loan_id] = int(cells.rows[k])
        if len(self.problems) == before:
            return
        rows = self.problems.rows[before:]
        at = int(np.argmin(rows))
        row = rows[at]
        good_before = int(np.count_nonzero(cells.ok & (cells.rows < row)))
        earlier = self.read - len(cells.rows) - len(malformed)
        counts = {
            "read": earlier
            + int(np.count_nonzero(cells.rows <= row))
            + sum(1 for r in malformed if r <= row),
            "processed": self.processed + good_before,
            "rejected": 1,
        }
        message = self.problems.messages[before + at]
        raise BookRowError(f"row {row}: {message}", counts)

    def finish(self, *, allow_empty: bool = False) -> Book:
        if self.read == 0 and not allow_empty:
            where = f"the book {self.source!r}" if self.source else "the book"
            raise InvalidTerms(f"{where} has a header but no loan rows")
        loans = pd.concat(self.parts, ignore_index=True) if self.parts else _empty(self.extra or ())
        ids = np.concatenate(self.ids) if self.ids else np.zeros(0, dtype=object)
        rows = np.concatenate(self.id_rows) if self.id_rows else np.zeros(0, dtype=np.int64)
        loans = self._drop_duplicates(loans, ids, rows)
        rejected = pd.DataFrame(
            {
                "row": np.asarray(self.problems.rows, dtype=np.int64),
                "column": pd.Series(self.problems.columns, dtype="str"),
                "value": pd.Series(self.problems.values, dtype="str"),
                "problem": pd.Series(self.problems.messages, dtype="str"),
            }
        )
        by_row = dict(zip(rows.tolist(), ids.tolist(), strict=True))
        rejected.insert(
            1, "loan_id", pd.Series([by_row.get(r, "") for r in rejected["row"]], dtype="str")
        )
        rejected = rejected.sort_values("row", kind="stable", ignore_index=True)
        return Book(
            loans=loans,
            rejected=rejected,
            read=self.read,
            source=self.source,
            extra_columns=self.extra or (),
        )

    def _drop_duplicates(
        self, loans: pd.DataFrame, ids: np.ndarray, rows: np.ndarray
    ) -> pd.DataFrame:
        frame = pd.DataFrame({"id": ids, "row": rows})
        frame = frame[frame["id"] != ""]
        twice = frame[frame["id"].duplicated(keep=False)]
        if twice.empty:
            return loans
        for loan_id, group in twice.groupby("id", sort=False):
            shown = sorted(int(r) for r in group["row"])
            listed = ", ".join(str(r) for r in shown[:-1]) + f" and {shown[-1]}"
            rule = f"'loan_id' {loan_id!r} is on rows {listed}; each loan needs its own identifier"
            for r in shown:
                if not self.strict:
                    self.problems.add([r], "loan_id", [loan_id], [rule])
        return loans[~loans["row"].isin(twice["row"])].reset_index(drop=True)


def _empty(extra: Iterable[str]) -> pd.DataFrame:
    """The exact form of a book with no loans."""
    cells = Cells(TextChunk({}, np.zeros(0, np.int64), []), Problems())
    return _check(cells, tuple(extra))


def _step_dates(start: np.ndarray, frequency: np.ndarray, count: int) -> np.ndarray:
    """Each date moved by ``count`` regular periods of its frequency (NaT for semimonthly)."""
    out = np.full(start.shape, np.datetime64("NaT"), dtype="M8[D]")
    for name in pd.unique(frequency):
        step = step_of(Frequency(name))
        at = frequency == name
        if step is None:
            continue
        months, days = step
        if months:
            out[at] = add_months64(start[at], months * count)
        else:
            out[at] = start[at] + np.timedelta64(days * count, "D")
    return out


def _check(cells: Cells, extra: tuple[str, ...]) -> pd.DataFrame:
    """Check every cell, then the rules between cells; return the good rows' exact form."""
    cells.present("loan_id", required=True)
    principal = cells.amounts("principal", required=True)
    rate = cells.percents("annual_rate", required=True)
    term = cells.wholes("term", low=1, high=MAX_TERM, rule=_TERM_RULE)
    frequency = cells.choices("frequency", lambda v: Frequency.parse(v).value, "monthly")
    start = cells.dates("disbursed_on", required=True, first=FIRST_DAY, last=LAST_DAY)
    first = cells.dates("first_due_on", required=False, first=FIRST_DAY, last=date(2162, 12, 31))
    day_count = cells.choices("day_count", lambda v: DayCount.parse(v).value, "equal")
    structure = cells.choices("structure", lambda v: Structure.parse(v).value, "level")
    only = cells.wholes("interest_only", low=0, high=MAX_TERM, rule=_ONLY_RULE)
    balloon = cells.amounts("balloon", allow_zero=True)
    payment = cells.amounts("payment")
    margin = cells.percents("rate_margin", signed=True)
    fees = cells.amounts("fees", allow_zero=True)
    business = cells.choices(
        "business_days", lambda v: BusinessDay.parse(v, "business_days").value, "none"
    )
    holidays = cells.choices("holidays", _parse_holidays, "")

    ok = cells.ok.copy()
    per_year = _per_year(frequency)
    too_long = np.flatnonzero(ok & (term > MAX_YEARS * per_year))
    cells.fail(
        too_long,
        "term",
        [
            f"'term' must span at most {MAX_YEARS} years: at most {MAX_YEARS * per_year[k]:,} "
            f"{frequency[k]} payments (got {term[k]:,})"
            for k in too_long
        ],
    )
    semimonthly = frequency == Frequency.SEMIMONTHLY.value
    given = ~np.isnat(first)
    regular = _step_dates(start, frequency, 1)
    first = np.where(given, first, regular)
    early = np.flatnonzero(ok & given & (first <= start))
    cells.fail(
        early,
        "first_due_on",
        [
            f"'first_due_on' {first[k]} must be after 'disbursed_on' {start[k]}: the first "
            "payment cannot fall due before the money is lent"
            for k in early
        ],
    )
    latest = np.where(semimonthly, add_months64(start, 6), _step_dates(start, frequency, 12))
    late = np.flatnonzero(ok & given & (first > latest))
    cells.fail(
        late,
        "first_due_on",
        [
            f"'first_due_on' {first[k]} must be at most {MAX_FIRST_PERIODS} {frequency[k]} "
            f"periods after 'disbursed_on' {start[k]} (by {latest[k]})"
            for k in late
        ],
    )
    _structure_rules(cells, ok, structure, term, only, principal, balloon, payment)
    index_given = cells.present("rate_index")
    cells.fail_rule(
        ok & cells.present("rate_margin") & ~index_given,
        "rate_margin",
        "'rate_margin' needs 'rate_index' (the reference rate it is added to)",
    )

    keep = cells.ok
    kept = pa.array(keep)
    text = lambda name: pd.array(cells.labels(name).filter(kept), dtype="str")  # noqa: E731
    data: dict[str, Any] = {
        "row": cells.rows[keep],
        "loan_id": text("loan_id"),
        "borrower": text("borrower"),
        "segment": text("segment"),
        "principal_cents": principal[keep],
        "annual_rate_num": rate[keep],
        "term": term[keep],
        "frequency": frequency[keep],
        "disbursed_on": start[keep],
        "first_due_on": first[keep],
        "day_count": day_count[keep],
        "structure": structure[keep],
        "interest_only": only[keep],
        "balloon_cents": balloon[keep],
        "payment_cents": payment[keep],
        "rate_index": text("rate_index"),
        "rate_margin_num": margin[keep],
        "fees_cents": fees[keep],
        "business_days": business[keep],
        "holidays": holidays[keep],
        # Weekend-only business-day rules run vectorised; holiday calendars one by one.
        "per_loan": (semimonthly | ((business != BusinessDay.NONE.value) & (holidays != "")))[keep],
    }
    for name in extra:
        data[name] = text(name)
    frame = _typed(data, extra)
    return _loan_checks(cells, frame)


def _structure_rules(
    cells: Cells,
    ok: np.ndarray,
    structure: np.ndarray,
    term: np.ndarray,
    only: np.ndarray,
    principal: np.ndarray,
    balloon: np.ndarray,
    payment: np.ndarray,
) -> None:
    """The rules of book format 1 between the structure, the term and the amounts."""
    bullet = structure == Structure.BULLET.value
    level = structure == Structure.LEVEL.value
    straight = structure == Structure.EQUAL_PRINCIPAL.value
    cells.fail_rule(
        ok & bullet & (only > 0),
        "interest_only",
        "'interest_only' applies to level and equal-principal loans; a bullet loan pays "
        "interest only throughout",
    )
    cells.fail_rule(
        ok & bullet & (balloon > 0),
        "balloon",
        "a bullet loan repays all its principal with the last payment; leave 'balloon' empty",
    )
    long_only = np.flatnonzero(ok & ~bullet & (only >= term))
    cells.fail(
        long_only,
        "interest_only",
        [
            f"'interest_only' must be fewer than the {term[k]:,} payments (got {only[k]:,}); "
            "for interest only to the end use structure 'bullet'"
            for k in long_only
        ],
    )
    big = np.flatnonzero(ok & (balloon > 0) & (balloon >= principal))
    cells.fail(
        big,
        "balloon",
        [
            f"'balloon' {balloon[k] / 100:,.2f} must be below the principal "
            f"{principal[k] / 100:,.2f}"
            for k in big
        ],
    )
    cells.fail_rule(
        ok & (payment > 0) & ~(level & (only == 0)),
        "payment",
        "'payment' sets the level payment of a level loan without interest-only payments; "
        "leave it empty for this structure",
    )
    tiny = np.flatnonzero(ok & straight & (2 * (principal - balloon) < term - only))
    cells.fail(
        tiny,
        "principal",
        [
            f"the principal part of {principal[k] / 100:,.2f} over {term[k] - only[k]:,} "
            "payments rounds to 0.00; use fewer payments"
            for k in tiny
        ],
    )


def _typed(data: dict[str, Any], extra: tuple[str, ...]) -> pd.DataFrame:
    frame = pd.DataFrame(data)
    for name in (
        "row",
        "principal_cents",
        "annual_rate_num",
        "term",
        "interest_only",
        "balloon_cents",
        "payment_cents",
        "rate_margin_num",
        "fees_cents",
    ):
        frame[name] = frame[name].astype(np.int64)
    for name in (
        "loan_id",
        "borrower",
        "segment",
        "frequency",
        "day_count",
        "structure",
        "rate_index",
        "business_days",
        "holidays",
        *extra,
    ):
        frame[name] = frame[name].astype("str")
    for name in ("disbursed_on", "first_due_on"):
        frame[name] = frame[name].astype("datetime64[ns]")
    frame["per_loan"] = frame["per_loan"].astype(bool)
    return frame


#: The longest regular period in days, by months a period (actual-day rules).
_LONGEST_DAYS = {1: 31, 2: 62, 3: 92, 6: 184, 12: 366}
#: Days a 30-day rule can add to 30 a month: Bond Basis counts 28 Feb to 31 Mar as 33 days,
#: 30E/360 as 32, 30E/360 ISDA 29 Jan to 28 Feb as 31; the US rule never passes 30.
_THIRTY_EXTRA = {
    DayCount.THIRTY_360: 0,
    DayCount.THIRTY_E_360_ISDA: 1,
    DayCount.THIRTY_E_360: 2,
    DayCount.THIRTY_360_BOND: 3,
}


def _longest_fraction(day_count: str, frequency: str) -> float:
    """An upper bound of the year fraction of a regular period (the screen's rate)."""
    freq = Frequency(frequency)
    step = step_of(freq)
    rule = DayCount(day_count)
    if step is None:
        return 16 / 360 if rule is not DayCount.EQUAL else 1 / 24
    if rule is DayCount.EQUAL:
        return 1.0 / freq.per_year
    months, days = step
    if rule.is_thirty_day:
        return ((30 * months if months else days) + _THIRTY_EXTRA[rule]) / 360
    longest = _LONGEST_DAYS[months] if months else days
    return longest / (360 if rule is DayCount.ACT_360 else 365)


def _by_pair(first: np.ndarray, second: np.ndarray, value: Any) -> np.ndarray:
    """``value(a, b)`` for each pair of the two columns, computed once per distinct pair."""
    out = np.zeros(first.size, dtype=np.float64)
    codes_a, names_a = pd.factorize(first)
    codes_b, names_b = pd.factorize(second)
    pair = codes_a * max(len(names_b), 1) + codes_b
    for code in pd.unique(pair):
        a, b = divmod(int(code), max(len(names_b), 1))
        out[pair == code] = value(names_a[a], names_b[b])
    return out


def _loan_checks(cells: Cells, frame: pd.DataFrame) -> pd.DataFrame:
    """Build as a Loan each row the engine cannot take, and each level loan whose payment
    comes near its longest period's interest; refuse those the Loan refuses.

    The screen is generous (a level payment within 3 % of an upper bound of that
    interest), so every loan the Loan's exact rule could refuse is built and judged by it.
    """
    if frame.empty:
        return frame
    b0 = frame["principal_cents"].to_numpy(np.float64)
    annual = frame["annual_rate_num"].to_numpy(np.float64) / RATE_DEN
    per_year = _per_year(frame["frequency"].to_numpy())
    term = frame["term"].to_numpy(np.int64)
    only = frame["interest_only"].to_numpy(np.int64)
    balloon = frame["balloon_cents"].to_numpy(np.float64)
    fixed = frame["payment_cents"].to_numpy(np.float64)
    level = frame["structure"].to_numpy() == Structure.LEVEL.value
    first_days = (frame["first_due_on"] - frame["disbursed_on"]).dt.days.to_numpy(np.float64)
    i = annual / per_year
    with np.errstate(all="ignore"):
        # A short first period lowers the level payment: solve it with a low first rate.
        low_first = annual * np.maximum(first_days - 3, 0) / 366
        skewed = (b0 * (1 + low_first) * recurrence.growth(i, term - 1) - balloon) / (
            recurrence.accumulation_factor(i, term)
        )
        plain = recurrence.payment(b0, i, term - only, balloon, False)
    computed = np.where(only > 0, plain, np.minimum(plain, skewed))
    pay = np.where(fixed > 0, fixed, computed)
    longest = _by_pair(
        frame["day_count"].to_numpy(), frame["frequency"].to_numpy(), _longest_fraction
    )
    grown = b0 * (1 + annual * (first_days + 3) / 360) - pay
    need = np.maximum(b0, grown) * annual * longest
    near = level & ~((pay >= 1.05 * need + 2) & (pay >= 2))
    suspects = np.flatnonzero(frame["per_loan"].to_numpy() | near)
    refused: list[int] = []
    firsts = frame["first_due_on"].to_numpy().copy()
    for k in suspects:
        record = frame.iloc[int(k)]
        try:
            loan = loan_from_row(record)
            loan.payment  # noqa: B018  (builds the payment and runs its checks)
            firsts[k] = np.datetime64(loan.first_payment_date, "ns")
        except (InvalidTerms, NoSolution) as exc:
            refused.append(int(k))
            cells.problems.add([record["row"]], _ROW, [""], [str(exc)])
    frame["first_due_on"] = firsts
    if not refused:
        return frame
    rows = frame["row"].to_numpy()[refused]
    cells.ok[np.isin(cells.rows, rows)] = False
    return frame.drop(index=frame.index[refused]).reset_index(drop=True)
