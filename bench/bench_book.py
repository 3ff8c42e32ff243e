"""Bench: book positions for a million loans, and a 100,000-loan x 360-month projection.

Builds seeded synthetic books of the invented lender (amort.book_synth) and times, in
the same run:

- positions as of 2025-06-30 for ``--loans`` loans (default 1,000,000; the demo
  book's mix of products, day counts and structures, without the loans built one by
  one): validation and positions separately, the first run and the best of
  ``--repeat``; the peak memory of positions (tracemalloc, on a separate untimed run)
  and the process's maximum resident set size; and the rate of the per-loan path
  (semimonthly loans, built one by one as amort.Loan);
- the projection (150 % PSA, 1 % CDR, 40 % recovery after 6 months) of
  ``--projection-loans`` 30-year monthly home loans (default 100,000, so 36 million
  loan-months), as loan-months per second, first run and best;
- a plain-Python per-loan loop doing the same projection (integer cents, each
  period's exact rate from amort.daycount, the level payment from the exact closed
  form, the survival in floats) over ``--sample`` of those loans, as loan-months per
  second, and the engine's ratio to it; it prints ``cents agree: yes`` when the loop's
  scheduled cents equal the engine's for the sampled loans.

It prints figures only; nothing here is a test. ``--small`` runs a CI-sized version.
Run from the repository root:

    .venv/bin/python bench/bench_book.py [--small] [--loans N] [--projection-loans N]
        [--sample N] [--repeat R]
"""

from __future__ import annotations

import argparse
import gc
import os
import platform
import resource
import time
import tracemalloc
from datetime import date
from fractions import Fraction

import numpy as np
import pandas as pd

from amort.book import book_from_frame
from amort.book_positions import positions
from amort.book_synth import synthetic_book
from amort.calendar import add_months
from amort.daycount import DayCount, year_fraction
from amort.exact import level_payment_fraction_variable
from amort.money import Rounding, round_fraction, round_ratio
from amort.projection import cdr_of_sda, cpr_of_psa, monthly_rate, project

AS_OF = date(2025, 6, 30)
ASSUMPTIONS = {"psa": 150, "cdr": 0.01, "recovery": 0.4, "lag": 6}


def timed(call, repeat: int) -> tuple[float, float, object]:
    """First run and best of ``repeat`` more, in seconds, and the last result."""
    start = time.perf_counter()
    result = call()
    first = time.perf_counter() - start
    best = first
    for _ in range(repeat):
        start = time.perf_counter()
        result = call()
        best = min(best, time.perf_counter() - start)
    return first, best, result


def peak_mib(call) -> float:
    gc.collect()
    tracemalloc.start()
    call()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak / 2**20


def home_loans(count: int, seed: int) -> pd.DataFrame:
    raw = synthetic_book(count, seed=seed, products=("home",))
    raw["term"] = "360"
    raw["disbursed_on"] = "2025-06-15"
    raw["first_due_on"] = ""
    return raw


def plain_projection(loans: pd.DataFrame) -> tuple[int, dict[int, int]]:
    """The projection one loan at a time in plain Python; loan-months and scheduled cents."""
    cpr_speed, cdr = ASSUMPTIONS["psa"], ASSUMPTIONS["cdr"]
    mdr = float(monthly_rate(cdr))
    loan_months = 0
    scheduled: dict[int, int] = {}
    for row in loans.itertuples(index=False):
        annual = Fraction(int(row.annual_rate_num), 10**8)
        rule = DayCount(row.day_count)
        start = row.disbursed_on.date()
        first = row.first_due_on.date()
        n = int(row.term)
        due = [add_months(first, k) for k in range(n)]
        bounds = [start, *due]
        if rule is DayCount.EQUAL:
            rates = [annual / 12] * n
        else:
            rates = [
                annual * year_fraction(bounds[k], bounds[k + 1], rule, termination=due[-1])
                for k in range(n)
            ]
        b0 = int(row.principal_cents)
        level = round_fraction(level_payment_fraction_variable(b0, rates), Rounding.HALF_UP)
        balance, survive, cash = b0, 1.0, 0.0
        for k in range(n):
            rate = rates[k]
            interest = round_ratio(balance * rate.numerator, rate.denominator, Rounding.HALF_UP)
            pay = level if k < n - 1 else balance + interest
            principal = pay - interest
            balance -= principal
            age = k + 1
            smm = float(monthly_rate(cpr_of_psa(age, cpr_speed)))
            kept = survive * (1 - mdr)
            cash += kept * (interest + principal) + smm * kept * balance
            survive = kept * (1 - smm)
            scheduled[k] = scheduled.get(k, 0) + interest
            loan_months += 1
    assert cdr_of_sda(1, 100) > 0  # the curve module is importable alongside
    return loan_months, scheduled


