"""Bench: exact-cent schedule rows per second of the batch engine, against plain loops.

Builds one random book of level-payment monthly loans (5,000 to 750,000 principal, a
whole number of basis points from 3.25 % to 19.99 % a year, so the monthly rate is the
exact fraction ``bp / 120000``; the payment from ``amort.exact.level_payment_cents``)
and times, in the same run:

- ``amort.schedule.run`` on the whole book (first run, best and median of the rest),
  with its peak memory (tracemalloc, on a separate untimed run) and the process's
  maximum resident set size;
- a plain-Python ``decimal`` loop and a plain-Python float loop over the first
  ``--loop-loans`` loans of the same book (``--loop-all`` for every loan), as rows per
  second, and the engine's ratio to each;
- ``amort.frames.schedule_frame`` (the pandas frame of the whole table), separately.

It checks that the decimal loop and the engine agree on every cent of every row of the
looped loans and prints ``cents agree: yes`` when they do. It prints figures only;
nothing here is a test. Run from the repository root:

    .venv/bin/python bench/bench_schedule.py [--loans 100000] [--months 360]
        [--loop-loans 2000 | --loop-all] [--repeat 5] [--seed 11]
"""

from __future__ import annotations

import argparse
import gc
import os
import platform
import resource
import statistics
import time
import tracemalloc
from decimal import ROUND_HALF_UP, Decimal

import numpy as np

from amort.exact import level_payment_cents
from amort.frames import schedule_frame
from amort.money import Rounding
from amort.schedule import BatchTerms, CentsTable, run

CENT = Decimal("0.01")
COLUMNS = ("opening", "payment", "interest", "principal", "closing")


def book(loans: int, months: int, seed: int) -> tuple[BatchTerms, np.ndarray]:
    """Return the random book as BatchTerms, and each loan's rate in basis points a year."""
    rng = np.random.default_rng(seed)
    principal = rng.integers(5_000_00, 750_000_00 + 1, loans, dtype=np.int64)
    bp = rng.integers(325, 1999 + 1, loans, dtype=np.int64)
    den = np.full(loans, 120_000, dtype=np.int64)
    common = np.gcd(bp, den)
    num, den = bp // common, den // common
    periods = np.full(loans, months, dtype=np.int64)
    balloon = np.zeros(loans, dtype=np.int64)
    advance = np.zeros(loans, dtype=bool)
    payment = level_payment_cents(principal, num, den, periods, balloon, advance, Rounding.HALF_UP)
    return BatchTerms(principal, num, den, payment, periods, balloon, advance), bp


def decimal_loop(principal: int, bp: int, payment: int, periods: int) -> list[tuple]:
    """One loan's rows in Python decimals: interest = (B x annual / 12) rounded half-up.

    The last period pays the balance plus its interest; a loan whose balance would close
    before that ends where it closes (the engine's rule, written out for one loan).
    """
    balance = Decimal(principal) / 100
    level = Decimal(payment) / 100
    annual = Decimal(bp) / 10_000  # exact: 6.5 % is Decimal("0.065")
    rows = []
    for k in range(1, periods + 1):
        # balance x annual is exact; the one division by 12 is exact at every tie.
        interest = (balance * annual / 12).quantize(CENT, rounding=ROUND_HALF_UP)
        due = balance + interest
        pay = due if (k == periods or due <= level) else level
        principal_part = pay - interest
        closing = balance - principal_part
        rows.append((balance, pay, interest, principal_part, closing))
        balance = closing
        if pay == due:
            break
    return rows


def float_loop(principal: int, bp: int, payment: int, periods: int) -> list[tuple]:
    """The same loan in binary floats, interest by round(x, 2) (fast, not cent-exact)."""
    balance = principal / 100
    level = payment / 100
    monthly = bp / 10_000 / 12
    rows = []
    for k in range(1, periods + 1):
        interest = round(balance * monthly, 2)
        due = balance + interest
        pay = due if (k == periods or due <= level) else level
        principal_part = pay - interest
        closing = balance - principal_part
        rows.append((balance, pay, interest, principal_part, closing))
        balance = closing
        if pay == due:
            break
    return rows


