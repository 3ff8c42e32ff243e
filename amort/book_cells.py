"""Cells of a book turned into exact values, with a sentence for every cell that is wrong.

:class:`Cells` takes one chunk of a book's text cells (:class:`amort.book_read.TextChunk`)
and parses it column by column into numpy arrays: money in int64 cents, rates as
``percent x 10**6`` (the decimal fraction x 10**8), whole numbers, dates as
``datetime64[D]``, named choices; each cell it cannot take becomes a problem (row,
column, value, sentence) in :class:`Problems`. The rules and the sentences are
:mod:`amort.money`'s and :mod:`amort.calendar`'s, with two more for commas: an amount
may use them only to separate thousands (``1,850.50``), a rate not at all (``6,5`` is a
decimal comma, not sixty-five).
"""

from __future__ import annotations

import re
from datetime import date
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from amort.book_read import TextChunk
from amort.errors import InvalidTerms

__all__ = ["Cells", "Problems"]

#: An amount whose commas separate thousands: 1,850 or 250,000.00.
_THOUSANDS = re.compile(r"^[+-]?\d{1,3}(,\d{3})+(\.\d*)?$")
_NUMBER = re.compile(r"^[+-]?(\d+(\.\d*)?|\.\d+)$")


class Problems:
    """Problems found in a book: parallel lists, one entry a problem."""

    def __init__(self) -> None:
        self.rows: list[int] = []
        self.columns: list[str] = []
        self.values: list[str] = []
        self.messages: list[str] = []

    def add(self, rows: Any, column: str, values: Any, messages: list[str]) -> None:
        self.rows += [int(r) for r in rows]
        self.columns += [column] * len(messages)
        self.values += ["" if v is None else str(v) for v in values]
        self.messages += messages

    def __len__(self) -> int:
        return len(self.rows)


def _each(values: Any, parse: Any) -> tuple[list[Any], list[int], list[str]]:
    """Parse each value; return the results (None where it failed), the failures, messages."""
    out: list[Any] = []
    bad: list[int] = []
    messages: list[str] = []
    for k, value in enumerate(values):
        try:
            out.append(parse(value))
        except InvalidTerms as exc:
            out.append(None)
            bad.append(k)
            messages.append(str(exc))
    return out, bad, messages


