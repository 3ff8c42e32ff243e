"""Bench: exact-cent accumulation rows per second, against a plain-Python loop.

Builds a seeded batch of accumulations (deposits of 10 to 2,000.00 a period for 120
periods, opening values to 10,000.00, annual rates of a whole number of basis points up to
15 %, half of them in advance) and times, in the same run:

- ``amort.annuity_cents.run_path`` on the whole batch (its int64 fast path,
  ``amort.annuity_fast``): the first run in the process, then the best and median of
  ``--repeat`` more, with the user and system CPU time of the best; its peak traced memory
  (tracemalloc, a separate untimed run) against the size of the table itself;
- the general path (``amort.annuity_cents._run_general``: every period by the full rules,
  the path every batch took before the fast one) on the same batch, first run and best of
  ``--general-repeat`` more, and the fast path's ratio to it;
- a plain-Python integer loop of the same rule (interest on the value, rounded half-up to
  the cent) over the first ``--loop`` accumulations, as rows per second, and the ratio.

With ``--payouts`` the batch is level payouts instead (funds of 1,000 to 100,000.00 paying
1/20 to 1/200 of the fund a period, residual 0), most of which run out before the last
period, each at its own: the fast path's early closes; the plain loop is not run.

It compares every cent of the looped accumulations with the batch, and the whole table with
the general path's, and prints ``cents agree: yes`` when both match. Figures only; nothing
here is a test. Run from the repository root, on an otherwise idle machine (the load
average at the start is printed):

    .venv/bin/python bench/bench_annuity.py [--count 100000] [--periods 120] [--loop 2000]
        [--repeat 5] [--general-repeat 2] [--seed 7] [--payouts]
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
from collections.abc import Callable

import numpy as np

from amort.annuity_cents import PathTable, PathTerms, _run_general, run_path
from amort.money import Rounding

FIELDS = ("annuity", "period", "opening", "flow", "interest", "closing")


def batch(count: int, periods: int, seed: int, payouts: bool) -> tuple[PathTerms, np.ndarray]:
    """Return the seeded batch and each annuity's level flow (cents)."""
    rng = np.random.default_rng(seed)
    if payouts:
        # Funds of 1,000 to 100,000.00 paying 1/20 to 1/200 of the fund a period: most
        # run out (close early, at many different periods) before the horizon.
        fund = rng.integers(100_000, 10_000_000, count)
        payment = fund // rng.integers(20, 200, count)
        terms = PathTerms(
            opening=fund,
            rate_num=rng.integers(0, 1_500, count),
            rate_den=np.full(count, 120_000),
            flows=np.broadcast_to(payment, (periods, count)).copy(),
            periods=np.full(count, periods),
            advance=rng.random(count) < 0.5,
            deposits=False,
            goal=np.zeros(count, dtype=np.int64),
        )
        return terms, payment
    deposit = rng.integers(1_000, 200_000, count)
    terms = PathTerms(
        opening=rng.integers(0, 1_000_000, count),
        rate_num=rng.integers(0, 1_500, count),
        rate_den=np.full(count, 120_000),
        flows=np.broadcast_to(deposit, (periods, count)).copy(),
        periods=np.full(count, periods),
        advance=rng.random(count) < 0.5,
        deposits=True,
        goal=None,
    )
    return terms, deposit


def timed(run: Callable[[], PathTable], repeat: int) -> tuple[list[float], list[float], PathTable]:
    """Run ``1 + repeat`` times; return the wall seconds, CPU seconds and the last table."""
    walls, cpus = [], []
    table = None
    for _ in range(1 + repeat):
        table = None
        gc.collect()
        before = resource.getrusage(resource.RUSAGE_SELF)
        start = time.perf_counter()
        table = run()
        walls.append(time.perf_counter() - start)
        after = resource.getrusage(resource.RUSAGE_SELF)
        cpus.append(
            after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime,
        )
    assert table is not None
    return walls, cpus, table


