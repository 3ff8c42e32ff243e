"""Rebates of precomputed interest on prepayment: the actuarial method and the Rule of 78s.

With ``n`` instalments, a precomputed finance charge ``F`` and ``k`` instalments
still unmatured, the Rule of 78s (sum of the digits) rebates
``F k (k + 1) / (n (n + 1))``; the actuarial method rebates the interest the
remaining instalments would still earn at the contract rate ``i``:
``k P - P a_k(i)`` of a level payment ``P``, i.e. ``F (k - a_k(i)) / (n - a_n(i))``
(``(n - 1) - a_{n-1}(i)`` below the line in advance). Both are side by side in
:class:`Rebates`, with a caution: the Rule of 78s is restricted or prohibited
in some places (15 U.S.C. 1615 requires, for precomputed consumer credit of
more than 61 months consummated after 30 September 1993, a refund at least as
favourable as the actuarial method), and local regulation and the loan
agreement govern.
"""

from __future__ import annotations

import dataclasses
import enum
from datetime import date
from decimal import ROUND_CEILING, ROUND_FLOOR, ROUND_HALF_EVEN, ROUND_HALF_UP, Decimal
from decimal import localcontext as _localcontext
from fractions import Fraction
from typing import Any

from amort import solve
from amort.caution import CAUTION
from amort.conventions import parse_choice
from amort.errors import InvalidTerms, describe
from amort.loan import Loan, parse_periods
from amort.money import Rounding, from_cents, parse_amount, parse_rate, round_fraction, to_cents
from amort.payoff import _check_on, _position, _track  # the loan's dated position

__all__ = ["REBATE_CAUTION", "RebateMethod", "Rebates", "rebate", "rebates", "rebates_for"]

REBATE_CAUTION = (
    "The Rule of 78s (sum of the digits) treats more of the finance charge as earned early "
    "in the term, so for any positive rate it refunds less than the actuarial method; many "
    "jurisdictions restrict or forbid it. For example, US federal law (15 U.S.C. 1615) "
    "requires unearned interest to be refunded when a loan is prepaid and, for precomputed "
    "consumer credit of more than 61 months consummated after 30 September 1993, a refund "
    "at least as favourable to the borrower as the actuarial method. Which method applies, "
    "and any minimum refund, is for the local regulation and the loan agreement to say. " + CAUTION
)


# -- rebates of precomputed interest ---------------------------------------------------


class RebateMethod(enum.Enum):
    """How the unearned part of a precomputed finance charge is worked out."""

    RULE_OF_78S = "rule-of-78s"
    ACTUARIAL = "actuarial"

    @classmethod
    def parse(cls, value: RebateMethod | str, field: str = "method") -> RebateMethod:
        """Return the method named by ``value`` (``"78s"`` and ``"sum-of-digits"`` too)."""
        return parse_choice(cls, value, field, _METHOD_ALIASES)


_METHOD_ALIASES = {
    "78s": "rule-of-78s",
    "rule-of-78": "rule-of-78s",
    "rule-78": "rule-of-78s",
    "sum-of-digits": "rule-of-78s",
    "sum-of-the-digits": "rule-of-78s",
    "sum-of-the-years-digits": "rule-of-78s",
}


@dataclasses.dataclass(frozen=True)
class Rebates:
    """The rebate of unearned precomputed interest by both methods, side by side.

    finance_charge: the precomputed finance charge F, currency units.
    instalments: n, the number of instalments of the contract.
    unmatured: k, the instalments not yet due (0 to n).
    rule_of_78s: F k (k + 1) / (n (n + 1)), to the cent.
    actuarial: the unearned interest by the actuarial method, to the cent.
    difference: actuarial - rule_of_78s (>= 0 for a positive rate, up to cents).
    periodic_rate: the contract's periodic rate i used (to 30 significant digits).
    actuarial_basis: how the actuarial figure was found.
    schedule_unearned: the interest a loan's cent schedule has not yet earned
        (rebates_for only; see there), else None.
    on: the date asked for (rebates_for), else None.
    last_due_date: the last instalment date on or before ``on`` (rebates_for), else None.
    caution: the legal caution on the Rule of 78s, and the general one.
    """

    finance_charge: Decimal
    instalments: int
    unmatured: int
    rule_of_78s: Decimal
    actuarial: Decimal
    difference: Decimal
    periodic_rate: Decimal
    actuarial_basis: str
    schedule_unearned: Decimal | None = None
    on: date | None = None
    last_due_date: date | None = None
    caution: str = REBATE_CAUTION

    def as_dict(self) -> dict[str, Any]:
        """Return the figures as a plain dict (Decimal money)."""
        return {name: getattr(self, name) for name in self.__dataclass_fields__}


