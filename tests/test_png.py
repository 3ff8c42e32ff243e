"""PNG pictures: the file opens, has the asked size, shows the accent, and is written safely."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from PIL import Image

from amort import ExportError, Loan
from amort.io.png import SIZE, loan_title, plot_loan, plot_schedule
from amort.io.xlsx import ACCENT

LOAN = Loan(principal=18_500, annual_rate="7.9%", periods=60)


def accent_pixels(path: Path) -> int:
    pixels = np.asarray(Image.open(path).convert("RGB")).reshape(-1, 3).astype(int)
    accent = np.array([int(ACCENT[i : i + 2], 16) for i in (0, 2, 4)])
    return int((np.abs(pixels - accent).sum(axis=1) < 12).sum())


def test_the_picture_opens_with_the_default_size(tmp_path: Path) -> None:
    path = plot_loan(LOAN, tmp_path / "car.png")
    with Image.open(path) as image:
        assert image.format == "PNG"
        assert image.size == SIZE
    assert accent_pixels(path) > 10_000  # the balance line and the principal bars


@pytest.mark.parametrize("size", [(640, 400), (1600, 1000)])
def test_the_picture_has_the_size_asked(size: tuple[int, int], tmp_path: Path) -> None:
    path = plot_loan(LOAN, tmp_path / "car.png", size=size)
    with Image.open(path) as image:
        assert image.size == size


def test_a_generic_schedule_like_frame_is_drawn(tmp_path: Path) -> None:
    # An annuity payout or a book projection: only the three needed columns.
    rows = 4_000  # long: bars are grouped
    frame = pd.DataFrame(
        {
            "closing_balance": np.linspace(1e6, 0, rows),
            "interest": np.full(rows, 50.0),
            "principal": np.full(rows, 250.0),
        }
    )
    path = plot_schedule(frame, tmp_path / "book.png", title="Projected book, invented data")
    with Image.open(path) as image:
        assert image.size == SIZE


def test_the_title_states_the_terms() -> None:
    assert loan_title(LOAN) == "18,500.00 at 7.9 % a year, 60 monthly payments of 374.23 in arrears"
    balloon = Loan(principal=40_000, annual_rate="6%", periods=36, balloon=15_000, timing="advance")
    assert loan_title(balloon).endswith("in advance, balloon 15,000.00")


def test_an_existing_picture_is_kept_without_force(tmp_path: Path) -> None:
    target = tmp_path / "car.png"
    target.write_bytes(b"keep me")
    with pytest.raises(ExportError, match="already exists"):
        plot_loan(LOAN, target)
    assert target.read_bytes() == b"keep me"
    plot_loan(LOAN, target, force=True)
    assert target.read_bytes()[:4] == b"\x89PNG"


@pytest.mark.parametrize(
    ("frame", "name", "message"),
    [
        (LOAN.schedule(), "car.jpg", "must name a .png file"),
        (LOAN.schedule().drop(columns=["interest"]), "car.png", "no interest column"),
        (LOAN.schedule().iloc[0:0], "car.png", "no rows"),
    ],
)
def test_refusals_are_one_sentence(frame: pd.DataFrame, name: str, message: str, tmp_path: Path):
    with pytest.raises(ExportError, match=message):
        plot_schedule(frame, tmp_path / name, title="t")
    assert list(tmp_path.iterdir()) == []


def test_the_committed_example_picture_is_current_in_size() -> None:
    example = Path(__file__).resolve().parents[1] / "docs" / "schedule_example.png"
    with Image.open(example) as image:
        assert image.format == "PNG" and image.size == SIZE
    assert example.stat().st_size < 200_000
