"""Part presets (the README's File formats, preset file): reading preset files and the search order with overrides.

Search order, later wins: the presets shipped with railroom, the user's own folder (the platform's
config folder, `railroom/presets`; RAILROOM_PRESETS_HOME overrides it, which tests use to keep a
developer's own folder out), folders named in the chain file, folders given with --presets.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from railroom.engine.circuit.model import Part, Problem
from railroom.engine.circuit.part_limits import (
    LIMIT_FIELDS,
    LIMIT_SIDES,
    LIMIT_UNITS,
    limit_problems,
    read_limits,
)
from railroom.engine.formats.fields import (
    MAX_TEXT,
    FieldReader,
    FileUnreadable,
    parse_toml,
    read_user_file,
    undecodable_text,
)
from railroom.engine.formats.toml_lines import key_lines
from railroom.engine.formats.values import has_control, visible

PART_FIELDS = {
    # key: (kind, is a pair, required)
    "description": ("text", False, False),
    "supply": ("voltage", True, True),
    "supply_abs_max": ("voltage", False, True),
    "output_headroom": ("voltage", True, True),
    "output_resistance": ("number", False, False),
    "input_headroom": ("voltage", True, True),
    "gbw": ("frequency", False, True),
    "slew": ("slew", False, True),
    "open_loop_gain": ("gain", False, True),
    "offset": ("voltage", False, True),
    "offset_drift": ("voltage", False, False),
    "bias_current": ("current", False, False),
    "output_current": ("current", False, True),
    **LIMIT_FIELDS,  # datasheet limits: engine/circuit/part_limits.py
}
# What the two ends of each pair field mean, in file order (the README's File formats, preset file).
PAIR_SIDES = {
    "supply": ("low", "high"),
    "output_headroom": ("upper", "lower"),
    "input_headroom": ("upper", "lower"),
    **LIMIT_SIDES,
}
UNITS = {
    "supply": "V",
    "supply_abs_max": "V",
    "output_headroom": "V",
    "output_resistance": "Ω",
    "input_headroom": "V",
    "gbw": "Hz",
    "slew": "V/s",
    "open_loop_gain": "V/V",
    "offset": "V",
    "offset_drift": "V/°C",
    "bias_current": "A",
    "output_current": "A",
    **LIMIT_UNITS,
}


def shipped_folder() -> Path:
    import railroom.presets

    return Path(railroom.presets.__file__).parent


def user_folder() -> Path:
    home = os.environ.get("RAILROOM_PRESETS_HOME")
    if home:
        return Path(home)
    from platformdirs import user_config_dir

    return Path(user_config_dir("railroom")) / "presets"


def search_order(chain_dirs: tuple[str, ...] = (), extra_dirs: tuple[str, ...] = ()) -> list[Path]:
    return [shipped_folder(), user_folder(), *map(Path, chain_dirs), *map(Path, extra_dirs)]


def missing_folders(extra_dirs: tuple[str, ...]) -> list[Problem]:
    """A --presets folder that is not there: its parts would silently be missing."""
    return [
        Problem(
            "--presets",
            None,
            visible(folder, 400),
            "not a folder" if Path(folder).exists() else "no such folder",
        )
        for folder in extra_dirs
        if not Path(folder).is_dir()
    ]


class PartTable(dict):
    """id -> Part, the later folder winning; `broken` holds the ids whose latest definition could
    not be read, each with the problem that says where (file and line of its table). Such an id
    is left out rather than served from an earlier folder: a user's override that fails to read
    must never quietly bring back the part it was meant to replace."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self.broken: dict[str, Problem] = {}
        self.hidden: dict[str, str] = {}  # broken id -> the earlier file no longer used


