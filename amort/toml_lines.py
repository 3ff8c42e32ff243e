"""Where a key sits in TOML text: the line of ``[table] key`` for error messages.

Python's ``tomllib`` parses TOML but forgets positions, so a value that parses
and is still wrong (an unknown key, a bad type, an out-of-range amount) would
get a message without a line. :func:`key_line` scans the text itself, table
headers, dotted keys and quoted keys included, skipping strings (basic,
literal and multi-line) and inline tables, and returns the 1-based line where
the key is set.
"""

from __future__ import annotations

import re
from collections.abc import Iterator

_BARE = r"[A-Za-z0-9_-]+"
_PART = rf"(?:{_BARE}|\"(?:[^\"\\]|\\.)*\"|'[^']*')"
_PATH = rf"{_PART}(?:\s*\.\s*{_PART})*"
_KEY_RE = re.compile(rf"\s*({_PATH})\s*=")
_HEADER_RE = re.compile(rf"\s*(\[\[?)\s*({_PATH})\s*\]")
_PART_RE = re.compile(_PART)


def _path_of(dotted: str) -> tuple[str, ...]:
    parts = []
    for part in _PART_RE.findall(dotted):
        if part[:1] == '"':
            part = part[1:-1].encode("latin-1", "backslashreplace").decode("unicode_escape")
        elif part[:1] == "'":
            part = part[1:-1]
        parts.append(part)
    return tuple(parts)


def _string_state(line: str, start: int, state: str | None) -> str | None:
    """Return the multi-line string delimiter open at the end of ``line`` (or None)."""
    i = start
    while i < len(line):
        if state is not None:
            end = line.find(state, i)
            while state == '"""' and end > 0 and _escaped(line, end):
                end = line.find(state, end + 1)
            if end < 0:
                return state
            i, state = end + 3, None
            continue
        char = line[i]
        if char == "#":
            return None
        if line.startswith('"""', i) or line.startswith("'''", i):
            state, i = line[i : i + 3], i + 3
        elif char in "\"'":
            end = line.find(char, i + 1)
            while char == '"' and end > 0 and _escaped(line, end):
                end = line.find(char, end + 1)
            i = len(line) if end < 0 else end + 1
        else:
            i += 1
    return state


def _escaped(line: str, at: int) -> bool:
    """True when the character at ``at`` follows an odd number of backslashes."""
    count = 0
    while at - count - 1 >= 0 and line[at - count - 1] == "\\":
        count += 1
    return count % 2 == 1


def entries(text: str) -> Iterator[tuple[tuple[str, ...], int]]:
    """Yield the full dotted path of every table header and key, with its line (from 1)."""
    table: tuple[str, ...] = ()
    state: str | None = None
    for number, line in enumerate(text.splitlines(), start=1):
        if state is not None:
            state = _string_state(line, 0, state)
            continue
        header = _HEADER_RE.match(line)
        if header:
            table = _path_of(header.group(2))
            yield table, number
            continue
        key = _KEY_RE.match(line)
        if key:
            yield (*table, *_path_of(key.group(1))), number
            state = _string_state(line, key.end(), None)
        else:
            state = _string_state(line, 0, None)


def key_line(text: str, *path: str) -> int | None:
    """Return the line (from 1) where TOML ``text`` sets ``path``, or None.

    ``key_line(text, "loan", "principal")`` finds ``principal = ...`` under a
    ``[loan]`` header (or ``loan.principal = ...`` at the top);
    ``key_line(text, "loan")`` finds the ``[loan]`` header; ``key_line(text,
    "format")`` a top-level key. Lines inside multi-line strings and comments
    are not keys. A key inside an inline table (``loan = {principal = 1}``) is
    not found; its table's line is.

    >>> key_line('format = 1\\n\\n[loan]\\nprincipal = 1\\n', "loan", "principal")
    4
    """
    for found, number in entries(text):
        if found == path:
            return number
    return None


def first_repeat(text: str) -> int | None:
    """Return the line of the first key or header set twice (tomllib gives none for it)."""
    seen: set[tuple[str, ...]] = set()
    for found, number in entries(text):
        if found in seen:
            return number
        seen.add(found)
    return None
