"""Disclosure figures: amount financed, finance charge, total of payments, payment schedule, APR.

The figures follow Regulation Z's definitions (12 CFR 1026.18) [text]:

- **prepaid finance charge**: the fees that are finance charges, whether the
  borrower pays them at closing or they are financed (withheld from the
  proceeds);
- **amount financed** = the note amount - the prepaid finance charge;
- **finance charge** = the interest of the schedule + the prepaid finance charge;
- **total of payments** = every scheduled payment (balloon and separately paid
  odd-days interest included), so that total of payments = amount financed +
  finance charge;
- **payment schedule**: runs of equal payments, "count x amount from date".

A :class:`Fee` is a named amount, a finance charge unless marked otherwise,
and either paid at closing (the default) or financed. For a
:class:`~amort.loan.Loan`, ``principal`` is the amount before fees: a financed
fee is *added* to it, and the schedule is that of the larger note (so a
financed finance charge costs interest too). For a :class:`~amort.flows.Flows`
list the advances are taken as the note's own (a financed fee is already in
them), and every finance-charge fee comes off the first advance.

The APR is computed by the chosen standard (:mod:`amort.apr`): the amount
financed advanced at the start, the payments on their due dates (an undated
loan: on equal periods).

Money is :class:`~decimal.Decimal` in currency units, exact to the cent.

>>> from amort import Loan
>>> loan = Loan(principal=5000, annual_rate="9%", periods=24)
>>> plain = disclose(loan)
>>> plain.apr.apr, plain.finance_charge
(Decimal('9.00'), Decimal('482.20'))
>>> with_fee = disclose(loan, fees=[Fee("origination", 100)])
>>> with_fee.amount_financed, with_fee.finance_charge, with_fee.apr.apr
(Decimal('4900.00'), Decimal('582.20'), Decimal('11.02'))
"""

from __future__ import annotations

import csv
import dataclasses
import io
import itertools
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

from amort.apr import (
    AprResult,
    Method,
    Standard,
    TimedFlow,
    UnitPeriod,
    YearBasis,
    classify,
    eu_aprc,
    eu_rate,
    regz_apr,
    regz_rate,
)
from amort.caution import CAUTION
from amort.conventions import Frequency
from amort.errors import InvalidTerms
from amort.flows import Flow, FlowKind, Flows
from amort.loan import Loan
from amort.money import CENT, from_cents, parse_amount

__all__ = ["Disclosure", "Fee", "PaymentRun", "disclose", "disclose_flows", "rate_on_periods"]

_NAME_LIMIT = 100

#: The figures' names under each standard: the same sums, in the regulation's own words
#: (the EU Directive says "total cost of credit" where Regulation Z says "finance charge").
WORDS = {
    Standard.US_REGZ: {
        "title": "Disclosure (US Regulation Z)",
        "rate": "annual percentage rate (APR)",
        "finance_charge": "finance charge",
        "amount_financed": "amount financed",
        "total_of_payments": "total of payments",
        "prepaid": "prepaid finance charge (fees)",
        "in_charge": "finance charge",
        "closing": "at closing",
    },
    Standard.EU_CCD: {
        "title": "Disclosure (EU Directive 2008/48/EC)",
        "rate": "annual percentage rate of charge (APRC)",
        "finance_charge": "total cost of credit",
        "amount_financed": "credit advanced, net of charges",
        "total_of_payments": "total of repayments",
        "prepaid": "charges paid at the start",
        "in_charge": "in the cost of credit",
        "closing": "at the start",
    },
}


@dataclass(frozen=True)
class Fee:
    """A named charge: ``amount`` (> 0, currency units), a finance charge unless
    ``finance_charge=False``, paid at closing unless ``financed=True``.

    ``at_closing`` may be given to say so; a fee both financed and paid at
    closing is refused.

    >>> Fee("origination", 150, financed=True, at_closing=True)
    Traceback (most recent call last):
    ...
    amort.errors.InvalidTerms: fee 'origination' is marked both financed and paid at closing; ...
    """

    name: str
    amount: Decimal
    finance_charge: bool = True
    financed: bool = False
    at_closing: bool | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise InvalidTerms(f"a fee's 'name' must be non-empty text (got {self.name!r})")
        name = self.name.strip()
        if len(name) > _NAME_LIMIT or any(unicodedata.category(c) == "Cc" for c in name):
            raise InvalidTerms(
                f"fee name {name[:40]!r} must be at most {_NAME_LIMIT} characters with no "
                "control characters"
            )
        object.__setattr__(self, "name", name)
        try:
            amount = parse_amount(self.amount, "amount")
        except InvalidTerms as exc:
            raise InvalidTerms(f"fee {name!r}: {exc}") from None
        object.__setattr__(self, "amount", amount)
        for flag in ("finance_charge", "financed"):
            if not isinstance(getattr(self, flag), bool):
                raise InvalidTerms(
                    f"fee {name!r}: {flag!r} must be true or false (got {getattr(self, flag)!r})"
                )
        closing = self.at_closing
        if closing is None:
            closing = not self.financed
        if not isinstance(closing, bool):
            raise InvalidTerms(
                f"fee {name!r}: 'at_closing' must be true or false (got {closing!r})"
            )
        if closing == self.financed:
            raise InvalidTerms(
                f"fee {name!r} is marked both financed and paid at closing; a fee is one or "
                "the other"
                if closing
                else f"fee {name!r} is marked neither financed nor paid at closing; say which"
            )
        object.__setattr__(self, "at_closing", closing)

    def as_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "amount": self.amount,
            "finance_charge": self.finance_charge,
            "financed": self.financed,
            "at_closing": self.at_closing,
        }


