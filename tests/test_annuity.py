"""Payout and Accumulation: solving each figure, schedules, dates, errors and properties.

Outside checks of the closed forms and of the cents are in
tests/reference/test_annuity_tables.py and tests/reference/test_annuity_cents.py;
here the value objects are held to their own contracts (round trips, the
loan engine's cents, the column contract, one-sentence errors) and to the
issue's properties (hypothesis): a payout that exhausts the fund closes at
its residual, an accumulation reaches its target with its last deposit.
"""

from __future__ import annotations

import dataclasses
import tracemalloc
from datetime import date
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from amort import InvalidTerms, Loan, NoSolution, annuity_fast
from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_cents import PathTable, PathTerms, _run_general, run_path
from amort.annuity_flows import flow_path
from amort.graduated import payment_path
from amort.money import Rounding

COLUMNS = ["period", "due_date", "opening_value", "payment", "interest_credited", "closing_value"]


# -- payouts: each figure solved, and back ------------------------------------------------------


def test_payment_then_each_other_figure_round_trips() -> None:
    # Solve the payment, then give it back and solve each other figure: the terms return,
    # within what rounding the payment to the cent moves them (half a cent a payment,
    # worth fund / payment payments).
    base = Payout(fund=250_000, annual_rate="4%", periods=300, growth="2%", defer=24)
    pay = base.payment
    assert pay is not None
    fund = Payout(payment=pay, annual_rate="4%", periods=300, growth="2%", defer=24)
    slack = Decimal("0.005") * Decimal(250_000) / pay + Decimal("0.01")
    assert fund.fund is not None and abs(fund.fund - Decimal(250_000)) <= slack
    rate = Payout(fund=250_000, payment=pay, periods=300, growth="2%", defer=24)
    assert rate.annual_rate is not None and abs(rate.annual_rate - Decimal("0.04")) < Decimal(
        "1e-6"
    )
    horizon = Payout(fund=250_000, payment=pay, annual_rate="4%", growth="2%", defer=24)
    assert horizon.periods in (300, 301)


@pytest.mark.parametrize(
    ("mode", "cents"),
    [("half-up", "500.01"), ("half-even", "500.00"), ("up", "500.01"), ("down", "500.00")],
)
def test_a_tie_is_decided_by_exact_arithmetic(mode: str, cents: str) -> None:
    # 1,000.01 paid out in 2 payments after a deferral, at 0 %: exactly 500.005 each (Python
    # decimal: Decimal("1000.01") / 2), a half-cent tie that the float value cannot decide.
    payout = Payout(fund="1000.01", annual_rate="0%", periods=3, defer=1, rounding=mode)
    assert payout.payment == Decimal(cents)
    assert Decimal("1000.01") / 2 == Decimal("500.005")


def test_replace_solves_the_same_unknown_again() -> None:
    payout = Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual")
    bigger = dataclasses.replace(payout, fund=200_000)
    assert bigger.solve_for == "payment"
    assert bigger.payment == Decimal("25900.91")  # 2 x 12,950.455... rounded half-up


def test_solve_for_may_name_the_unknown() -> None:
    payout = Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual")
    again = dataclasses.replace(payout, payment=Decimal(13_000), solve_for="periods")
    assert again.solve_for == "periods"
    assert again.periods == 10 and again.summary()["final_payment"] < Decimal(13_000)


def test_level_payout_cents_are_the_loan_engines() -> None:
    # A payout annuity is the loan recurrence with the fund as principal (DESIGN.md): the
    # same cents as a Loan of that principal, in arrears and in advance, with a balloon.
    for timing in ("arrears", "advance"):
        payout = Payout(fund=80_000, annual_rate="6.5%", periods=120, timing=timing,
                        residual=10_000)  # fmt: skip
        loan = Loan(principal=80_000, annual_rate="6.5%", periods=120, timing=timing,
                    balloon=10_000)  # fmt: skip
        assert payout.payment == loan.payment
        ours, theirs = payout.schedule(), loan.schedule()
        assert (ours["payment"] == theirs["payment"]).all()
        assert (ours["interest_credited"] == theirs["interest"]).all()
        assert ours["closing_value"].iloc[-1] == 10_000


