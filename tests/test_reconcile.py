"""Reconciliation of cent schedules against the closed form (amort.reconcile).

The balance bound is derived in the module docstring: each period's interest
is rounded once by at most u cents, so the gap obeys e_k = a e_{k-1} + d_k,
|d_k| <= u, and |e_k| <= u s_k with s_k = ((1 + i)^k - 1) / i. These tests
check that the bound reported is that figure (s_k computed here with Python's
fractions), that the exact gap (again with fractions) never passes it, and
that corrupting a table makes the matching check fail.
"""

from __future__ import annotations

import dataclasses
import itertools
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest

from amort import Loan
from amort.money import Rounding
from amort.reconcile import FLOAT_ALLOWANCE, RECONCILIATION_COLUMNS, reconcile
from amort.schedule import BatchTerms, CentsTable, run

MODES = list(Rounding)


def batch(loans: list[Loan]) -> BatchTerms:
    parts = [loan.batch_terms() for loan in loans]
    names = [f.name for f in dataclasses.fields(BatchTerms) if not f.name.startswith("period_")]
    return BatchTerms(**{n: np.concatenate([getattr(p, n) for p in parts]) for n in names})


def s(rate: Fraction, k: int) -> Fraction:
    """Exact accumulation factor s_k = ((1 + i)^k - 1) / i (k at i = 0)."""
    return Fraction(k) if rate == 0 else ((1 + rate) ** k - 1) / rate


def exact_balance(b0: int, rate: Fraction, payment: int, k: int, advance: bool) -> Fraction:
    """B_k = a^k B_0 - P' s_k, P' = P (arrears) or a P (advance), in cents, exactly."""
    effective = payment * (1 + rate) if advance else Fraction(payment)
    return (1 + rate) ** k * b0 - effective * s(rate, k)


@pytest.fixture
def design_loan() -> Loan:
    return Loan(principal=250_000, annual_rate="6.5%", periods=360)


def test_columns_and_one_row_a_loan(design_loan: Loan) -> None:
    loans = [design_loan, dataclasses.replace(design_loan, periods=12, timing="advance")]
    terms = batch(loans)
    frame = reconcile(terms, run(terms))
    assert isinstance(frame, pd.DataFrame)
    assert list(frame.columns) == RECONCILIATION_COLUMNS
    assert frame["loan"].tolist() == [0, 1]
    assert frame["periods"].tolist() == [360, 12]
    assert frame["passed"].tolist() == [True, True]


@pytest.mark.parametrize("mode", MODES)
def test_bound_is_u_times_s_k(design_loan: Loan, mode: Rounding) -> None:
    """gap_bound = u s_{n-1} (the last row, which pays off, is excluded), u = 1/2 or 1."""
    loan = dataclasses.replace(design_loan, interest_rounding=mode)
    terms = loan.batch_terms()
    row = reconcile(terms, run(terms, mode), mode).iloc[0]
    u = Fraction(1, 2) if mode in (Rounding.HALF_UP, Rounding.HALF_EVEN) else Fraction(1)
    derived = float(u * s(loan.periodic_rate, 359))  # cents
    # The float allowance is 1e-12 of a^k B_0 + P s_k, under 1e-4 cents here.
    scale = float(
        (1 + loan.periodic_rate) ** 359 * 25_000_000 + 158_017 * s(loan.periodic_rate, 359)
    )
    assert abs(row["gap_bound"] * 100 - derived) <= FLOAT_ALLOWANCE * scale * 1.01 + 1e-9
    assert row["largest_gap"] <= row["gap_bound"]
    assert row["passed"]


GRID = list(
    itertools.product(
        ["1.00", "999.99", "250000", "987654321.09"],  # principal
        ["0%", "0.01%", "6%", "6.5%", "19.99%", "240%"],  # annual rate, monthly
        [1, 2, 13, 120],  # periods
        ["arrears", "advance"],
    )
)


@pytest.mark.parametrize("mode", MODES)
def test_exact_gap_never_passes_the_bound(mode: Rounding) -> None:
    """With fractions: |c_k - x_k| <= u s_k on every row but the last, for a grid of loans."""
    u = Fraction(1, 2) if mode in (Rounding.HALF_UP, Rounding.HALF_EVEN) else Fraction(1)
    loans = [
        Loan(principal=p, annual_rate=r, periods=n, timing=t, interest_rounding=mode)
        for p, r, n, t in GRID
        if n <= 13 or r in ("6%", "6.5%")
    ]
    terms = batch(loans)
    table = run(terms, mode)
    worst = Fraction(0)
    for index, loan in enumerate(loans):
        part = table.loan_rows(index)
        closing = table.closing[part].tolist()
        rate, b0, pay = loan.periodic_rate, int(terms.principal[index]), int(terms.payment[index])
        for k, c in enumerate(closing[:-1], start=1):
            gap = abs(c - exact_balance(b0, rate, pay, k, loan.advance))
            bound = u * s(rate, k)
            assert gap <= bound, (loan, k)
            worst = max(worst, gap / bound)
    assert worst > Fraction(1, 4)  # the bound is not wildly loose


