"""Answers to the four quoting questions: payment, term, rate and principal.

Each function takes exact inputs (as :class:`~amort.loan.Loan` does), solves
its unknown in closed form, then checks the answer by building the loan's
cent schedule, and returns a plain dict of figures (money as
:class:`~decimal.Decimal`, rates as decimal fractions) that the CLI prints or
dumps as JSON. Nothing here prints.
"""

from __future__ import annotations

import dataclasses
import math
from decimal import ROUND_DOWN, Decimal
from typing import Any

from amort import rates, solve
from amort.conventions import Frequency, Timing
from amort.errors import AmortError, NoSolution
from amort.loan import AnnualRate, Loan
from amort.money import CENT, Rounding, parse_rate
from amort.rates import Compounding


def _figures(loan: Loan) -> dict[str, Any]:
    """Return a loan's key figures and whether its schedule reconciles."""
    summary = loan.summary()
    check = loan.reconciliation()
    return {
        "payment": summary["payment"],
        "number_of_payments": summary["number_of_payments"],
        "final_payment": summary["final_payment"],
        "balloon": summary["balloon"],
        "total_interest": summary["total_interest"],
        "total_paid": summary["total_paid"],
        "principal": loan.principal,
        "annual_rate": loan.annual_rate,
        "frequency": loan.frequency.value,
        "timing": loan.timing.value,
        "rounding": loan.rounding.value,
        "interest_rounding": loan.interest_rounding.value,
        "reconciled": check.passed,
        "negative_amortisation": summary["negative_amortisation"],
        "cap_reached_period": summary["cap_reached_period"],
        **(
            {
                key: summary[key]
                for key in (
                    "start",
                    "first_payment_date",
                    "maturity_date",
                    "day_count",
                    "odd_days_interest",
                )
            }
            if loan.dated
            else {}
        ),
    }


def quote_payment(loan: Loan) -> dict[str, Any]:
    """Return the level payment of ``loan`` and its schedule's totals.

    >>> quote_payment(Loan(principal=250_000, annual_rate="6.5%", periods=360))["payment"]
    Decimal('1580.17')
    """
    return _figures(loan)


def quote_term(loan: Loan) -> dict[str, Any]:
    """Return the term that ``loan.fixed_payment`` implies: whole payments, final payment, years.

    ``periods_exact`` is the fractional term of the closed form
    ``N = log((P - iF) / (P - iB_0)) / log(1 + i)``; ``number_of_payments`` the
    cent schedule's count (the last payment smaller).
    """
    if loan.fixed_payment is None:
        raise NoSolution("give the payment to solve for the term")
    exact = solve.periods(
        float(loan.principal),
        float(loan.periodic_rate),
        float(loan.fixed_payment),
        balloon=float(loan.balloon),
        advance=loan.advance,
    )
    out = _figures(loan)
    out["periods_exact"] = float(exact)
    out["years"] = Decimal(out["number_of_payments"]) / loan.frequency.per_year
    return out