def bench_positions(loans: int, seed: int, repeat: int) -> None:
    """Validation and positions of a synthetic book of ``loans`` loans."""
    start = time.perf_counter()
    raw = synthetic_book(loans, seed=seed, per_loan_share=0)
    made = time.perf_counter() - start
    start = time.perf_counter()
    book = book_from_frame(raw)
    checked = time.perf_counter() - start
    del raw
    gc.collect()
    print(
        f"book: {loans:,} loans generated in {made:.2f} s, validated in {checked:.2f} s "
        f"({loans / checked:,.0f} rows/s); counts {book.counts}"
    )
    periods = int(book.loans["term"].sum())
    first, best, _ = timed(lambda: positions(book, AS_OF), repeat)
    print(
        f"positions: {loans:,} loans ({periods:,} loan-periods stepped) first {first:.2f} s, "
        f"best {best:.2f} s ({loans / best:,.0f} loans/s)"
    )
    peak = peak_mib(lambda: positions(book, AS_OF))
    print(f"positions peak memory (tracemalloc): {peak:,.0f} MiB")
    # Semimonthly loans and holiday calendars run one by one through amort.Loan.
    staff = synthetic_book(max(loans // 5_000, 20), seed=seed, products=("staff",))
    one_by_one = book_from_frame(staff)
    start = time.perf_counter()
    positions(one_by_one, AS_OF)
    spent = time.perf_counter() - start
    print(
        f"per-loan path (semimonthly loans through amort.Loan): {one_by_one.processed:,} loans "
        f"in {spent:.2f} s ({one_by_one.processed / spent:,.0f} loans/s)"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--small", action="store_true", help="CI size: 20,000 and 5,000 loans")
    parser.add_argument("--loans", type=int, default=None)
    parser.add_argument("--projection-loans", type=int, default=None)
    parser.add_argument("--sample", type=int, default=None)
    parser.add_argument("--repeat", type=int, default=None)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args()
    loans = args.loans or (20_000 if args.small else 1_000_000)
    pool_loans = args.projection_loans or (5_000 if args.small else 100_000)
    sample = args.sample or (30 if args.small else 200)
    repeat = args.repeat if args.repeat is not None else (1 if args.small else 2)
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, pandas {pd.__version__},"
        f" {cores} cores"
    )

    bench_positions(loans, args.seed, repeat)
    gc.collect()

    pool = book_from_frame(home_loans(pool_loans, args.seed + 1))
    cells = pool_loans * 360
    first, best, flows = timed(lambda: project(pool, AS_OF, **ASSUMPTIONS), repeat)
    print(
        f"projection: {pool_loans:,} loans x 360 months = {cells:,} loan-months, "
        f"first {first:.2f} s ({cells / first / 1e6:.1f} M/s), best {best:.2f} s "
        f"({cells / best / 1e6:.1f} M loan-months/s)"
    )
    part = pool.loans.iloc[:sample]
    start = time.perf_counter()
    loop_months, loop_cents = plain_projection(part)
    loop = time.perf_counter() - start
    loop_rate = loop_months / loop
    print(
        f"plain-Python per-loan loop: {sample:,} loans, {loop_months:,} loan-months in "
        f"{loop:.2f} s ({loop_rate:,.0f} loan-months/s); engine/loop ratio "
        f"{cells / best / loop_rate:,.0f}x"
    )
    sampled = project(part, AS_OF)
    engine_cents = np.rint(sampled["scheduled_interest"].to_numpy() * 100).astype(np.int64)
    loop_series = np.array([loop_cents[k] for k in range(len(loop_cents))], dtype=np.int64)
    agree = np.array_equal(engine_cents[: loop_series.size], loop_series)
    print(f"cents agree: {'yes' if agree else 'NO'}")
    assert flows is not None
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"max resident set size of the process: {rss:,.0f} MiB")


if __name__ == "__main__":
    main()