def loop_rows(loop, terms: BatchTerms, bp: np.ndarray, count: int, check) -> tuple[float, int, int]:
    """Time ``loop`` over the first ``count`` loans, in batches of _BATCH loans.

    Each batch's rows are kept in lists (as the engine keeps its table), then handed to
    ``check(first_loan, rows)`` outside the timing and dropped, so that ``--loop-all``
    needs little memory. Returns (seconds, rows, what the checks returned, summed).
    """
    p = terms.principal.tolist()
    pay = terms.payment.tolist()
    n = terms.periods.tolist()
    rates = bp.tolist()
    seconds, rows, checked = 0.0, 0, 0
    for start in range(0, count, _BATCH):
        t0 = time.perf_counter()
        out = [loop(p[j], rates[j], pay[j], n[j]) for j in range(start, min(start + _BATCH, count))]
        seconds += time.perf_counter() - t0
        rows += sum(len(r) for r in out)
        checked += check(start, out)
    return seconds, rows, checked


_BATCH = 2_000


def decimal_misses(table: CentsTable, first: int, loans: list[list[tuple]]) -> int:
    """Rows of loans ``first ..`` where the decimal loop and the engine differ by any cent."""
    count = len(loans)
    if not np.array_equal(table.rows[first : first + count], [len(rows) for rows in loans]):
        return max(1, sum(len(rows) for rows in loans))
    start, stop = int(table.offsets[first]), int(table.offsets[first + count])
    flat = [value for rows in loans for row in rows for value in row]
    cents = np.array([int(v * 100) for v in flat], dtype=np.int64).reshape(-1, len(COLUMNS))
    engine = np.column_stack([getattr(table, name)[start:stop] for name in COLUMNS])
    mismatched = int(np.count_nonzero((cents != engine).any(axis=1)))
    return mismatched + int(np.count_nonzero(table.balloon[start:stop]))


