"""The benchmarks run in CI at a small size: they must finish and agree on every cent.

No figure is asserted (speed is measured by the scripts, not by tests); only that each
script runs and prints its cent check as agreeing.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

BENCH = Path(__file__).resolve().parents[1] / "bench"

SMALL = {
    "bench_book.py": ["--small"],
    "bench_annuity.py": ["--count", "2000", "--periods", "60", "--loop", "50"],
}


@pytest.mark.parametrize("script", sorted(SMALL))
def test_benchmark_runs_small_and_its_cents_agree(script: str) -> None:
    result = subprocess.run(
        [sys.executable, str(BENCH / script), *SMALL[script]],
        capture_output=True,
        text=True,
        check=False,
        timeout=300,
    )
    assert result.returncode == 0, result.stderr
    assert "cents agree: yes" in result.stdout, result.stdout
