"""`railroom presets [list | show ID | check FILE]`: the user's library from the command line.

Plain text for SSH sessions and scripts; never imports Textual. Exit 0 when all is well, 2 when an
id is unknown or a file has problems (every problem on stderr: file, line, field, message).
"""

from __future__ import annotations

import difflib
import sys
from pathlib import Path

from railroom.engine import (
    LIMIT_FIELDS,
    PAIR_SIDES,
    PART_FIELDS,
    PART_UNITS as UNITS,
    Library,
    Part,
    escaped,
    format_si,
    load_library,
    missing_folders,
    read_preset_file,
    search_order,
    shipped_folder,
    user_folder,
    visible,
)
from railroom.tui.subcommands.common import (
    MAX_PROBLEM_LINES,
)  # as `railroom check`: the first lines, then a count
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR


def say(text: str = "", file=None) -> None:
    """print(), with every file name, id and message shown as text (control characters, escape
    sequences, direction overrides and invisible marks as visible escapes)."""
    print(escaped(text), file=file)


def run_presets(args) -> int:
    action = getattr(args, "action", None) or "list"
    if action == "check":
        return check_file(args.target)
    extra = tuple(getattr(args, "presets", []) or ())
    library = load_library(search_order((), extra))
    missing = missing_folders(extra)
    if action == "show":
        status = show_part(library, args.target)
    else:
        status = list_parts(library)
    report_problems(missing, "preset folder(s) given with --presets not found")
    return INPUT_ERROR if missing or library.fatal else status


def folder_label(folder: Path) -> str:
    if folder == shipped_folder():
        return "shipped"
    if folder == user_folder():
        return "yours"
    return "extra"


def list_parts(library: Library) -> int:
    say("Search order (a later folder overrides an earlier id):")
    for number, folder in enumerate(library.folders, start=1):
        state = "" if folder.is_dir() else "  (not there yet)"
        say(f"  {number}. {folder_label(folder):8} {folder}{state}")
    say()
    if not library.parts:
        say("No presets found.")
    width = max((len(part_id) for part_id in library.parts), default=2)
    for part_id in sorted(library.parts):
        part = library.parts[part_id]
        origin = Path(part.origin)
        line = f"{part_id:{width}}  {folder_label(origin.parent):8} {origin}"
        if part.overrides:
            line += "  overrides " + ", ".join(part.overrides)
        say(line)
    for part_id in sorted(library.parts.hidden):
        where = library.parts.broken[part_id]
        say(
            visible(
                f"railroom: {where.file}:{where.line or '?'}: part.{part_id}: could not be "
                f"read, so it is not listed; {library.parts.hidden[part_id]} is not used in "
                "its place",
                2000,
            ),
            file=sys.stderr,
        )
    report_problems(library.problems, "problem(s) in preset files (the good presets are listed)")
    return GO


def report_problems(problems, heading: str) -> None:
    if problems:
        say(f"railroom: {len(problems)} {heading}:", file=sys.stderr)
        for problem in problems[:MAX_PROBLEM_LINES]:
            say(f"railroom: {problem}", file=sys.stderr)
        if len(problems) > MAX_PROBLEM_LINES:
            say(f"railroom: and {len(problems) - MAX_PROBLEM_LINES:,} more problems", file=sys.stderr)


def show_part(library: Library, part_id: str | None) -> int:
    part = library.parts.get(part_id or "")
    broken = library.parts.broken.get(part_id or "")
    if broken is not None:
        say(
            visible(
                f"railroom: preset {part_id!r} is defined in {broken.file}:{broken.line or '?'}"
                f", which could not be read ({broken.field}: {broken.message})",
                2000,
            ),
            file=sys.stderr,
        )
        return INPUT_ERROR
    if part is None:
        hint = difflib.get_close_matches(part_id or "", list(library.parts), n=3)
        say(
            f"railroom: no preset {part_id!r}"
            + (f"; did you mean {', '.join(hint)}?" if hint else "; `railroom presets list` shows them all"),
            file=sys.stderr,
        )
        return INPUT_ERROR
    say(f"[part.{part.id}]  from {part.origin}")
    for earlier in part.overrides:
        say(f"  overrides {earlier}")
    for line in part_lines(part):
        say(line)
    return GO


def limit_text(key: str, value) -> str | None:
    """A datasheet limit as `presets show` prints it; None when the part leaves it out."""
    if key == "phase_reversal":
        return "yes: the output inverts beyond the input range" if value else None
    if key == "output_headroom_curve":
        return (
            None
            if not value
            else "; ".join(
                f"{format_si(c, 'A')}: upper {format_si(up, 'V')}, lower {format_si(down, 'V')}"
                for c, up, down in value
            )
        )
    if key == "temperature_range":
        return None if value is None else f"{value[0]:g} to {value[1]:g} °C"
    if key == "bias_current_doubling":
        return None if not value else f"doubles every {value:g} °C above 25 °C"
    return None if not value else format_si(value, UNITS[key])


def part_lines(part: Part) -> list[str]:
    """One line per field, in engineer's units ("0.6 V/µs", "100 dB (1e+05 V/V)")."""
    lines = []
    for key in PART_FIELDS:
        value = getattr(part, key)
        if key == "description":
            text = value or "-"
        elif key in LIMIT_FIELDS:
            text = limit_text(key, value)
            if text is None:
                continue
        elif isinstance(value, tuple):
            a, b = PAIR_SIDES[key]
            text = f"{a} {format_si(value[0], UNITS[key])}, {b} {format_si(value[1], UNITS[key])}"
        elif key == "open_loop_gain":
            text = f"{format_si(value, 'dB')} ({value:.3g} V/V)"
        else:
            text = format_si(value, UNITS[key])
        lines.append(f"  {key:18} {text}")
    return lines


def check_file(target: str | None) -> int:
    if not target:
        say("railroom: presets check needs a FILE", file=sys.stderr)
        return INPUT_ERROR
    path = Path(target)
    if not path.exists():
        say(visible(f"railroom: {path}: no such file", 2000), file=sys.stderr)
        return INPUT_ERROR
    parts, problems = read_preset_file(path)
    if problems:
        report_problems(problems, f"problem(s) in {path}")
        return INPUT_ERROR
    say(f"{path}: {len(parts)} preset(s), no problems: " + ", ".join(p.id for p in parts))
    return GO
