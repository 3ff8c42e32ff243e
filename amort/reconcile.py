"""Reconciliation of cent schedules against the closed form.

Let ``c_k`` be the cent balance after period k and ``x_k`` the exact balance
the closed form gives for the same (rounded) level payment. Each period's
interest is rounded once, by at most ``u`` cents (``u = 1/2`` for the half
modes, ``1`` for ``up``/``down``), so the gap ``e_k = c_k - x_k`` obeys
``e_k = a e_{k-1} + d_k`` with ``|d_k| <= u``; hence

    |c_k - x_k| <= u s_k(i),         s_k = ((1 + i)^k - 1) / i.

That is the documented bound of the balance check (plus a float allowance of
1e-12 of the balance's scale for the closed form's own error, which is about
1e-15). The final payment differs from the level payment by the adjustment;
in arrears it must equal ``x_n - F`` within ``u s_n``; in advance
``(x_n - F) / a`` within ``u s_{n-1}`` plus 1.5 cents for rounding the
balloon's present value to a cent. The identities are exact integer checks:
sum(principal) + balloon paid = B_0, sum(payment) = sum(interest) +
sum(principal), each opening equals the previous closing, and the last
closing is 0.

The balance check is made row by row (``gap_within_bound``): each row's gap
against its own ``u s_k``, since the largest gap against the largest bound
could hide an early row's failure. Where ``(1 + i)^k`` passes the float range
the bound is infinite and says nothing; such rows pass.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from amort import recurrence, variable
from amort.money import Rounding
from amort.schedule import BatchTerms, CentsTable

FloatArray = npt.NDArray[np.float64]

#: Allowance for the float closed form's own error, relative to the balance scale.
FLOAT_ALLOWANCE = 1e-12

RECONCILIATION_COLUMNS = [
    "loan",
    "periods",
    "largest_gap",
    "gap_bound",
    "gap_within_bound",
    "final_adjustment",
    "expected_adjustment",
    "adjustment_bound",
    "balloon_paid",
    "balloon_adjustment",
    "principal_identity",
    "payment_identity",
    "chain_identity",
    "closes_at_zero",
    "passed",
]


@dataclass(frozen=True)
class Reconciliation:
    """A schedule's checks against the closed form (see :mod:`amort.reconcile`).

    Gaps and bounds are in currency units; the identities are exact checks.
    """

    largest_gap: float
    gap_bound: float
    final_adjustment: float
    expected_adjustment: float
    adjustment_bound: float
    balloon_paid: Decimal
    balloon_adjustment: Decimal
    principal_identity: bool
    payment_identity: bool
    chain_identity: bool
    closes_at_zero: bool
    passed: bool
    #: Every row's gap within its own bound u s_k (the largest gap is compared
    #: with the largest bound, which alone could hide an early row's failure).
    gap_within_bound: bool = True

    @property
    def checks(self) -> list[tuple[str, str, bool]]:
        """Return (check, figures, passed) for each check, for display."""
        return [
            (
                "largest gap between cent and closed-form balance",
                f"{self.largest_gap:.4f} <= bound {self.gap_bound:.4f}, row by row",
                self.gap_within_bound and self.largest_gap <= self.gap_bound,
            ),
            (
                "final-payment adjustment matches the closed form",
                f"{self.final_adjustment:.2f} vs {self.expected_adjustment:.4f} "
                f"(within {self.adjustment_bound:.4f})",
                abs(self.final_adjustment - self.expected_adjustment) <= self.adjustment_bound,
            ),
            (
                "sum(principal) + balloon = principal",
                "exact" if self.principal_identity else "broken",
                self.principal_identity,
            ),
            (
                "sum(payment) = sum(interest) + sum(principal)",
                "exact" if self.payment_identity else "broken",
                self.payment_identity,
            ),
            (
                "each opening balance = previous closing balance",
                "exact" if self.chain_identity else "broken",
                self.chain_identity,
            ),
            (
                "balance closes at 0",
                "yes" if self.closes_at_zero else "no",
                self.closes_at_zero,
            ),
        ]

    def as_dict(self) -> dict[str, Any]:
        """Return the checks as plain values (for JSON)."""
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}


def reconcile(
    terms: BatchTerms, table: CentsTable, interest_rounding: Rounding = Rounding.HALF_UP
) -> pd.DataFrame:
    """Return one row a loan with every check of the batch's cent schedule.

    Money columns are in currency units (float64 holding exact cents for the
    cent figures). ``passed`` is true when every check holds.
    """
    u = float(interest_rounding.max_error_cents)
    loans = terms.size
    rows = table.rows
    offsets = table.offsets
    adv_loan = terms.advance
    level = terms.payment.astype(np.float64)

    # Closed-form balance after each row, for the same level payment, in cents.
    # Where (1 + i)^k passes the float range (e.g. 1 % over 80,000 periods)
    # s_k and the bound are inf and the closed form is inf or NaN: the bound
    # says nothing there, so such rows (and such a loan's adjustment) pass
    # with an infinite bound rather than fail on float overflow.
    idx = table.loan
    with np.errstate(over="ignore", invalid="ignore"):
        forms = _VariableForms.of(terms, table) if terms.varies else None
        exact, scale, accumulated = _closed_form_rows(terms, table, forms)
        bound_row = u * accumulated + FLOAT_ALLOWANCE * scale
        gap = np.abs(table.closing.astype(np.float64) - exact)
    vacuous = ~np.isfinite(bound_row)
    last_row = np.zeros(table.period.size, dtype=bool)
    ends = offsets[1:] - 1
    has_rows = rows > 0
    last_row[ends[has_rows]] = True
    gap = np.where(last_row | vacuous, 0.0, gap)
    with np.errstate(over="ignore"):
        ratio = np.where(last_row | vacuous, 0.0, gap / np.maximum(bound_row, 1e-300))
    largest_gap = _per_loan(np.maximum, gap, offsets, rows)
    worst_ratio = _per_loan(np.maximum, ratio, offsets, rows)
    bound_shown = np.where(last_row, 0.0, np.where(vacuous, np.inf, bound_row))
    gap_bound = _per_loan(np.maximum, bound_shown, offsets, rows)

    f = terms.balloon.astype(np.float64)
    scheduled_final = level
    if forms is not None and forms.scheduled is not None:
        scheduled_final = forms.scheduled[np.maximum(rows - 1, 0), np.arange(loans)]
    adjustment = table.final_payment.astype(np.float64) - scheduled_final
    with np.errstate(over="ignore", invalid="ignore"):
        x_n, s_n, s_prev, scale_n, a = _closed_form_final(terms, rows, forms)
        expected = np.where(adv_loan, (x_n - f) / a, x_n - f)
        adj_bound = np.where(adv_loan, u * s_prev + 1.5, u * s_n) + FLOAT_ALLOWANCE * scale_n
        adjustment_ok = ~np.isfinite(adj_bound) | (np.abs(adjustment - expected) <= adj_bound)

    balloon_adjustment = table.balloon_paid - terms.balloon
    balloon_ok = np.where(adv_loan, np.abs(balloon_adjustment) <= 1, balloon_adjustment == 0)

    sum_principal = _per_loan(np.add, table.principal, offsets, rows)
    sum_payment = _per_loan(np.add, table.payment, offsets, rows)
    sum_interest = _per_loan(np.add, table.interest, offsets, rows)
    principal_identity = sum_principal + table.balloon_paid == terms.principal
    payment_identity = sum_payment == sum_interest + sum_principal

    starts_ok = np.ones(loans, dtype=bool)
    starts_ok[has_rows] = table.opening[offsets[:-1][has_rows]] == terms.principal[has_rows]
    follows = table.opening[1:] == table.closing[:-1]
    broken = ~follows & (idx[1:] == idx[:-1])
    chain = starts_ok & (np.bincount(idx[1:][broken], minlength=loans) == 0)
    closes = np.ones(loans, dtype=bool)
    closes[has_rows] = table.closing[ends[has_rows]] == 0
    closes &= has_rows

    gap_within_bound = worst_ratio <= 1.0
    passed = (
        gap_within_bound
        & adjustment_ok
        & balloon_ok
        & principal_identity
        & payment_identity
        & chain
        & closes
    )
    return pd.DataFrame(
        {
            "loan": np.arange(loans, dtype=np.int64),
            "periods": rows,
            "largest_gap": largest_gap / 100,
            "gap_bound": gap_bound / 100,
            "gap_within_bound": gap_within_bound,
            "final_adjustment": adjustment / 100,
            "expected_adjustment": expected / 100,
            "adjustment_bound": adj_bound / 100,
            "balloon_paid": table.balloon_paid / 100,
            "balloon_adjustment": balloon_adjustment / 100,
            "principal_identity": principal_identity,
            "payment_identity": payment_identity,
            "chain_identity": chain,
            "closes_at_zero": closes,
            "passed": passed,
        },
        columns=RECONCILIATION_COLUMNS,
    )


def _float_rates(terms: BatchTerms) -> FloatArray:
    """Return each period's rate as float64, ``(max periods, loans)``."""
    if terms.period_rate_num is None or terms.period_rate_den is None:
        horizon = int(terms.periods.max(initial=0))
        return np.broadcast_to(_loan_rates(terms), (horizon, terms.size)).copy()
    num, den = terms.period_rate_num, terms.period_rate_den
    if num.dtype == object or den.dtype == object:
        flat = [
            float(Fraction(int(a), int(b))) for a, b in zip(num.ravel(), den.ravel(), strict=True)
        ]
        return np.asarray(flat, dtype=np.float64).reshape(num.shape)
    return num.astype(np.float64) / den.astype(np.float64)