class Cells:
    """One chunk's text cells turned into exact values, column by column.

    Each method returns a numpy array for every row and records a problem (row,
    column, value, message) for each cell it cannot take; ``ok`` marks the rows
    without a problem so far. The common spellings take a vectorised path (Arrow
    regular expressions, then an exact float step: at most 15 significant digits,
    so ``rint`` recovers the exact integer); every other spelling goes through
    :mod:`amort.money`'s parsers one cell at a time, so the rules and the messages
    are theirs.
    """

    def __init__(self, chunk: TextChunk, problems: Problems) -> None:
        self.text = {name: pc.utf8_trim_whitespace(col) for name, col in chunk.columns.items()}
        self.rows = chunk.rows
        self.size = len(chunk.rows)
        self.problems = problems
        self.ok = np.ones(self.size, dtype=bool)

    def column(self, name: str) -> pa.Array:
        """The column's text ('' in every row where the book has no such column)."""
        col = self.text.get(name)
        if col is None:
            return pa.array([""] * self.size, pa.string())
        return col

    def values(self, name: str, at: np.ndarray) -> list[str]:
        """The text of ``name`` in the rows ``at`` (for messages)."""
        col = self.text.get(name)
        if col is None or not len(at):
            return [""] * len(at)
        return [str(v) for v in col.take(pa.array(at, pa.int64())).to_pylist()]

    def fail(self, where: Any, column: str, messages: list[str]) -> None:
        """Record a problem in ``column`` for each row index of ``where``."""
        at = np.asarray(where, dtype=np.int64)
        if at.size == 0:
            return
        self.problems.add(self.rows[at], column, self.values(column, at), messages)
        self.ok[at] = False

    def fail_rule(self, where: np.ndarray, column: str, rule: str) -> None:
        """Record ``rule (got value)`` for each row where ``where`` is true."""
        at = np.flatnonzero(where)
        values = self.values(column, at)
        self.fail(at, column, [f"{rule} (got {_shown(v)})" for v in values])

    def present(self, name: str, *, required: bool = False) -> np.ndarray:
        col = self.text.get(name)
        if col is None:
            filled = np.zeros(self.size, dtype=bool)
        else:
            filled = ~np.asarray(pc.equal(col, "").to_numpy(zero_copy_only=False), dtype=bool)
        if required:
            self.fail(
                np.flatnonzero(~filled),
                name,
                [f"{name!r} is required (got an empty cell)"] * int((~filled).sum()),
            )
        return filled

    def _matches(self, name: str, pattern: str) -> np.ndarray:
        col = self.text.get(name)
        if col is None:
            return np.zeros(self.size, dtype=bool)
        hit = pc.match_substring_regex(col, pattern)
        return np.asarray(hit.to_numpy(zero_copy_only=False), dtype=bool)

    def _floats(self, name: str, where: np.ndarray, strip: str = "") -> np.ndarray:
        if not where.any():
            return np.zeros(0, dtype=np.float64)
        col = self.text[name].take(pa.array(np.flatnonzero(where), pa.int64()))
        if strip:
            col = pc.utf8_rtrim(col, characters=strip)
        return np.asarray(pc.cast(col, pa.float64()).to_numpy(zero_copy_only=False))

    def _slow(self, name: str, where: np.ndarray, out: np.ndarray, parse: Any) -> np.ndarray:
        """Parse the cells at ``where`` one by one; return the mask of those that failed."""
        at = np.flatnonzero(where)
        parsed, bad, messages = _each(self.values(name, at), parse)
        for k, value in zip(at, parsed, strict=True):
            if value is not None:
                out[k] = value
        self.fail(at[bad], name, messages)
        failed = np.zeros(self.size, dtype=bool)
        failed[at[bad]] = True
        return failed

    def amounts(self, name: str, *, required: bool = False, allow_zero: bool = False) -> np.ndarray:
        """Whole cents of an amount column (0 where empty), under parse_amount's rules."""
        from amort.money import parse_amount, to_cents

        present = self.present(name, required=required)
        cents = np.zeros(self.size, dtype=np.int64)
        quick = present & self._matches(name, r"^\d{1,13}(\.\d{1,2})?$")
        cents[quick] = np.rint(self._floats(name, quick) * 100).astype(np.int64)
        # Out of range or zero: parse_amount gives the sentence.
        redo = quick & ((cents > 10**14) | ((cents == 0) & (not allow_zero)))

        def parse(value: str) -> int:
            if (
                "," in value
                and not _THOUSANDS.match(value)
                and _NUMBER.match(value.replace(",", ""))
            ):
                raise InvalidTerms(
                    f"{name!r} has a comma that does not separate thousands (got "
                    f"{_shown(value)}); write the decimal point as '.', e.g. 1850.50 or 1,850.50"
                )
            return to_cents(parse_amount(value, name, allow_zero=allow_zero))

        self._slow(name, (present & ~quick) | redo, cents, parse)
        return cents

    def percents(self, name: str, *, required: bool = False, signed: bool = False) -> np.ndarray:
        """A percent column as ``percent x 10**6`` (the decimal fraction x 10**8), 0 where empty.

        0 to 100 (-100 to 100 when ``signed``), at most 6 decimals; ``6.5`` and ``6.5%``
        are both 6.5 %.
        """
        from amort.money import parse_number

        present = self.present(name, required=required)
        num = np.zeros(self.size, dtype=np.int64)
        quick = present & self._matches(name, r"^\d{1,3}(\.\d{1,6})?%?$")
        num[quick] = np.rint(self._floats(name, quick, strip="%") * 1e6).astype(np.int64)
        low = -100 if signed else 0
        rule = f"{name!r} must be a percent a year from {low} to 100 with at most 6 decimals"

        def parse(value: str) -> int:
            if "," in value:
                raise InvalidTerms(
                    f"{name!r} must be written with a decimal point, not a comma (got "
                    f"{_shown(value)}), e.g. 6.5"
                )
            text = value[:-1].strip() if value.endswith("%") else value
            try:
                exact = parse_number(text, name)
            except InvalidTerms:
                raise InvalidTerms(f"{rule} (got {_shown(value)})") from None
            scaled = exact * 10**6
            if scaled != scaled.to_integral_value() or not low <= exact <= 100:
                raise InvalidTerms(f"{rule} (got {_shown(value)})")
            return int(scaled)

        self._slow(name, (present & ~quick) | (quick & (num > 10**8)), num, parse)
        return num

    def wholes(self, name: str, *, low: int, high: int, rule: str) -> np.ndarray:
        """A whole-number column (0 where empty) from ``low`` to ``high``."""
        from amort.money import parse_number

        present = self.present(name, required=low > 0)
        out = np.zeros(self.size, dtype=np.int64)
        quick = present & self._matches(name, r"^\d{1,6}$")
        out[quick] = self._floats(name, quick).astype(np.int64)

        def parse(value: str) -> int:
            try:
                exact = parse_number(value, name)
            except InvalidTerms:
                raise InvalidTerms(f"{rule} (got {_shown(value)})") from None
            if exact != exact.to_integral_value() or not low <= exact <= high:
                raise InvalidTerms(f"{rule} (got {_shown(value)})")
            return int(exact)

        failed = self._slow(name, present & ~quick, out, parse)
        wrong = present & ~failed & ((out < low) | (out > high))
        self.fail_rule(wrong, name, rule)
        return out

    def dates(self, name: str, *, required: bool, first: date, last: date) -> np.ndarray:
        """A date column as ``datetime64[D]`` (NaT where empty), YYYY-MM-DD from first to last."""
        from amort.calendar import parse_date

        present = self.present(name, required=required)
        out = np.full(self.size, np.datetime64("NaT"), dtype="M8[D]")
        quick = present & self._matches(name, r"^\d{4}-\d{2}-\d{2}$")
        at = np.flatnonzero(quick)
        valid = np.zeros(0, dtype=bool)
        if at.size:
            col = self.text[name].take(pa.array(at, pa.int64()))
            y, m, d = (
                np.asarray(pc.cast(pc.utf8_slice_codeunits(col, a, b), pa.int64()))
                for a, b in ((0, 4), (5, 7), (8, 10))
            )
            month = ((y - 1970) * 12 + np.clip(m, 1, 12) - 1).astype("M8[M]")
            length = ((month + 1).astype("M8[D]") - month.astype("M8[D]")).astype(np.int64)
            valid = (m >= 1) & (m <= 12) & (d >= 1) & (d <= length)
            out[at[valid]] = month[valid].astype("M8[D]") + (d[valid] - 1).astype("m8[D]")
        slow = present & ~quick
        slow[at[~valid]] = True
        self._slow(name, slow, out, lambda v: np.datetime64(parse_date(v, name), "D"))
        lo, hi = np.datetime64(first, "D"), np.datetime64(last, "D")
        wrong = ~np.isnat(out) & ((out < lo) | (out > hi))
        self.fail_rule(wrong, name, f"{name!r} must be a date from {first} to {last}")
        return out

    def choices(self, name: str, parse: Any, default: str) -> np.ndarray:
        """A column of named choices, each distinct spelling parsed once by ``parse``."""
        out = np.full(self.size, default, dtype=object)
        col = self.text.get(name)
        if col is None or not self.size:
            return out
        spellings = pc.unique(col)
        chosen: list[str] = []
        wrong: dict[int, str] = {}
        for k, value in enumerate(spellings.to_pylist()):
            try:
                chosen.append(parse(value) if value else default)
            except InvalidTerms as exc:
                chosen.append(default)
                wrong[k] = str(exc)
        codes = np.asarray(pc.index_in(col, value_set=spellings).to_numpy(zero_copy_only=False))
        out = np.asarray(chosen, dtype=object)[codes]
        for k, message in wrong.items():
            at = np.flatnonzero(codes == k)
            self.fail(at, name, [message] * at.size)
        return out

    def labels(self, name: str) -> pa.Array:
        """A text column ('' where empty or absent)."""
        return self.column(name)


def _shown(value: object) -> str:
    return repr(value) if isinstance(value, str) else str(value)