@dataclass(frozen=True)
class PaymentRun:
    """``count`` equal payments of ``amount``, from period ``first_period`` (and date)."""

    count: int
    amount: Decimal
    first_period: int
    first_due: date | None
    last_due: date | None

    def as_dict(self) -> dict[str, Any]:
        return dataclasses.asdict(self)


@dataclass(frozen=True)
class Disclosure:
    """The disclosure figures of one loan or flows list (money in currency units, Decimal).

    note_amount: what the note repays (principal + financed fees, or the advances).
    interest: the schedule's interest (the flows' payments less their advances).
    start: the first advance (None for an undated loan).
    """

    standard: Standard
    apr: AprResult
    amount_financed: Decimal
    finance_charge: Decimal
    total_of_payments: Decimal
    prepaid_finance_charge: Decimal
    note_amount: Decimal
    interest: Decimal
    fees: tuple[Fee, ...]
    payment_schedule: tuple[PaymentRun, ...]
    start: date | None
    caution: str = CAUTION

    @property
    def tolerance_range(self) -> tuple[float, float] | None:
        """The disclosed APRs (percent) within the tolerance of the exact one (US only)."""
        rules = self.apr.classification
        if rules is None:
            return None
        width = float(rules.tolerance)
        return (self.apr.apr_unrounded - width, self.apr.apr_unrounded + width)

    def as_dict(self) -> dict[str, Any]:
        """Return the figures for JSON: ``apr`` (percent, as disclosed) first."""
        rate = self.apr.as_dict()
        return {
            "apr": rate.pop("apr"),
            "apr_unrounded": rate.pop("apr_unrounded"),
            "finance_charge": self.finance_charge,
            "amount_financed": self.amount_financed,
            "total_of_payments": self.total_of_payments,
            "prepaid_finance_charge": self.prepaid_finance_charge,
            "note_amount": self.note_amount,
            "interest": self.interest,
            "start": self.start,
            "payment_schedule": [run.as_dict() for run in self.payment_schedule],
            "fees": [fee.as_dict() for fee in self.fees],
            **rate,
            "tolerance_range": None if self.tolerance_range is None else list(self.tolerance_range),
        }

    def csv_text(self) -> str:
        """The flows behind the rate, one row a flow, headed by the caution as a ``#`` line.

        Columns: date (empty when undated), period, kind, amount, whole_units and
        fraction (US: unit-periods), years (EU), present_value at the unrounded
        rate (empty under the US Rule, which has no discount factors).
        """
        rate = self.apr
        buffer = io.StringIO()
        buffer.write(f"# {self.caution}\n")
        writer = csv.writer(buffer, lineterminator="\n")
        writer.writerow(
            [
                "date",
                "period",
                "kind",
                "amount",
                "whole_units",
                "fraction",
                "years",
                "present_value",
            ]
        )
        for flow in rate.flows:
            writer.writerow(
                [
                    "" if flow.on is None else flow.on.isoformat(),
                    "" if flow.period is None else flow.period,
                    flow.kind.value,
                    f"{flow.amount:.2f}",
                    "" if flow.years is not None else flow.whole,
                    "" if flow.years is not None else str(flow.fraction),
                    "" if flow.years is None else f"{float(flow.years):.10f}",
                    _present_value(rate, flow),
                ]
            )
        return buffer.getvalue()


def _present_value(rate: AprResult, flow: Any) -> str:
    if rate.method is Method.US_RULE:
        return ""
    if flow.years is not None:
        factor = (1 + rate.apr_unrounded / 100) ** -float(flow.years)
    else:
        i = rate.unit_period_rate or 0.0
        factor = 1 / ((1 + float(flow.fraction) * i) * (1 + i) ** flow.whole)
    return f"{float(flow.signed) * factor:.6f}"