def float_misses(table: CentsTable, first: int, loans: list[list[tuple]]) -> int:
    """Rows of the float loop that differ from the engine by a cent or more anywhere."""
    off = 0
    offsets = table.offsets
    for j, rows in enumerate(loans, start=first):
        if len(rows) != int(table.rows[j]):
            off += max(len(rows), int(table.rows[j]))
            continue
        got = np.rint(np.array(rows) * 100).astype(np.int64)
        start, stop = int(offsets[j]), int(offsets[j + 1])
        engine = np.column_stack([getattr(table, name)[start:stop] for name in COLUMNS])
        off += int(np.count_nonzero((got != engine).any(axis=1)))
    return off


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--loans", type=int, default=100_000, help="loans in the book")
    parser.add_argument("--months", type=int, default=360, help="term of every loan")
    parser.add_argument(
        "--loop-loans", type=int, default=2_000, help="loans the plain loops run over"
    )
    parser.add_argument("--loop-all", action="store_true", help="run the loops on every loan")
    parser.add_argument("--repeat", type=int, default=5, help="timed engine runs after the first")
    parser.add_argument("--seed", type=int, default=11, help="seed of the random book")
    parser.add_argument("--no-frame", action="store_true", help="skip the pandas frame timing")
    parser.add_argument(
        "--no-hugepages",
        action="store_true",
        help="turn off numpy's transparent-huge-page advice for its large arrays",
    )
    args = parser.parse_args()
    if args.no_hugepages:
        np._core.multiarray._set_madvise_hugepage(False)

    load = os.getloadavg()[0]
    terms, bp = book(args.loans, args.months, args.seed)
    looped = args.loans if args.loop_all else min(args.loop_loans, args.loans)

    # Engine: the first run in a fresh process pays for first-touch of its memory.
    times = []
    cpu = []
    table = None
    for _ in range(1 + args.repeat):
        table = None
        gc.collect()
        before = resource.getrusage(resource.RUSAGE_SELF)
        t0 = time.perf_counter()
        table = run(terms)
        times.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_SELF)
        cpu.append((after.ru_utime - before.ru_utime, after.ru_stime - before.ru_stime))
    assert table is not None
    rows = int(table.period.size)
    first, rest = times[0], times[1:] or times
    best, median = min(rest), statistics.median(rest)
    best_user, best_sys = cpu[times.index(best)]
    maxrss_mib = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024

    table_bytes = sum(
        getattr(table, f).nbytes
        for f in (
            "loan",
            "period",
            "opening",
            "payment",
            "interest",
            "principal",
            "closing",
            "balloon",
        )
    )
    held = table
    table = None
    gc.collect()
    tracemalloc.start()
    traced = run(terms)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    del traced
    table = held

    dec_seconds, dec_count, mismatched = loop_rows(
        decimal_loop, terms, bp, looped, lambda j, rows: decimal_misses(table, j, rows)
    )
    flt_seconds, flt_count, float_off = loop_rows(
        float_loop, terms, bp, looped, lambda j, rows: float_misses(table, j, rows)
    )
    agree = mismatched == 0

    frame_seconds = None
    if not args.no_frame:
        t0 = time.perf_counter()
        frame = schedule_frame(table)
        frame_seconds = time.perf_counter() - t0
        del frame

    engine_rate = rows / best
    dec_rate = dec_count / dec_seconds
    flt_rate = flt_count / flt_seconds
    print(
        f"bench_schedule: {args.loans:,} loans x {args.months} months = {rows:,} rows "
        f"(loans that close a period early, payment rounded up: "
        f"{int(np.count_nonzero(table.rows < args.months)):,})"
    )
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, "
        f"{os.cpu_count()} cpu(s), load average at start {load:.2f}, numpy huge-page "
        f"advice {'on' if np._core.multiarray._get_madvise_hugepage() else 'off'}"
    )
    print()
    header = f"{'what':<44}{'rows':>13}{'seconds':>10}{'M rows/s':>10}{'engine x':>10}"
    print(header)
    print("-" * len(header))
    print(
        f"{'engine run(), best of ' + str(len(rest)):<44}{rows:>13,}{best:>10.3f}"
        f"{engine_rate / 1e6:>10.2f}{'':>10}"
    )
    print(
        f"{'engine run(), median of ' + str(len(rest)):<44}{rows:>13,}{median:>10.3f}"
        f"{rows / median / 1e6:>10.2f}{'':>10}"
    )
    print(
        f"{'engine run(), first run (cold memory)':<44}{rows:>13,}{first:>10.3f}"
        f"{rows / first / 1e6:>10.2f}{'':>10}"
    )
    print(
        f"{'decimal loop, ' + f'{looped:,} loans':<44}{dec_count:>13,}{dec_seconds:>10.3f}"
        f"{dec_rate / 1e6:>10.3f}{engine_rate / dec_rate:>9.0f}x"
    )
    print(
        f"{'float loop, ' + f'{looped:,} loans':<44}{flt_count:>13,}{flt_seconds:>10.3f}"
        f"{flt_rate / 1e6:>10.3f}{engine_rate / flt_rate:>9.0f}x"
    )
    if frame_seconds is not None:
        print(
            f"{'schedule_frame() of the whole table':<44}{rows:>13,}{frame_seconds:>10.3f}"
            f"{rows / frame_seconds / 1e6:>10.2f}{'':>10}"
        )
    print()
    print(
        f"engine peak traced memory (tracemalloc, one run): {peak / 2**20:,.0f} MiB "
        f"(the table itself: {table_bytes / 2**20:,.0f} MiB, "
        f"{peak / table_bytes:.2f}x)"
    )
    print(f"process max resident set after the engine runs: {maxrss_mib:,.0f} MiB")
    print(
        f"best engine run: {best:.3f} s wall, {best_user:.3f} s user CPU, {best_sys:.3f} s "
        f"system CPU (the kernel supplying fresh pages; both cores counted)"
    )
    print(
        f"cents agree: {'yes' if agree else 'NO'} (decimal loop vs engine, "
        f"{dec_count:,} rows of {looped:,} loans"
        + ("" if agree else f", {mismatched} rows differ")
        + ")"
    )
    print(f"float loop rows off by a cent or more: {float_off:,} of {flt_count:,}")


if __name__ == "__main__":
    main()
