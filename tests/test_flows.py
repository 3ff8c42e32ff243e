"""amort.flows: checked flow lists, the CSV layout and its row-level errors, the roots.

Outside references: numpy-financial's ``irr`` (yearly flows), mpmath at 50
digits (the equation's value at the roots found), and the quadratic formula
worked by hand for the two-root case.
"""

from __future__ import annotations

from datetime import date, timedelta
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import mpmath
import numpy_financial as npf
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from amort import InvalidTerms, NoSolution
from amort.flows import (
    Flow,
    FlowKind,
    Flows,
    equation_roots,
    internal_rates,
    parse_flows,
    read_flows,
)

ROOT = Path(__file__).resolve().parents[1]


def refusal(text: str) -> str:
    with pytest.raises(InvalidTerms) as caught:
        parse_flows(text, source="flows.csv")
    return str(caught.value)


# -- Flow and Flows -----------------------------------------------------------------------------


def test_a_flow_is_parsed_and_signed_from_the_lenders_view() -> None:
    advance = Flow("2027-01-01", "1,000.50", "Advance")  # type: ignore[arg-type]
    assert advance.on == date(2027, 1, 1) and advance.amount == Decimal("1000.50")
    assert advance.kind is FlowKind.ADVANCE and advance.signed == Decimal("-1000.50")
    assert Flow(date(2027, 2, 1), Decimal(5), FlowKind.PAYMENT).signed == 5


def test_flows_need_an_advance_and_a_payment() -> None:
    with pytest.raises(
        InvalidTerms,
        match=r"at least one advance and one payment \(got 2 advances and 0 payments\)",
    ):
        Flows.of([("2027-01-01", 1, "advance"), ("2027-01-02", 1, "advance")])


def test_flows_dates_may_not_go_backwards() -> None:
    with pytest.raises(
        InvalidTerms, match="flow 2 on 2027-01-01 comes before flow 1 on 2027-02-01"
    ):
        Flows.of([("2027-02-01", 1, "advance"), ("2027-01-01", 1, "payment")])


def test_flows_totals_and_dates() -> None:
    flows = Flows.of(
        [
            ("2027-01-01", 600, "advance"),
            ("2027-01-01", 400, "advance"),
            ("2027-02-01", 300, "payment"),
            ("2027-02-01", 210, "payment"),
        ]
    )
    assert flows.total("advance") == 1000 and flows.total(FlowKind.PAYMENT) == 510
    assert flows.by_date("payment") == [(date(2027, 2, 1), Decimal(510))]
    assert flows.start == date(2027, 1, 1) and len(flows) == 4


# -- the CSV layout ------------------------------------------------------------------------------


def test_the_example_file_reads() -> None:
    flows = read_flows(ROOT / "examples" / "tallowmere_flows.csv")
    assert flows.advances and flows.payments
    assert flows.items[0].kind is FlowKind.ADVANCE


def test_csv_columns_any_order_comments_quotes_and_labels() -> None:
    text = (
        "# a comment, with commas\n"
        "Kind,Date,Amount,Label\n"
        'advance,2027-01-01,"1,000.00",proceeds\n'
        "\n"
        "payment,2027-02-01,1010.00,\n"
    )
    flows = parse_flows(text)
    assert [(i.kind.value, i.amount, i.label) for i in flows] == [
        ("advance", Decimal("1000.00"), "proceeds"),
        ("payment", Decimal("1010.00"), ""),
    ]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("date,amount,kind\n2027-01-01,1x,advance\n", "flows.csv row 2: 'amount' must be a number"),
        ("date,amount,kind\n2027-01-01,-5,advance\n", "row 2: 'amount' must be > 0 (got '-5')"),
        ("date,amount,kind\n2027-02-30,5,advance\n", "row 2: 'date' is not a valid date"),
        ("date,amount,kind\n01/02/2027,5,advance\n", "row 2: 'date' must be a date written"),
        ("date,amount,kind\n2027-01-01,5,loan\n", "row 2: 'kind' must be one of 'advance', "),
        ("date,amount,kind\n2027-01-01,,advance\n", "row 2: 'amount' is empty"),
        ("date,amount,kind\n2027-01-01,5,advance,x\n", "row 2 has 4 fields; the header has 3"),
        ("date,amont,kind\n", "row 1: unknown column 'amont'; did you mean 'amount'?"),
        ("date,amount\n", "row 1: the header needs the column(s) kind"),
        ("date,amount,kind,kind\n", "row 1: column 'kind' appears twice"),
        ("# only a comment\n", "flows.csv is empty"),
        (
            "date,amount,kind\n2027-02-01,5,advance\n# note\n2027-01-01,5,payment\n",
            "row 4: 'date' 2027-01-01 comes before 2027-02-01 on row 2",
        ),
        ("date,amount,kind\n2027-01-01,5,payment\n", "flows.csv: the flows need at least one"),
    ],
)
def test_csv_errors_name_the_row_the_column_and_the_value(text: str, message: str) -> None:
    assert message in refusal(text)


def test_read_flows_file_problems(tmp_path: Path) -> None:
    with pytest.raises(InvalidTerms, match="no such flows file"):
        read_flows(tmp_path / "missing.csv")
    with pytest.raises(InvalidTerms, match="is a folder"):
        read_flows(tmp_path)
    bad = tmp_path / "latin.csv"
    bad.write_bytes(b"date,amount,kind\n2027-01-01,5,advance\n\xff\n")
    with pytest.raises(InvalidTerms, match="row 3: the file is not UTF-8"):
        read_flows(bad)


