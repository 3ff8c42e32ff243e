"""Pictures of schedules (PNG, matplotlib's headless Agg renderer, imported only when drawing).

:func:`plot_schedule` draws any schedule-like DataFrame (a loan's, an
annuity's payout, a book's projection): on top the balance over time, below
each payment split into interest and principal as stacked bars. It needs the
columns ``closing_balance``, ``interest`` and ``principal`` (and uses
``period``, ``opening_balance`` and ``due_date`` where present). Long
schedules are drawn with one bar for each group of payments (the axis says
how many), so bars stay readable. :func:`plot_loan` adds a title that states
one loan's terms; :func:`plot_annuity` draws a payout's or an accumulation's
value and each payment's or deposit's parts, titled with its terms;
:func:`plot_projection` draws a book projection's balance over its monthly
collections stacked by source. Every
picture carries the caution in small type at its foot, and is written whole
or not at all (:func:`amort.io.files.write_atomic`).
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from amort.caution import CAUTION
from amort.errors import ExportError
from amort.io.files import write_atomic
from amort.io.xlsx import ACCENT, LIGHT_GREY
from amort.io.xlsx_book import CHART_PARTS

if TYPE_CHECKING:
    from amort.annuity import Payout
    from amort.annuity_accumulation import Accumulation
    from amort.loan import Loan

#: Default picture size in pixels (width, height) and its resolution.
SIZE = (1200, 800)
DPI = 100
#: Above this many rows, bars are grouped so that about :data:`MAX_BARS` are drawn.
MAX_BARS = 400

#: The columns a loan's picture draws: the balance, then the two stacked parts of a payment.
LOAN_COLUMNS = ("closing_balance", "principal", "interest")
#: What a loan's picture calls them.
LOAN_LABELS = ("balance", "principal", "interest")
_ACCENT, _GREY = f"#{ACCENT}", f"#{LIGHT_GREY}"


def plot_schedule(
    frame: pd.DataFrame,
    path: Path,
    *,
    title: str,
    force: bool = False,
    size: tuple[int, int] = SIZE,
    dpi: int = DPI,
    amount_label: str = "currency units",
    columns: Sequence[str] = LOAN_COLUMNS,
    labels: Sequence[str] | None = None,
    per: str = "payment",
) -> Path:
    """Draw ``frame``'s balance curve and interest/principal bars to ``path`` (.png).

    frame: one row a period, money as float64 (``closing_balance``, ``interest``,
        ``principal``; ``period`` counts from 1 and is the row number if absent).
    title: the first line of the picture; say the terms in it.
    size: width and height in pixels (the file has exactly this size).
    amount_label: the unit shown on the money axes.
    columns: the balance column, then the lower and the upper stacked part of
        each bar (default :data:`LOAN_COLUMNS`; an annuity passes its own).
        The opening value is drawn from ``opening_<name>`` when the balance
        column is ``closing_<name>``.
    labels: the names shown for those three (default :data:`LOAN_LABELS` for
        the loan columns, else the column names, spaced).
    per: what one row is (``"payment"``, ``"period"``): the horizontal axis is
        its number, and the bars' axis says the amount per one (or per group).

    An existing file is kept unless ``force``.

    >>> import pandas as pd, tempfile, pathlib
    >>> frame = pd.DataFrame({"period": [1, 2], "opening_balance": [200.0, 100.5],
    ...     "interest": [1.0, 0.5], "principal": [99.5, 100.5], "closing_balance": [100.5, 0.0]})
    >>> out = plot_schedule(frame, pathlib.Path(tempfile.mkdtemp()) / "p.png", title="Demo")
    >>> out.read_bytes()[:4]
    b'\\x89PNG'
    """
    path = Path(path)
    if path.suffix.lower() != ".png":
        raise ExportError(f"'--plot' must name a .png file (got {str(path)!r})")
    if len(columns) != 3:
        raise ExportError(f"'columns' must name a balance and two parts (got {list(columns)!r})")
    missing = [c for c in columns if c not in frame.columns]
    if missing:
        raise ExportError(f"cannot draw the schedule: it has no {', '.join(missing)} column")
    if len(frame) == 0:
        raise ExportError("cannot draw the schedule: it has no rows")
    width, height = size
    if not (200 <= width <= 8000 and 200 <= height <= 8000):
        raise ExportError(f"'size' must be 200 to 8000 pixels each way (got {width}x{height})")
    if labels is None:
        same = tuple(columns) == LOAN_COLUMNS
        labels = LOAN_LABELS if same else tuple(c.replace("_", " ") for c in columns)
    shown = tuple(labels)
    figure = _figure(frame, title, (width / dpi, height / dpi), amount_label, columns, shown, per)

    def write(tmp: Path) -> None:
        figure.savefig(tmp, format="png", dpi=dpi)

    return write_atomic(path, write, force=force)


def plot_loan(loan: Loan, path: Path, *, force: bool = False, size: tuple[int, int] = SIZE) -> Path:
    """Draw ``loan``'s schedule (see :func:`plot_schedule`) with its terms as the title."""
    return plot_schedule(loan.schedule(), path, title=loan_title(loan), force=force, size=size)


