"""Bench: exact-cent accumulation rows per second, against a plain-Python loop.

Builds a seeded batch of accumulations (deposits of 10 to 2,000.00 a period for 120
periods, opening values to 10,000.00, annual rates of a whole number of basis points up to
15 %, half of them in advance) and times, in the same run:

- ``amort.annuity_cents.run_path`` on the whole batch;
- a plain-Python integer loop of the same rule (interest on the value, rounded half-up to
  the cent) over the first ``--loop`` accumulations, as rows per second, and the ratio.

It compares every cent of the looped accumulations with the batch and prints
``cents agree: yes`` when they match. Figures only; nothing here is a test. Run from the
repository root:

    .venv/bin/python bench/bench_annuity.py [--count 100000] [--periods 120] [--loop 2000]
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from amort.annuity_cents import PathTerms, run_path


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=100_000)
    parser.add_argument("--periods", type=int, default=120)
    parser.add_argument("--loop", type=int, default=2_000)
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    m, n = args.count, args.periods
    rng = np.random.default_rng(args.seed)
    deposit = rng.integers(1_000, 200_000, m)
    terms = PathTerms(
        opening=rng.integers(0, 1_000_000, m),
        rate_num=rng.integers(0, 1_500, m),
        rate_den=np.full(m, 120_000),
        flows=np.broadcast_to(deposit, (n, m)).copy(),
        periods=np.full(m, n),
        advance=rng.random(m) < 0.5,
        deposits=True,
        goal=None,
    )
    start = time.perf_counter()
    table = run_path(terms)
    batch = time.perf_counter() - start
    rows = int(table.rows.sum())

    k = min(args.loop, m)
    start = time.perf_counter()
    closing = []
    for j in range(k):
        value, num, d = int(terms.opening[j]), int(terms.rate_num[j]), int(deposit[j])
        advance = bool(terms.advance[j])
        for _ in range(n):
            base = value + d if advance else value
            q, r = divmod(base * num, 120_000)
            value = value + d + q + (2 * r >= 120_000)  # half-up to the cent
            closing.append(value)
    loop = time.perf_counter() - start
    agree = closing == table.closing[: k * n].tolist()

    batch_rate, loop_rate = rows / batch, k * n / loop
    print(f"accumulations: {m:,} x {n} periods = {rows:,} rows")
    print(f"run_path: {batch:.2f} s, {batch_rate / 1e6:.1f} M rows/s")
    print(f"plain-Python loop ({k:,} accumulations): {loop_rate / 1e6:.2f} M rows/s")
    print(f"ratio: {batch_rate / loop_rate:.1f}x")
    print(f"cents agree: {'yes' if agree else 'NO'}")


if __name__ == "__main__":
    main()
