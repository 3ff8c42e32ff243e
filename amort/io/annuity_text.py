"""What an annuity's exports say: its terms in one line, its closed form in words and figures.

Shared by the workbook (:mod:`amort.io.xlsx_annuity`) and the picture
(:func:`amort.io.png.plot_annuity`) of a :class:`~amort.annuity.Payout` or an
:class:`~amort.annuity_accumulation.Accumulation`:

- :func:`annuity_title`: the terms in one line, for titles;
- :func:`chart_parts`: the two parts each period's bar is drawn from (a
  payout's payment: the part drawn from the fund and the interest credited;
  an accumulation's growth: the deposit and the interest credited);
- :func:`method_lines`: the closed form used, in words and symbols (the forms
  of :mod:`amort.annuity_forms`);
- :func:`closed_form_figures`: that closed form evaluated for the terms
  (float64, the engine's closed form), so a reader can recompute the solved
  figure by hand.

Nothing here writes a file or imports openpyxl or matplotlib.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from amort import recurrence
from amort.annuity import Payout
from amort.annuity_accumulation import Accumulation
from amort.annuity_forms import factors
from amort.errors import ExportError

Annuity = Payout | Accumulation


def flow_column(product: Annuity) -> str:
    """Return the schedule's flow column: ``"payment"`` (a payout) or ``"deposit"``."""
    return "payment" if isinstance(product, Payout) else "deposit"


def _rate_text(rate: Any) -> str:
    return f"{(rate * 100).normalize():f} %"


def annuity_title(product: Annuity) -> str:
    """Return a one-line statement of an annuity's terms, for titles of sheets and pictures.

    >>> annuity_title(Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual"))
    'Payout of 100,000.00 at 5 % a year: 10 annual payments of 12,950.46 in arrears'
    >>> annuity_title(Accumulation(target=20_000, annual_rate="4%", periods=4,
    ...                            frequency="quarterly", timing="advance"))
    'Accumulation to 20,000.00 at 4 % a year: 4 quarterly deposits of 4,876.85 in advance'
    """
    rate = _rate_text(product.annual_rate)
    frequency, timing = product.frequency.value, product.timing.value
    if isinstance(product, Payout):
        assert product.fund is not None and product.payment is not None
        first = "level " if product.growth is None and product.step is None else "first "
        if product.perpetuity:
            text = (
                f"Perpetuity of {product.fund:,.2f} at {rate} a year: {frequency} payments, "
                f"{first}{product.payment:,.2f}, in {timing} for ever"
            )
        else:
            count = product.number_of_payments or 0
            text = (
                f"Payout of {product.fund:,.2f} at {rate} a year: {count:,} {frequency} "
                f"payments of {product.payment:,.2f} in {timing}"
            )
        if product.defer:
            text += f", after {product.defer:,} periods deferred"
        if product.residual:
            text += f", leaving {product.residual:,.2f}"
    else:
        assert product.target is not None and product.deposit is not None
        text = (
            f"Accumulation to {product.target:,.2f} at {rate} a year: "
            f"{product.number_of_deposits:,} {frequency} deposits of {product.deposit:,.2f} "
            f"in {timing}"
        )
        if product.balance:
            text += f", from a balance of {product.balance:,.2f}"
    every = product.growth_every
    if product.growth is not None:
        text += f", growing {_rate_text(product.growth)} every {every} {flow_column(product)}s"
    elif product.step is not None:
        text += f", changing by {product.step:,.2f} every {every} {flow_column(product)}s"
    return text