@dataclass
class Library:
    """Every part found, the later folder winning, with the problems of broken files.
    `fatal`: problems that stop a check whatever parts it uses (a folder or a file whose parts
    cannot even be listed)."""

    parts: PartTable = field(default_factory=PartTable)
    problems: list[Problem] = field(default_factory=list)
    folders: list[Path] = field(default_factory=list)
    fatal: list[Problem] = field(default_factory=list)

    def add(self, part: Part) -> None:
        earlier = self.parts.get(part.id)
        if earlier is not None:
            part = replace(part, overrides=(*earlier.overrides, earlier.origin))
        self.parts[part.id] = part
        self.parts.broken.pop(part.id, None)
        self.parts.hidden.pop(part.id, None)

    def add_broken(self, part_id: str, where: Problem) -> None:
        earlier = self.parts.pop(part_id, None)
        if earlier is not None:
            self.parts.hidden[part_id] = earlier.origin
        self.parts.broken[part_id] = where


def preset_files(folder: Path) -> list[Path]:
    """The *.toml files of a folder, sorted; raises OSError when the folder cannot be listed."""
    with os.scandir(folder) as entries:
        return sorted(Path(e.path) for e in entries if e.name.endswith(".toml"))


def load_library(folders: list[Path]) -> Library:
    library = Library(folders=list(folders))
    for folder in folders:
        if not folder.is_dir():
            continue
        try:
            paths = preset_files(folder)
        except OSError as err:
            problem = Problem(str(folder), None, "(folder)", f"cannot be read: {err.strerror or err}")
            library.problems.append(problem)
            library.fatal.append(problem)
            continue
        for path in paths:
            parts, problems, broken = read_presets(path)
            library.problems.extend(problems)
            for part in parts:
                library.add(part)
            if broken is None:
                library.fatal.extend(problems)
                continue
            for part_id, where in broken.items():
                library.add_broken(part_id, where)
    return library


def read_preset_file(path: Path) -> tuple[list[Part], list[Problem]]:
    """Every good part in the file, and the problems of the others (a bad part never hides a good one)."""
    parts, problems, _ = read_presets(path)
    return parts, problems


def read_presets(path: Path) -> tuple[list[Part], list[Problem], dict[str, Problem] | None]:
    """The good parts, the problems, and the ids of the parts that could not be read, each with
    the line of its table. A file that is not text still names the [part.ID] tables it holds; an
    unreadable one gives `broken` None (its parts are unknown); a FIFO or folder named *.toml
    gives an empty `broken` (it holds no presets)."""
    try:
        text = read_user_file(path)
    except FileUnreadable as err:
        if err.skipped:
            return [], [err.problem], {}
        if err.problem.line is None:
            return [], [err.problem], None
        return [], [err.problem], _tables_in(undecodable_text(path), str(path), err.problem)
    broken: dict[str, Problem] = {}
    parts, problems = parts_from_text(text, str(path), broken)
    return parts, problems, broken


def _tables_in(text: str, path: str, problem: Problem) -> dict[str, Problem]:
    """The [part.ID] tables a file that could not be read seems to hold, by their lines."""
    found = {}
    for key, line in key_lines(text).items():
        head, _, part_id = key.partition(".")
        if head == "part" and part_id and "." not in part_id:
            found[part_id] = Problem(path, line, f"part.{visible(part_id)}", problem.message)
    return found


def parts_from_text(
    text: str, path: str, broken: dict[str, Problem] | None = None
) -> tuple[list[Part], list[Problem]]:
    """The good parts and the problems; `broken` (when given) receives the ids that failed."""
    broken = {} if broken is None else broken
    data, problems = parse_toml(text, path)
    if data is None:
        broken.update(_tables_in(text, path, problems[0]) if problems else {})
        return [], problems
    reader = FieldReader(path, text)
    for key in data:
        if key != "part":
            reader.problem(key, "unknown table; a preset file holds [part.ID] tables only")
    tables = data.get("part", {})
    if not isinstance(tables, dict):
        reader.problem("part", "expected tables such as [part.my-op-amp]")
        tables = {}
    parts = []
    for part_id, table in tables.items():
        before = len(reader.problems)
        part = _read_part(part_id, table, reader)
        if part is not None and len(reader.problems) == before:
            parts.append(replace(part, origin=path))
        elif len(reader.problems) > before:
            first = reader.problems[before]
            broken[part_id] = Problem(
                path, reader.line(f"part.{part_id}") or first.line, first.field, first.message
            )
    return parts, reader.problems