def _loan_rates(terms: BatchTerms) -> FloatArray:
    num, den = terms.rate_num, terms.rate_den
    if num.dtype == object or den.dtype == object or terms.needs_big_integers:
        pairs = zip(num.tolist(), den.tolist(), strict=True)
        return np.asarray([float(Fraction(int(a), int(b))) for a, b in pairs], dtype=np.float64)
    return num.astype(np.float64) / den.astype(np.float64)


@dataclass(frozen=True)
class _VariableForms:
    """The variable-rate closed form of a batch, ``(max periods, loans)``, computed once.

    ``scheduled`` holds each period's payment under its rule (structured
    batches), else None and the level payment applies.
    """

    rates: FloatArray
    balances: FloatArray
    scales: FloatArray
    accumulation: FloatArray
    scheduled: FloatArray | None

    @classmethod
    def of(cls, terms: BatchTerms, table: CentsTable) -> _VariableForms:
        b0 = terms.principal.astype(np.float64)
        rates = _float_rates(terms)
        if terms.structured:
            sched = scheduled_payments(terms, table)
            balances = variable.balances_paying(b0, rates, sched, terms.advance)
            scales = variable.balance_scales_paying(b0, rates, sched, terms.advance)
        else:
            sched = None
            level = terms.payment.astype(np.float64)
            balances = variable.balances(b0, rates, level, terms.advance)
            scales = variable.balance_scales(b0, rates, level, terms.advance)
        return cls(rates, balances, scales, variable.accumulation_factors(rates), sched)