_DECIMAL_ROUNDING = {
    Rounding.HALF_UP: ROUND_HALF_UP,
    Rounding.HALF_EVEN: ROUND_HALF_EVEN,
    Rounding.UP: ROUND_CEILING,  # rebates are >= 0: away from zero is up
    Rounding.DOWN: ROUND_FLOOR,
}


def _counts(instalments: object, unmatured: object) -> tuple[int, int]:
    n = parse_periods(instalments, "instalments")
    rule = f"'unmatured' must be a whole number of instalments from 0 to {n}"
    if isinstance(unmatured, bool) or not isinstance(unmatured, int):
        raise InvalidTerms(f"{rule} (got {describe(unmatured)})")
    if not 0 <= unmatured <= n:
        raise InvalidTerms(f"{rule} (got {unmatured})")
    return n, unmatured


def _rule_of_78s_cents(charge: int, n: int, k: int, rounding: Rounding) -> int:
    return round_fraction(Fraction(charge * k * (k + 1), n * (n + 1)), rounding)


def _precision(rate: Decimal) -> int:
    # 60 digits, plus what a tiny rate costs in the cancellation of k - a_k(i).
    return 60 + max(0, -rate.adjusted())


def _unearned(k: int, rate: Decimal) -> Decimal:
    """Return ``k - a_k(i)`` in the current decimal context (``i > 0``)."""
    v_k = (1 / (1 + rate)) ** k
    return k - (1 - v_k) / rate


def _actuarial_share(n: int, k: int, rate: Decimal, advance: bool) -> Decimal | Fraction:
    """Return the share ``(k - a_k(i)) / D`` of F that is unearned with k instalments left.

    ``D = n - a_n(i)`` in arrears, ``n - ä_n(i) = (n - 1) - a_(n-1)(i)`` in advance; at
    ``i = 0`` the limits ``k (k + 1) / (n (n + 1))`` and ``k (k + 1) / (n (n - 1))``. With
    nothing matured (``k = n``) the whole charge is unearned.
    """
    if k == n:
        return Fraction(1)
    if k == 0:
        return Fraction(0)
    if rate == 0:
        return Fraction(k * (k + 1), n * (n - 1) if advance else n * (n + 1))
    with _localcontext() as context:
        context.prec = _precision(rate)
        whole = _unearned(n - 1, rate) if advance else _unearned(n, rate)
        return _unearned(k, rate) / whole


def _annuity(n: int, rate: Decimal) -> Decimal:
    return (1 - (1 / (1 + rate)) ** n) / rate


def _solve_contract_rate(amount: Decimal, charge: Decimal, n: int, advance: bool) -> Decimal:
    """Return the periodic rate at which n instalments of (A + F) / n repay A.

    A first root from :func:`amort.solve.rate` (float64), then Newton steps on
    ``g(i) a_n(i) = n A / (A + F)`` (``g = 1``, or ``1 + i`` in advance) in
    :mod:`decimal` at 60+ digits, with ``d a_n / d i = (n v^(n+1) - a_n(i)) / i``.
    """
    if charge == 0:
        return Decimal(0)
    instalment = (amount + charge) / n
    first = float(solve.rate(float(amount), float(instalment), n, advance=advance)[()])
    guess = Decimal(first) if first > 0 else 2 * charge / (amount * (n + 1))
    with _localcontext() as context:
        context.prec = _precision(guess) + 10
        target = n * amount / (amount + charge)
        rate = guess
        for _ in range(100):
            a_n = _annuity(n, rate)
            slope = (n * (1 / (1 + rate)) ** (n + 1) - a_n) / rate
            if advance:
                value, slope = (1 + rate) * a_n, a_n + (1 + rate) * slope
            else:
                value = a_n
            step = (value - target) / slope
            rate -= step
            if abs(step) <= abs(rate) * Decimal(10) ** (10 - context.prec):
                break
    return rate