def _fees(fees: Iterable[Fee]) -> tuple[Fee, ...]:
    out = tuple(fees)
    seen: set[str] = set()
    for fee in out:
        if not isinstance(fee, Fee):
            raise InvalidTerms(f"'fees' must hold Fee items (got {fee!r})")
        if fee.name.lower() in seen:
            raise InvalidTerms(f"fee {fee.name!r} is given twice; each fee needs its own name")
        seen.add(fee.name.lower())
    return out


def _standard(standard: Standard | str, decimals: int | None) -> tuple[Standard, int]:
    chosen = Standard.parse(standard)
    if decimals is None:
        decimals = 2 if chosen is Standard.US_REGZ else 1
    return chosen, decimals


def _runs(rows: Sequence[tuple[int, date | None, Decimal]]) -> tuple[PaymentRun, ...]:
    starts = [k for k in range(len(rows)) if k == 0 or rows[k][2] != rows[k - 1][2]]
    ends = [*starts[1:], len(rows)]
    return tuple(
        PaymentRun(end - begin, rows[begin][2], rows[begin][0], rows[begin][1], rows[end - 1][1])
        for begin, end in zip(starts, ends, strict=True)
    )


def _cents(frame: Any, column: str) -> list[int]:
    if column not in frame:
        return [0] * len(frame)
    return [round(float(value) * 100) for value in frame[column]]


def disclose(
    loan: Loan,
    *,
    fees: Iterable[Fee] = (),
    standard: Standard | str = Standard.US_REGZ,
    decimals: int | None = None,
    method: Method | str = Method.ACTUARIAL,
    year_basis: YearBasis | str = YearBasis.DAYS,
) -> Disclosure:
    """Return the disclosure figures of ``loan`` with ``fees`` under ``standard``.

    standard: ``"us-regz"`` (APR, Appendix J; default 2 decimals) or ``"eu-ccd"``
    (APRC, Annex I; default 1 decimal). method: the US method (``"actuarial"`` or
    ``"us-rule"``); year_basis: the EU time basis (``"days"``, ``"365-days"``,
    ``"months"``, ``"weeks"``). A dated loan's flows fall on its due dates; an
    undated loan's on equal periods.
    """
    chosen, places = _standard(standard, decimals)
    listed = _fees(fees)
    financed = sum((fee.amount for fee in listed if fee.financed), Decimal(0))
    note = dataclasses.replace(loan, principal=loan.principal + financed) if financed else loan
    prepaid = sum((fee.amount for fee in listed if fee.finance_charge), Decimal(0))
    financed_amount = note.principal - prepaid
    if financed_amount <= 0:
        raise InvalidTerms(
            f"the finance-charge fees total {prepaid:,.2f}, which leaves no amount financed "
            f"from the note of {note.principal:,.2f}"
        )
    frame = note.schedule()
    cash = [
        sum(parts)
        for parts in zip(
            *(
                _cents(frame, c)
                for c in ("payment", "balloon", "odd_days_interest", "extra_principal")
            ),
            strict=True,
        )
    ]
    periods = [int(p) for p in frame["period"]]
    dated = note.dated
    dues = [d.date() for d in frame["due_date"]] if dated else [None] * len(frame)
    rows = [(k, d, from_cents(c)) for k, d, c in zip(periods, dues, cash, strict=True) if c > 0]
    summary = note.summary()
    if dated:
        assert note.start_date is not None
        flows = Flows(
            (
                Flow(note.start_date, financed_amount, FlowKind.ADVANCE),
                *(Flow(d, a, FlowKind.PAYMENT) for _, d, a in rows if d is not None),
            )
        )
        rate = _rate_of_flows(flows, chosen, places, method, year_basis)
    else:
        shift = 1 if note.advance else 0  # in advance, payment k falls at the start of period k
        items = [(0, FlowKind.ADVANCE, financed_amount)]
        items += [(k - shift, FlowKind.PAYMENT, a) for k, _, a in rows]
        rate = rate_on_periods(
            items, note.frequency, standard=chosen, decimals=places, method=method
        )
    interest: Decimal = summary["total_interest"]
    return Disclosure(
        standard=chosen,
        apr=rate,
        amount_financed=financed_amount.quantize(CENT),
        finance_charge=(interest + prepaid).quantize(CENT),
        total_of_payments=from_cents(sum(cash)),
        prepaid_finance_charge=prepaid.quantize(CENT),
        note_amount=note.principal.quantize(CENT),
        interest=interest.quantize(CENT),
        fees=listed,
        payment_schedule=_runs(rows),
        start=note.start_date,
    )


