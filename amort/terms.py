"""Terms files: one loan's terms in a small TOML layout, read into a :class:`~amort.loan.Loan`.

A terms file holds what the command line's options hold, in the command
line's units: amounts in currency units, rates in percent a year. It is read
with the standard library's :mod:`tomllib` (TOML 1.0), with TOML floats taken
as exact decimals, so ``principal = 18500.10`` is 18,500.10 to the cent. The
layout, version 1 (every table but ``[loan]`` may be left out)::

    format = 1                      # the layout's version; amort reads 1

    [loan]
    borrower = "Marrowby Field Services"
    reference = "TCL-2027-0042"
    note = "Graduated repayments while the second depot opens."
    principal = "36,000.00"         # currency units: a number, or a string of one
    rate = 6.9                      # percent a year: 6.9 or "6.9%"
    years = 6                       # or periods = 72 (the number of payments), not both
    frequency = "monthly"
    balloon = 0                     # paid with the last payment
    timing = "arrears"              # or "advance" (annuity-due)
    rounding = "half-up"            # of the level payment: half-up, half-even, up, down
    interest_rounding = "half-up"   # of each period's interest
    # payment = 650                 # a fixed payment; without periods/years the term follows

    [dates]
    start = 2027-02-15              # disbursement: a TOML date or a string "2027-02-15"
    first_payment = "2027-03-15"
    day_count = "30/360"
    business_days = "following"     # none, following, modified-following, preceding
    holidays = "US"                 # country[-subdivision], or an array ["US", "NY"]
    end_of_month = false
    semimonthly_days = [1, 15]      # the two due days of a semimonthly loan (or "end")
    odd_days = "accrue"             # accrue, separate, capitalise
    interest_dates = "unadjusted"   # or "adjusted"

    [structure]
    kind = "level"                  # level, equal-principal or bullet
    interest_only_periods = 3
    growth = 3                      # percent every growth_every periods (or step = 25)
    growth_every = 12

    [rates]
    # compounding = "semiannual"    # a number a year, a frequency name or "continuous";
                                    # under the equal day count only

Keys and the :class:`~amort.loan.Loan` fields they set:

=====================================  ==============================  =====================
key                                    TOML value                      Loan field
=====================================  ==============================  =====================
``format``                             the integer 1                   (layout version)
``[loan] principal``                   number or string, currency      principal
``[loan] rate``                        number or string, percent/year  annual_rate
``[loan] periods``                     integer                         periods
``[loan] years``                       number                          periods (x per year)
``[loan] frequency``                   string                          frequency
``[loan] balloon``                     number or string, currency      balloon
``[loan] timing``                      string                          timing
``[loan] payment``                     number or string, currency      fixed_payment
``[loan] rounding``                    string                          rounding
``[loan] interest_rounding``           string                          interest_rounding
``[loan] borrower``                    string                          (metadata)
``[loan] reference``                   string                          (metadata)
``[loan] note``                        string                          (metadata)
``[dates] start``                      date or "YYYY-MM-DD"            start
``[dates] first_payment``              date or "YYYY-MM-DD"            first_payment
``[dates] day_count``                  string                          day_count
``[dates] business_days``              string                          business_days
``[dates] holidays``                   string, or ["US", "NY"]         holidays
``[dates] end_of_month``               boolean                         end_of_month
``[dates] semimonthly_days``           array of 2, integer or "end"    semimonthly_days
``[dates] odd_days``                   string                          odd_days
``[dates] interest_dates``             string                          interest_dates
``[structure] kind``                   string                          structure
``[structure] interest_only_periods``  integer                         interest_only_periods
``[structure] growth``                 number or string, percent       payment_growth
``[structure] step``                   number or string, currency      payment_step
``[structure] growth_every``           integer                         growth_every
``[rates] compounding``                string or integer               compounding
=====================================  ==============================  =====================

The loan needs ``principal``, ``rate`` and a term (``periods``, ``years``, or a
``payment`` from which the term follows). The metadata (``borrower``,
``reference``, ``note``) is the user's own text and is returned as given; it
may hold no control characters (``note`` may hold tabs and line breaks);
``borrower`` and ``reference`` hold at most 200 characters, ``note`` at most
32,767 (what a spreadsheet cell holds). It is *not* escaped: a writer that puts
it into a spreadsheet must still keep a leading ``=``, ``+``, ``-`` or ``@``
from being read as a formula.

Every refusal is one :class:`~amort.errors.InvalidTerms` sentence (a term that
cannot be met may be :class:`~amort.errors.NoSolution`, as from ``Loan``)
that starts with the file and, where it can be found, the line:
``terms.toml line 7: unknown key 'princpal' in [loan]; did you mean 'principal'?``.
:mod:`tomllib` gives no positions for keys, so a key's line is found by
scanning the text (:func:`key_line`).

>>> terms = parse_terms('format = 1\\n[loan]\\nprincipal = 18500\\nrate = 7.9\\nyears = 5\\n')
>>> terms.loan.payment
Decimal('374.23')
>>> parse_terms('format = 1\\n[loan]\\nprincpal = 18500\\n')
Traceback (most recent call last):
...
amort.errors.InvalidTerms: <string> line 3: unknown key 'princpal' in [loan]; did you mean ...?

Events are ``[[events]]`` tables, one an event, each with a ``kind``:
``"extra"`` (``amount``, and ``every``, ``until``, ``recast``), ``"holiday"``
(``count``) or ``"reset"`` (``rate`` in percent a year, ``reamortise``), and
either ``period`` (a period number) or ``on`` (a date)::

    [[events]]
    kind = "reset"
    on = 2028-01-01
    rate = 8.5

``[structure]`` also takes ``payments`` (every payment listed, the last paying
what is left), ``payment_months`` (a seasonal loan's months, 1 to 12) and
``negative_amortisation_cap`` (an amount, or a percent of the principal such
as ``"110%"``, for graduated payments).

Fees for the disclosure figures (``amort apr``) are ``[[fees]]`` tables, one a
fee, each with a ``name`` and an ``amount`` (currency units); ``finance_charge``
(default true) says whether it is a finance charge and ``financed`` (default
false) whether it is added to the principal instead of paid at closing
(``at_closing = true`` may say the latter; both at once is refused). See
:class:`amort.disclosure.Fee`::

    [[fees]]
    name = "origination"
    amount = 250
    financed = true

    [[fees]]
    name = "appraisal"
    amount = "400.00"
    finance_charge = false
"""