def loan_title(loan: Loan) -> str:
    """Return a one-line statement of ``loan``'s terms for a picture's title.

    >>> from amort import Loan
    >>> loan_title(Loan(principal=18_500, annual_rate="7.9%", periods=60))
    '18,500.00 at 7.9 % a year, 60 monthly payments of 374.23 in arrears'
    """
    rate = f"{(loan.annual_rate * 100).normalize():f} %"
    text = (
        f"{loan.principal:,.2f} at {rate} a year, {loan.number_of_payments:,} "
        f"{loan.frequency.value} payments"
    )
    if not loan.structured:
        text += f" of {loan.payment:,.2f}"
    text += f" in {loan.timing.value}"
    if loan.balloon:
        text += f", balloon {loan.balloon:,.2f}"
    if loan.structure.value != "level":
        text += f", {loan.structure.value}"
    return text


def plot_annuity(
    product: Payout | Accumulation,
    path: Path,
    *,
    force: bool = False,
    size: tuple[int, int] = SIZE,
    rows: int | None = None,
) -> Path:
    """Draw an annuity's value over time and each period's parts to ``path`` (.png).

    A payout's bars split each payment into the interest credited that period
    and the part drawn from the fund (``opening_value - closing_value``, below
    zero while the fund grows); an accumulation's stack each deposit and the
    interest credited, the period's growth of the value. The title states the
    terms (:func:`amort.io.annuity_text.annuity_title`). ``rows``: the payments
    of a perpetuity to draw (default one year's).
    """
    from amort.annuity import Payout
    from amort.io.annuity_text import annuity_title, chart_parts

    frame = product.schedule(rows) if isinstance(product, Payout) else product.schedule()
    parts, columns, labels = chart_parts(frame)
    return plot_schedule(
        parts,
        path,
        title=annuity_title(product),
        force=force,
        size=size,
        columns=columns,
        labels=labels,
        per="period",
    )