def rate_on_periods(
    items: Sequence[tuple[int, FlowKind | str, Decimal]],
    frequency: Frequency | str,
    *,
    standard: Standard | str = Standard.US_REGZ,
    decimals: int | None = None,
    method: Method | str = Method.ACTUARIAL,
) -> AprResult:
    """Return the rate of undated flows ``(period, kind, amount)`` on equal periods.

    Period ``k`` is ``k`` whole unit-periods of ``frequency`` (Regulation Z: no
    fractions) or ``k / p`` years (EU, ``p`` payments a year). The first flow in
    time must be an advance.

    >>> items = [(0, "advance", 5000)] + [(k, "payment", 230) for k in range(1, 25)]
    >>> rate_on_periods(items, "monthly").apr          # Appendix J (c)(1)(i): 9.69 %
    Decimal('9.69')
    """
    chosen, places = _standard(standard, decimals)
    timed = []
    for period, kind, amount in items:
        if isinstance(period, bool) or not isinstance(period, int) or period < 0:
            raise InvalidTerms(f"'period' must be a whole number >= 0 (got {period!r})")
        timed.append(
            TimedFlow(FlowKind.parse(kind), Decimal(amount), None, period, period, Fraction(0))
        )
    timed.sort(key=lambda t: (t.whole, t.kind is FlowKind.PAYMENT))
    if not timed or timed[0].kind is not FlowKind.ADVANCE:
        raise InvalidTerms("the first flow must be an advance; the term begins with it")
    freq = Frequency.parse(frequency)
    if chosen is Standard.EU_CCD:
        for k, t in enumerate(timed):
            timed[k] = TimedFlow(
                t.kind, t.amount, None, t.period, 0, t.fraction, Fraction(t.whole, freq.per_year)
            )
        return eu_rate(timed, decimals=places)
    paid: dict[int, Decimal] = {}
    for t in timed:
        if t.kind is FlowKind.PAYMENT:
            paid[t.whole] = paid.get(t.whole, Decimal(0)) + t.amount
    at = sorted(paid)
    rules = classify(
        len({t.whole for t in timed if t.kind is FlowKind.ADVANCE}),
        all(b - a == 1 for a, b in itertools.pairwise(at)),
        [paid[k] for k in at],
    )
    unit = UnitPeriod.for_frequency(freq)
    return regz_rate(timed, unit, method=method, decimals=places, classification=rules)


def _rate_of_flows(
    flows: Flows,
    standard: Standard,
    decimals: int,
    method: Method | str,
    year_basis: YearBasis | str,
) -> AprResult:
    if standard is Standard.US_REGZ:
        return regz_apr(flows, method=method, decimals=decimals)
    return eu_aprc(flows, basis=year_basis, decimals=decimals)


def disclose_flows(
    flows: Flows,
    *,
    fees: Iterable[Fee] = (),
    standard: Standard | str = Standard.US_REGZ,
    decimals: int | None = None,
    method: Method | str = Method.ACTUARIAL,
    year_basis: YearBasis | str = YearBasis.DAYS,
) -> Disclosure:
    """Return the disclosure figures of dated flows with ``fees`` (see :func:`disclose`).

    The advances are the note's; every finance-charge fee comes off the first
    advance (financed: withheld from it; at closing: paid back at once), so the
    first advance must be larger than those fees.

    >>> flows = Flows.of([("2025-01-01", 1000, "advance"), ("2026-07-01", 1200, "payment")])
    >>> figures = disclose_flows(flows, fees=[Fee("arrangement", 50)], standard="eu-ccd")
    >>> figures.apr.apr, figures.amount_financed   # 98/7/EC proposal, Annex III: 16.9 %
    (Decimal('16.9'), Decimal('950.00'))
    """
    chosen, places = _standard(standard, decimals)
    listed = _fees(fees)
    prepaid = sum((fee.amount for fee in listed if fee.finance_charge), Decimal(0))
    first = flows.advances[0]
    if prepaid and prepaid >= first.amount:
        raise InvalidTerms(
            f"the finance-charge fees total {prepaid:,.2f}, not less than the first advance "
            f"of {first.amount:,.2f} they come off"
        )
    items = list(flows.items)
    if prepaid:
        at = items.index(first)
        items[at] = Flow(first.on, first.amount - prepaid, FlowKind.ADVANCE, first.label)
    rate = _rate_of_flows(Flows(tuple(items)), chosen, places, method, year_basis)
    note = flows.total(FlowKind.ADVANCE)
    paid = flows.total(FlowKind.PAYMENT)
    rows = [(k, d, a) for k, (d, a) in enumerate(flows.by_date(FlowKind.PAYMENT), start=1)]
    return Disclosure(
        standard=chosen,
        apr=rate,
        amount_financed=(note - prepaid).quantize(CENT),
        finance_charge=(paid - note + prepaid).quantize(CENT),
        total_of_payments=paid.quantize(CENT),
        prepaid_finance_charge=prepaid.quantize(CENT),
        note_amount=note.quantize(CENT),
        interest=(paid - note).quantize(CENT),
        fees=listed,
        payment_schedule=_runs(rows),
        start=flows.start,
    )