def quote_rate(
    principal: Decimal,
    payment: Decimal,
    periods: int,
    *,
    frequency: Frequency = Frequency.MONTHLY,
    balloon: Decimal = Decimal(0),
    timing: Timing = Timing.ARREARS,
    compounding: Compounding | None = None,
    dated: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """Return the nominal annual rate at which ``periods`` payments repay ``principal``.

    With ``compounding`` (m a year) the nominal rate is the one that,
    compounded m times a year, gives that periodic rate:
    ``j = m ((1 + i)^(p/m) - 1)``.

    The periodic rate solves ``P a_N(i) + F v^N(i) = B_0`` (bracketed Newton,
    :func:`amort.solve.rate`); the nominal annual rate is ``i p`` and the
    effective annual rate ``(1 + i)^p - 1``. As a check the loan is rebuilt at
    the rate rounded to 8 decimal places of a percent and its level payment
    reported beside the one given.

    A dated loan (``dated`` holds :class:`Loan`'s dated options) is solved by
    bisection on the annual rate, the loan's unrounded level payment being
    increasing in it.

    >>> quote = quote_rate(Decimal(250_000), Decimal("1580.17"), 360)
    >>> round(quote["annual_rate"] * 100, 4)
    6.5
    """
    per_year = frequency.per_year
    advance = timing is Timing.ADVANCE
    if dated:
        return _dated_rate(
            principal, payment, periods, frequency, balloon, timing, compounding, dated
        )
    periodic = float(
        solve.rate(
            float(principal), float(payment), periods, balloon=float(balloon), advance=advance
        )
    )
    annual = periodic * per_year
    if compounding is not None:
        annual = float(rates.convert_rate(annual, Compounding(per_year), compounding))
    shown = Decimal(repr(annual)).quantize(Decimal("1e-10"))
    check = Loan(
        principal=principal,
        annual_rate=AnnualRate(shown),
        periods=periods,
        frequency=frequency,
        balloon=balloon,
        timing=timing,
        compounding=compounding,
    )
    return _rate_figures(annual, periodic, payment, check)


def quote_principal(
    payment: Decimal,
    annual_rate: Decimal,
    periods: int,
    *,
    frequency: Frequency = Frequency.MONTHLY,
    balloon: Decimal = Decimal(0),
    timing: Timing = Timing.ARREARS,
    rounding: Rounding = Rounding.HALF_UP,
    compounding: Compounding | None = None,
    dated: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """Return the largest principal (to the cent, rounded down) that ``payment`` repays.

    ``B_0 = (P W + F v_N) / (1 + c)`` where ``P = (B - F v_N) / W`` is the
    loan's level payment (:meth:`Loan.payment_factors`; ``W = a_N`` for a
    constant rate) and ``c`` the share of the principal capitalised as
    odd-days interest. Rounded down so that the payment of a loan of that
    principal never exceeds the one given; the loan is rebuilt and its level
    payment reported as the check. ``dated`` holds the dated options of
    :class:`Loan` (``start``, ``first_payment``, ``day_count``, ...).

    >>> quote_principal(Decimal("1580.17"), Decimal("0.065"), 360)["principal"]
    Decimal('249999.99')
    """
    terms: dict[str, Any] = {
        "annual_rate": AnnualRate(annual_rate),
        "periods": periods,
        "frequency": frequency,
        "timing": timing,
        "rounding": rounding,
        "compounding": compounding,
        **(dated or {}),
    }
    probe = Loan(principal=_PROBE, **terms)
    weight, v_n = probe.payment_factors()
    capitalised = probe.summary()["odd_days_interest"] if probe.odd_days.value != "separate" else 0
    share = float(Decimal(capitalised) / _PROBE)
    raw = (float(payment) * weight + float(balloon) * v_n) / (1 + share)
    amount = Decimal(repr(raw)).quantize(CENT, rounding=ROUND_DOWN)
    loan = Loan(principal=amount, balloon=balloon, **terms)
    # The float closed form can sit a hair above the exact value: step down a cent if so.
    for _ in range(3):
        if loan.payment <= payment or amount <= CENT:
            break
        amount -= CENT
        loan = dataclasses.replace(loan, principal=amount)
    out = _figures(loan)
    out["principal_exact"] = raw
    out["payment_given"] = payment
    return out


#: Principal of the probe loan whose factors a quote reads (any amount would do).
_PROBE = Decimal(1_000_000)


def _dated_rate(
    principal: Decimal,
    payment: Decimal,
    periods: int,
    frequency: Frequency,
    balloon: Decimal,
    timing: Timing,
    compounding: Compounding | None,
    dated: dict[str, Any],
) -> dict[str, Any]:
    """Return :func:`quote_rate`'s figures for a dated loan (bisection on the annual rate)."""
    per_year = frequency.per_year

    def loan_at(annual: float) -> Loan:
        return Loan(
            principal=principal,
            annual_rate=AnnualRate(parse_rate(f"{annual * 100!r}%")),
            periods=periods,
            frequency=frequency,
            balloon=balloon,
            timing=timing,
            compounding=compounding,
            **dated,
        )

    def excess(annual: float) -> float:
        try:
            return loan_at(annual).exact_payment - float(payment)
        except AmortError:
            return math.inf  # past what the terms allow: the rate is lower

    if excess(0.0) > 0:
        total = payment * periods + balloon
        raise NoSolution(
            f"the payments total {total:,.2f}, less than the principal {principal:,.2f}; "
            "no rate >= 0 repays it"
        )
    lo, hi = 0.0, float(per_year)
    if excess(hi) < 0:
        raise NoSolution("the implied rate is above 100 % a period, outside what amort solves for")
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if excess(mid) < 0:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 4e-16 * hi:
            break
    annual = 0.5 * (lo + hi)
    check = loan_at(float(Decimal(repr(annual)).quantize(Decimal("1e-10"))))
    periodic = float(check.periodic_rate)
    return {
        **_rate_figures(annual, periodic, payment, check),
        "day_count": check.day_count.value,
        "start": check.start_date,
        "first_payment_date": check.first_payment_date,
    }


def _rate_figures(annual: float, periodic: float, payment: Decimal, check: Loan) -> dict[str, Any]:
    """The figures of an implied rate; ``check`` is the loan rebuilt at that rate."""
    return {
        "annual_rate": annual,
        "annual_rate_percent": annual * 100,
        "periodic_rate": periodic,
        "effective_annual_rate": float(rates.effective_annual(periodic, check.frequency.per_year)),
        "principal": check.principal,
        "payment": payment,
        "number_of_payments": check.periods,
        "balloon": check.balloon,
        "frequency": check.frequency.value,
        "timing": check.timing.value,
        "compounding": None if check.compounding is None else check.compounding.name,
        "payment_at_rate": check.payment,
    }
