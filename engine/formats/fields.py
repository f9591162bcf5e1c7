"""Reading typed fields out of a parsed TOML table while collecting located problems.

One `FieldReader` serves one file: every accessor returns a value or None and records a
`Problem(file, line, field, message)` instead of raising, so a file's problems come out all at once.
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass, field

from railroom.engine.circuit.model import Problem
from railroom.engine.formats.toml_lines import key_lines, line_of
from railroom.engine.formats.values import Quantity, ValueTextError, has_control, parse_quantity, visible

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on Python 3.10 only
    import tomli as tomllib

_MISSING = object()
MAX_FILE_BYTES = 1 << 20  # 1 MiB: a 200-stage chain is about 20 kB (README, "Limits")


class FileUnreadable(Exception):
    """A user's file that cannot be read as text; `problem` says why, located where it can be.
    `skipped`: not a regular file at all (a FIFO, a device, a folder named *.toml)."""

    def __init__(self, problem: Problem, skipped: bool = False) -> None:
        self.problem, self.skipped = problem, skipped
        super().__init__(str(problem))


def read_user_file(path, limit: int = MAX_FILE_BYTES) -> str:
    """The text of a chain or preset file: a regular file only (a FIFO would block, /dev/zero
    never ends), at most `limit` bytes, UTF-8 with or without a byte-order mark. Raises
    FileUnreadable with a located problem (a bad byte is named by its line)."""
    import os
    import stat

    name = str(path)
    try:
        # O_NONBLOCK: opening a FIFO with no writer returns at once instead of waiting for one.
        handle = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0))
    except OSError as err:
        raise FileUnreadable(Problem(name, None, "(file)", f"cannot be read: {_reason(err)}")) from None
    try:
        info = os.fstat(handle)
        if not stat.S_ISREG(info.st_mode):
            kind = (
                "a folder"
                if stat.S_ISDIR(info.st_mode)
                else "a FIFO (named pipe)"
                if stat.S_ISFIFO(info.st_mode)
                else "a device"
                if stat.S_ISCHR(info.st_mode) or stat.S_ISBLK(info.st_mode)
                else "a socket"
                if stat.S_ISSOCK(info.st_mode)
                else "not a plain file"
            )
            raise FileUnreadable(
                Problem(name, None, "(file)", f"not read: {kind}, not a regular file"), skipped=True
            )
        if info.st_size > limit:
            raise FileUnreadable(Problem(name, None, "(file)", _too_large(info.st_size, limit)))
        chunks, size = [], 0
        while size <= limit:
            chunk = os.read(handle, min(1 << 16, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as err:
        raise FileUnreadable(Problem(name, None, "(file)", f"cannot be read: {_reason(err)}")) from None
    finally:
        os.close(handle)
    data = b"".join(chunks)
    if len(data) > limit:
        raise FileUnreadable(Problem(name, None, "(file)", _too_large(len(data), limit)))
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = data[: err.start].count(b"\n") + 1
        raise FileUnreadable(
            Problem(
                name,
                line,
                "(file)",
                f"not UTF-8 text: byte 0x{data[err.start]:02x} cannot be decoded; save the file as UTF-8",
            )
        ) from None


def undecodable_text(path, limit: int = MAX_FILE_BYTES) -> str:
    """The text of a regular file that is not UTF-8, bad bytes replaced (to find its table
    names for a message); empty when it cannot be read at all."""
    import os
    import stat

    try:
        handle = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError:
        return ""
    try:
        if not stat.S_ISREG(os.fstat(handle).st_mode):
            return ""
        return os.read(handle, limit).decode("utf-8", errors="replace")
    except OSError:
        return ""
    finally:
        os.close(handle)


def _reason(err: OSError) -> str:
    return err.strerror or str(err)


def _too_large(size: int, limit: int) -> str:
    return f"too large to be a chain or preset file ({size:,} bytes; the limit is {limit:,} bytes)"


MAX_TEXT = 200  # characters in a title, name or description (README, "Limits")
MAX_UNKNOWN = 20  # unknown keys named one by one in each table; the rest are counted
MAX_NESTING = 16  # levels of tables and arrays; a chain needs 5 (stage.N.inputs.M.r), a preset 4


def parse_toml(text: str, path: str) -> tuple[dict | None, list[Problem]]:
    """Parse TOML text; a syntax error becomes one located problem, and so does nesting deeper
    than MAX_NESTING (the parser and everything after it would recurse without bound)."""
    try:
        data = tomllib.loads(text)
    except RecursionError:
        data = None
    except tomllib.TOMLDecodeError as err:
        return None, [_syntax_problem(err, text, path)]
    if data is None or nesting_depth(data) > MAX_NESTING:
        return None, [
            Problem(
                path,
                deepest_line(text),
                "(file)",
                f"nested more than {MAX_NESTING} levels deep (tables and arrays); "
                "a chain file needs 5, a preset file 4",
            )
        ]
    return data, []


def nesting_depth(data) -> int:
    """How deep tables and arrays nest, counted without recursion."""
    deepest, stack = 0, [(data, 1)]
    while stack:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        if deepest > MAX_NESTING:
            break
        children = item.values() if isinstance(item, dict) else item
        stack.extend((child, depth + 1) for child in children if isinstance(child, (dict, list)))
    return deepest


_NESTING_MARKS = re.compile(r"""[\[\]{}#\n"']""")


def deepest_line(text: str) -> int | None:
    """The first line where brackets and braces (outside strings and comments) nest past
    MAX_NESTING, or failing that the first key or table header with that many dots."""
    depth, line, at = 0, 1, 0
    while (found := _NESTING_MARKS.search(text, at)) is not None:
        mark, at = found[0], found.end()
        if mark == "\n":
            line += 1
        elif mark == "#":
            at = _end_of_line(text, at)
        elif mark in "\"'":
            quote = mark * 3 if text.startswith(mark * 3, at - 1) else mark
            end = _string_end(text, at - 1 + len(quote), quote)
            line += text.count("\n", at, end)
            at = end
        else:
            depth += 1 if mark in "[{" else -1
            if depth > MAX_NESTING:
                return line
    for number, row in enumerate(text.split("\n"), start=1):
        if row.split("=", 1)[0].count(".") >= MAX_NESTING:
            return number
    return None


def _end_of_line(text: str, at: int) -> int:
    end = text.find("\n", at)
    return len(text) if end < 0 else end


def _string_end(text: str, at: int, quote: str) -> int:
    """Just past the closing quote of a string opened before `at` (a basic string's escapes
    skipped); the end of the line for a single-line string left open."""
    while at < len(text):
        if quote[0] == '"' and text[at] == "\\":
            at += 2
            continue
        if text.startswith(quote, at):
            return at + len(quote)
        if len(quote) == 1 and text[at] == "\n":
            return at
        at += 1
    return len(text)


def _syntax_problem(err, text: str, path: str) -> Problem:
    line = getattr(err, "lineno", None)
    message = str(err)
    if line is None:
        found = re.search(r"line (\d+)", message)
        line = int(found.group(1)) if found else None
    if line is None and "end of document" in message:
        line = max(1, text.count("\n") + (0 if text.endswith("\n") else 1))
    reason = getattr(err, "msg", message.split(" (at ")[0])
    column = getattr(err, "colno", None)
    if column is None:
        found = re.search(r"column (\d+)", message)
        column = int(found.group(1)) if found else None
    where = f" at column {column}" if column is not None and line is not None else ""
    return Problem(path, line, "(file)", f"not valid TOML{where}: {reason}")


@dataclass
class FieldReader:
    path: str
    text: str
    problems: list[Problem] = field(default_factory=list)
    # net name -> what `{ net = NAME }` reads as (None: the net itself has a problem); None
    # outside a chain's stages, where a net takes the place of no value
    nets: dict | None = None

    def __post_init__(self) -> None:
        self.lines = key_lines(self.text)

    def line(self, where: str) -> int | None:
        return line_of(self.lines, where)

    def problem(self, where: str, message: str, label: str | None = None) -> None:
        # Keys and echoed values are user text: never let a control character reach a terminal.
        self.problems.append(
            Problem(self.path, self.line(where), visible(label or where), visible(message, 400))
        )

    def quantity(
        self, table: dict, where: str, key: str, kind: str, *, default=_MISSING, label: str | None = None
    ) -> Quantity | None:
        """A value as the README's File formats write it; `default` (a float) when the key is absent and allowed."""
        raw = table.get(key, _MISSING)
        name = f"{where}.{key}" if where else key
        if raw is _MISSING:
            if default is _MISSING:
                self.problem(name, f"missing; expected {_expected(kind)}", label)
                return None
            return None if default is None else Quantity(float(default))
        if isinstance(raw, dict):
            return self.net_reference(raw, name, kind, label)
        try:
            return parse_quantity(raw, kind)
        except ValueTextError as err:
            self.problem(name, str(err), label)
            return None

    def net_reference(self, raw: dict, name: str, kind: str, label: str | None) -> Quantity | None:
        """`{ net = "NAME" }` in place of a voltage (the README's File formats, [nets.NAME])."""
        if "net" not in raw or len(raw) != 1 or not isinstance(raw["net"], str):
            self.problem(name, f'expected {_expected(kind)}, or {{ net = "NAME" }} for a voltage', label)
            return None
        if kind != "voltage":
            self.problem(
                name,
                f"a net is a voltage, and this field takes no voltage: expected {_expected(kind)}",
                label,
            )
            return None
        if self.nets is None:
            self.problem(name, "a net is taken by a stage's voltage fields only, not here", label)
            return None
        wanted = raw["net"]
        if wanted not in self.nets:
            known = ", ".join(sorted(self.nets))
            hint = _closest(wanted, self.nets)
            self.problem(
                name,
                f"no net named {wanted!r}"
                + (
                    f"; did you mean {hint!r}?"
                    if hint
                    else f"; expected one of {known}"
                    if known
                    else f"; add a table [nets.{wanted}]"
                ),
                label,
            )
            return None
        return self.nets[wanted]

    def number(
        self, table: dict, where: str, key: str, kind: str, default=_MISSING, label: str | None = None
    ) -> float | None:
        """A plain value: written tolerance is refused here (rails and ranges say theirs elsewhere)."""
        q = self.quantity(table, where, key, kind, default=default, label=label)
        if q is None:
            return None
        if q.tolerance is not None or q.tempco is not None:
            self.problem(f"{where}.{key}", "takes a plain value here, without tolerance", label)
            return None
        return q.value

    def span(
        self,
        table: dict,
        where: str,
        key: str,
        kind: str,
        default,
        *,
        ordered: str = "low, high",
        check_order: bool = True,
    ) -> tuple[float, float] | None:
        """A [low, high] pair; a reversed pair is a problem."""
        raw = table.get(key, _MISSING)
        name = f"{where}.{key}" if where else key
        if raw is _MISSING:
            return default
        if not isinstance(raw, list) or len(raw) != 2:
            self.problem(name, f"expected a pair [{ordered}] of {_expected(kind)}")
            return None
        values = []
        for item in raw:
            try:
                q = parse_quantity(item, kind)
            except ValueTextError as err:
                self.problem(name, str(err))
                return None
            values.append(q.value)
        if check_order and values[0] > values[1]:
            self.problem(
                name,
                f"reversed: expected [{ordered}] with the first not above the second, "
                f"got [{values[0]:g}, {values[1]:g}]",
            )
            return None
        return (values[0], values[1])

    def text_field(
        self,
        table: dict,
        where: str,
        key: str,
        default=_MISSING,
        choices: tuple[str, ...] | None = None,
        longest: int = MAX_TEXT,
    ) -> str | None:
        raw = table.get(key, _MISSING)
        name = f"{where}.{key}" if where else key
        if raw is _MISSING:
            if default is _MISSING:
                self.problem(name, "missing; expected text" + _one_of(choices))
                return None
            return default
        if not isinstance(raw, str):
            self.problem(name, f"expected text{_one_of(choices)}, got {type(raw).__name__} {raw!r}")
            return None
        if choices is not None and raw not in choices:
            self.problem(name, f"expected one of {', '.join(choices)}, got {raw!r}")
            return None
        if has_control(raw):
            self.problem(name, f"expected text without control characters, got {raw!r}")
            return None
        if len(raw) > longest:
            self.problem(name, f"expected at most {longest} characters, got {len(raw):,}")
            return None
        return raw

    def integer(self, table: dict, where: str, key: str, default: int, low: int, high: int) -> int | None:
        raw = table.get(key, default)
        if isinstance(raw, bool) or not isinstance(raw, int) or not low <= raw <= high:
            self.problem(f"{where}.{key}", f"expected a whole number from {low} to {high}, got {raw!r}")
            return None
        return raw

    def unknown_keys(self, table: dict, where: str, known: tuple[str, ...] | set[str], what: str) -> None:
        """One problem per unknown key, the first MAX_UNKNOWN of a table; then one that counts
        the rest (50,000 mistyped keys are not 50,000 lines)."""
        unknown = [key for key in table if key not in known]
        for key in unknown[:MAX_UNKNOWN]:
            hint = _closest(key, known)
            self.problem(
                f"{where}.{key}" if where else key,
                f"unknown field for {what}"
                + (f"; did you mean {hint!r}?" if hint else f"; expected one of {', '.join(sorted(known))}"),
            )
        if len(unknown) > MAX_UNKNOWN:
            rest = unknown[MAX_UNKNOWN:]
            self.problem(
                f"{where}.{rest[0]}" if where else rest[0],
                f"{len(rest):,} more unknown fields for {what} from this line on (not listed one by one)",
                label=where or "(file)",
            )


def _expected(kind: str) -> str:
    return {
        "resistance": 'a resistance such as "4k7" or "10k 1%"',
        "capacitance": 'a capacitance such as "4n7"',
        "voltage": 'a voltage such as "2.5" or "-15"',
        "current": 'a current such as "20m"',
        "frequency": 'a frequency such as "20k"',
        "gain": 'a gain such as "100dB"',
        "slew": 'a slew rate such as "0.5V/us"',
        "fraction": 'a fraction such as "1%"',
        "temperature": "a temperature in C",
    }.get(kind, f"a {kind}")


def _one_of(choices: tuple[str, ...] | None) -> str:
    return f" (one of {', '.join(choices)})" if choices else ""


def _closest(word: str, known) -> str | None:
    import difflib

    found = difflib.get_close_matches(word, list(known), n=1, cutoff=0.6)
    return found[0] if found else None