def test_down_rounding_needs_a_whole_cent_bound() -> None:
    """9,999 cents at 1 % a period: interest 99.99 cents, rounded down by 0.99 of a cent.

    After one period the gap is 0.99 cents > s_1 / 2 = 0.5, so only u = 1 holds.
    """
    loan = Loan(principal="99.99", annual_rate="12%", periods=6, interest_rounding="down")
    terms = loan.batch_terms()
    table = run(terms, Rounding.DOWN)
    assert int(table.interest[0]) == 99
    assert reconcile(terms, table, Rounding.DOWN)["passed"].iloc[0]
    assert not reconcile(terms, table, Rounding.HALF_UP)["passed"].iloc[0]


def test_grid_of_loans_reconciles() -> None:
    for mode in MODES:
        loans = [
            Loan(principal=p, annual_rate=r, periods=n, timing=t, interest_rounding=mode)
            for p, r, n, t in GRID
        ]
        loans += [
            Loan(principal=p, annual_rate=r, periods=n, balloon=b, interest_rounding=mode)
            for p, r, n, b in itertools.product(
                ["10000", "250000"], ["0%", "6.5%", "24%"], [12, 60], ["0.01", "1234.56"]
            )
        ]
        terms = batch(loans)
        frame = reconcile(terms, run(terms, mode), mode)
        failed = frame.loc[~frame["passed"]]
        assert failed.empty, failed.to_string()
        assert (frame["largest_gap"] <= frame["gap_bound"]).all()


# -- corrupted tables -------------------------------------------------------------------------


def corrupted(table: CentsTable, **changes: tuple[int, int]) -> CentsTable:
    """Return a copy of ``table`` with ``column=(index, delta)`` added."""
    replaced = {}
    for name, (index, delta) in changes.items():
        column = getattr(table, name).copy()
        column[index] += delta
        replaced[name] = column
    return dataclasses.replace(table, **replaced)


@pytest.fixture
def checked() -> tuple[BatchTerms, CentsTable]:
    loan = Loan(principal=10_000, annual_rate="6%", periods=24, balloon=2_000)
    terms = loan.batch_terms()
    table = run(terms)
    assert reconcile(terms, table)["passed"].iloc[0]
    return terms, table


@pytest.mark.parametrize(
    ("changes", "failing"),
    [
        # one interest cent changed: payment = interest + principal breaks
        ({"interest": (5, 1)}, "payment_identity"),
        # interest and principal moved together: the principal no longer adds up
        ({"interest": (5, 1), "principal": (5, -1)}, "principal_identity"),
        # one opening balance that is not the previous closing
        ({"opening": (7, 1)}, "chain_identity"),
        # the first opening is not the principal
        ({"opening": (0, -1)}, "chain_identity"),
        # the last closing is not 0
        ({"closing": (23, 1)}, "closes_at_zero"),
        # a balloon paid that is not the balloon
        ({"balloon_paid": (0, 1)}, "balloon_adjustment"),
    ],
)
def test_corrupted_table_fails_the_matching_check(
    checked: tuple[BatchTerms, CentsTable], changes: dict[str, tuple[int, int]], failing: str
) -> None:
    terms, table = checked
    row = reconcile(terms, corrupted(table, **changes)).iloc[0]
    assert not row["passed"]
    if failing == "balloon_adjustment":
        assert row["balloon_adjustment"] == 0.01
    else:
        assert not row[failing]


def test_a_balance_off_the_closed_form_fails_the_gap_check(
    checked: tuple[BatchTerms, CentsTable],
) -> None:
    """Five cents added to closing 1 and opening 2: the chain and sums hold, the gap does not."""
    terms, table = checked
    bad = corrupted(table, closing=(0, 5), opening=(1, 5))
    row = reconcile(terms, bad).iloc[0]
    assert row["chain_identity"] and row["principal_identity"] and row["payment_identity"]
    # 5 cents is inside the loan's largest bound (u s_23, about 12 cents) but not
    # inside row 1's own bound u s_1 = 0.5 cents: the check is row by row.
    assert row["largest_gap"] < row["gap_bound"]
    assert not row["gap_within_bound"]
    assert not row["passed"]


def test_a_final_payment_off_the_closed_form_fails_the_adjustment_check(
    checked: tuple[BatchTerms, CentsTable],
) -> None:
    terms, table = checked
    row = reconcile(terms, corrupted(table, final_payment=(0, 500))).iloc[0]
    assert abs(row["final_adjustment"] - row["expected_adjustment"]) > row["adjustment_bound"]
    assert not row["passed"]


def test_corruption_in_one_loan_fails_only_that_loan() -> None:
    loans = [Loan(principal=1000 * (j + 1), annual_rate="5%", periods=12) for j in range(5)]
    terms = batch(loans)
    table = run(terms)
    bad = corrupted(table, interest=(int(table.offsets[2]) + 3, 1))
    assert reconcile(terms, bad)["passed"].tolist() == [True, True, False, True, True]


def test_overflowing_growth_gives_an_infinite_bound_not_nan() -> None:
    """1 % a month over 100,000 months: (1.01)^k passes the float range (a bug fixed here)."""
    loan = Loan(principal=1000, annual_rate="12%", periods=100_000)
    check = loan.reconciliation()
    assert check.passed
    assert check.gap_bound == float("inf")
    assert not np.isnan(check.largest_gap)
