"""The error family of amort.

Every error the library raises on purpose is an :class:`AmortError`; each leaf
also subclasses the builtin it refines, so ``except ValueError`` still works.
Messages follow one template: the field, the rule, and the value received,
e.g. ``'annual_rate' must be >= 0 (got -0.01)``. The CLI catches
:class:`AmortError` once, prints ``Error: <message>`` and exits with
:attr:`AmortError.exit_code`.
"""

from __future__ import annotations


class AmortError(Exception):
    """Base of every error amort raises on purpose."""

    exit_code: int = 1


class InvalidTerms(AmortError, ValueError):
    """An input value is outside what the product allows (field, rule, value)."""

    exit_code = 2


class NoSolution(AmortError, ArithmeticError):
    """The question has no answer for these terms (or more than one), and why."""

    exit_code = 3


class ExportError(AmortError, OSError):
    """A file could not be written (or would overwrite one without ``force``)."""

    exit_code = 4


def describe(value: object) -> str:
    """Return ``value`` as it should appear in an error message."""
    if isinstance(value, str):
        return repr(value)
    return str(value)