def _contract_rate(
    periodic_rate: object, amount_financed: object, charge: Decimal, n: int, advance: bool
) -> tuple[Decimal, str]:
    formula = (
        "F (k - a_k(i)) / ((n - 1) - a_(n-1)(i))" if advance else ("F (k - a_k(i)) / (n - a_n(i))")
    )
    if periodic_rate is not None and amount_financed is not None:
        raise InvalidTerms(
            "give 'periodic_rate' or 'amount_financed' for the actuarial rebate, not both "
            "(with the finance charge and the instalments either one fixes the other)"
        )
    if periodic_rate is not None:
        if isinstance(periodic_rate, Fraction):
            if periodic_rate < 0:
                raise InvalidTerms(f"'periodic_rate' must be >= 0 (got {periodic_rate})")
            with _localcontext() as context:
                context.prec = 80
                rate = Decimal(periodic_rate.numerator) / Decimal(periodic_rate.denominator)
        else:
            rate = parse_rate(periodic_rate, "periodic_rate")
        if rate > 1:
            raise InvalidTerms(
                "'periodic_rate' must be at most 1 (100 % a period) "
                f"(got {describe(periodic_rate)})"
            )
        return rate, f"{formula} at the given periodic rate i = {rate:.12g}"
    if amount_financed is None:
        raise InvalidTerms(
            "the actuarial rebate needs the contract's 'periodic_rate' or its 'amount_financed'"
        )
    amount = parse_amount(amount_financed, "amount_financed")
    rate = _solve_contract_rate(amount, charge, n, advance)
    timing = "in advance " if advance else ""
    return rate, (
        f"{formula} at i = {rate:.12g}, the periodic rate at which {n} instalments "
        f"{timing}of (A + F) / n repay A = {amount:,}"
    )


def _thirty_digits(value: Decimal) -> Decimal:
    with _localcontext() as context:
        context.prec = 30
        return +value


def _round_share(charge: int, share: Decimal | Fraction, rounding: Rounding) -> int:
    if isinstance(share, Fraction):
        return round_fraction(charge * share, rounding)
    with _localcontext() as context:
        context.prec = 80
        return int((charge * share).quantize(Decimal(1), rounding=_DECIMAL_ROUNDING[rounding]))


def rebates(
    finance_charge: Decimal | str | float,
    instalments: int,
    unmatured: int,
    *,
    amount_financed: Decimal | str | float | None = None,
    periodic_rate: Fraction | Decimal | str | float | None = None,
    advance: bool = False,
    rounding: Rounding | str = Rounding.HALF_UP,
) -> Rebates:
    """Return the Rule of 78s and the actuarial rebate of a precomputed charge, side by side.

    finance_charge: the precomputed finance charge F, currency units (whole cents, >= 0).
    instalments: n, the contract's number of level instalments (1 to 100,000).
    unmatured: k, the instalments not yet due when the loan is paid off (0 to n).
    periodic_rate: the contract's periodic rate i (a decimal fraction a period, a
        ``"1%"`` string or an exact Fraction such as ``Loan.periodic_rate``); or
    amount_financed: A, from which i is solved (instalments of (A + F) / n repay A).
    advance: True when each instalment falls at the start of its period (annuity-due).
    rounding: how each rebate is rounded to the cent (default half-up).

    Rule of 78s: ``F k (k + 1) / (n (n + 1))``; actuarial: ``F (k - a_k(i)) / (n - a_n(i))``
    in arrears, ``F (k - a_k(i)) / ((n - 1) - a_(n-1)(i))`` in advance (derived in
    the module notes). Neither applies a minimum refund (15 U.S.C. 1615, for
    one, requires none under $1); see ``caution``.

    >>> r = rebates("78.00", 12, 3, periodic_rate="1%")
    >>> r.rule_of_78s, r.actuarial
    (Decimal('6.00'), Decimal('6.18'))
    """
    charge = parse_amount(finance_charge, "finance_charge", allow_zero=True)
    n, k = _counts(instalments, unmatured)
    mode = Rounding.parse(rounding, "rounding")
    if not isinstance(advance, bool):
        raise InvalidTerms(f"'advance' must be true or false (got {describe(advance)})")
    rate, basis = _contract_rate(periodic_rate, amount_financed, charge, n, advance)
    cents = to_cents(charge)
    by_78s = _rule_of_78s_cents(cents, n, k, mode)
    actuarial = _round_share(cents, _actuarial_share(n, k, rate, advance), mode)
    return Rebates(
        finance_charge=charge,
        instalments=n,
        unmatured=k,
        rule_of_78s=from_cents(by_78s),
        actuarial=from_cents(actuarial),
        difference=from_cents(actuarial - by_78s),
        periodic_rate=_thirty_digits(rate),
        actuarial_basis=basis,
    )