from __future__ import annotations

import difflib
import os
import re
import tomllib
import unicodedata
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime, time
from decimal import Decimal
from pathlib import Path
from typing import Any, NoReturn

from amort import solve
from amort.conventions import Frequency
from amort.disclosure import Fee
from amort.errors import AmortError, InvalidTerms, describe
from amort.events import Event, ExtraPrincipal, PaymentHoliday, RateReset
from amort.loan import Loan
from amort.money import parse_number, parse_rate
from amort.toml_lines import entries, first_repeat, key_line

__all__ = ["FORMAT_VERSION", "LoanTerms", "key_line", "parse_terms", "read_terms"]

#: The version of the layout this module reads (the file's ``format`` key).
FORMAT_VERSION = 1

#: The largest terms file read, in bytes: one loan's terms are a few hundred.
MAX_FILE_BYTES = 1_000_000

# What each kind of key must hold, as the error message words it.
_RULES = {
    "amount": 'an amount, a number or a string such as "18,500.00"',
    "percent": 'a percent a year, a number or a string such as "6.5%"',
    "whole": "a whole number written as a TOML integer, such as 60",
    "number": "a number, such as 5 or 2.5",
    "choice": "a string",
    "date": 'a date, written 2027-01-15 or "2027-01-15"',
    "flag": "true or false",
    "days": 'an array of two days of the month, such as [1, 15] or [15, "end"]',
    "holidays": 'a calendar code such as "US-NY", or an array such as ["US", "NY"]',
    "compounding": 'a number of times a year or a name, such as 2 or "semiannual"',
    "text": "a string",
    "amounts": 'an array of amounts, such as [500, 500, "1,500.00"]',
    "months": "an array of months 1 to 12, such as [8, 9, 10, 11]",
}

