"""Seeded synthetic loan books of an invented lender, in the book file layout (format 1).

:func:`synthetic_book` draws a book of any size for Tallowmere Cooperative Lending, an
invented lender, with invented borrowers: vehicle loans (some with a balloon), home
loans (some on a variable rate: ``rate_index`` and ``rate_margin``), personal loans
(some with the lender's own rounded payment), equipment loans (quarterly, level or
equal principal), farm loans (bullet operating loans and semiannual equal-principal
loans), weekly and biweekly micro loans, business loans with interest-only months,
and a few semimonthly staff loans and loans with a business-day rule. Every value is
text, as a CSV file holds it, so the book goes through the same validation as a file.
Nothing here describes a real institution or person; the figures are for demos and
benchmarks only.
"""

from __future__ import annotations

from datetime import date

import numpy as np
import pandas as pd

__all__ = ["LENDER", "synthetic_book"]

LENDER = "Tallowmere Cooperative Lending"

_GIVEN = (
    "Ada",
    "Bram",
    "Cleo",
    "Dario",
    "Edda",
    "Fenn",
    "Greta",
    "Hollis",
    "Ines",
    "Jory",
    "Kasia",
    "Lorne",
    "Mabry",
    "Nils",
    "Odile",
    "Pell",
    "Quinn",
    "Rhea",
    "Soren",
    "Talia",
    "Ulric",
    "Vesna",
    "Wren",
    "Yara",
    "Zeb",
    "Alder",
    "Briony",
    "Cass",
    "Delphine",
    "Emrys",
)
_FAMILY = (
    "Marrow",
    "Quillon",
    "Ashcombe",
    "Brindlecott",
    "Callowby",
    "Dunmere",
    "Elsworth",
    "Fallowfield",
    "Garrowby",
    "Hemsleigh",
    "Ivesdale",
    "Jessamond",
    "Kettleby",
    "Larkholt",
    "Merriden",
    "Norrington",
    "Oakhurst",
    "Pellham",
    "Quarrendon",
    "Rushmere",
    "Saltmarsh",
    "Thistlewood",
    "Upcott",
    "Varrow",
    "Wetherden",
    "Yarncliffe",
)
_TRADES = (
    "Joinery",
    "Dairy",
    "Haulage",
    "Orchards",
    "Bakery",
    "Forge",
    "Nurseries",
    "Printworks",
    "Grain",
    "Store",
    "Boatyard",
    "Cidery",
    "Kilnworks",
    "Tannery",
    "Mill",
    "Creamery",
)

#: Each product: share of the book, segment label, and its draw (see _draw).
_PRODUCTS = (
    ("vehicle", 0.28),
    ("home", 0.15),
    ("personal", 0.24),
    ("equipment", 0.10),
    ("farm", 0.08),
    ("micro", 0.10),
    ("business", 0.03),
    ("staff", 0.003),
    ("trade", 0.01),
)


