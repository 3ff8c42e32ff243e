"""Safe file writing: a temporary name in the target folder, then an atomic rename.

An existing file is kept unless ``force`` is given; a folder that does not
exist, a path that is a folder, or a failed write raises
:class:`~amort.errors.ExportError` with one sentence, and no partial file is
left behind.
"""

from __future__ import annotations

import os
import tempfile
from collections.abc import Callable
from pathlib import Path

from amort.errors import ExportError

#: Leading characters that make a spreadsheet read a cell as a formula or command.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")


def check_target(path: Path, *, force: bool) -> Path:
    """Return ``path`` once it is safe to write there, else raise :class:`ExportError`."""
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise ExportError(f"cannot write {str(path)!r}: the folder {str(parent)!r} does not exist")
    if path.is_dir():
        raise ExportError(f"cannot write {str(path)!r}: it is a folder, not a file name")
    if path.exists() and not force:
        raise ExportError(f"{str(path)!r} already exists; pass --force (force=True) to replace it")
    return path


def _umask() -> int:
    """The process's file-creation mask (read by setting it and putting it back)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def write_atomic(path: Path, write: Callable[[Path], None], *, force: bool = False) -> Path:
    """Call ``write(tmp)`` on a temporary file beside ``path``, then rename it to ``path``.

    If ``write`` fails, the temporary file is removed and the target is untouched.
    """
    path = check_target(Path(path), force=force)
    parent = path.parent if str(path.parent) else Path(".")
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=parent)
    except OSError as exc:
        raise ExportError(f"cannot write {str(path)!r}: {exc.strerror or exc}") from exc
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        write(tmp)
        if path.exists() and not force:  # appeared while we were writing
            raise ExportError(f"{str(path)!r} already exists; pass --force to replace it")
        # mkstemp makes the file private (0600); give it the mode a new file would get.
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except ExportError:
        tmp.unlink(missing_ok=True)
        raise
    except OSError as exc:
        tmp.unlink(missing_ok=True)
        raise ExportError(f"cannot write {str(path)!r}: {exc.strerror or exc}") from exc
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
    return path


def write_text_atomic(path: Path, text: str, *, force: bool = False) -> Path:
    """Write ``text`` (UTF-8) to ``path`` whole or not at all."""

    def write(tmp: Path) -> None:
        tmp.write_text(text, encoding="utf-8", newline="")

    return write_atomic(path, write, force=force)


def as_text_cell(value: str) -> str:
    """Return user text made safe for a spreadsheet cell: a formula trigger gets a leading quote.

    >>> as_text_cell("=HYPERLINK(1)")
    "'=HYPERLINK(1)"
    >>> as_text_cell("Ridgeway Farm")
    'Ridgeway Farm'
    """
    return "'" + value if value.startswith(FORMULA_TRIGGERS) else value
