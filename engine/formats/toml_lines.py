"""Where each key of a TOML file sits, so every message can name the line.

tomllib returns plain dicts without positions; this scan of the text records the line of every
`key = value` under its table ("conditions", "rails.main", "stage.3", "part.some-id"). Arrays of
tables are numbered from 1 in file order. It only needs to be right for files tomllib accepted.
"""

from __future__ import annotations

import re

_ARRAY_HEADER = re.compile(r"^\s*\[\[\s*(?P<name>[^\]]+?)\s*\]\]")
_TABLE_HEADER = re.compile(r"^\s*\[\s*(?P<name>[^\[\]]+?)\s*\]")
_KEY = re.compile(r"""^\s*(?P<key>"[^"]*"|'[^']*'|[A-Za-z0-9_\-]+(?:\s*\.\s*[A-Za-z0-9_\-"']+)*)\s*=""")


def table_name(raw: str) -> str:
    """`part."a.b"` -> `part.a.b`: quotes dropped, dots kept as written."""
    parts = re.findall(r'"([^"]*)"|\'([^\']*)\'|([^.\s]+)', raw)
    return ".".join(next(p for p in group if p) for group in parts)


def key_lines(text: str) -> dict[str, int]:
    """Map "table.key" (and "table" itself) to its 1-based line number."""
    lines: dict[str, int] = {}
    counts: dict[str, int] = {}
    table = ""
    in_multiline = False
    # TOML ends a line at LF (or CRLF) only; str.splitlines would also split at NEL, FF, LS...
    for number, line in enumerate(text.split("\n"), start=1):
        line = line.removesuffix("\r")
        if in_multiline:
            if line.count('"""') % 2 == 1 or line.count("'''") % 2 == 1:
                in_multiline = False
            continue
        array = _ARRAY_HEADER.match(line)
        header = None if array else _TABLE_HEADER.match(line)
        if array:
            name = table_name(array["name"])
            counts[name] = counts.get(name, 0) + 1
            table = f"{name}.{counts[name]}"
            lines.setdefault(table, number)
            continue
        if header:
            table = table_name(header["name"])
            _with_prefixes(lines, table, number)
            continue
        key = _KEY.match(line)
        if key:
            name = table_name(key["key"])
            _with_prefixes(lines, f"{table}.{name}" if table else name, number)
            if line.count('"""') == 1 or line.count("'''") == 1:
                in_multiline = True
    return lines


def _with_prefixes(lines: dict[str, int], name: str, number: int) -> None:
    """`[rail.analog]` or `rail.analog.positive = 1` also places `rail` (and `rail.analog`) at
    this line when nothing earlier did, so a message about the outer name has a line too."""
    lines.setdefault(name, number)
    while "." in name:
        name = name.rpartition(".")[0]
        if name in lines:
            break
        lines[name] = number


def line_of(lines: dict[str, int], path: str) -> int | None:
    """The line of `path`, or of the nearest enclosing table that has one."""
    while path:
        if path in lines:
            return lines[path]
        path = path.rpartition(".")[0]
    return None