def _text(cents: np.ndarray) -> pd.Series:
    whole = pd.Series(cents // 100).astype("str")
    part = pd.Series(cents % 100).astype("str").str.zfill(2)
    return whole + "." + part


def synthetic_book(
    rows: int,
    *,
    seed: int = 7,
    as_of: date = date(2025, 6, 30),
    per_loan_share: float = 1.0,
    products: tuple[str, ...] | None = None,
) -> pd.DataFrame:
    """Return a synthetic book of ``rows`` loans (text columns of book format 1).

    The same ``seed`` gives the same book. Disbursements run up to 30 years before
    ``as_of`` (so some loans are repaid) and a few fall just after it.
    ``per_loan_share`` scales the share of semimonthly and business-day loans (the
    ones built one by one); 0 leaves them out. ``products`` keeps only the named
    products (vehicle, home, personal, equipment, farm, micro, business, staff, trade).

    >>> book = synthetic_book(5, seed=1)
    >>> list(book.columns[:5]), len(book)
    (['loan_id', 'borrower', 'segment', 'principal', 'annual_rate'], 5)
    """
    rng = np.random.default_rng(seed)
    names = [p for p, _ in _PRODUCTS]
    share = np.array(
        [
            s
            * (per_loan_share if p in ("staff", "trade") else 1.0)
            * (1.0 if products is None or p in products else 0.0)
            for p, s in _PRODUCTS
        ]
    )
    product = rng.choice(len(names), size=rows, p=share / share.sum())
    out = {
        "principal": np.zeros(rows, dtype=np.int64),
        "rate_bp": np.zeros(rows, dtype=np.int64),  # hundredths of a percent
        "term": np.zeros(rows, dtype=np.int64),
        "frequency": np.full(rows, "monthly", dtype=object),
        "day_count": np.full(rows, "equal", dtype=object),
        "structure": np.full(rows, "level", dtype=object),
        "interest_only": np.zeros(rows, dtype=np.int64),
        "balloon": np.zeros(rows, dtype=np.int64),
        "payment": np.zeros(rows, dtype=np.int64),
        "fees": np.zeros(rows, dtype=np.int64),
        "rate_index": np.full(rows, "", dtype=object),
        "margin_bp": np.full(rows, -1, dtype=np.int64),
        "business_days": np.full(rows, "", dtype=object),
        "months": np.ones(rows, dtype=np.int64),  # months a period (0: weeks)
    }
    for code, name in enumerate(names):
        at = np.flatnonzero(product == code)
        if at.size:
            _draw(name, at, rng, out)
    _dates(rows, rng, out, as_of)
    business = np.isin(product, [names.index(p) for p in ("equipment", "farm", "business")])
    given = rng.choice(_GIVEN, rows)
    family = rng.choice(_FAMILY, rows)
    trade = rng.choice(_TRADES, rows)
    borrower = np.where(business, family + " " + trade, given + " " + family)
    frame = pd.DataFrame(
        {
            "loan_id": pd.Series(np.arange(10_001, 10_001 + rows)).astype("str").radd("TCL-"),
            "borrower": borrower,
            "segment": np.asarray(names, dtype=object)[product],
            "principal": _text(out["principal"]),
            "annual_rate": _text(out["rate_bp"]),
            "term": pd.Series(out["term"]).astype("str"),
            "frequency": out["frequency"],
            "disbursed_on": out["disbursed_on"],
            "first_due_on": out["first_due_on"],
            "day_count": out["day_count"],
            "structure": out["structure"],
            "interest_only": np.where(
                out["interest_only"] > 0, out["interest_only"].astype(str), ""
            ),
            "balloon": np.where(out["balloon"] > 0, _text(out["balloon"]), ""),
            "payment": np.where(out["payment"] > 0, _text(out["payment"]), ""),
            "rate_index": out["rate_index"],
            "rate_margin": np.where(out["margin_bp"] >= 0, _text(out["margin_bp"]), ""),
            "fees": np.where(out["fees"] > 0, _text(out["fees"]), ""),
            "business_days": out["business_days"],
        }
    )
    return frame.astype("str")


def _pick(rng: np.random.Generator, values: list[int] | tuple[int, ...], size: int) -> np.ndarray:
    return rng.choice(np.asarray(values, dtype=np.int64), size)


def _draw(name: str, at: np.ndarray, rng: np.random.Generator, out: dict[str, np.ndarray]) -> None:
    """Fill the product's loans ``at`` with its terms (amounts in cents, rates in bp)."""
    n = at.size
    unit = lambda lo, hi, step: rng.integers(lo // step, hi // step + 1, n) * step  # noqa: E731
    if name == "vehicle":
        out["principal"][at] = unit(8_000, 45_000, 50) * 100
        out["rate_bp"][at] = unit(590, 1190, 5)
        out["term"][at] = _pick(rng, (36, 48, 60, 72), n)
        out["day_count"][at] = np.where(rng.random(n) < 0.3, "actual/365", "equal")
        with_balloon = rng.random(n) < 0.2
        out["balloon"][at] = np.where(
            with_balloon, out["principal"][at] * _pick(rng, (25, 30, 35, 40), n) // 10_000 * 100, 0
        )
    elif name == "home":
        out["principal"][at] = unit(90_000, 480_000, 1_000) * 100
        out["term"][at] = _pick(rng, (180, 240, 300, 360), n)
        out["day_count"][at] = rng.choice(
            np.array(["30/360", "actual/365", "equal"], object), n, p=[0.5, 0.3, 0.2]
        )
        variable = rng.random(n) < 0.4
        margin = unit(150, 250, 5)
        out["rate_bp"][at] = np.where(variable, 425 + margin, unit(425, 750, 5))
        out["margin_bp"][at] = np.where(variable, margin, -1)
        out["rate_index"][at] = np.where(variable, "TCL base", "")
        out["fees"][at] = out["principal"][at] // 100 // 100 * 100
    elif name == "personal":
        out["principal"][at] = unit(1_500, 25_000, 50) * 100
        out["rate_bp"][at] = unit(890, 1990, 10)
        out["term"][at] = unit(12, 60, 6)
        rounded = rng.random(n) < 0.05
        # The lender's own payment: the closed form rounded up to a whole unit.
        i = out["rate_bp"][at] / 120_000
        pay = out["principal"][at] * i / (1 - (1 + i) ** -out["term"][at].astype(float))
        out["payment"][at] = np.where(rounded, (np.ceil(pay / 100) + 1).astype(np.int64) * 100, 0)
    elif name == "equipment":
        out["principal"][at] = unit(20_000, 250_000, 500) * 100
        out["rate_bp"][at] = unit(600, 1000, 5)
        out["term"][at] = unit(8, 28, 4)
        out["frequency"][at] = "quarterly"
        out["months"][at] = 3
        out["day_count"][at] = "30/360"
        straight = rng.random(n) < 0.5
        out["structure"][at] = np.where(straight, "equal-principal", "level")
        out["balloon"][at] = np.where(
            ~straight & (rng.random(n) < 0.3), out["principal"][at] // 10 // 100 * 100, 0
        )
    elif name == "farm":
        out["principal"][at] = unit(50_000, 300_000, 1_000) * 100
        out["rate_bp"][at] = unit(600, 900, 5)
        bullet = rng.random(n) < 0.5
        out["structure"][at] = np.where(bullet, "bullet", "equal-principal")
        out["term"][at] = np.where(bullet, 12, unit(10, 20, 2))
        out["frequency"][at] = np.where(bullet, "monthly", "semiannual")
        out["months"][at] = np.where(bullet, 1, 6)
        out["day_count"][at] = np.where(bullet, "actual/360", "actual/actual-isda")
    elif name == "micro":
        out["principal"][at] = unit(500, 5_000, 50) * 100
        out["rate_bp"][at] = unit(1400, 2600, 25)
        weekly = rng.random(n) < 0.5
        out["frequency"][at] = np.where(weekly, "weekly", "biweekly")
        out["months"][at] = 0
        out["term"][at] = np.where(weekly, unit(26, 104, 13), unit(13, 52, 13))
    elif name == "business":
        out["principal"][at] = unit(50_000, 400_000, 1_000) * 100
        out["rate_bp"][at] = unit(700, 1000, 5)
        out["term"][at] = _pick(rng, (84, 96, 120), n)
        out["interest_only"][at] = 12
        out["day_count"][at] = "actual/360"
    elif name == "staff":
        out["principal"][at] = unit(1_000, 8_000, 100) * 100
        out["rate_bp"][at] = 300
        out["frequency"][at] = "semimonthly"
        out["months"][at] = -1
        out["term"][at] = unit(24, 48, 12)
    else:  # "trade": a level loan whose due dates move off weekends
        out["principal"][at] = unit(5_000, 30_000, 100) * 100
        out["rate_bp"][at] = unit(700, 1200, 10)
        out["term"][at] = unit(24, 60, 12)
        out["business_days"][at] = "following"


def _dates(rows: int, rng: np.random.Generator, out: dict[str, np.ndarray], as_of: date) -> None:
    """Disbursement and first due dates: regular first periods mostly, some odd ones."""
    end = np.datetime64(as_of, "D")
    months = out["months"]
    span_days = np.where(months > 0, months * 30.44, np.where(months == 0, 10.0, 15.2))
    life = np.minimum(out["term"] * span_days * 1.3, 30 * 365).astype(np.int64) + 30
    ago = (rng.random(rows) * life).astype(np.int64) - 20  # a few after the as-of date
    start = end - ago.astype("m8[D]")
    first = np.full(rows, np.datetime64("NaT"), dtype="M8[D]")
    odd = (rng.random(rows) < 0.3) & (months > 0)
    # An odd first period: due on the 1st of the month after next.
    month_after = (start.astype("M8[M]") + 2).astype("M8[D]")
    first[odd] = month_after[odd]
    semi = months < 0
    if semi.any():
        # Semimonthly staff loans: disbursed on the 1st or 15th, due half a month later.
        month = start[semi].astype("M8[M]").astype("M8[D]")
        late = rng.random(int(semi.sum())) < 0.5
        start[semi] = np.where(late, month + np.timedelta64(14, "D"), month)
        first[semi] = np.where(
            late, (month.astype("M8[M]") + 1).astype("M8[D]"), month + np.timedelta64(14, "D")
        )
    out["disbursed_on"] = np.datetime_as_string(start).astype(object)
    out["first_due_on"] = np.where(np.isnat(first), "", np.datetime_as_string(first)).astype(object)


#: Every day count and frequency a book may name (semimonthly runs one loan at a time).
DAY_COUNTS = (
    "equal",
    "30/360",
    "30/360-bond",
    "30e/360",
    "30e/360-isda",
    "actual/360",
    "actual/365",
    "actual/actual-isda",
)
FREQUENCIES = (
    "weekly",
    "biweekly",
    "semimonthly",
    "monthly",
    "bimonthly",
    "quarterly",
    "semiannual",
    "annual",
)


_ROLLS = ("following", "modified-following", "preceding")


def varied_book(rows: int, *, seed: int = 1) -> pd.DataFrame:
    """Return a book that mixes every convention the layout allows (for checks, not demos).

    Each row draws a day count, a frequency, a structure (level twice as often),
    interest-only payments, a balloon, the lender's own payment, a zero rate or a rate
    with six decimals, a disbursement at a month end, and an odd first period; some
    rows break the rules the layout imposes on such terms and are refused by it.

    >>> len(varied_book(20, seed=3))
    20
    """
    rng = np.random.default_rng(seed)
    out = []
    for k in range(rows):
        frequency = str(rng.choice(FREQUENCIES[:2] + FREQUENCIES[3:]))
        if rng.random() < 0.03:
            frequency = "semimonthly"
        structure = str(rng.choice(["level", "level", "equal-principal", "bullet"]))
        term = int(rng.integers(1, 80))
        only = (
            int(rng.integers(0, min(term, 6)))
            if structure != "bullet" and rng.random() < 0.3
            else 0
        )
        cents = int(rng.integers(100, 5_000_000))
        kind = rng.random()
        rate = (
            0
            if kind < 0.05
            else int(rng.integers(1, 3000)) * 1000
            if kind < 0.7
            else int(rng.integers(1, 25_000_000))
        )
        start = np.datetime64("2020-01-01") + int(rng.integers(0, 1500))
        if rng.random() < 0.3:
            start = (start.astype("M8[M]") + 1).astype("M8[D]") - 1
        if frequency == "semimonthly":
            start = start.astype("M8[M]").astype("M8[D]")
        first = ""
        if rng.random() < 0.5 and frequency != "semimonthly":
            first = str(start + int(rng.integers(1, 120)))
        balloon = ""
        if structure != "bullet" and rng.random() < 0.2:
            balloon = f"{int(cents * rng.random() * 0.5) / 100:.2f}"
        payment = ""
        if structure == "level" and only == 0 and rng.random() < 0.1:
            payment = f"{cents / 100 / term * 1.3 + 1:.2f}"
        out.append(
            {
                "loan_id": f"V-{k + 1:05d}",
                "principal": f"{cents / 100:.2f}",
                "annual_rate": f"{rate / 1e6:.6f}",
                "term": str(term),
                "frequency": frequency,
                "disbursed_on": str(start),
                "first_due_on": first,
                "day_count": str(rng.choice(DAY_COUNTS)) if frequency != "semimonthly" else "equal",
                "structure": structure,
                "interest_only": str(only),
                "balloon": balloon,
                "payment": payment,
                "business_days": str(rng.choice(_ROLLS)) if rng.random() < 0.06 else "",
                "holidays": "US" if rng.random() < 0.01 else "",
            }
        )
    return pd.DataFrame(out).astype("str")