def plain_loop(terms: PathTerms, deposit: np.ndarray, count: int, n: int) -> tuple[float, list]:
    """The same accumulations in Python integers, one at a time; (seconds, closing values)."""
    start = time.perf_counter()
    closing = []
    for j in range(count):
        value, num, d = int(terms.opening[j]), int(terms.rate_num[j]), int(deposit[j])
        advance = bool(terms.advance[j])
        for _ in range(n):
            base = value + d if advance else value
            q, r = divmod(base * num, 120_000)
            value = value + d + q + (2 * r >= 120_000)  # half-up to the cent
            closing.append(value)
    return time.perf_counter() - start, closing


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=100_000)
    parser.add_argument("--periods", type=int, default=120)
    parser.add_argument("--loop", type=int, default=2_000)
    parser.add_argument("--repeat", type=int, default=5, help="timed runs after the first")
    parser.add_argument("--general-repeat", type=int, default=2)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument(
        "--payouts", action="store_true", help="a batch of payouts that run out early instead"
    )
    args = parser.parse_args()
    m, n = args.count, args.periods
    load = os.getloadavg()[0]
    terms, deposit = batch(m, n, args.seed, args.payouts)

    walls, cpus, table = timed(lambda: run_path(terms), args.repeat)
    rows = int(table.rows.sum())
    rest = walls[1:] or walls
    best, median = min(rest), statistics.median(rest)
    best_cpu = cpus[walls.index(best)]
    table_bytes = sum(getattr(table, f).nbytes for f in FIELDS)
    held, table = table, None
    gc.collect()
    tracemalloc.start()
    traced = run_path(terms)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    del traced
    table = held

    g_walls, _, general = timed(lambda: _run_general(terms, Rounding.HALF_UP), args.general_repeat)
    g_best = min(g_walls[1:] or g_walls)
    same = all(np.array_equal(getattr(table, f), getattr(general, f)) for f in FIELDS)
    del general

    k = 0 if args.payouts else min(args.loop, m)
    loop, closing = plain_loop(terms, deposit, k, n)
    looped = closing == table.closing[: k * n].tolist()

    rate = rows / best
    kind = "payouts (residual 0, most run out early)" if args.payouts else "accumulations"
    print(f"{kind}: {m:,} x {n} periods = {rows:,} rows")
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, {os.cpu_count()} cpu(s), "
        f"load average at start {load:.2f}"
    )
    print()
    header = f"{'what':<46}{'seconds':>9}{'M rows/s':>10}"
    print(header)
    print("-" * len(header))

    def line(what: str, seconds: float, count: int = rows) -> None:
        print(f"{what:<46}{seconds:>9.3f}{count / seconds / 1e6:>10.2f}")

    line(f"run_path, best of {len(rest)}", best)
    line(f"run_path, median of {len(rest)}", median)
    line("run_path, first run (cold memory)", walls[0])
    line(f"general path, best of {len(g_walls[1:] or g_walls)}", g_best)
    line("general path, first run", g_walls[0])
    if k:
        line(f"plain-Python loop, {k:,} accumulations", loop, k * n)
    print()
    print(f"run_path best / general path best: {g_best / best:.1f}x faster")
    if k:
        print(f"run_path best / plain-Python loop: {rate / (k * n / loop):.1f}x")
    print(f"best run_path: {best:.3f} s wall, {best_cpu:.3f} s CPU (user + system)")
    print(
        f"peak traced memory of one run_path: {peak / 2**20:,.0f} MiB (the table itself: "
        f"{table_bytes / 2**20:,.0f} MiB, {peak / table_bytes:.2f}x)"
    )
    looped_text = ("yes" if looped else "NO") if k else "not run"
    print(
        f"cents agree: {'yes' if looped and same else 'NO'} (plain loop: {looped_text}, "
        f"general path, every row: {'yes' if same else 'NO'})"
    )


if __name__ == "__main__":
    main()
