"""The ``amort book`` verb(s): parse, call the library, print (being built)."""

from __future__ import annotations

import typer


def register(app: typer.Typer) -> None:
    """Add this module's verb(s) to the ``amort`` app."""