def _read_part(part_id: str, t, r: FieldReader) -> Part | None:
    w = f"part.{part_id}"
    if has_control(part_id):
        r.problem(w, "expected a part id without control characters")
        return None
    if len(part_id) > MAX_TEXT:
        r.problem(w, f"expected a part id of at most {MAX_TEXT} characters, got {len(part_id):,}")
        return None
    if not isinstance(t, dict):
        r.problem(w, "expected a table of part fields")
        return None
    r.unknown_keys(t, w, set(PART_FIELDS), "a part preset")
    values: dict[str, Any] = {}  # Part's keyword arguments, each of its own field's type
    for key, (kind, pair, required) in PART_FIELDS.items():
        if key in LIMIT_FIELDS:
            continue
        if kind == "text":
            values[key] = r.text_field(t, w, key, default="")
        elif pair:
            headroom = "headroom" in key
            values[key] = (
                r.span(t, w, key, kind, None, check_order=not headroom, ordered=", ".join(PAIR_SIDES[key]))
                if key in t
                else _missing(r, w, key)
            )
        elif key == "output_resistance":
            raw = t.get(key, 0)
            values[key] = 0.0 if raw in (0, "0") else r.number(t, w, key, "resistance")
        else:
            default = 0.0 if not required else ...
            values[key] = (
                r.number(t, w, key, kind) if default is ... else r.number(t, w, key, kind, default=default)
            )
    limits = read_limits(t, w, r)
    if any(v is None for v in values.values()) or any(
        v is None for k, v in limits.items() if k != "temperature_range" or k in t
    ):
        return None
    part = Part(id=part_id, **values, **limits)
    for key, message in sanity_problems(part) + limit_problems(part):
        r.problem(f"{w}.{key}", message)
    return part


def _missing(r: FieldReader, w: str, key: str) -> tuple[float, float] | None:
    """Record a missing pair; None stands for it among the part's values."""
    r.problem(f"{w}.{key}", 'missing; expected a pair such as ["30m", "30m"]')
    return None


def sanity_problems(part: Part) -> list[tuple[str, str]]:
    """Plausibility of a preset, each as (field, message)."""
    found = []
    low, high = part.supply
    if low > high:
        found.append(("supply", f"reversed: expected [low, high], got [{low:g}, {high:g}] V"))
        low, high = high, low
    if low <= 0:
        found.append(("supply", f"expected a positive supply span, got {low:g} V"))
    if part.supply_abs_max < high:
        found.append(("supply_abs_max", f"below the largest allowed supply ({high:g} V)"))
    if sum(part.output_headroom) >= low:
        found.append(
            (
                "output_headroom",
                f"upper plus lower headroom leaves no output swing at the smallest supply ({low:g} V)",
            )
        )
    if sum(part.input_headroom) >= low:
        found.append(
            (
                "input_headroom",
                f"upper plus lower headroom leaves no input range at the smallest supply ({low:g} V)",
            )
        )
    if min(part.output_headroom) < 0:
        found.append(("output_headroom", "below 0: an output cannot swing beyond its own rails"))
    for key, unit in (("gbw", "Hz"), ("slew", "V/s")):
        if getattr(part, key) <= 0:
            found.append((key, f"expected more than 0 {unit}, got {getattr(part, key):g}"))
    if part.open_loop_gain < 1:
        found.append(("open_loop_gain", f"expected at least 1 V/V (0 dB), got {part.open_loop_gain:g}"))
    for key in ("offset", "offset_drift", "bias_current", "output_resistance"):
        if getattr(part, key) < 0:
            found.append((key, "expected 0 or more"))
    if part.output_current <= 0:
        found.append(("output_current", "expected more than 0 A"))
    return found
