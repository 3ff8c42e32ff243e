"""``Payout``: a fund paid out in instalments, solved for whichever figure is left out.

A payout annuity is the loan recurrence with the fund as principal: the
fund earns interest each period and pays the instalment,
``V_k = (1 + i) V_{k-1} - P_k`` in arrears, ``V_k = (1 + i)(V_{k-1} - P_k)``
in advance (annuity-due). Of the four figures (``fund``, ``payment``,
``periods`` or ``perpetuity``, ``annual_rate``) give three and the fourth is
solved: the first payment from the closed form rounded to the cent, the
horizon as whole payments with a smaller last one, the fund needed rounded
up to the cent (so that it suffices), or the implied rate.

Conventions (the closed forms are in :mod:`amort.annuity_forms`):

- ``periods`` is the horizon: the periods from the valuation date (time 0,
  ``start``) to the end of the last payment period, *counting* the deferral.
  With ``defer = d`` the fund grows untouched for d periods (its interest
  credited each period) and the payments fall in periods ``d + 1 .. N``: at
  their ends in arrears, at their starts in advance, so the first payment
  in advance falls at time d. The deferral must leave at least one payment.
- ``growth`` (geometric) or ``step`` (arithmetic) changes the payment every
  ``growth_every`` payments (default: a year of payments), as on a Loan.
- ``residual``: value left in the fund at the end of the horizon (at most
  the fund: a payout whose value ends above where it starts is an
  accumulation). A perpetuity has none.
- Rounding (DESIGN.md): each period's interest credited is the opening value
  (less the payment, in advance) times the periodic rate, rounded to the
  cent under ``interest_rounding``; the last payment takes what leaves
  exactly the residual. ``dataclasses.replace`` keeps ``solve_for``, so
  changing a given figure solves the same unknown again.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from datetime import date
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import pandas as pd

from amort import recurrence, solve
from amort.annuity_cents import AnnuityCheck, PathTable, PathTerms, reconcile_paths, run_path
from amort.annuity_flows import (
    cents_of,
    check_flows,
    check_rate,
    dates_for,
    first_reaching,
    float_path,
    flow_path,
    frame,
    from_engine,
    growth_fraction,
    money,
    parse_count,
    parse_every,
    parse_growth,
    parse_step,
    periodic,
    quantized_rate,
    unknown_figure,
)
from amort.annuity_forms import Stream, factors, first_payment_cents, fund_cents, root
from amort.calendar import parse_date
from amort.conventions import Frequency, Timing
from amort.errors import InvalidTerms, NoSolution
from amort.loan import AnnualRate
from amort.money import Rounding, parse_amount, parse_rate
from amort.schedule import BatchTerms, run

FIGURES = ("fund", "payment", "periods", "annual_rate")


@dataclass(frozen=True)
class Payout:
    """A fund paid out level or growing, over a horizon or for ever (module docstring).

    fund: value at time 0, currency units (exact decimal). payment: the first
    (or level) payment. periods: the horizon in periods, counting ``defer``.
    annual_rate: nominal rate a year as a decimal fraction or ``"5%"``; the
    periodic rate is it over the payments a year. Leave one of the four out
    (``perpetuity=True`` stands for ``periods``) to solve for it.

    >>> p = Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual")
    >>> p.payment, p.solve_for
    (Decimal('12950.46'), 'payment')
    >>> p.summary()["final_payment"]  # the last takes what is left
    Decimal('12950.45')
    """

    fund: Decimal | None = None
    payment: Decimal | None = None
    periods: int | None = None
    annual_rate: Decimal | None = None
    frequency: Frequency = Frequency.MONTHLY
    timing: Timing = Timing.ARREARS
    growth: Decimal | None = None
    step: Decimal | None = None
    growth_every: int | None = None
    defer: int = 0
    residual: Decimal = Decimal(0)
    perpetuity: bool = False
    start: date | None = None
    rounding: Rounding = Rounding.HALF_UP
    interest_rounding: Rounding = Rounding.HALF_UP
    solve_for: str | None = None

    def __post_init__(self) -> None:
        set_ = functools.partial(object.__setattr__, self)
        set_("frequency", Frequency.parse(self.frequency))
        set_("timing", Timing.parse(self.timing))
        set_("rounding", Rounding.parse(self.rounding, "rounding"))
        set_("interest_rounding", Rounding.parse(self.interest_rounding, "interest_rounding"))
        if not isinstance(self.perpetuity, bool):
            raise InvalidTerms(f"'perpetuity' must be True or False (got {self.perpetuity!r})")
        if self.perpetuity and self.periods is not None and self.solve_for != "periods":
            raise InvalidTerms("give 'periods' (a horizon) or 'perpetuity', not both")
        unknown = unknown_figure(self, FIGURES, given={"periods": self.perpetuity})
        set_("solve_for", unknown)
        set_(unknown, None)
        if self.fund is not None:
            set_("fund", parse_amount(self.fund, "fund"))
        if self.payment is not None:
            set_("payment", parse_amount(self.payment, "payment"))
        if self.periods is not None:
            set_("periods", parse_count(self.periods, "periods", minimum=1))
        if self.annual_rate is not None:
            rate = self.annual_rate
            if type(rate) is not AnnualRate:
                rate = AnnualRate(parse_rate(rate, "annual_rate"))
            check_rate(rate, self.frequency)
            set_("annual_rate", rate)
        if self.growth is not None:
            set_("growth", parse_growth(self.growth))
        if self.step is not None:
            set_("step", parse_step(self.step))
        if self.growth is not None and self.step is not None:
            raise InvalidTerms("give 'growth' (geometric) or 'step' (arithmetic), not both")
        set_("growth_every", parse_every(self.growth_every, self.frequency))
        set_("defer", parse_count(self.defer, "defer"))
        set_("residual", parse_amount(self.residual, "residual", allow_zero=True))
        if self.start is not None:
            set_("start", parse_date(self.start, "start"))
        self._check_terms()
        self._check_residual()
        getattr(self, f"_solve_{unknown}")()
        self._check_residual()
        if self.step is not None and self.step < 0 and self.periods is not None:
            self._build_flows(self.periods - self.defer)  # refuses payments turned negative

    # -- terms -------------------------------------------------------------------------------

    def _check_terms(self) -> None:
        if self.perpetuity and self.residual:
            raise InvalidTerms(f"a perpetuity has no end, so no 'residual' (got {self.residual:,})")
        if self.perpetuity and self.step is not None and self.step < 0:
            raise InvalidTerms(
                f"a perpetuity with a negative 'step' ({self.step:,}) would turn its payments "
                "negative; payments must stay >= 0 for ever"
            )
        if self.periods is not None and self.defer >= self.periods:
            raise InvalidTerms(
                f"'defer' {self.defer:,} must be less than 'periods' {self.periods:,}: the "
                "horizon counts the deferral, and at least one payment must fall in it"
            )

    def _check_residual(self) -> None:
        # The last payment leaves the residual; a fund below it would have to grow into it.
        if self.fund is not None and self.residual > self.fund:
            raise InvalidTerms(
                f"the 'residual' {self.residual:,} is more than the fund {self.fund:,}: a payout "
                "whose value ends above its start is an accumulation (use Accumulation)"
            )

    @property
    def advance(self) -> bool:
        """True when each payment falls at the start of its period (annuity-due)."""
        return self.timing is Timing.ADVANCE

    @property
    def periodic_rate(self) -> Fraction:
        """The exact periodic rate: ``annual_rate`` over the payments a year."""
        assert self.annual_rate is not None
        return periodic(self.annual_rate, self.frequency)

    @property
    def number_of_payments(self) -> int | None:
        """How many payments the schedule makes (None for a perpetuity)."""
        if self.perpetuity:
            return None
        return int(self._built[1].rows[0]) - self.defer

    def _stream(self, payments: int | None) -> Stream:
        return Stream(
            rate=self.periodic_rate,
            payments=payments,
            every=int(self.growth_every or 1),
            growth=growth_fraction(self.growth),
            step_cents=cents_of(self.step),
            defer=self.defer,
            advance=self.advance,
        )

    @property
    def _payments_planned(self) -> int | None:
        return None if self.periods is None else self.periods - self.defer

    def _check_converges(self, rate: Fraction) -> None:
        """A perpetuity has a value only when a step's growth is below a step's interest."""
        every = int(self.growth_every or 1)
        block = (1 + rate) ** every
        g = 1 + (growth_fraction(self.growth) or 0)
        if g >= block or (self.step is not None and rate == 0):
            step_rate = float(block - 1) * 100
            if self.growth is None:
                raise NoSolution(
                    f"a perpetuity at a {float(self.annual_rate or 0) * 100:g} % rate has no "
                    "finite value: the payments would never be covered by interest"
                )
            raise NoSolution(
                f"a perpetuity growing {float(self.growth) * 100:g} % every {every} payments has "
                f"no finite value at {float(self.annual_rate or 0) * 100:g} % a year: the growth "
                f"of a step must be below the interest of a step ({step_rate:.4f} %)"
            )

    # -- solving -----------------------------------------------------------------------------

    def _solve_payment(self) -> None:
        assert self.fund is not None
        stream = self._stream(self._payments_planned)
        fund, residual = cents_of(self.fund), cents_of(self.residual)
        if self.perpetuity:
            self._check_converges(stream.rate)
        elif residual:
            horizon = stream.horizon or 0
            worth = residual * float(recurrence.discount(float(stream.rate), horizon))
            if worth >= fund:
                raise InvalidTerms(
                    f"the 'residual' {self.residual:,} is worth {worth / 100:,.2f} at time 0, "
                    f"not less than the fund {self.fund:,}: the payments would have to be "
                    "negative"
                )
        first = first_payment_cents(fund, residual, stream, self.rounding)
        if first <= 0:
            what = "the 'step'" if self.step is not None else "the fund"
            raise InvalidTerms(
                f"the first payment would be {first / 100:,.2f}: {what} leaves nothing to "
                f"pay out level over {self.periods or 'all'} periods under "
                f"{self.rounding.value!r} rounding"
            )
        object.__setattr__(self, "payment", money(first))

    def _solve_fund(self) -> None:
        stream = self._stream(self._payments_planned)
        if self.perpetuity:
            self._check_converges(stream.rate)
        cents = fund_cents(cents_of(self.payment), cents_of(self.residual), stream)
        object.__setattr__(self, "fund", parse_amount(money(cents), "fund"))

    def _solve_periods(self) -> None:
        assert self.fund is not None and self.payment is not None
        rate = float(self.periodic_rate)
        fund, pay, residual = float(self.fund), float(self.payment), float(self.residual)
        d = self.defer
        grown = fund * float(recurrence.growth(rate, d))
        if self.growth is None and self.step is None:
            interest = rate * (grown - pay if self.advance else grown)
            if pay <= interest:
                raise NoSolution(
                    f"the payment {self.payment:,} does not exceed the interest the fund earns "
                    f"in a period ({interest:,.2f}); the fund would never be exhausted"
                )
        most = solve.MAX_PERIODS - d
        flows = float_path(
            pay, most, growth=float(self.growth or 0), step=float(self.step or 0),
            every=int(self.growth_every or 1),
        )  # fmt: skip
        k = np.arange(1, most + 1, dtype=np.float64)
        with np.errstate(over="ignore", invalid="ignore"):
            w = np.exp(-(d + k - (1 if self.advance else 0)) * math.log1p(rate))
            worth = np.cumsum(flows * w) + residual * np.exp(-(d + k) * math.log1p(rate))
        count = first_reaching(worth, fund * (1 - 1e-9))
        if count is None:
            raise NoSolution(
                f"the payments would not pay out the fund within {solve.MAX_PERIODS:,} periods"
            )
        if float(flows[:count].min()) < 0:
            check_flows(
                np.rint(flows[:count] * 100).astype(np.int64), cents_of(self.payment), "payment"
            )
        cap = min(count + 2, most)
        while True:
            built = self._build(cap)
            table = built[1]
            ran = int(table.rows[0])
            natural = ran < d + cap or int(table.final_flow[0]) <= int(built[0].flows[ran - 1, 0])
            if natural or cap >= most:
                break
            cap = min(2 * cap, most)
        if not natural:
            raise NoSolution(
                f"the payments would not pay out the fund within {solve.MAX_PERIODS:,} periods"
            )
        object.__setattr__(self, "periods", ran)
        self.__dict__["_built"] = built

    def _solve_annual_rate(self) -> None:
        assert self.fund is not None and self.payment is not None
        fund, residual = cents_of(self.fund), cents_of(self.residual)
        first, step = cents_of(self.payment), cents_of(self.step)
        payments = self._payments_planned
        if payments is not None:
            flows = flow_path(
                first, payments, growth=growth_fraction(self.growth), step_cents=step,
                every=int(self.growth_every or 1), mode=self.rounding,
            )  # fmt: skip
            check_flows(flows, first, "payment")
            total = int(flows.sum()) + residual
            if total < fund:
                raise NoSolution(
                    f"the payments and the residual total {total / 100:,.2f}, less than the fund "
                    f"{self.fund:,}: only a negative rate would pay the fund out that way"
                )
            if total == fund:
                object.__setattr__(self, "annual_rate", AnnualRate(0))
                return
        if self.advance and first >= fund and payments is not None:
            raise NoSolution(
                f"the first payment {self.payment:,} in advance pays out the fund {self.fund:,} "
                "on day one; no finite rate fits"
            )
        every = int(self.growth_every or 1)
        grow = float(self.growth or 0)

        def gap(i: np.ndarray) -> np.ndarray:
            w, s = factors(
                i, np.inf if payments is None else payments, every=every, growth=grow,
                defer=self.defer, advance=self.advance,
            )  # fmt: skip
            n = np.inf if payments is None else payments + self.defer
            with np.errstate(invalid="ignore", over="ignore"):
                tail = residual * recurrence.discount(i, n) if residual else 0.0
                value = first * w + (step * s if step else 0.0) + tail
            return np.asarray(np.where(np.isnan(value), np.inf, value) - fund, dtype=np.float64)

        high = np.array(1.0)
        if float(gap(high)) > 0:
            raise NoSolution("the implied rate is above 100 % a period, outside what amort solves")
        if self.growth is None and self.step is None and self.defer == 0 and payments is not None:
            i = float(
                solve.rate(fund / 100, first / 100, payments, balloon=residual / 100,
                           advance=self.advance)
            )  # fmt: skip
        else:
            i = float(root(gap, 1e-15, high, increasing=False))
        object.__setattr__(self, "annual_rate", AnnualRate(quantized_rate(i, self.frequency)))

    # -- the schedule ------------------------------------------------------------------------

    def _build_flows(self, payments: int) -> np.ndarray:
        """Return each period's scheduled payment, cents (0 in the deferral); all >= 0."""
        first = cents_of(self.payment)
        flows = flow_path(
            first, payments, defer=self.defer, growth=growth_fraction(self.growth),
            step_cents=cents_of(self.step), every=int(self.growth_every or 1), mode=self.rounding,
        )  # fmt: skip
        check_flows(flows, first, "payment")
        return flows

    def _build(self, payments: int, *, settle: bool = True) -> tuple[PathTerms, PathTable]:
        """Return the path terms and the cent table of ``payments`` payments after the deferral."""
        first = cents_of(self.payment)
        flows = self._build_flows(payments)
        rate = self.periodic_rate
        big = max(rate.numerator, rate.denominator) >= 2**62
        one = lambda v: np.array([v], dtype=object if big else np.int64)  # noqa: E731
        horizon = self.defer + payments
        terms = PathTerms(
            opening=np.array([cents_of(self.fund)], dtype=np.int64),
            rate_num=one(rate.numerator),
            rate_den=one(rate.denominator),
            flows=flows[:, None],
            periods=np.array([horizon], dtype=np.int64),
            advance=np.array([self.advance]),
            deposits=False,
            goal=np.array([cents_of(self.residual)], dtype=np.int64) if settle else None,
        )
        level = self.growth is None and self.step is None and self.defer == 0
        if settle and (level or not self.advance):
            # The loan engine, with the fund as principal and the residual as balloon.
            rules = {}
            if not level:
                rules = {
                    "period_payment": flows[:, None],
                    "period_covers_interest": np.zeros((horizon, 1), dtype=bool),
                }
            engine = BatchTerms(
                principal=terms.opening,
                rate_num=terms.rate_num,
                rate_den=terms.rate_den,
                payment=np.array([first], dtype=np.int64),
                periods=terms.periods,
                balloon=np.array([cents_of(self.residual)], dtype=np.int64),
                advance=terms.advance,
                **rules,
            )
            return terms, from_engine(run(engine, self.interest_rounding))
        return terms, run_path(terms, self.interest_rounding)

    @functools.cached_property
    def _built(self) -> tuple[PathTerms, PathTable]:
        if self.perpetuity:
            return self._build(self.frequency.per_year, settle=False)
        assert self.periods is not None
        return self._build(self.periods - self.defer)

    def schedule(self, rows: int | None = None) -> pd.DataFrame:
        """Return the schedule, one row a period, money as float64 holding exact cents.

        Columns: ``period, due_date, opening_value, payment, interest_credited,
        closing_value``; deferral rows pay 0. A perpetuity has no end: its
        first ``rows`` payments are shown (default one year of them), each
        as scheduled.
        """
        table = self._built[1]
        if rows is not None and not self.perpetuity:
            raise InvalidTerms(
                f"'rows' is for perpetuities (got {rows!r}); a payout with a horizon shows "
                "every period"
            )
        if rows is not None:
            table = self._build(parse_count(rows, "rows", minimum=1), settle=False)[1]
        count = int(table.rows[0])
        return frame(table, "payment", dates_for(self.start, count, self.frequency,
                                                 advance=self.advance))  # fmt: skip

    def reconciliation(self, rows: int | None = None) -> AnnuityCheck:
        """Return the schedule's checks against the closed form (:mod:`amort.annuity_cents`).

        ``rows``: the payments of a perpetuity that :meth:`schedule` showed.
        """
        terms, table = self._built
        if self.perpetuity and rows is not None:
            terms, table = self._build(parse_count(rows, "rows", minimum=1), settle=False)
        return reconcile_paths(terms, table, self.interest_rounding)[0]

    def summary(self) -> dict[str, Any]:
        """Return the key figures (money as :class:`~decimal.Decimal`, currency units)."""
        table = self._built[1]
        rows = int(table.rows[0])
        dates = dates_for(self.start, rows, self.frequency, advance=self.advance)
        paying = dates.iloc[self.defer :].dropna()
        finite = not self.perpetuity
        return {
            "solved_for": self.solve_for,
            "fund": self.fund,
            "payment": self.payment,
            "periods": self.periods,
            "perpetuity": self.perpetuity,
            "annual_rate": self.annual_rate,
            "periodic_rate": self.periodic_rate,
            "frequency": self.frequency.value,
            "timing": self.timing.value,
            "defer": self.defer,
            "growth": self.growth,
            "step": self.step,
            "growth_every": self.growth_every if (self.growth or self.step) else None,
            "residual": self.residual,
            "number_of_payments": self.number_of_payments,
            "final_payment": money(int(table.final_flow[0])) if finite else None,
            "residual_left": money(int(table.closing[-1])) if finite else None,
            "total_paid": money(int(table.flow.sum())) if finite else None,
            "total_interest_credited": money(int(table.interest.sum())) if finite else None,
            "start": self.start,
            "first_payment_date": None if paying.empty else paying.iloc[0].date(),
            "last_payment_date": None if paying.empty or not finite else paying.iloc[-1].date(),
            "rounding": self.rounding.value,
            "interest_rounding": self.interest_rounding.value,
            "reconciled": self.reconciliation().passed,
        }
