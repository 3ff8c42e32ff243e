"""``Accumulation``: a balance built up by deposits towards a target, and its sinking-fund view.

The balance earns interest each period and takes the deposit,
``B_k = (1 + i) B_{k-1} + D_k`` in arrears (deposits at period ends),
``B_k = (1 + i)(B_{k-1} + D_k)`` in advance. Of the four figures
(``deposit``, ``target``, ``periods``, ``annual_rate``) give three and the
fourth is solved: the first deposit from the closed form rounded to the
cent, the number of deposits (with a smaller last one), the target reached,
or the implied rate. A starting ``balance`` (default 0) is given, never
solved.

Conventions (closed forms in :mod:`amort.annuity_forms`, cents in
:mod:`amort.annuity_cents`): ``periods`` counts the deposits, one a period;
``growth`` or ``step`` changes the deposit every ``growth_every`` deposits
(default a year of them); each period's interest credited is the opening
balance (plus the deposit, in advance) times the periodic rate, rounded to
the cent under ``interest_rounding``; with a target, the last deposit is the
smallest that reaches it (exactly in arrears; in advance within a cent when
no cent amount reaches it exactly), and a target reached early ends the
schedule there. :meth:`Accumulation.sinking_fund` builds the fund that repays
an interest-only (bullet) loan's principal, or a loan's balloon, at maturity.
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
from amort.annuity_forms import Stream, accumulated_value, factors, first_deposit_cents, root
from amort.calendar import parse_date
from amort.conventions import Frequency, Structure, Timing
from amort.errors import InvalidTerms, NoSolution
from amort.loan import AnnualRate, Loan
from amort.money import Rounding, parse_amount, parse_rate

FIGURES = ("deposit", "target", "periods", "annual_rate")


@dataclass(frozen=True)
class Accumulation:
    """Deposits, level or growing, towards a target (module docstring).

    deposit: the first (or level) deposit, currency units. target: the value
    to reach at the end. periods: the number of deposits. annual_rate: nominal
    rate a year as a decimal fraction or ``"4%"``. balance: the starting
    balance. loan_payment: the regular payment of a loan this fund repays at
    maturity (the sinking-fund view; see :meth:`sinking_fund`).

    >>> a = Accumulation(target=60_000, annual_rate="4%", periods=60)
    >>> a.deposit, a.summary()["value_reached"]
    (Decimal('904.99'), Decimal('60000.00'))
    """

    deposit: Decimal | None = None
    target: Decimal | None = None
    periods: int | None = None
    annual_rate: Decimal | None = None
    balance: Decimal = Decimal(0)
    frequency: Frequency = Frequency.MONTHLY
    timing: Timing = Timing.ARREARS
    growth: Decimal | None = None
    step: Decimal | None = None
    growth_every: int | None = None
    start: date | None = None
    rounding: Rounding = Rounding.HALF_UP
    interest_rounding: Rounding = Rounding.HALF_UP
    loan_payment: Decimal | None = None
    solve_for: str | None = None

    def __post_init__(self) -> None:
        set_ = functools.partial(object.__setattr__, self)
        set_("frequency", Frequency.parse(self.frequency))
        set_("timing", Timing.parse(self.timing))
        set_("rounding", Rounding.parse(self.rounding, "rounding"))
        set_("interest_rounding", Rounding.parse(self.interest_rounding, "interest_rounding"))
        unknown = unknown_figure(self, FIGURES, given={})
        set_("solve_for", unknown)
        set_(unknown, None)
        if self.deposit is not None:
            set_("deposit", parse_amount(self.deposit, "deposit"))
        if self.target is not None:
            set_("target", parse_amount(self.target, "target"))
        if self.periods is not None:
            set_("periods", parse_count(self.periods, "periods", minimum=1))
        if self.annual_rate is not None:
            rate = self.annual_rate
            if type(rate) is not AnnualRate:
                rate = AnnualRate(parse_rate(rate, "annual_rate"))
            check_rate(rate, self.frequency)
            set_("annual_rate", rate)
        set_("balance", parse_amount(self.balance, "balance", allow_zero=True))
        if self.growth is not None:
            set_("growth", parse_growth(self.growth))
        if self.step is not None:
            set_("step", parse_step(self.step))
        if self.growth is not None and self.step is not None:
            raise InvalidTerms("give 'growth' (geometric) or 'step' (arithmetic), not both")
        set_("growth_every", parse_every(self.growth_every, self.frequency))
        if self.start is not None:
            set_("start", parse_date(self.start, "start"))
        if self.loan_payment is not None:
            set_("loan_payment", parse_amount(self.loan_payment, "loan_payment"))
        if self.target is not None and self.target <= self.balance and unknown != "annual_rate":
            raise InvalidTerms(
                f"the 'target' {self.target:,} is not above the starting 'balance' "
                f"{self.balance:,}: deposits can only add to a balance"
            )
        getattr(self, f"_solve_{unknown}")()
        if self.step is not None and self.step < 0 and self.periods is not None:
            self._flows(self.periods)  # refuses deposits turned negative

    @classmethod
    def sinking_fund(
        cls,
        loan: Loan,
        *,
        annual_rate: Decimal | str | float,
        timing: Timing | str = Timing.ARREARS,
        **options: Any,
    ) -> Accumulation:
        """Return the deposits, one a payment period, that repay ``loan`` at maturity.

        The target is what the loan leaves to pay with its last payment beyond
        its regular ones: the principal of an interest-only (bullet) loan, or
        a loan's balloon. ``annual_rate`` is the rate the fund earns (often
        below the loan's); the deposits fall on the loan's payment dates.
        ``options`` are further :class:`Accumulation` fields (growth, rounding...).

        >>> loan = Loan(principal=60_000, annual_rate="7%", periods=60, structure="bullet")
        >>> fund = Accumulation.sinking_fund(loan, annual_rate="4%")
        >>> fund.deposit, fund.summary()["combined_outlay"]
        (Decimal('904.99'), Decimal('1254.99'))
        """
        if loan.balloon > 0:
            due = loan.balloon
        elif loan.structure is Structure.BULLET:
            due = loan.principal
        else:
            raise InvalidTerms(
                "the loan repays its principal with its payments: it has no balloon for a "
                "sinking fund to meet (give an interest-only (bullet) loan or a balloon)"
            )
        return cls(
            target=due,
            periods=loan.number_of_payments,
            annual_rate=annual_rate,  # type: ignore[arg-type]  # parsed on construction
            frequency=loan.frequency,
            timing=Timing.parse(timing),
            start=loan.start_date,
            loan_payment=loan.payment,
            **options,
        )

    # -- terms -------------------------------------------------------------------------------

    @property
    def advance(self) -> bool:
        """True when each deposit falls at the start of its period."""
        return self.timing is Timing.ADVANCE

    @property
    def periodic_rate(self) -> Fraction:
        """The exact periodic rate: ``annual_rate`` over the deposits a year."""
        assert self.annual_rate is not None
        return periodic(self.annual_rate, self.frequency)

    def _stream(self, deposits: int) -> Stream:
        return Stream(
            rate=self.periodic_rate,
            payments=deposits,
            every=int(self.growth_every or 1),
            growth=growth_fraction(self.growth),
            step_cents=cents_of(self.step),
            advance=self.advance,
        )

    def _flows(self, deposits: int) -> np.ndarray:
        first = cents_of(self.deposit)
        flows = flow_path(
            first, deposits, growth=growth_fraction(self.growth), step_cents=cents_of(self.step),
            every=int(self.growth_every or 1), mode=self.rounding,
        )  # fmt: skip
        check_flows(flows, first, "deposit")
        return flows

    # -- solving -----------------------------------------------------------------------------

    def _solve_deposit(self) -> None:
        assert self.target is not None and self.periods is not None
        grown = float(self.balance) * float(
            recurrence.growth(float(self.periodic_rate), self.periods)
        )
        if self.balance and grown >= float(self.target):
            raise NoSolution(
                f"the starting balance {self.balance:,} grows to {grown:,.2f} over "
                f"{self.periods:,} periods, already at or above the target {self.target:,}: "
                "no deposits are needed"
            )
        stream = self._stream(self.periods)
        first = first_deposit_cents(
            cents_of(self.target), cents_of(self.balance), stream, self.rounding
        )
        if first <= 0:
            what = "the 'step'" if self.step is not None else "the target"
            raise InvalidTerms(
                f"the first deposit would be {first / 100:,.2f}: {what} leaves nothing to "
                f"deposit over {self.periods:,} periods under {self.rounding.value!r} rounding"
            )
        object.__setattr__(self, "deposit", money(first))

    def _solve_target(self) -> None:
        assert self.periods is not None
        table = self._run(self.periods, goal=None)[1]
        object.__setattr__(self, "target", money(int(table.closing[-1])))

    def _solve_periods(self) -> None:
        assert self.target is not None and self.deposit is not None
        rate = float(self.periodic_rate)
        most = solve.MAX_PERIODS
        flows = float_path(
            float(self.deposit), most, growth=float(self.growth or 0),
            step=float(self.step or 0), every=int(self.growth_every or 1),
        )  # fmt: skip
        k = np.arange(1, most + 1, dtype=np.float64)
        with np.errstate(over="ignore", invalid="ignore"):
            w = np.exp(-(k - (1 if self.advance else 0)) * math.log1p(rate))
            # In time-0 terms: B_0 + sum D_k w_k >= T v^n.
            worth = (
                float(self.balance)
                + np.cumsum(flows * w)
                - float(self.target) * np.exp(-k * math.log1p(rate))
            )
        count = first_reaching(worth, -1e-9 * float(self.target))
        if count is None:
            raise NoSolution(
                f"the deposits would not reach the target {self.target:,} within {most:,} periods"
            )
        cap = min(count + 2, most)
        while True:
            built = self._run(cap)
            ran = int(built[1].rows[0])
            natural = ran < cap or int(built[1].final_needed[0]) <= int(built[0].flows[ran - 1, 0])
            if natural or cap >= most:
                break
            cap = min(2 * cap, most)
        if not natural:
            raise NoSolution(
                f"the deposits would not reach the target {self.target:,} within {most:,} periods"
            )
        object.__setattr__(self, "periods", ran)
        self.__dict__["_built"] = built

    def _solve_annual_rate(self) -> None:
        assert self.target is not None and self.periods is not None and self.deposit is not None
        flows = self._flows(self.periods)
        total = cents_of(self.balance) + int(flows.sum())
        target = cents_of(self.target)
        if total > target:
            raise NoSolution(
                f"the starting balance and the deposits total {total / 100:,.2f} with no "
                f"interest, more than the target {self.target:,}: only a negative rate would fit"
            )
        if total == target:
            object.__setattr__(self, "annual_rate", AnnualRate(0))
            return
        first, step, n = cents_of(self.deposit), cents_of(self.step), self.periods
        every, grow, balance = (
            int(self.growth_every or 1),
            float(self.growth or 0),
            cents_of(self.balance),
        )

        def gap(i: np.ndarray) -> np.ndarray:
            w, s = factors(i, n, every=every, growth=grow, advance=self.advance)
            with np.errstate(over="ignore", invalid="ignore"):
                value = (balance + first * w + (step * s if step else 0.0)) * recurrence.growth(
                    i, n
                )
            return np.asarray(np.where(np.isnan(value), np.inf, value) - target, dtype=np.float64)

        high = np.array(1.0)
        if float(gap(high)) < 0:
            raise NoSolution("the implied rate is above 100 % a period, outside what amort solves")
        i = float(root(gap, 0.0, high, increasing=True))
        object.__setattr__(self, "annual_rate", AnnualRate(quantized_rate(i, self.frequency)))

    # -- the schedule ------------------------------------------------------------------------

    def _run(self, deposits: int, *, goal: int | bool | None = True) -> tuple[PathTerms, PathTable]:
        """Return the path terms and cent table of ``deposits`` deposits (goal: the target)."""
        rate = self.periodic_rate
        big = max(rate.numerator, rate.denominator) >= 2**62
        one = lambda v: np.array([v], dtype=object if big else np.int64)  # noqa: E731
        terms = PathTerms(
            opening=np.array([cents_of(self.balance)], dtype=np.int64),
            rate_num=one(rate.numerator),
            rate_den=one(rate.denominator),
            flows=self._flows(deposits)[:, None],
            periods=np.array([deposits], dtype=np.int64),
            advance=np.array([self.advance]),
            deposits=True,
            goal=None if goal is None else np.array([cents_of(self.target)], dtype=np.int64),
        )
        return terms, run_path(terms, self.interest_rounding)

    @functools.cached_property
    def _built(self) -> tuple[PathTerms, PathTable]:
        assert self.periods is not None
        return self._run(self.periods)

    @property
    def number_of_deposits(self) -> int:
        """How many deposits the schedule makes (a target reached by interest alone needs none).

        The schedule ends in the period the target is reached; its last
        period has no deposit when the interest alone reaches the target.
        """
        return int((self._built[1].flow > 0).sum())

    def schedule(self) -> pd.DataFrame:
        """Return the schedule, one row a period, money as float64 holding exact cents.

        Columns: ``period, due_date, opening_value, deposit, interest_credited, closing_value``.
        """
        table = self._built[1]
        dates = dates_for(self.start, int(table.rows[0]), self.frequency, advance=self.advance)
        return frame(table, "deposit", dates)

    def reconciliation(self) -> AnnuityCheck:
        """Return the schedule's checks against the closed form (:mod:`amort.annuity_cents`)."""
        terms, table = self._built
        return reconcile_paths(terms, table, self.interest_rounding)[0]

    def summary(self) -> dict[str, Any]:
        """Return the key figures (money as :class:`~decimal.Decimal`, currency units)."""
        table = self._built[1]
        rows = int(table.rows[0])
        dates = dates_for(self.start, rows, self.frequency, advance=self.advance)
        assert self.periods is not None
        closed = accumulated_value(
            float(self.periodic_rate), self.periods, float(self.deposit or 0),
            every=int(self.growth_every or 1), growth=float(self.growth or 0),
            step=float(self.step or 0), advance=self.advance, balance=float(self.balance),
        )  # fmt: skip
        outlay = None
        if self.loan_payment is not None and self.deposit is not None:
            outlay = self.loan_payment + self.deposit
        return {
            "solved_for": self.solve_for,
            "deposit": self.deposit,
            "target": self.target,
            "periods": self.periods,
            "annual_rate": self.annual_rate,
            "periodic_rate": self.periodic_rate,
            "frequency": self.frequency.value,
            "timing": self.timing.value,
            "balance": self.balance,
            "growth": self.growth,
            "step": self.step,
            "growth_every": self.growth_every if (self.growth or self.step) else None,
            "number_of_deposits": self.number_of_deposits,
            "final_deposit": money(int(table.final_flow[0])),
            "value_reached": money(int(table.closing[-1])),
            "closed_form_value": round(float(closed), 4),
            "total_deposited": money(int(table.flow.sum())),
            "total_interest_credited": money(int(table.interest.sum())),
            "loan_payment": self.loan_payment,
            "combined_outlay": outlay,
            "start": self.start,
            "first_deposit_date": None if dates.isna().all() else dates.iloc[0].date(),
            "last_deposit_date": None if dates.isna().all() else dates.iloc[-1].date(),
            "rounding": self.rounding.value,
            "interest_rounding": self.interest_rounding.value,
            "reconciled": self.reconciliation().passed,
        }