@pytest.mark.parametrize(
    "terms",
    [
        {"growth": "2%"},
        {"growth": "2%", "defer": 24},
        {"step": "15", "defer": 5, "residual": 20_000},
        {"defer": 12},
        {"growth": "-1%", "growth_every": 6},
    ],
)
def test_the_own_path_gives_the_loan_engines_cents(terms: dict) -> None:
    # amort.annuity_cents.run_path must follow the loan engine's rules exactly: the same
    # arrears payouts through both give the same rows.
    payout = Payout(fund=150_000, annual_rate="5.5%", periods=180, **terms)
    engine_terms, engine_table = payout._built
    own = run_path(engine_terms, payout.interest_rounding)
    for field in ("opening", "flow", "interest", "closing"):
        assert (getattr(own, field) == getattr(engine_table, field)).all(), field


def test_flow_path_is_the_graduated_payment_path() -> None:
    # Each geometric flow is round(P_1 g^s), the rule of amort.graduated.payment_path.
    for mode in Rounding:
        ours = flow_path(123_457, 100, defer=7, growth=Fraction(3, 100), every=12, mode=mode)
        theirs = payment_path(123_457, 107, interest_only=7, every=12,
                              growth=Fraction(3, 100), step_cents=None, mode=mode)  # fmt: skip
        assert ours.tolist() == theirs


def test_deferral_grows_the_fund_untouched() -> None:
    payout = Payout(fund=100_000, annual_rate="6%", periods=36, defer=12)
    frame = payout.schedule()
    deferral = frame.iloc[:12]
    assert (deferral["payment"] == 0).all()
    assert (deferral["closing_value"] > deferral["opening_value"]).all()
    assert payout.number_of_payments == 24
    assert frame["closing_value"].iloc[-1] == 0


def test_schedule_columns_and_types() -> None:
    frame = Payout(fund=10_000, annual_rate="3%", periods=12, start="2027-03-31").schedule()
    assert list(frame.columns) == COLUMNS
    assert str(frame["due_date"].dtype) == "datetime64[ns]"
    assert frame["payment"].dtype == np.float64
    # Money is the float64 nearest each whole-cent amount: cents / 100, exactly.
    for column in COLUMNS[2:]:
        assert (np.rint(frame[column] * 100) / 100 == frame[column]).all()


def test_dates_follow_the_calendar_rules() -> None:
    # Arrears: each payment at its period's end; advance: at its start (amort.calendar:
    # month ends stay at month ends, 31 -> 30 -> 31 without drift).
    arrears = Payout(fund=10_000, annual_rate="3%", periods=3, start="2027-01-31").schedule()
    assert [d.date() for d in arrears["due_date"]] == [
        date(2027, 2, 28), date(2027, 3, 31), date(2027, 4, 30)
    ]  # fmt: skip
    advance = Payout(fund=10_000, annual_rate="3%", periods=3, start="2027-01-31",
                     timing="advance").schedule()  # fmt: skip
    assert advance["due_date"].iloc[0].date() == date(2027, 1, 31)
    undated = Payout(fund=10_000, annual_rate="3%", periods=3).schedule()
    assert undated["due_date"].isna().all()


def test_perpetuity_pays_the_interest_and_keeps_the_fund() -> None:
    payout = Payout(fund=250_000, annual_rate="4%", perpetuity=True)
    assert payout.payment == Decimal("833.33")  # 250,000 x 4 % / 12 = 833.333...
    frame = payout.schedule(rows=24)
    assert len(frame) == 24
    assert frame["closing_value"].min() >= 250_000  # 0.33 cents a month stays in the fund
    assert payout.reconciliation(rows=24).passed


def test_growing_perpetuity_value() -> None:
    # A perpetuity growing g each period is worth P / (i - g) (the textbook limit).
    payout = Payout(payment=100, annual_rate="12%", perpetuity=True, growth="0.5%",
                    growth_every=1)  # fmt: skip
    assert payout.fund == Decimal(100) / (Decimal("0.01") - Decimal("0.005"))


# -- accumulations --------------------------------------------------------------------------------


def test_accumulation_figures_round_trip() -> None:
    base = Accumulation(target=60_000, annual_rate="4%", periods=60, balance=2_000,
                        growth="3%")  # fmt: skip
    deposit = base.deposit
    reached = Accumulation(deposit=deposit, annual_rate="4%", periods=60, balance=2_000,
                           growth="3%")  # fmt: skip
    assert reached.target is not None and abs(reached.target - Decimal(60_000)) < Decimal(1)
    count = Accumulation(deposit=deposit, target=60_000, annual_rate="4%", balance=2_000,
                         growth="3%")  # fmt: skip
    assert count.periods in (60, 61)
    rate = Accumulation(deposit=deposit, target=60_000, periods=60, balance=2_000,
                        growth="3%")  # fmt: skip
    assert rate.annual_rate is not None and abs(rate.annual_rate - Decimal("0.04")) < Decimal(
        "1e-5"
    )