# The layout: table -> key -> kind. The top level is the table "".
_SCHEMA: dict[str, dict[str, str]] = {
    "": {"format": "whole"},
    "loan": {
        "principal": "amount",
        "rate": "percent",
        "periods": "whole",
        "years": "number",
        "frequency": "choice",
        "balloon": "amount",
        "timing": "choice",
        "payment": "amount",
        "rounding": "choice",
        "interest_rounding": "choice",
        "borrower": "text",
        "reference": "text",
        "note": "text",
    },
    "dates": {
        "start": "date",
        "first_payment": "date",
        "day_count": "choice",
        "business_days": "choice",
        "holidays": "holidays",
        "end_of_month": "flag",
        "semimonthly_days": "days",
        "odd_days": "choice",
        "interest_dates": "choice",
    },
    "structure": {
        "kind": "choice",
        "interest_only_periods": "whole",
        "growth": "percent",
        "step": "amount",
        "growth_every": "whole",
        "payments": "amounts",
        "payment_months": "months",
        "negative_amortisation_cap": "amount",
    },
    "rates": {"compounding": "compounding"},
}

# Every key name is used in one table only, so a key names its table.
_TABLE_OF = {key: table for table, keys in _SCHEMA.items() for key in keys}

# Loan fields whose key has another name; the others share the field's name.
_KEY_OF_FIELD = {
    "annual_rate": "rate",
    "fixed_payment": "payment",
    "structure": "kind",
    "payment_growth": "growth",
    "payment_step": "step",
    "custom_payments": "payments",
}

# Names a user may reach for, and the key meant (table, key).
_MEANT = {
    "annual_rate": ("loan", "rate"),
    "interest_rate": ("loan", "rate"),
    "fixed_payment": ("loan", "payment"),
    "amount": ("loan", "principal"),
    "term": ("loan", "periods"),
    "advance": ("loan", "timing"),
    "structure": ("structure", "kind"),
    "interest_only": ("structure", "interest_only_periods"),
    "payment_growth": ("structure", "growth"),
    "payment_step": ("structure", "step"),
}

# A Loan message about a field may concern the key the field came from.
_ALSO = {"periods": ("years",)}

_METADATA = ("borrower", "reference", "note")

# [[events]]: kind -> the keys it takes.
_EVENT_KEYS = {
    "extra": ("period", "on", "amount", "every", "until", "recast"),
    "holiday": ("period", "on", "count"),
    "reset": ("period", "on", "rate", "reamortise"),
}
# [[fees]]: key -> the kind of value it holds.
_FEE_KEYS = {
    "name": "text",
    "amount": "amount",
    "finance_charge": "flag",
    "financed": "flag",
    "at_closing": "flag",
}
# A spreadsheet cell holds at most 32,767 characters (Excel's limit, from memory).
_TEXT_LIMITS = {"borrower": 200, "reference": 200, "note": 32_767}


@dataclass(frozen=True)
class LoanTerms:
    """One terms file, read: the loan, its metadata and where it came from.

    loan: the validated :class:`~amort.loan.Loan`.
    metadata: the ``borrower``, ``reference`` and ``note`` strings the file gives
        (only those it gives), exactly as written; user text, not escaped.
    source: the file read (``Path("<string>")`` for :func:`parse_terms` text).
    fees: the ``[[fees]]`` of the file, in order (for the disclosure figures).
    """

    loan: Loan
    metadata: dict[str, str] = field(default_factory=dict)
    source: Path = Path("<string>")
    fees: tuple[Fee, ...] = ()