def _figure(
    frame: pd.DataFrame,
    title: str,
    inches: tuple[float, float],
    unit: str,
    columns: Sequence[str],
    labels: Sequence[str],
    per: str,
) -> Any:
    from matplotlib.figure import Figure  # no pyplot: no global state, no GUI backend

    width, height = inches
    balance, lower, upper = columns
    balance_label, lower_label, upper_label = labels
    opening_column = "opening_" + balance.removeprefix("closing_")
    rows = len(frame)
    period = (
        frame["period"].to_numpy(dtype=np.float64)
        if "period" in frame.columns
        else np.arange(1, rows + 1, dtype=np.float64)
    )
    closing = frame[balance].to_numpy(dtype=np.float64)
    opening = float(frame[opening_column].iloc[0]) if opening_column in frame.columns else None
    figure = Figure(figsize=(width, height), layout="constrained")
    top, bottom = figure.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    xs, ys = period, closing
    if opening is not None:
        xs = np.concatenate([[period[0] - 1], period])
        ys = np.concatenate([[opening], closing])
    top.plot(xs, ys, color=_ACCENT, linewidth=2.2)
    top.fill_between(xs, ys, color=_ACCENT, alpha=0.08, linewidth=0)
    top.set_ylabel(f"{balance_label} ({unit})")
    top.set_ylim(bottom=min(0.0, float(np.nanmin(ys))))
    top.grid(True, color="#E6E6E6", linewidth=0.8)

    group = max(1, math.ceil(rows / MAX_BARS))
    interest = frame[upper].to_numpy(dtype=np.float64)
    principal = frame[lower].to_numpy(dtype=np.float64)
    if group > 1:
        cut = np.arange(0, rows, group)
        interest = np.add.reduceat(interest, cut)
        principal = np.add.reduceat(principal, cut)
        centres = np.add.reduceat(period, cut) / np.diff(np.append(cut, rows))
        label = f"amount per {group} {per}s ({unit})"
    else:
        centres, label = period, f"amount per {per} ({unit})"
    # Gaps between bars only while they are few; many thin gaps alias into stripes.
    width_bar = group * (0.8 if len(centres) <= 80 else 1.0)
    lifted = np.maximum(principal, 0)
    if len(centres) <= 80:
        bottom.bar(
            centres, principal, width=width_bar, color=_ACCENT, linewidth=0, label=lower_label
        )
        bottom.bar(
            centres,
            interest,
            width=width_bar,
            bottom=lifted,
            color=_GREY,
            linewidth=0,
            label=upper_label,
        )
    else:
        # Touching bars drawn as two filled step outlines: the same picture, two shapes
        # instead of thousands of rectangles (a 360-row schedule draws ~15x faster).
        edges = np.append(centres - width_bar / 2, centres[-1] + width_bar / 2)
        bottom.stairs(principal, edges, fill=True, color=_ACCENT, linewidth=0, label=lower_label)
        bottom.stairs(
            lifted + interest,
            edges,
            baseline=lifted,
            fill=True,
            color=_GREY,
            linewidth=0,
            label=upper_label,
        )
    stacked = np.maximum(principal, 0) + np.maximum(interest, 0)
    bottom.set_ylim(top=max(1.0, float(np.nanmax(stacked))) * 1.18)  # room for the legend
    bottom.set_ylabel(label)
    bottom.set_xlabel(f"{per} number")
    bottom.legend(loc="upper left", frameon=False, ncols=2)
    bottom.grid(True, axis="y", color="#E6E6E6", linewidth=0.8)
    _finish(figure, top, bottom, title=title, width=width)
    return figure


#: The stacked parts of a projected month's collections: column and label, bottom first.
PROJECTION_PARTS = CHART_PARTS
# Their colours: the accent, a lighter accent, grey, light grey (one accent colour).
_PART_COLOURS = (_ACCENT, "#7FA89A", "#595959", _GREY)


def plot_projection(
    monthly: pd.DataFrame,
    path: Path,
    *,
    title: str,
    force: bool = False,
    size: tuple[int, int] = SIZE,
    dpi: int = DPI,
    amount_label: str = "currency units",
) -> Path:
    """Draw a book projection's balance curve over its stacked monthly collections (.png).

    monthly: one row a month (:func:`amort.io.xlsx_book.projection_by_month`):
        ``month`` (1 = the month after the as-of date), ``opening_balance``,
        ``closing_balance`` and the parts of :data:`PROJECTION_PARTS` (currency
        units, float64).
    title: the first line of the picture; say the book and the assumptions in it.

    On top the projected balance at each month's end (from the opening balance at
    month 0); below each month's collections stacked as interest, scheduled
    principal, prepaid and recovered. An existing file is kept unless ``force``.

    >>> import pandas as pd, tempfile, pathlib
    >>> monthly = pd.DataFrame({"month": [1, 2], "opening_balance": [200.0, 99.0],
    ...     "closing_balance": [99.0, 0.0], "interest": [2.0, 1.0], "principal": [100.0, 99.0],
    ...     "prepayment": [1.0, 0.0], "recovery": [0.0, 0.0]})
    >>> out = plot_projection(monthly, pathlib.Path(tempfile.mkdtemp()) / "b.png", title="Demo")
    >>> out.read_bytes()[:4]
    b'\\x89PNG'
    """
    path = Path(path)
    if path.suffix.lower() != ".png":
        raise ExportError(f"'--plot' must name a .png file (got {str(path)!r})")
    needed = ["month", "opening_balance", "closing_balance", *(c for c, _ in PROJECTION_PARTS)]
    missing = [c for c in needed if c not in monthly.columns]
    if missing:
        raise ExportError(f"cannot draw the projection: it has no {', '.join(missing)} column")
    if len(monthly) == 0:
        raise ExportError("cannot draw the projection: it has no months")
    width, height = size
    if not (200 <= width <= 8000 and 200 <= height <= 8000):
        raise ExportError(f"'size' must be 200 to 8000 pixels each way (got {width}x{height})")
    figure = _projection_figure(monthly, title, (width / dpi, height / dpi), amount_label)

    def write(tmp: Path) -> None:
        figure.savefig(tmp, format="png", dpi=dpi)

    return write_atomic(path, write, force=force)