# -- the equation's roots -------------------------------------------------------------------------


def test_two_internal_rates_are_both_reported() -> None:
    # -1000 + 2300 v - 1320 v^2 = 0: v = 1/1.1 or 1/1.2 (quadratic formula, by hand).
    # 365-day years, and no 29 February in 2025-2027.
    flows = Flows.of(
        [
            ("2025-01-01", 1000, "advance"),
            ("2026-01-01", 2300, "payment"),
            ("2027-01-01", 1320, "advance"),
        ]
    )
    roots = internal_rates(flows)
    assert roots.ambiguous and roots.sign_changes == 2
    assert roots.rates == pytest.approx((0.1, 0.2), abs=1e-12)
    assert roots.chosen == pytest.approx(0.1, abs=1e-12)
    assert roots.slopes == (1, -1)


def test_flows_that_never_change_sign_have_no_rate() -> None:
    # An advance and a payment on the same day net to one sign.
    flows = Flows.of(
        [
            ("2027-01-01", 500, "advance"),
            ("2027-01-01", 100, "payment"),
            ("2027-01-01", 100, "advance"),
        ]
    )
    with pytest.raises(NoSolution, match="never change sign"):
        internal_rates(flows)


def test_payments_short_of_the_advance_give_a_negative_internal_rate() -> None:
    # 1000 out, 900 back a year later: -10 % (by hand).
    flows = Flows.of([("2027-01-01", 1000, "advance"), ("2028-01-01", 900, "payment")])
    roots = internal_rates(flows)
    assert roots.rates == pytest.approx((-0.1,), abs=1e-13)
    assert roots.chosen == pytest.approx(-0.1, abs=1e-13)


def test_internal_rate_matches_numpy_financial_irr_on_yearly_flows() -> None:
    # numpy-financial irr on equally spaced flows; the dates are 365 days apart.
    start = date(2025, 1, 1)
    amounts = [-10_000, 2_500, 3_100, 2_900, 4_200]
    flows = Flows.of(
        [
            (start + timedelta(365 * k), abs(a), "advance" if a < 0 else "payment")
            for k, a in enumerate(amounts)
        ]
    )
    assert internal_rates(flows).chosen == pytest.approx(npf.irr(amounts), rel=1e-12)


def test_long_lists_do_not_overflow() -> None:
    # 100,000 payments of 1 for an advance of 1000: the perpetuity rate 1/1000 nearly.
    roots = equation_roots([-1000] + [1] * 100_000, [0, *range(1, 100_001)])
    assert roots.rates == pytest.approx((0.001,), rel=1e-9)


def test_simple_interest_fractions_enter_the_equation() -> None:
    # A / ((1 + f i)(1 + i)) = P at f = 1/2: the root of 1000 (1 + i/2)(1 + i) = 1100,
    # i = (-3 + sqrt(9 + 4 x 0.2 x 2)) / 2 ... solved here exactly by the quadratic formula.
    roots = equation_roots([-1000, 1100], [0, 1], [0, Fraction(1, 2)])
    i = (-1.5 + (1.5**2 + 4 * 0.5 * 0.1) ** 0.5) / (2 * 0.5)
    assert roots.rates == pytest.approx((i,), rel=1e-13)


def test_equation_inputs_are_checked() -> None:
    with pytest.raises(InvalidTerms, match="same length"):
        equation_roots([1, -1], [0])
    with pytest.raises(InvalidTerms, match="'fractions' between 0 and 1"):
        equation_roots([-1, 2], [0, 1], [0, 2])


@settings(max_examples=40, deadline=None)
@given(
    advance=st.integers(100_00, 100_000_00),
    payments=st.lists(st.integers(1_00, 30_000_00), min_size=1, max_size=40),
    gaps=st.lists(st.integers(1, 120), min_size=40, max_size=40),
)
def test_roots_make_the_equation_zero_at_fifty_digits(
    advance: int, payments: list[int], gaps: list[int]
) -> None:
    # mpmath at 50 digits: the value at the root found is zero relative to the flows' size.
    times = [0]
    for gap in gaps[: len(payments)]:
        times.append(times[-1] + gap)
    amounts = [Fraction(-advance, 100)] + [Fraction(p, 100) for p in payments]
    years = [Fraction(t, 12) for t in times]
    roots = equation_roots(amounts, years, high=1e4)
    scale = sum(abs(float(a)) for a in amounts)
    for rate in roots.rates:
        with mpmath.workdps(50):
            grow = 1 + mpmath.mpf(rate)
            value = sum(
                mpmath.mpf(a.numerator)
                / a.denominator
                * grow ** (-mpmath.mpf(t.numerator) / t.denominator)
                for a, t in zip(amounts, years, strict=True)
            )
        assert abs(float(value)) <= 1e-9 * scale
    if sum(amounts) > 0 and roots.rates:
        assert roots.chosen is not None and roots.chosen > 0
    elif sum(amounts) > 0:
        # No root in range: the value is still positive at the highest rate searched.
        with mpmath.workdps(50):
            top = sum(
                mpmath.mpf(a.numerator)
                / a.denominator
                * mpmath.mpf(10_001) ** (-mpmath.mpf(t.numerator) / t.denominator)
                for a, t in zip(amounts, years, strict=True)
            )
        assert top > 0
