"""Bench: closed-form level payments for a book of loans, against numpy-financial's pmt.

Times, on the same random book of realistic monthly loans:

- ``amort.recurrence.payment`` (the bare float64 closed form),
- ``amort.solve.payment`` (the validated public solver, same formula plus checks),
- ``numpy_financial.pmt`` (the outside reference), and the ratio of each to it,
- ``amort.exact.level_payment_cents`` (the payment rounded half-up to the cent from its
  exact rational value), with a check of a sample against ``fractions.Fraction``.

It prints figures only; nothing here is a test. Run from the repository root:

    .venv/bin/python bench/bench_payment.py [--loans 1000000] [--repeat 5] [--seed 7]
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import time
from collections.abc import Callable
from fractions import Fraction

import numpy as np
import numpy_financial as npf

from amort import recurrence, solve
from amort.exact import level_payment_cents, level_payment_fraction
from amort.money import Rounding, round_fraction


def book(loans: int, seed: int) -> dict[str, np.ndarray]:
    """Random monthly loans: 5,000 to 750,000 principal, 3.25 % to 19.99 % a year, 1 to 30 years.

    The rate is a whole number of basis points a year, so the monthly rate is the exact
    fraction ``bp / 120000``.
    """
    rng = np.random.default_rng(seed)
    principal_cents = rng.integers(5_000_00, 750_000_00 + 1, loans, dtype=np.int64)
    bp = rng.integers(325, 1999 + 1, loans, dtype=np.int64)
    periods = rng.integers(1, 30 + 1, loans, dtype=np.int64) * 12
    den = np.full(loans, 120_000, dtype=np.int64)
    common = np.gcd(bp, den)
    return {
        "principal_cents": principal_cents,
        "principal": principal_cents / 100.0,
        "rate": bp / 120_000.0,
        "rate_num": bp // common,
        "rate_den": den // common,
        "periods": periods,
    }


def timed(fn: Callable[[], np.ndarray], repeat: int) -> tuple[float, float, np.ndarray]:
    """Return (best seconds, median seconds, last result) of ``repeat`` calls."""
    times = []
    result = fn()  # warm-up: first-touch of memory, imports, caches
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        times.append(time.perf_counter() - t0)
    return min(times), statistics.median(times), result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--loans", type=int, default=1_000_000, help="loans in the book")
    parser.add_argument("--repeat", type=int, default=5, help="timed runs of each (best shown)")
    parser.add_argument("--seed", type=int, default=7, help="seed of the random book")
    parser.add_argument(
        "--exact-sample", type=int, default=2_000, help="loans checked against Fraction"
    )
    args = parser.parse_args()
    n = args.loans
    load = os.getloadavg()[0]
    b = book(n, args.seed)
    zeros = np.zeros(n, dtype=np.int64)
    no = np.zeros(n, dtype=bool)

    cases = {
        "amort.recurrence.payment": lambda: recurrence.payment(
            b["principal"], b["rate"], b["periods"]
        ),
        "amort.solve.payment": lambda: solve.payment(b["principal"], b["rate"], b["periods"]),
        "numpy_financial.pmt": lambda: -npf.pmt(b["rate"], b["periods"], b["principal"]),
        "amort.exact.level_payment_cents": lambda: level_payment_cents(
            b["principal_cents"],
            b["rate_num"],
            b["rate_den"],
            b["periods"],
            zeros,
            no,
            Rounding.HALF_UP,
        ),
    }
    results: dict[str, tuple[float, float, np.ndarray]] = {}
    for name, fn in cases.items():
        results[name] = timed(fn, args.repeat)

    reference_best = results["numpy_financial.pmt"][0]
    reference = results["numpy_financial.pmt"][2]
    print(f"bench_payment: {n:,} loans, best of {args.repeat} runs (after one warm-up)")
    print(
        f"python {platform.python_version()}, numpy {np.__version__}, numpy-financial "
        f"{npf.__version__ if hasattr(npf, '__version__') else '?'}, {os.cpu_count()} cpu(s), "
        f"load average at start {load:.2f}"
    )
    print()
    header = f"{'function':<34}{'best s':>10}{'median s':>10}{'M loans/s':>11}{'time / pmt':>12}"
    print(header)
    print("-" * len(header))
    for name, (best, median, _) in results.items():
        ratio = best / reference_best
        print(f"{name:<34}{best:>10.4f}{median:>10.4f}{n / best / 1e6:>11.1f}{ratio:>11.2f}x")
    print()
    for name in ("amort.recurrence.payment", "amort.solve.payment"):
        gap = np.max(np.abs(results[name][2] - reference) / reference)
        print(f"largest relative gap, {name} vs numpy_financial.pmt: {gap:.2e}")
    cents = results["amort.exact.level_payment_cents"][2]
    float_cents = np.floor(reference * 100 + 0.5)
    print(
        f"exact cents that differ from pmt rounded half-up in floats: "
        f"{int(np.count_nonzero(cents != float_cents)):,} of {n:,}"
    )
    sample = np.random.default_rng(args.seed + 1).choice(n, min(args.exact_sample, n), False)
    agree = all(
        int(cents[j])
        == round_fraction(
            level_payment_fraction(
                int(b["principal_cents"][j]),
                Fraction(int(b["rate_num"][j]), int(b["rate_den"][j])),
                int(b["periods"][j]),
            ),
            Rounding.HALF_UP,
        )
        for j in sample
    )
    print(
        f"exact cents agree with fractions.Fraction on {sample.size:,} sampled loans: "
        f"{'yes' if agree else 'NO'}"
    )


if __name__ == "__main__":
    main()
