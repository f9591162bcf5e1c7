"""Editing a preset file without losing anything the user wrote (see "Presets" in the README).

Every edit takes the file's text and returns new text; nothing else in the file changes. Field
values are replaced with tomlkit, which keeps each line's comment and the table's layout. Whole
parts (copy, rename, delete) are cut and pasted as lines of text, so their comments travel with
them and the neighbouring parts stay byte-for-byte. Before anything is written the new text is
read back by the same loader as every other preset (`parts_from_text`), and saving goes through
`write_atomic` with a backup, after checking that nobody changed the file since it was opened.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import tomlkit
from tomlkit.exceptions import TOMLKitError

from railroom.engine.formats.atomic import Fingerprint, fingerprint, write_atomic
from railroom.engine.circuit.model import InputError, Problem
from railroom.engine.formats.presets import PART_FIELDS, parts_from_text, shipped_folder
from railroom.engine.formats.toml_lines import key_lines

PART_ID = re.compile(r"^[A-Za-z0-9_-]+$")
_HEADER = re.compile(r"^\s*\[")

Raw = str | tuple[str, str]


class PresetEditError(ValueError):
    """An edit that cannot be made (unknown part, taken or malformed id, unusual layout)."""


class ChangedOnDisk(Exception):
    """The file changed since it was opened; the caller must ask before writing over it."""

    def __init__(self, path: Path):
        self.path = path
        super().__init__(f"{path} changed on disk since it was opened")


@dataclass(frozen=True)
class OpenedPresetFile:
    """A preset file as read for editing, with the fingerprint that detects a change by someone else."""

    path: Path
    text: str
    stamp: Fingerprint | None


def open_preset_file(path: str | Path) -> OpenedPresetFile:
    path = Path(path)
    stamp = fingerprint(path)
    text = path.read_text(encoding="utf-8") if stamp is not None else ""
    return OpenedPresetFile(path, text, stamp)


def is_shipped(path: str | Path) -> bool:
    """Shipped presets are never written; an edit goes to a copy in the user's folder."""
    return Path(path).resolve().parent == shipped_folder().resolve()


def check_part_id(part_id: str, taken: set[str] | frozenset[str] = frozenset()) -> str | None:
    """Why `part_id` cannot name a new part, or None when it can."""
    if not PART_ID.match(part_id):
        return "use letters, digits, '-' and '_' only (it becomes a TOML table name)"
    if part_id in taken:
        return f"a part named {part_id!r} already exists"
    return None


def raw_fields(text: str, part_id: str) -> dict[str, Raw]:
    """The part's fields as the user wrote them ("0.5V/us", ("30m", "30m")), for a form."""
    table = _table(tomlkit.parse(text), part_id)
    found: dict[str, Raw] = {}
    for key, value in table.unwrap().items():
        if isinstance(value, list) and value and all(isinstance(p, list) for p in value):
            found[key] = "; ".join(" ".join(_written(x) for x in p) for p in value)  # a curve
        elif isinstance(value, list) and len(value) == 2:
            found[key] = (_written(value[0]), _written(value[1]))
        else:
            found[key] = _written(value)
    return found


