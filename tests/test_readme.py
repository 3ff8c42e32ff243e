"""The README's console examples are real output: run each command and compare."""

from __future__ import annotations

import os
import re
import shlex
import subprocess
import sys
from pathlib import Path

import pytest

README = Path(__file__).resolve().parents[1] / "README.md"


def _examples() -> list[tuple[str, str]]:
    text = README.read_text(encoding="utf-8")
    examples = []
    for block in re.findall(r"```console\n(.*?)```", text, flags=re.S):
        if "..." in block:
            continue  # an abridged listing, not a verbatim one
        parts = re.split(r"^\$ ", block, flags=re.M)
        for part in parts[1:]:
            command, _, expected = part.partition("\n")
            examples.append((command, expected))
    return examples


EXAMPLES = _examples()


def test_the_readme_has_console_examples() -> None:
    assert len(EXAMPLES) >= 6


@pytest.mark.parametrize(("command", "expected"), EXAMPLES, ids=[c for c, _ in EXAMPLES])
def test_readme_example_output_is_current(command: str, expected: str, tmp_path: Path) -> None:
    # Each command runs in a fresh folder (files it writes land there), with the
    # project's example folders linked in so that their paths work as written.
    for folder in ("examples", "example_books"):
        if (README.parent / folder).is_dir():
            (tmp_path / folder).symlink_to(README.parent / folder)
    args = shlex.split(command)
    assert args[0] == "amort"
    env = {**os.environ, "COLUMNS": "100", "NO_COLOR": "1", "TERM": "dumb"}
    result = subprocess.run(
        [sys.executable, "-m", "amort", *args[1:]],
        capture_output=True,
        text=True,
        env=env,
        cwd=tmp_path,
        check=False,
    )
    got = result.stdout + result.stderr
    strip = lambda s: [line.rstrip() for line in s.strip().splitlines()]  # noqa: E731
    got_lines = strip(got)
    want_lines = strip(expected)
    # The README shows the caution once; outputs carry it every time.
    assert got_lines[: len(want_lines)] == want_lines