def rebate(
    finance_charge: Decimal | str | float,
    instalments: int,
    unmatured: int,
    *,
    method: RebateMethod | str,
    amount_financed: Decimal | str | float | None = None,
    periodic_rate: Fraction | Decimal | str | float | None = None,
    advance: bool = False,
    rounding: Rounding | str = Rounding.HALF_UP,
) -> Decimal:
    """Return the rebate of unearned precomputed interest by one ``method``, currency units.

    ``method`` is ``"rule-of-78s"`` (``F k (k + 1) / (n (n + 1))``; needs nothing
    else) or ``"actuarial"`` (needs ``periodic_rate`` or ``amount_financed``);
    the other arguments are as in :func:`rebates`. Read ``REBATE_CAUTION``
    before quoting a Rule of 78s figure.

    >>> rebate(78, 12, 12, method="rule-of-78s"), rebate(78, 12, 1, method="78s")
    (Decimal('78.00'), Decimal('1.00'))
    """
    chosen = RebateMethod.parse(method)
    if chosen is RebateMethod.ACTUARIAL:
        both = rebates(
            finance_charge,
            instalments,
            unmatured,
            amount_financed=amount_financed,
            periodic_rate=periodic_rate,
            advance=advance,
            rounding=rounding,
        )
        return both.actuarial
    charge = parse_amount(finance_charge, "finance_charge", allow_zero=True)
    n, k = _counts(instalments, unmatured)
    mode = Rounding.parse(rounding, "rounding")
    return from_cents(_rule_of_78s_cents(to_cents(charge), n, k, mode))


def rebates_for(
    loan: Loan, on: date | str, *, rounding: Rounding | str = Rounding.HALF_UP
) -> Rebates:
    """Return both rebates for a dated ``loan`` taken as a precomputed contract, paid off on ``on``.

    F is the loan's total interest (odd-days interest included), n its number
    of payments and k the instalments due after ``on`` (one due on ``on``
    counts as paid; no rebate is figured for part of a period); ``on`` must lie
    from the start to the maturity date. The two rebates are those of
    :func:`rebates` at the loan's regular periodic rate (``Loan.periodic_rate``),
    which take the contract as n level instalments over equal periods.

    ``schedule_unearned`` is the interest the loan's own cent schedule has not
    yet earned: the amounts still to fall due (balloon included) less the
    balance just after the last instalment paid, so that a payoff on that
    instalment date is the amounts still due less it. For a level loan over
    equal periods it agrees with the actuarial rebate to within cents; under a
    day count whose early periods are long it can fall below the Rule of 78s
    figure, and for a balloon or an odd first period it is the one that fits
    the schedule.
    """
    track = _track(loan)
    day = _check_on(track, on)
    where = _position(track, day)
    made = where.made
    n = sum(1 for e in track.events if e.instalment)
    k = n - where.instalments_made
    both = rebates(
        loan.summary()["total_interest"],
        n,
        k,
        periodic_rate=loan.periodic_rate,
        advance=loan.advance,
        rounding=rounding,
    )
    after = track.events[made - 1].span.balance if made else to_cents(loan.principal)
    remaining = sum(e.amount for e in track.events[made:])
    return dataclasses.replace(
        both,
        schedule_unearned=from_cents(remaining - after),
        on=day,
        last_due_date=track.due[made - 1] if made else None,
    )