def _written(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    return value if isinstance(value, str) else repr(value) if isinstance(value, float) else str(value)


def set_fields(text: str, part_id: str, changes: dict[str, Raw | None]) -> str:
    """Set (or, with None, remove) fields of one part; untouched fields keep their exact text."""
    document = tomlkit.parse(text)
    table = _table(document, part_id)
    current = raw_fields(text, part_id)
    for key, raw in changes.items():
        if key not in PART_FIELDS:
            raise PresetEditError(f"{key!r} is not a part field")
        if raw is None:
            if key in table:
                del table[key]
        elif current.get(key) != raw:
            _put(table, key, raw)
    return tomlkit.dumps(document)


def _put(table, key: str, raw: Raw) -> None:
    value: object = list(raw) if isinstance(raw, tuple) else raw
    kind = PART_FIELDS[key][0]
    if kind == "flag" and isinstance(raw, str) and raw.strip().lower() in ("true", "false"):
        value = raw.strip().lower() == "true"  # a TOML boolean, as the file format says
    elif kind == "curve" and isinstance(raw, str):
        from railroom.engine.circuit.part_limits import parse_curve_text

        value = parse_curve_text(raw)  # "0 30m 30m; 10m 0.3 0.35" -> points
    if key in table:
        table[key] = value
        return
    # A new key goes after the field that precedes it in the order of PART_FIELDS, so the file
    # reads in order;
    # tomlkit's public add() would put it after the blank lines and comments ending the table.
    order = list(PART_FIELDS)
    before = [k for k in order[: order.index(key)] if k in table] or list(table.keys())
    if before:
        insert_after(table, before[-1], key, value)
    else:
        table.add(key, value)


def insert_after(table, after: str, key: str, value) -> None:
    """Put a new key on the line after `after` (whose own comment stays on its line)."""
    body = table.value.body
    at = next(i for i, (k, _) in enumerate(body) if k is not None and k.key == after)
    if at + 1 < len(body):
        table.value._insert_at(at + 1, key, value)
    else:
        table.add(key, value)


def _table(document, part_id: str):
    parts = document.get("part")
    if parts is None or part_id not in parts or not hasattr(parts[part_id], "value"):
        raise PresetEditError(f"no part {part_id!r} in this file")
    return parts[part_id]


def part_block(text: str, part_id: str) -> tuple[int, int, int]:
    """Lines of `[part.ID]` as (first, header, end): its own comment, its header, up to its last key.

    Comment lines right above the header belong to the part (unless they open the file: a file's
    heading stays); blank and comment lines just before the next header introduce the next part.
    """
    lines = text.splitlines(keepends=True)
    found = key_lines(text).get(f"part.{part_id}")
    if found is None or not _HEADER.match(lines[found - 1]):
        raise PresetEditError(f"no [part.{part_id}] table in this file")
    header = first = found - 1
    while first > 0 and lines[first - 1].lstrip().startswith("#"):
        first -= 1
    if first == 0:
        first = header
    end = found
    while end < len(lines) and not _HEADER.match(lines[end]):
        end += 1
    while end > found and (not lines[end - 1].strip() or lines[end - 1].lstrip().startswith("#")):
        end -= 1
    return first, header, end


def copy_part(source_text: str, part_id: str, target_text: str, new_id: str) -> str:
    """Append a copy of a part, its comments included, to the end of another (or the same) file."""
    first, header, end = part_block(source_text, part_id)
    block = source_text.splitlines(keepends=True)[first:end]
    block[header - first] = _renamed_header(block[header - first], part_id, new_id)
    if block[-1] and not block[-1].endswith("\n"):
        block[-1] += "\n"
    if target_text and not target_text.endswith("\n"):
        target_text += "\n"
    joint = "\n" if target_text.strip() and not target_text.endswith("\n\n") else ""
    return target_text + joint + "".join(block)


def rename_part(text: str, part_id: str, new_id: str) -> str:
    _, header, _ = part_block(text, part_id)
    lines = text.splitlines(keepends=True)
    lines[header] = _renamed_header(lines[header], part_id, new_id)
    return "".join(lines)


def delete_part(text: str, part_id: str) -> str:
    start, _, end = part_block(text, part_id)
    lines = text.splitlines(keepends=True)
    while end < len(lines) and not lines[end].strip() and (start == 0 or not lines[start - 1].strip()):
        end += 1  # drop the blank lines that would otherwise meet
    return "".join(lines[:start] + lines[end:])


def _renamed_header(line: str, part_id: str, new_id: str) -> str:
    found = re.match(r"^(\s*\[\s*part\s*\.\s*)(\"[^\"]*\"|'[^']*'|[A-Za-z0-9_-]+)(\s*\].*)$", line, re.S)
    if not found:
        raise PresetEditError(f"cannot read the table header of {part_id!r}: {line.strip()}")
    return f"{found[1]}{new_id}{found[3]}"


def new_problems(old_text: str, new_text: str, path: str) -> list[Problem]:
    """Problems the edit brings in; those already in the file are the user's, not this edit's."""
    try:
        tomlkit.parse(new_text)
    except TOMLKitError as err:
        return [Problem(path, getattr(err, "line", None), "(file)", f"not valid TOML: {err}")]
    before = {(p.field, p.message) for p in parts_from_text(old_text, path)[1]}
    return [p for p in parts_from_text(new_text, path)[1] if (p.field, p.message) not in before]


def save_preset_text(opened: OpenedPresetFile, new_text: str) -> OpenedPresetFile:
    """Write `new_text` over the file `opened` came from, atomically, keeping `NAME.bak`.

    Raises ChangedOnDisk if the file's fingerprint moved since it was opened (the caller asks the
    user, then re-opens and applies the edit again to what is on disk now), InputError if the edit
    brings in a problem, PresetEditError for a shipped file. Returns the file as now opened.
    """
    if is_shipped(opened.path):
        raise PresetEditError("shipped presets are never modified; edit a copy in your own folder")
    if fingerprint(opened.path) != opened.stamp:
        raise ChangedOnDisk(opened.path)
    problems = new_problems(opened.text, new_text, str(opened.path))
    if problems:
        raise InputError(problems)
    opened.path.parent.mkdir(parents=True, exist_ok=True)
    write_atomic(opened.path, new_text, backup=True)
    return open_preset_file(opened.path)


def editing_target(origin: str | Path, part_id: str, writable: str | Path) -> tuple[OpenedPresetFile, str]:
    """The file an edit of `part_id` is saved to, and that file's text holding the part.

    A part from a shipped file is copied, comments and all, into the file of the same name in the
    user's folder (which comes later in the search order, so the copy overrides the shipped one);
    the shipped file is only read. Any other part is edited where it lives.
    """
    source = open_preset_file(origin)
    if not is_shipped(origin):
        return source, source.text
    target = open_preset_file(Path(writable) / Path(origin).name)
    if part_id in _part_ids(target.text):
        return target, target.text
    return target, copy_part(source.text, part_id, target.text, part_id)


def _part_ids(text: str) -> set[str]:
    try:
        return set(tomlkit.parse(text).get("part", {}))
    except TOMLKitError:
        return set()


class EditSession:
    """One part opened in a form: where it is saved, and the values the user started from.

    Saving applies only the fields the user changed since opening to the file's text, so when the
    file changed on disk and the user chose to keep editing, the other change is kept as well.
    """

    def __init__(self, origin: str | Path, part_id: str, writable: str | Path):
        self.origin, self.part_id, self.writable = Path(origin), part_id, Path(writable)
        self.reload()

    def reload(self) -> dict[str, Raw]:
        """Read the part afresh from disk, dropping the user's unsaved values."""
        self.target, self.text = editing_target(self.origin, self.part_id, self.writable)
        self.started = raw_fields(self.text, self.part_id)
        return dict(self.started)

    def keep_editing(self) -> None:
        """Adopt what is on disk now under the user's edit (their starting values stay the baseline)."""
        self.target, self.text = editing_target(self.origin, self.part_id, self.writable)

    def save(self, values: dict[str, Raw | None]) -> Path:
        changes = {key: raw for key, raw in values.items() if self.started.get(key) != raw}
        self.target = save_preset_text(self.target, set_fields(self.text, self.part_id, changes))
        self.origin, self.text = self.target.path, self.target.text
        self.started = raw_fields(self.text, self.part_id)
        return self.target.path