def test_target_reached_by_interest_alone_needs_no_last_deposit() -> None:
    fund = Accumulation(deposit=500, target=60_000, annual_rate="4%")
    frame = fund.schedule()
    assert frame["deposit"].iloc[-1] == 0
    assert fund.number_of_deposits == len(frame) - 1
    assert frame["closing_value"].iloc[-1] >= 60_000 > frame["closing_value"].iloc[-2]
    assert fund.reconciliation().passed


def test_sinking_fund_pairs_with_an_interest_only_loan() -> None:
    # The sinking-fund method: the bullet loan pays interest only, the fund repays the
    # principal at maturity; the combined outlay is the loan payment plus the deposit.
    loan = Loan(principal=60_000, annual_rate="7%", periods=60, structure="bullet")
    fund = Accumulation.sinking_fund(loan, annual_rate="4%")
    summary = fund.summary()
    assert summary["target"] == loan.principal
    assert summary["loan_payment"] == Decimal("350.00")
    assert summary["combined_outlay"] == Decimal("350.00") + fund.deposit
    assert summary["value_reached"] == Decimal(60_000)


def test_sinking_fund_for_a_balloon() -> None:
    loan = Loan(principal=40_000, annual_rate="6%", periods=36, balloon=15_000)
    fund = Accumulation.sinking_fund(loan, annual_rate="3%", timing="advance")
    assert fund.target == Decimal(15_000) and fund.periods == 36


def test_sinking_fund_refuses_a_fully_amortising_loan() -> None:
    loan = Loan(principal=40_000, annual_rate="6%", periods=36)
    with pytest.raises(InvalidTerms, match="no balloon"):
        Accumulation.sinking_fund(loan, annual_rate="3%")


def test_the_path_is_vectorised_over_a_batch() -> None:
    # A batch of accumulations in one run gives each one's own rows.
    singles = [
        Accumulation(target=t, annual_rate="5%", periods=24, timing=timing)
        for t, timing in ((10_000, "arrears"), (25_000, "advance"), (7_500, "arrears"))
    ]
    terms = [s._built[0] for s in singles]
    flows = np.concatenate([t.flows for t in terms], axis=1)
    batch = PathTerms(
        opening=np.concatenate([t.opening for t in terms]),
        rate_num=np.concatenate([t.rate_num for t in terms]),
        rate_den=np.concatenate([t.rate_den for t in terms]),
        flows=flows,
        periods=np.concatenate([t.periods for t in terms]),
        advance=np.concatenate([t.advance for t in terms]),
        deposits=True,
        goal=np.concatenate([t.goal for t in terms if t.goal is not None]),
    )
    table = run_path(batch)
    for j, single in enumerate(singles):
        mine = table.closing[table.annuity == j]
        assert (mine == single._built[1].closing).all()


# -- the int64 fast path: the same cents as the general path ----------------------------------
#
# run_path takes amort.annuity_fast.run_fast for a batch of two or more when its figures are
# in that path's exact range, else the general path (every period by the full rules). The
# outside check of both is tests/reference/test_annuity_cents.py; here the two paths are
# held to each other on many more batches, including the fast path's own machinery (several
# chunks, frozen and packed annuities, partial blocks) and its fallbacks.

PATH_FIELDS = ("annuity", "period", "opening", "flow", "interest", "closing", "rows",
               "final_flow", "final_needed")  # fmt: skip