def _projection_figure(
    monthly: pd.DataFrame, title: str, inches: tuple[float, float], unit: str
) -> Any:
    from matplotlib.figure import Figure

    width, height = inches
    month = monthly["month"].to_numpy(dtype=np.float64)
    balance = monthly["closing_balance"].to_numpy(dtype=np.float64)
    xs = np.concatenate([[month[0] - 1], month])
    ys = np.concatenate([[float(monthly["opening_balance"].iloc[0])], balance])
    figure = Figure(figsize=(width, height), layout="constrained")
    top, bottom = figure.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    top.plot(xs, ys, color=_ACCENT, linewidth=2.2)
    top.fill_between(xs, ys, color=_ACCENT, alpha=0.08, linewidth=0)
    top.set_ylabel(f"projected balance ({unit})")
    top.set_ylim(bottom=0.0)
    top.grid(True, color="#E6E6E6", linewidth=0.8)
    # Touching monthly columns as filled steps: one shape a part, however many months.
    edges = np.append(month - 0.5, month[-1] + 0.5)
    base = np.zeros(len(monthly))
    for (column, label), colour in zip(PROJECTION_PARTS, _PART_COLOURS, strict=True):
        part = np.maximum(monthly[column].to_numpy(dtype=np.float64), 0.0)
        bottom.stairs(
            base + part, edges, baseline=base, fill=True, color=colour, linewidth=0, label=label
        )
        base = base + part
    bottom.set_ylim(top=max(1.0, float(np.nanmax(base))) * 1.25)  # room for the legend
    bottom.set_ylabel(f"collections per month ({unit})")
    bottom.set_axisbelow(True)  # the grid behind the columns
    bottom.set_xlabel("month after the as-of date")
    bottom.legend(loc="upper right", frameon=False, ncols=4)
    bottom.grid(True, axis="y", color="#E6E6E6", linewidth=0.8)
    _finish(figure, top, bottom, title=title, width=width)
    return figure


def _finish(figure: Any, top: Any, bottom: Any, *, title: str, width: float) -> None:
    """Money tick labels, plain axes, whole-number x ticks, the title and the caution."""
    from matplotlib.ticker import FuncFormatter, MaxNLocator

    money = FuncFormatter(lambda value, _pos: f"{value:,.0f}")
    for axes in (top, bottom):
        axes.yaxis.set_major_formatter(money)
        axes.spines[["top", "right"]].set_visible(False)
    bottom.xaxis.set_major_locator(MaxNLocator(integer=True))
    figure.suptitle(title, fontsize=12, color="#222222")
    caution = "\n".join(textwrap.wrap(CAUTION, width=max(60, int(width * 16))))
    bottom.annotate(
        caution,
        xy=(0, 0),
        xycoords="figure fraction",
        xytext=(6, 4),
        textcoords="offset points",
        fontsize=7,
        color="#595959",
        va="bottom",
    )