def _closed_form_rows(
    terms: BatchTerms, table: CentsTable, forms: _VariableForms | None
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Return, for every row, the closed-form balance, its scale and ``s_k`` (cents)."""
    idx = table.loan
    if forms is not None:
        at = (table.period - 1, idx)
        return forms.balances[at], forms.scales[at], forms.accumulation[at]
    b0 = terms.principal.astype(np.float64)
    level = terms.payment.astype(np.float64)
    i_row = _loan_rates(terms)[idx]
    k = table.period.astype(np.float64)
    adv = terms.advance[idx]
    exact = recurrence.balance(b0[idx], i_row, level[idx], k, adv)
    scale = recurrence.balance_scale(b0[idx], i_row, level[idx], k, adv)
    return exact, scale, recurrence.accumulation_factor(i_row, k)


def scheduled_payments(terms: BatchTerms, table: CentsTable) -> FloatArray:
    """Return what each period was due to pay under its rule, cents, ``(max periods, loans)``.

    A structured period pays its amount plus, where it covers interest, the
    period's (rounded) interest; periods past a loan's last row are 0.
    """
    assert terms.period_payment is not None and terms.period_covers_interest is not None
    interest = np.zeros(terms.period_payment.shape, dtype=np.float64)
    interest[table.period - 1, table.loan] = table.interest
    return terms.period_payment.astype(np.float64) + np.where(
        terms.period_covers_interest, interest, 0.0
    )


def _closed_form_final(
    terms: BatchTerms, rows: npt.NDArray[np.int64], forms: _VariableForms | None
) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray]:
    """Return per loan: ``x_n``, ``s_n``, ``s_{n-1}``, the scale and ``a_n`` at its last row."""
    if forms is not None:
        cols = np.arange(terms.size)
        last = np.maximum(rows - 1, 0)
        acc = forms.accumulation
        s_prev = np.where(rows >= 2, acc[np.maximum(rows - 2, 0), cols], 0.0)
        return (
            forms.balances[last, cols],
            acc[last, cols],
            s_prev,
            forms.scales[last, cols],
            1.0 + forms.rates[last, cols],
        )
    b0 = terms.principal.astype(np.float64)
    level = terms.payment.astype(np.float64)
    i = _loan_rates(terms)
    n = rows.astype(np.float64)
    adv = terms.advance
    return (
        recurrence.balance(b0, i, level, n, adv),
        recurrence.accumulation_factor(i, n),
        recurrence.accumulation_factor(i, np.maximum(n - 1, 0)),
        recurrence.balance_scale(b0, i, level, n, adv),
        1.0 + i,
    )


def _per_loan(
    ufunc: np.ufunc,
    values: npt.NDArray[Any],
    offsets: npt.NDArray[np.int64],
    rows: npt.NDArray[np.int64],
) -> npt.NDArray[Any]:
    """Reduce each loan's contiguous run of rows with ``ufunc`` (0 for a loan with no rows)."""
    out = np.zeros(rows.size, dtype=values.dtype)
    has_rows = rows > 0
    if has_rows.any():
        out[has_rows] = ufunc.reduceat(values, offsets[:-1][has_rows])
    return out