def seeded_batch(seed: int, *, deposits: bool, goal: bool, size: int = 0) -> PathTerms:
    """Invented annuities: rates to 30 % a year in whole basis points, a month (over 12;
    6 % gives half-cent ties) or a day (over 365), level or varying flows, mixed timing and
    lengths, goals met early."""
    rng = np.random.default_rng(seed)
    size = size or int(rng.integers(2, 400))
    horizon = int(rng.integers(1, 90))
    periods = np.where(rng.random(size) < 0.5, rng.integers(0, horizon + 1, size), horizon)
    periods[0] = horizon
    daily = rng.random() < 0.3
    den = np.full(size, 3_650_000 if daily else 120_000, dtype=np.int64)
    num = np.where(rng.random(size) < 0.5, 600, rng.integers(0, 3_000, size))
    opening = rng.integers(0, 10 ** int(rng.integers(1, 9)), size)
    level = rng.integers(0, 10 ** int(rng.integers(1, 7)), size)
    flows = np.broadcast_to(level, (horizon, size)).copy()
    varied = rng.random((horizon, size)) < 0.3
    flows[varied] = rng.integers(0, 2 * 10**6, int(varied.sum()))
    goals = None
    if goal and deposits:
        goals = opening + rng.integers(0, 10 ** int(rng.integers(2, 9)), size)
    elif goal:
        goals = np.where(rng.random(size) < 0.4, 0, (opening * rng.random(size)).astype(np.int64))
    return PathTerms(
        opening=opening.astype(np.int64), rate_num=num.astype(np.int64), rate_den=den,
        flows=flows.astype(np.int64), periods=periods.astype(np.int64),
        advance=rng.random(size) < rng.choice([0.0, 0.5, 1.0]), deposits=deposits,
        goal=None if goals is None else goals.astype(np.int64),
    )  # fmt: skip


def assert_same_tables(got: PathTable, want: PathTable) -> None:
    for field in PATH_FIELDS:
        a, b = getattr(got, field), getattr(want, field)
        assert a.dtype == np.int64, field
        assert a.shape == b.shape and (a == b).all(), field


@pytest.mark.parametrize("mode", list(Rounding), ids=[m.value for m in Rounding])
@pytest.mark.parametrize(("deposits", "goal"), [(True, True), (True, False), (False, True),
                                                (False, False)])  # fmt: skip
@pytest.mark.parametrize("seed", range(6))
def test_the_fast_path_gives_the_general_paths_cents(seed, deposits, goal, mode, monkeypatch):
    # Small chunks, blocks and packing sizes make every batch use all of the fast path.
    monkeypatch.setattr(annuity_fast, "_CHUNK", [64, 100, 16_384][seed % 3])
    monkeypatch.setattr(annuity_fast, "_BLOCK", [7, 256][seed % 2])
    monkeypatch.setattr(annuity_fast, "_PACK", [4, 64][seed % 2])
    terms = seeded_batch(seed, deposits=deposits, goal=goal)
    fast = annuity_fast.run_fast(terms, mode)
    assert fast is not None
    assert_same_tables(PathTable(**fast), _run_general(terms, mode))


@pytest.mark.parametrize("mode", list(Rounding), ids=[m.value for m in Rounding])
def test_half_cent_ties_are_rounded_as_the_mode_says(mode) -> None:
    # 6 % a year over 12 is 1/200: a value of 100 + 200 m cents earns m + 1/2 cents, a tie.
    size = 64
    opening = 100 + 200 * np.arange(size, dtype=np.int64)
    terms = PathTerms(
        opening=opening, rate_num=np.full(size, 1), rate_den=np.full(size, 200),
        flows=np.zeros((1, size), dtype=np.int64), periods=np.ones(size, dtype=np.int64),
        advance=np.zeros(size, dtype=bool), deposits=True,
    )  # fmt: skip
    table = run_path(terms, mode)
    m = np.arange(size)
    expected = {
        Rounding.HALF_UP: m + 1,
        Rounding.HALF_EVEN: np.where(m % 2 == 0, m, m + 1),
        Rounding.UP: m + 1,
        Rounding.DOWN: m,
    }[mode]
    assert (table.interest == expected).all()
    assert_same_tables(table, _run_general(terms, mode))


@given(
    opening=st.lists(st.integers(0, 10**12), min_size=2, max_size=6),
    rate_num=st.integers(0, 3_000),
    flow=st.integers(0, 10**9),
    periods=st.integers(1, 40),
    advance=st.booleans(),
    deposits=st.booleans(),
    goal=st.one_of(st.none(), st.integers(0, 10**13)),
    mode=st.sampled_from(list(Rounding)),
)
def test_fast_and_general_paths_agree_on_any_batch(
    opening, rate_num, flow, periods, advance, deposits, goal, mode
) -> None:
    size = len(opening)
    goals = None
    if goal is not None:
        goals = np.array([v + goal + 1 if deposits else min(goal, v) for v in opening])
    terms = PathTerms(
        opening=np.array(opening, dtype=np.int64), rate_num=np.full(size, rate_num),
        rate_den=np.full(size, 120_000), flows=np.full((periods, size), flow),
        periods=np.arange(periods, periods - size, -1).clip(1),
        advance=np.array([advance, not advance] * size)[:size], deposits=deposits,
        goal=None if goals is None else goals.astype(np.int64),
    )  # fmt: skip
    assert_same_tables(run_path(terms, mode), _run_general(terms, mode))