def read_terms(path: str | os.PathLike[str]) -> LoanTerms:
    """Return the loan a terms file describes (UTF-8 TOML, the layout of :mod:`amort.terms`).

    A missing file, a directory, an unreadable or oversized file, text that is not
    UTF-8 and every wrong term are refused with one
    :class:`~amort.errors.InvalidTerms` sentence naming the file (and the line).
    """
    source = Path(path)
    shown = str(path)
    if source.is_dir():
        raise InvalidTerms(f"{shown} is a directory, not a terms file")
    try:
        with source.open("rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise InvalidTerms(f"{shown}: no such terms file") from None
    except PermissionError:
        raise InvalidTerms(f"{shown} cannot be read (permission denied)") from None
    except OSError as exc:
        raise InvalidTerms(f"{shown} cannot be read ({exc.strerror or exc})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise InvalidTerms(
            f"{shown} is larger than {MAX_FILE_BYTES:,} bytes, too large for one loan's terms"
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise InvalidTerms(f"{shown} line {line}: the file is not UTF-8 text") from None
    return parse_terms(text, source=path)


def parse_terms(text: str, *, source: str | os.PathLike[str] = "<string>") -> LoanTerms:
    """Return the loan that terms-file ``text`` describes; ``source`` names it in errors.

    See the module documentation for the layout. Raises
    :class:`~amort.errors.InvalidTerms` (or :class:`~amort.errors.NoSolution`
    for a term that cannot be met) with the source and line.
    """
    reader = _Reader(text, str(source))
    data = reader.load()
    reader.check_format(data)
    reader.check_layout(data)
    keywords, metadata = reader.loan_keywords(data)
    loan = reader.build(keywords)
    fees = reader.fees(data)
    return LoanTerms(loan=loan, metadata=metadata, source=Path(source), fees=fees)


# -- reading -------------------------------------------------------------------------------

_POSITION = re.compile(r"\s*\(at line (\d+), column (\d+)\)$")
_QUOTED = re.compile(r"'([a-z_]+)'")


def _show(value: object) -> str:
    """Return a TOML value as an error message shows it."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (date, time)):
        return value.isoformat()
    if isinstance(value, list):
        return "[" + ", ".join(_show(item) for item in value) + "]"
    if isinstance(value, dict):
        return "a table"
    return describe(value)


class _Reader:
    """The text of one terms file, with the means to place an error on its line."""

    def __init__(self, text: str, source: str) -> None:
        self.text = text
        self.source = source

    def where(self, *path: str) -> str:
        """Return ``"terms.toml line 7"`` for the line setting ``path``, or the file's name."""
        while path:
            line = key_line(self.text, *path)
            if line is not None:
                return f"{self.source} line {line}"
            path = path[:-1]
        return self.source

    def fail(self, message: str, *path: str) -> NoReturn:
        raise InvalidTerms(f"{self.where(*path)}: {message}")

    def load(self) -> dict[str, Any]:
        try:
            return tomllib.loads(self.text, parse_float=Decimal)
        except tomllib.TOMLDecodeError as exc:
            message = str(exc)
            position = _POSITION.search(message)
            if position:
                line, column = position.groups()
                message = message[: position.start()]
                raise InvalidTerms(
                    f"{self.source} line {line}, column {column}: {message} (not valid TOML)"
                ) from None
            message = message.replace(" (at end of document)", "")
            repeat = first_repeat(self.text) if message.startswith("Cannot overwrite") else None
            where = self.source if repeat is None else f"{self.source} line {repeat}"
            ending = "" if repeat is not None else " at the end of the file"
            raise InvalidTerms(f"{where}: {message}{ending} (not valid TOML)") from None

    def check_format(self, data: dict[str, Any]) -> None:
        if "format" not in data:
            for table, value in data.items():
                if isinstance(value, dict) and "format" in value:
                    self.fail(
                        f"'format = {FORMAT_VERSION}' belongs at the top of the file, "
                        f"before [{table}]",
                        table,
                        "format",
                    )
            self.fail(
                f"needs 'format = {FORMAT_VERSION}' at the top, before any table "
                "(the version of the terms layout)"
            )
        version = data["format"]
        if type(version) is not int or version != FORMAT_VERSION:
            self.fail(
                f"format {_show(version)} is not a terms layout amort reads; "
                f"this version reads format = {FORMAT_VERSION}",
                "format",
            )

    def check_layout(self, data: dict[str, Any]) -> None:
        """Refuse unknown tables and keys (with a suggestion) and values of the wrong type."""
        for name, value in data.items():
            if name == "events":
                self._check_events(value)
                continue
            if name == "fees":
                self._check_fees(value)
                continue
            if name in _SCHEMA and name:
                if not isinstance(value, dict):
                    self.fail(f"{name!r} must be a table, [{name}] (got {_show(value)})", name)
                for key, item in value.items():
                    self._check_entry(name, key, item)
            else:
                self._check_entry("", name, value)
        if "loan" not in data:
            self.fail("needs a [loan] table with at least 'principal', 'rate' and 'periods'")

    def _check_events(self, value: object) -> None:
        """``[[events]]``: each a table with ``kind`` and that kind's keys."""
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            self.fail("'events' must be [[events]] tables, one an event", "events")
        for number, event in enumerate(value, start=1):
            kind = event.get("kind")
            if kind not in _EVENT_KEYS:
                valid = ", ".join(repr(k) for k in _EVENT_KEYS)
                self.fail(
                    f"event {number}: 'kind' must be one of {valid} (got {_show(kind)})", "events"
                )
            allowed = _EVENT_KEYS[kind]
            for key in event:
                if key != "kind" and key not in allowed:
                    near = difflib.get_close_matches(key, allowed, n=1)
                    hint = f"; did you mean {near[0]!r}?" if near else ""
                    self.fail(f"event {number} ({kind}): unknown key {key!r}{hint}", "events")
            if ("period" in event) == ("on" in event):
                self.fail(
                    f"event {number} ({kind}): give 'period' or 'on' (a date), one of them",
                    "events",
                )

    def fee_where(self, number: int, key: str | None = None) -> str:
        """Return ``"terms.toml line 9"`` for fee ``number``'s ``key`` (or its header)."""
        count, line = 0, None
        for path, at in entries(self.text):
            if path == ("fees",):
                count += 1
                if count == number:
                    line = at
            elif count == number and key is not None and path == ("fees", key):
                line = at
                break
        return self.source if line is None else f"{self.source} line {line}"

    def _check_fees(self, value: object) -> None:
        """``[[fees]]``: each a table with ``name`` and ``amount``, and the flags."""
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            self.fail("'fees' must be [[fees]] tables, one a fee", "fees")
        for number, fee in enumerate(value, start=1):
            for key, item in fee.items():
                kind = _FEE_KEYS.get(key)
                if kind is None:
                    near = difflib.get_close_matches(key, list(_FEE_KEYS), n=1)
                    hint = f"; did you mean {near[0]!r}?" if near else ""
                    raise InvalidTerms(
                        f"{self.fee_where(number, key)}: fee {number}: unknown key {key!r}{hint}"
                    )
                if not _fits(kind, item):
                    raise InvalidTerms(
                        f"{self.fee_where(number, key)}: fee {number}: {key!r} must be "
                        f"{_RULES[kind]} (got {_show(item)})"
                    )
            for needed in ("name", "amount"):
                if needed not in fee:
                    raise InvalidTerms(f"{self.fee_where(number)}: fee {number} needs {needed!r}")

    def fees(self, data: dict[str, Any]) -> tuple[Fee, ...]:
        """Return the fees of ``[[fees]]`` (types checked by :meth:`_check_fees`)."""
        out: list[Fee] = []
        seen: dict[str, int] = {}
        for number, fee in enumerate(data.get("fees", []), start=1):
            try:
                made = Fee(**fee)
            except InvalidTerms as exc:
                key = "amount" if "'amount'" in str(exc) else None
                raise InvalidTerms(f"{self.fee_where(number, key)}: {exc}") from None
            if made.name.lower() in seen:
                raise InvalidTerms(
                    f"{self.fee_where(number, 'name')}: fee {number}: the name {made.name!r} is "
                    f"already used by fee {seen[made.name.lower()]}"
                )
            seen[made.name.lower()] = number
            out.append(made)
        return tuple(out)

    def events(self, data: dict[str, Any]) -> tuple[Any, ...]:
        """Return the events of ``[[events]]`` (their types checked by the event classes)."""
        out: list[Event] = []
        for number, event in enumerate(data.get("events", []), start=1):
            args = {k: v for k, v in event.items() if k != "kind"}
            if "rate" in args:
                try:
                    parse_rate(args["rate"], "rate", percent=True)
                except InvalidTerms as exc:
                    self.fail(f"event {number} (reset): {exc}", "events", "rate")
                text = str(args.pop("rate")).strip()
                args["annual_rate"] = text if text.endswith("%") else f"{text}%"
            kinds = {"extra": ExtraPrincipal, "holiday": PaymentHoliday, "reset": RateReset}
            try:
                out.append(kinds[event["kind"]](**args))
            except InvalidTerms as exc:
                self.fail(f"event {number} ({event['kind']}): {exc}", "events")
        return tuple(out)

    def _check_entry(self, table: str, key: str, value: object) -> None:
        kind = _SCHEMA[table].get(key)
        if kind is None:
            if table == "" and isinstance(value, dict):
                self.fail(f"unknown table [{key}]{_suggest_table(key)}", key)
            place = "at the top" if table == "" else f"in [{table}]"
            self.fail(f"unknown key {key!r} {place}{_suggest(table, key)}", *_path(table, key))
        if not _fits(kind, value):
            self.fail(
                f"{key!r} {'at the top' if table == '' else f'in [{table}]'} must be "
                f"{_RULES[kind]} (got {_show(value)})",
                *_path(table, key),
            )

    def loan_keywords(self, data: dict[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
        """Return the Loan keywords and the metadata (types already checked)."""
        loan: dict[str, Any] = data["loan"]
        dates: dict[str, Any] = data.get("dates", {})
        structure: dict[str, Any] = data.get("structure", {})
        rates: dict[str, Any] = data.get("rates", {})
        for needed in ("principal", "rate"):
            if needed not in loan:
                self.fail(f"[loan] needs {needed!r}")
        if "periods" in loan and "years" in loan:
            self.fail("give 'periods' or 'years' in [loan], not both", "loan", "years")
        if not {"periods", "years", "payment"} & loan.keys() and "payments" not in structure:
            self.fail(
                "[loan] needs 'periods' (the number of payments) or 'years', "
                "or a 'payment' from which the term follows"
            )
        metadata = {key: self._text(key, loan[key]) for key in _METADATA if key in loan}
        keywords: dict[str, Any] = {
            "principal": loan["principal"],
            "annual_rate": self._percent("loan", "rate", loan["rate"]),
        }
        with self.at("loan", "frequency"):
            frequency = Frequency.parse(loan.get("frequency", Frequency.MONTHLY), "frequency")
        keywords["frequency"] = frequency
        if "years" in loan:
            keywords["periods"] = self._years(loan["years"], frequency)
        elif "periods" in loan:
            keywords["periods"] = loan["periods"]
        renamed = {"payment": "fixed_payment"}
        for key in ("balloon", "timing", "payment", "rounding", "interest_rounding"):
            if key in loan:
                keywords[renamed.get(key, key)] = loan[key]
        for key, value in dates.items():
            if key in ("holidays", "semimonthly_days") and isinstance(value, list):
                value = tuple(value)
            keywords[key] = value
        renamed = {"kind": "structure", "step": "payment_step", "payments": "custom_payments"}
        for key, value in structure.items():
            if key in ("payments", "payment_months"):
                keywords[renamed.get(key, key)] = tuple(value)
            elif key == "growth":
                keywords["payment_growth"] = self._percent("structure", key, value)
            else:
                keywords[renamed.get(key, key)] = value
        if "compounding" in rates:
            keywords["compounding"] = rates["compounding"]
        events = self.events(data)
        if events:
            keywords["events"] = events
        return keywords, metadata

    def build(self, keywords: dict[str, Any]) -> Loan:
        """Return the Loan, with its errors placed on the line of the key they name."""
        try:
            return Loan(**keywords)
        except AmortError as exc:
            message = _QUOTED.sub(
                lambda m: f"'{_KEY_OF_FIELD.get(m.group(1), m.group(1))}'", str(exc)
            )
            where = self.source
            line = self._named_line(message)
            if line is not None:
                where = f"{self.source} line {line}"
            raise type(exc)(f"{where}: {message}") from None

    def _named_line(self, message: str) -> int | None:
        """Return the line of the key a Loan message is about, or None.

        That is the first key it names that the file sets, except that a key
        it asks for ("needs 'periods'", "give 'start'") comes after the others.
        """
        named = []
        for match in _QUOTED.finditer(message):
            asked = message[: match.start()].endswith(("needs ", "give "))
            for key in (match.group(1), *_ALSO.get(match.group(1), ())):
                named.append((asked, key))
        for _asked, key in sorted(named, key=lambda pair: pair[0]):
            line = key_line(self.text, *_path(_TABLE_OF[key], key)) if key in _TABLE_OF else None
            if line is not None:
                return line
        return None

    @contextmanager
    def at(self, *path: str) -> Iterator[None]:
        """A context in which an InvalidTerms is placed on the line of ``path``."""
        try:
            yield
        except InvalidTerms as exc:
            raise InvalidTerms(f"{self.where(*path)}: {exc}") from None

    def _percent(self, table: str, key: str, value: object) -> str:
        """Return a percent key as the ``"6.5%"`` string a Loan reads (of any size).

        The text goes to the Loan as written (``6.9`` -> ``"6.9%"``), so the Loan
        reads exactly what ``Loan(annual_rate="6.9%")`` reads.
        """
        with self.at(table, key):
            parse_rate(value, key, percent=True)
        text = str(value).strip()
        return text if text.endswith("%") else f"{text}%"

    def _years(self, value: object, frequency: Frequency) -> int:
        with self.at("loan", "years"):
            span = parse_number(value, "years")
        if span <= 0:
            self.fail(f"'years' must be > 0 (got {_show(value)})", "loan", "years")
        count = span * frequency.per_year
        if count != count.to_integral_value():
            self.fail(
                f"'years' {_show(value)} is not a whole number of {frequency.value} payments "
                f"({count.normalize():f} payments)",
                "loan",
                "years",
            )
        if count > solve.MAX_PERIODS:
            self.fail(
                f"'years' {_show(value)} means {int(count):,} {frequency.value} payments, "
                f"more than the {solve.MAX_PERIODS:,} amort accepts",
                "loan",
                "years",
            )
        return int(count)

    def _text(self, key: str, value: str) -> str:
        limit = _TEXT_LIMITS[key]
        allowed = "\t\n" if key == "note" else ""
        for index, char in enumerate(value):
            if char not in allowed and unicodedata.category(char) == "Cc":
                self.fail(
                    f"{key!r} in [loan] may not hold the control character U+{ord(char):04X} "
                    f"(at character {index + 1})",
                    "loan",
                    key,
                )
        if len(value) > limit:
            self.fail(
                f"{key!r} in [loan] must be at most {limit:,} characters (got {len(value):,})",
                "loan",
                key,
            )
        return value


def _path(table: str, key: str) -> tuple[str, ...]:
    return (key,) if table == "" else (table, key)


def _fits(kind: str, value: object) -> bool:
    """True when a TOML value has the type a key of ``kind`` takes (Loan checks the value)."""
    if isinstance(value, bool):
        return kind == "flag"
    if kind in ("amount", "percent"):
        return isinstance(value, (int, Decimal, str))
    if kind == "whole":
        return isinstance(value, int)
    if kind == "number":
        return isinstance(value, (int, Decimal))
    if kind in ("choice", "text"):
        return isinstance(value, str)
    if kind == "date":
        return isinstance(value, str) or (
            isinstance(value, date) and not isinstance(value, datetime)
        )
    if kind == "days":
        return (
            isinstance(value, list)
            and len(value) == 2
            and all(isinstance(d, (int, str)) and not isinstance(d, bool) for d in value)
        )
    if kind == "holidays":
        return isinstance(value, str) or (
            isinstance(value, list)
            and 1 <= len(value) <= 2
            and all(isinstance(part, str) for part in value)
        )
    if kind == "compounding":
        return isinstance(value, (int, str))
    if kind == "amounts":
        return (
            isinstance(value, list)
            and len(value) >= 1
            and all(isinstance(v, (int, Decimal, str)) and not isinstance(v, bool) for v in value)
        )
    if kind == "months":
        return (
            isinstance(value, list)
            and len(value) >= 1
            and all(isinstance(v, int) and not isinstance(v, bool) for v in value)
        )
    return False


def _suggest(table: str, key: str) -> str:
    """Return "; did you mean ...?" for an unknown key, or the keys the table takes."""
    if key in _MEANT:
        home, meant = _MEANT[key]
        return f"; did you mean {meant!r}{'' if home == table else f' in [{home}]'}?"
    if key in _SCHEMA and key:
        return f"; [{key}] is a table of its own, not a key of [{table}]"
    if key in _TABLE_OF:
        home = _TABLE_OF[key]
        return "; it belongs at the top of the file" if home == "" else f"; it belongs in [{home}]"
    close = difflib.get_close_matches(key, list(_SCHEMA[table]), n=1)
    if close:
        return f"; did you mean {close[0]!r}?"
    close = difflib.get_close_matches(key, list(_TABLE_OF), n=1)
    if close:
        home = _TABLE_OF[close[0]]
        return f"; did you mean {close[0]!r}{' at the top' if home == '' else f' in [{home}]'}?"
    keys = ", ".join(_SCHEMA[table])
    return f"; [{table}] takes {keys}" if table else "; the top takes 'format' and tables"


def _suggest_table(name: str) -> str:
    tables = [t for t in _SCHEMA if t]
    close = difflib.get_close_matches(name, tables, n=1)
    if close:
        return f"; did you mean [{close[0]}]?"
    return "; the tables are " + ", ".join(f"[{t}]" for t in tables)