def chart_parts(frame: pd.DataFrame) -> tuple[pd.DataFrame, tuple[str, str, str], tuple[str, ...]]:
    """Return an annuity frame ready to draw, the columns to draw and their labels.

    The columns are the value, then the lower and upper part of each bar. A
    payout's payment splits into ``drawn_from_fund`` (``opening_value -
    closing_value``, in exact cents; below zero while the fund grows) and
    ``interest_credited``; an accumulation's growth into ``deposit`` and
    ``interest_credited``.

    >>> frame = Payout(fund=1_000, annual_rate="5%", periods=2, frequency="annual").schedule()
    >>> parts, columns, labels = chart_parts(frame)
    >>> parts["drawn_from_fund"].tolist(), columns[1], labels[1]
    ([487.8, 512.2], 'drawn_from_fund', 'drawn from the fund')
    """
    value = ("closing_value", "value")
    if "deposit" in frame.columns:
        columns = (value[0], "deposit", "interest_credited")
        return frame, columns, (value[1], "deposit", "interest credited")
    if "payment" not in frame.columns:
        raise ExportError("cannot draw the annuity: its schedule has no payment or deposit column")
    opening = np.round(frame["opening_value"].to_numpy(dtype=np.float64) * 100).astype(np.int64)
    closing = np.round(frame["closing_value"].to_numpy(dtype=np.float64) * 100).astype(np.int64)
    parts = frame.assign(drawn_from_fund=(opening - closing).astype(np.float64) / 100.0)
    columns = (value[0], "drawn_from_fund", "interest_credited")
    return parts, columns, (value[1], "drawn from the fund", "interest credited")


def closed_form_figures(product: Annuity) -> dict[str, float | int | None]:
    """Return the closed form's parts for ``product`` (float64, currency units).

    ``weight`` W and ``step_weight`` S are the time-0 values of a unit first
    flow and of a unit step (:func:`amort.annuity_forms.factors`, the engine's
    closed form, over the schedule's number of flows; a perpetuity's are
    infinite sums). A payout's ``value`` is ``P_1 W + h S + R v^N`` at time 0
    (N the horizon in periods), an accumulation's ``(B_0 + D_1 W + h S) (1 + i)^n``
    at the end; ``exact_flow`` is the first flow that solves the closed form
    before it is rounded to the cent.

    >>> figures = closed_form_figures(Payout(fund=100_000, annual_rate="5%", periods=10,
    ...                                      frequency="annual"))
    >>> round(figures["weight"], 9), round(figures["exact_flow"], 4)
    (7.721734929, 12950.4575)
    """
    i = float(product.periodic_rate)
    growth = float(product.growth or 0)
    every = int(product.growth_every or 1)
    h = float(product.step or 0)
    if isinstance(product, Payout):
        count = product.number_of_payments
        payments = np.inf if count is None else count
        unit = factors(
            i, payments, every=every, growth=growth, defer=product.defer, advance=product.advance
        )
        w, s = float(unit.weight), float(unit.step_weight)
        horizon = None if count is None else product.defer + count
        tail = 0.0
        if horizon is not None and product.residual:
            tail = float(product.residual) * float(recurrence.discount(i, horizon))
        value = float(product.payment or 0) * w + (h * s if h else 0.0) + tail
        exact_flow = (float(product.fund or 0) - tail - (h * s if h else 0.0)) / w
        return {"weight": w, "step_weight": s, "value": value, "exact_flow": exact_flow,
                "periods": horizon, "residual_value": tail}  # fmt: skip
    n = int(product.periods or 0)
    unit = factors(i, n, every=every, growth=growth, advance=product.advance)
    w, s = float(unit.weight), float(unit.step_weight)
    grown = float(recurrence.growth(i, n))
    balance = float(product.balance)
    value = (balance + float(product.deposit or 0) * w + (h * s if h else 0.0)) * grown
    exact_flow = (float(product.target or 0) / grown - balance - (h * s if h else 0.0)) / w
    return {"weight": w, "step_weight": s, "value": value, "exact_flow": exact_flow,
            "periods": n, "residual_value": None}  # fmt: skip