def test_figures_beyond_the_exact_range_take_the_general_path() -> None:
    # Each batch is outside the float64 step's exact range (amort.annuity_fast notes), so
    # run_fast declines it and run_path's cents are the general path's (Python integers
    # where needed) - and, annuity by annuity, the plain-integer loop's.
    def batch(**changes) -> PathTerms:
        base = dict(
            opening=np.array([10**6, 2 * 10**6]), rate_num=np.array([5, 7]),
            rate_den=np.array([1_200, 1_200]), flows=np.full((30, 2), 10**5),
            periods=np.array([30, 30]), advance=np.array([False, True]), deposits=True,
        )  # fmt: skip
        return PathTerms(**{**base, **changes})

    huge = [
        batch(opening=np.array([2**53, 5])),  # a value past 2**51 cents
        batch(flows=np.full((30, 2), 2**50)),  # deposits that take the value past it
        batch(opening=np.array([10**9, 5]), rate_num=np.array([10**7, 7]),
              rate_den=np.array([10**8, 1_200])),  # value x rate numerator past 2**52
        batch(rate_num=np.array([3, 1]), rate_den=np.array([2**50, 12])),  # a wide denominator
        # deposits that leave the range part-way (the interest passes 2**38 cents at period 5)
        batch(flows=np.full((120, 2), 10**13), periods=np.array([120, 120])),
        batch(rate_num=np.array([1, 2**61], dtype=object),
              rate_den=np.array([12, 2**62], dtype=object)),  # Python-integer rates
        batch(flows=np.array([[-5, 10]] * 30)),  # a negative flow
    ]  # fmt: skip
    for terms in huge:
        for mode in Rounding:
            assert annuity_fast.run_fast(terms, mode) is None
            table = run_path(terms, mode)
            assert_same_tables(table, _run_general(terms, mode))
            for j in range(2):
                one = dataclasses.replace(
                    terms, **{f: getattr(terms, f)[j : j + 1] for f in
                              ("opening", "rate_num", "rate_den", "periods", "advance")},
                    flows=terms.flows[:, j : j + 1],
                )  # fmt: skip
                single = run_path(one, mode)
                assert (table.closing[table.annuity == j] == single.closing).all()


def test_annuities_without_periods_have_no_rows() -> None:
    terms = seeded_batch(3, deposits=True, goal=False, size=50)
    terms = dataclasses.replace(terms, periods=np.where(np.arange(50) % 3 == 0, 0, terms.periods))
    table = run_path(terms)
    assert (table.rows[::3] == 0).all()
    assert not np.isin(np.arange(0, 50, 3), table.annuity).any()
    assert_same_tables(table, _run_general(terms, Rounding.HALF_UP))


def test_the_fast_path_holds_the_table_and_little_else() -> None:
    # Bounded memory: the six int64 columns, one chunk's buffer (at most 64 MiB, here
    # 16,384 x 61 x 8 bytes) and the working vectors. Measured with tracemalloc, which
    # numpy reports its arrays to.
    terms = seeded_batch(5, deposits=True, goal=False, size=40_000)
    terms = dataclasses.replace(terms, flows=np.full((60, 40_000), 12_345),
                                periods=np.full(40_000, 60))  # fmt: skip
    tracemalloc.start()
    try:
        table = run_path(terms)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    table_bytes = 6 * 8 * int(table.rows.sum())
    assert table_bytes == 6 * 8 * 40_000 * 60
    assert peak < table_bytes + 16 * 2**20


# -- properties (hypothesis) -----------------------------------------------------------------


@given(
    opening=st.integers(0, 10**9),
    rate_num=st.integers(0, 3_000),
    flow=st.integers(0, 10**7),
    periods=st.integers(1, 60),
    advance=st.booleans(),
    deposits=st.booleans(),
    goal=st.one_of(st.none(), st.integers(0, 10**10)),
    mode=st.sampled_from(list(Rounding)),
)
def test_the_one_annuity_loop_and_the_vectorised_path_agree(
    opening, rate_num, flow, periods, advance, deposits, goal, mode
) -> None:
    # run_path takes a plain-integer loop for a batch of one; a batch of two copies takes
    # the vectorised steps. Same rules, so the same cents, whatever the terms.
    if not deposits and goal is not None:
        goal = min(goal, opening)  # a payout leaves at most what it starts with
    if deposits and goal is not None:
        goal = opening + goal + 1  # a target above the starting balance

    def terms(copies: int) -> PathTerms:
        return PathTerms(
            opening=np.full(copies, opening, dtype=np.int64),
            rate_num=np.full(copies, rate_num, dtype=np.int64),
            rate_den=np.full(copies, 120_000, dtype=np.int64),
            flows=np.full((periods, copies), flow, dtype=np.int64),
            periods=np.full(copies, periods, dtype=np.int64),
            advance=np.full(copies, advance),
            deposits=deposits,
            goal=None if goal is None else np.full(copies, goal, dtype=np.int64),
        )

    one, two = run_path(terms(1), mode), run_path(terms(2), mode)
    for field in ("opening", "flow", "interest", "closing", "period"):
        got, want = getattr(one, field), getattr(two, field)
        assert (np.concatenate([got, got]) == want).all(), field
    assert int(one.final_needed[0]) == int(two.final_needed[1])


@given(
    fund=st.integers(100_000, 10**10),  # cents
    annual=st.integers(0, 2_000),  # basis points a year
    payments=st.integers(1, 240),
    defer=st.integers(0, 24),
    growth=st.one_of(st.none(), st.integers(-300, 800)),  # tenths of a percent... a year
    advance=st.booleans(),
    mode=st.sampled_from(list(Rounding)),
)
def test_a_payout_that_exhausts_the_fund_closes_at_zero(
    fund, annual, payments, defer, growth, advance, mode
) -> None:
    payout = Payout(
        fund=Decimal(fund) / 100, annual_rate=f"{Decimal(annual) / 100}%",
        periods=defer + payments, defer=defer,
        growth=None if growth is None else f"{Decimal(growth) / 100}%",
        timing="advance" if advance else "arrears", rounding=mode, interest_rounding=mode,
    )  # fmt: skip
    frame = payout.schedule()
    assert frame["closing_value"].iloc[-1] == 0
    assert (frame["closing_value"].iloc[:-1] > 0).all()
    assert payout.reconciliation().passed


@given(
    target=st.integers(100_000, 10**10),
    balance=st.integers(0, 50_000),
    annual=st.integers(0, 2_000),
    periods=st.integers(1, 240),
    step=st.one_of(st.none(), st.integers(0, 2_000)),
    advance=st.booleans(),
    mode=st.sampled_from(list(Rounding)),
)
def test_accumulation_reaches_the_target_within_the_last_deposit(
    target, balance, annual, periods, step, advance, mode
) -> None:
    try:
        fund = Accumulation(
            target=Decimal(target) / 100, balance=Decimal(balance) / 100,
            annual_rate=f"{Decimal(annual) / 100}%", periods=periods,
            step=None if step is None else Decimal(step) / 100,
            timing="advance" if advance else "arrears", rounding=mode, interest_rounding=mode,
        )  # fmt: skip
    except InvalidTerms as exc:
        # Only a step too large for the target may refuse (the first deposit would be <= 0).
        assert "first deposit would be" in str(exc)
        return
    except NoSolution as exc:
        # ... or a starting balance whose interest alone reaches the target.
        assert "no deposits are needed" in str(exc)
        return
    frame = fund.schedule()
    closing = frame["closing_value"]
    goal = float(Decimal(target) / 100)
    assert closing.iloc[-1] >= goal
    assert len(closing) == 1 or closing.iloc[-2] < goal
    if not advance and frame["deposit"].iloc[-1] > 0:
        assert closing.iloc[-1] == goal  # arrears: the last deposit hits it exactly
    assert fund.reconciliation().passed