def method_lines(product: Annuity) -> list[str]:
    """Return the closed form behind ``product``'s schedule in words and symbols, one line each.

    >>> method_lines(Payout(fund=100_000, annual_rate="5%", periods=10, frequency="annual"))[1]
    'Level payments P for n periods: F = P a(n, i) + R v^n, a(n, i) = (1 - v^n) / i.'
    """
    payout = isinstance(product, Payout)
    g, h, e = product.growth, product.step, int(product.growth_every or 1)
    lines = [
        "A payout is the loan recurrence with the fund as the balance: V_k = (1 + i) V_{k-1} - "
        "P_k in arrears, V_k = (1 + i) (V_{k-1} - P_k) in advance (annuity-due); i is the "
        "periodic rate and v = 1 / (1 + i)."
        if payout
        else "An accumulation adds deposits to a balance: V_k = (1 + i) V_{k-1} + D_k in "
        "arrears, V_k = (1 + i) (V_{k-1} + D_k) in advance; i is the periodic rate and "
        "v = 1 / (1 + i)."
    ]
    if isinstance(product, Payout) and product.perpetuity:
        lines.append(
            "For ever: a level payment P is worth P / i in arrears, P (1 + i) / i in advance; "
            "with growth W = a(e, i) / (1 - y), finite only while a step's growth stays below "
            "a step's interest."
        )
    elif payout:
        lines.append(
            "Level payments P for n periods: F = P a(n, i) + R v^n, a(n, i) = (1 - v^n) / i."
        )
    else:
        lines.append(
            "Level deposits D for n periods: T = B_0 (1 + i)^n + D s(n, i), s(n, i) = "
            "((1 + i)^n - 1) / i; in general T = (B_0 + D_1 W + h S) (1 + i)^n."
        )
    if product.advance:
        lines.append(
            "In advance every weight is multiplied by 1 + i: a-due(n, i) = (1 + i) a(n, i), "
            "s-due(n, i) = (1 + i) s(n, i)."
        )
    if isinstance(product, Payout) and product.defer:
        lines.append(
            f"Deferred d = {product.defer:,} periods: every weight is multiplied by v^d, and "
            "the residual is discounted over the horizon N = d + n."
        )
    if g is not None and e == 1:
        lines.append(
            f"Each {'payment' if payout else 'deposit'} grows by g = 1 + growth: W = (1 - (g v)^n)"
            " / (1 + i - g), or n v when g = 1 + i (the resonance case)."
        )
    elif g is not None:
        lines.append(
            f"Growth g = 1 + growth every e = {e} flows, n = J e + r: W = a(e, i) (1 - y^J) / "
            "(1 - y) + y^J a(r, i), x = v^e, y = g x (a(e, i) J + a(r, i) when y = 1)."
        )
    if h is not None:
        lines.append(
            f"A step h every e = {e} flows adds h S: S = a(e, i) (Ia)_(J-1) + J x^J a(r, i), "
            "(Ia)_m = sum of j x^j for j <= m, the increasing annuity at the block rate "
            "(1 + i)^e - 1."
        )
    lines.append(_solved_line(product))
    lines.append(
        "Computed without cancellation: every 1 - v^n is -expm1(-n log1p(i)). The schedule's "
        "cents are exact (integer cents, the periodic rate an exact fraction), and the "
        "Reconciliation sheet checks them against this closed form row by row."
    )
    return lines


def _solved_line(product: Annuity) -> str:
    mode = product.rounding.value
    if isinstance(product, Payout):
        return {
            "payment": f"Solved for the payment: P_1 = (F - R v^N - h S) / W, rounded {mode} to "
            "the cent; the last payment leaves exactly the residual.",
            "fund": "Solved for the fund: F = P_1 W + h S + R v^N, rounded up to the cent so "
            "that it suffices.",
            "periods": "Solved for the horizon: as many whole payments as the fund affords, "
            "the last one smaller (level, in arrears: n = log(P / (P - i F)) / log(1 + i)).",
            "annual_rate": "Solved for the rate: the periodic rate i at which P_1 W + h S + "
            "R v^N equals the fund (a bracketed search), quoted as i x payments a year.",
        }[str(product.solve_for)]
    return {
        "deposit": f"Solved for the deposit: D_1 = (T v^n - B_0 - h S) / W, rounded {mode} to "
        "the cent; the last deposit is the smallest that reaches the target.",
        "target": "Solved for the target: the value the deposits reach (the closed form's "
        "value is shown beside it).",
        "periods": "Solved for the number of deposits: the first period in which the value "
        "reaches the target; the last deposit is the smallest that does.",
        "annual_rate": "Solved for the rate: the periodic rate i at which (B_0 + D_1 W + h S) "
        "(1 + i)^n equals the target (a bracketed search), quoted as i x deposits a year.",
    }[str(product.solve_for)]