@given(
    fund=st.integers(1_000_000, 10**9),
    annual=st.integers(1, 1_500),
    payment=st.integers(1_000, 500_000),
    advance=st.booleans(),
)
def test_a_payment_horizon_ends_when_the_fund_runs_out(fund, annual, payment, advance) -> None:
    try:
        payout = Payout(
            fund=Decimal(fund) / 100, annual_rate=f"{Decimal(annual) / 100}%",
            payment=Decimal(payment) / 100, timing="advance" if advance else "arrears",
        )  # fmt: skip
    except NoSolution as exc:
        assert "never be exhausted" in str(exc) or "within 100,000" in str(exc)
        return
    frame = payout.schedule()
    assert frame["closing_value"].iloc[-1] == 0
    assert frame["payment"].iloc[-1] <= float(Decimal(payment) / 100)
    assert payout.reconciliation().passed


# -- bad input: one sentence naming the field, the value and what is valid ---------------------


@pytest.mark.parametrize(
    ("make", "error", "words"),
    [
        (lambda: Payout(fund=-5, annual_rate="4%", periods=10), InvalidTerms, "'fund' must be > 0"),
        (lambda: Accumulation(deposit=-1, annual_rate="4%", periods=10), InvalidTerms,
         "'deposit' must be > 0"),
        (lambda: Payout(fund=1000, annual_rate="4%", periods=0), InvalidTerms,
         "'periods' must be a whole number from 1"),
        (lambda: Accumulation(target=1000, annual_rate="4%", periods=0), InvalidTerms,
         "'periods' must be a whole number from 1"),
        (lambda: Payout(fund=1000, annual_rate="4%", periods=10, defer=10), InvalidTerms,
         "'defer' 10 must be less than 'periods' 10"),
        (lambda: Payout(fund=1000, annual_rate="4%", perpetuity=True, growth="5%"), NoSolution,
         "growth of a step must be below the interest of a step"),
        (lambda: Payout(payment=10, annual_rate="4%", perpetuity=True, growth="4.1%"),
         NoSolution, "no finite value"),
        (lambda: Payout(fund=1000, annual_rate="0%", perpetuity=True), NoSolution,
         "no finite value"),
        (lambda: Accumulation(target=1000, balance=5000, annual_rate="4%", periods=10),
         InvalidTerms, "'target' 1,000 is not above the starting 'balance' 5,000"),
        (lambda: Accumulation(target=5100, balance=5000, annual_rate="4%", periods=24),
         NoSolution, "no deposits are needed"),
        (lambda: Payout(fund=1000, payment=60, periods=10), NoSolution,
         "only a negative rate would pay the fund out"),
        (lambda: Accumulation(deposit=100, target=500, periods=10), NoSolution,
         "only a negative rate would fit"),
        (lambda: Payout(fund=100_000, annual_rate="4%", periods=10, frequency="annual",
                        residual=200_000), InvalidTerms, "is an accumulation"),
        (lambda: Payout(fund=100_000, annual_rate="0%", periods=10, residual=100_000),
         InvalidTerms, "the payments would have to be negative"),
        (lambda: Payout(fund=100_000, annual_rate="4%", periods=120, step="-100",
                        growth_every=1), InvalidTerms, "payments must stay >= 0"),
        (lambda: Payout(fund=100_000, annual_rate="6%", payment=500), NoSolution,
         "does not exceed the interest the fund earns in a period (500.00)"),
        (lambda: Payout(fund=1000, annual_rate="4%"), InvalidTerms,
         "leave out exactly one of"),
        (lambda: Payout(fund=1000, payment=10, annual_rate="4%", periods=12), InvalidTerms,
         "leave out the one to solve for"),
        (lambda: Payout(fund=1000, annual_rate="4%", periods=12, perpetuity=True), InvalidTerms,
         "not both"),
        (lambda: Payout(fund=1000, annual_rate="4%", perpetuity=True, residual=10), InvalidTerms,
         "no 'residual'"),
        (lambda: Payout(fund=1000, annual_rate="4%", periods=12, growth="2%", step="1"),
         InvalidTerms, "not both"),
        (lambda: Payout(fund=1000, annual_rate="4%", periods=12, growth=2), InvalidTerms,
         "write '2%' instead"),
        (lambda: Payout(payment=1, annual_rate="4%", periods=12, residual=5000),
         InvalidTerms, "is an accumulation"),
    ],
)  # fmt: skip
def test_bad_input_is_one_clear_sentence(make, error, words) -> None:
    with pytest.raises(error) as caught:
        make()
    message = str(caught.value)
    assert words in message
    assert "\n" not in message
