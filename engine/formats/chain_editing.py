"""Edits of a chain file's text that keep the user's comments and layout (tomlkit), checked by the
one chain loader (files.chain_from_text) before anything is kept.

Every edit is a pure function: chain text in, edited chain text out. The caller validates the result
with `chain_from_text(text, path)` and keeps its old text when that raises InputError.

    text = set_stage_field(text, 2, "rf", "200k 0.1%")
    chain = chain_from_text(text, path)      # raises InputError with located problems
"""

from __future__ import annotations

from dataclasses import dataclass

import tomlkit
from tomlkit.items import AoT, Array, Comment, InlineTable, Table, Whitespace

from railroom.engine.reports.block_help import COMMON_HELP
from railroom.engine.circuit.blocks import BLOCKS
from railroom.engine.circuit.model import DISTRIBUTIONS, METHODS
from railroom.engine.formats.values import ValueTextError, parse_quantity
from railroom.engine.circuit.nets import parse_fraction


@dataclass(frozen=True)
class FieldShape:
    """How a field is written: kind of values.py (or "text"), and its form in TOML."""

    kind: str
    form: str = "value"  # value | pair | choice | integer | flag | text
    choices: tuple[str, ...] = ()
    help: str = ""


SOURCE_FIELDS = {
    "kind": FieldShape("text", "choice", ("single", "differential"), "single or differential"),
    "level": FieldShape("voltage", "pair", help="DC level range (common mode if differential), V"),
    "difference": FieldShape("voltage", "pair", help="differential only: DC difference range, V"),
    "amplitude": FieldShape("voltage", help="peak of the AC part, V"),
    "band": FieldShape("frequency", "pair", help="lowest, highest frequency, Hz"),
    "impedance": FieldShape("resistance", help="source impedance, ohm"),
}
CONDITION_FIELDS = {
    "temperature": FieldShape("temperature", "pair", help="coldest, hottest ambient, C"),
    "margin": FieldShape("voltage", help="room to every limit needed for GO, V"),
    "method": FieldShape("text", "choice", METHODS, "corners, rss or montecarlo"),
    "samples": FieldShape("number", "integer", help="Monte Carlo draws"),
    "seed": FieldShape("number", "integer", help="Monte Carlo seed"),
    "distribution": FieldShape("text", "choice", DISTRIBUTIONS, "uniform or normal (3 sigma)"),
    "default_tolerance": FieldShape("fraction", help="for values written without one"),
}
SECTIONS = {"source": SOURCE_FIELDS, "conditions": CONDITION_FIELDS}
INPUTS_HELP = 'fixed inputs "r, v" (resistor from voltage v to the - input), ";" between: 82k, 0; 100k 1%, 5'

STARTER_VALUES = {"resistance": "10k", "capacitance": "10n", "voltage": "0", "frequency": "1k"}
STARTER_FIELDS = {
    ("adc", "high"): "5",
    # a coupling corner of 1.6 Hz, below any audio or vibration band (1/(2 pi r c))
    ("ac_coupling", "c"): "1u",
    ("ac_coupling", "r"): "100k",
}


def stage_shapes(block_name: str) -> dict[str, FieldShape]:
    """The editable fields of a stage of this block, in the order a form shows them."""
    block = BLOCKS[block_name]
    shapes = {"name": FieldShape("text", "text", help="the stage's name")}
    shapes["load"] = FieldShape("resistance", help=COMMON_HELP["load"])
    shapes["load_to"] = FieldShape("voltage", help=COMMON_HELP["load_to"])
    if block.uses_part and not block.saturates:
        shapes["load_capacitance"] = FieldShape("capacitance", help=COMMON_HELP["load_capacitance"])
    for key, spec in block.fields.items():
        if spec.kind == "inputs":
            shapes[key] = FieldShape("inputs", "inputs", help=INPUTS_HELP)
            continue
        form = "flag" if spec.kind == "flag" else "value"
        shapes[key] = FieldShape(spec.kind, form, help=spec.help)
    return shapes


def value_problem(raw: str, shape: FieldShape) -> str | None:
    """The engine parser's message for text typed into a field, or None when it reads."""
    text = raw.strip()
    try:
        if shape.form == "pair":
            parts = [p.strip() for p in text.split(",")]
            if len(parts) != 2:
                return 'expected two values separated by a comma, such as "-1, 1"'
            for part in parts:
                parse_quantity(part, shape.kind)
        elif shape.form == "integer":
            if not text.isdigit():
                return f"expected a whole number, got {raw!r}"
        elif shape.form == "flag":
            if text not in ("true", "false"):
                return f"expected true or false, got {raw!r}"
        elif shape.form == "inputs":
            for number, entry in enumerate(_entries(text), 1):
                if len(entry) != 2:
                    return (
                        f'input {number}: expected "r, v" (a resistance, a voltage), got {";".join(entry)!r}'
                    )
                parse_quantity(entry[0], "resistance")
                if not net_named(entry[1]):
                    parse_quantity(entry[1], "voltage")
        elif shape.form in ("choice", "text"):
            if shape.choices and text not in shape.choices:
                return f"expected one of {', '.join(shape.choices)}, got {raw!r}"
        elif shape.form == "ratio":
            parse_fraction(text)
        elif text and not (shape.kind == "voltage" and net_named(text)):
            parse_quantity(text, shape.kind)
    except ValueTextError as err:
        return str(err)
    return None


def toml_value(raw: str, shape: FieldShape):
    """Text from a form as the TOML value to write (None removes an optional key)."""
    text = raw.strip()
    if shape.form == "pair":
        return [p.strip() for p in text.split(",")]
    if shape.form == "integer":
        return int(text)
    if shape.form == "flag":
        return text == "true"
    if shape.form == "inputs":
        if not text:
            return None
        inputs = tomlkit.array()
        for r, v in _entries(text):
            entry = tomlkit.inline_table()
            entry.update({"r": r, "v": net_reference(v) if net_named(v) else v})
            inputs.append(entry)
        return inputs
    if shape.kind == "voltage" and net_named(text):
        return net_reference(text)
    return text or None


def net_named(text: str) -> str | None:
    """The net a form's text names ("net mid" stands for { net = "mid" }), or None."""
    words = text.strip()
    if words.startswith("net ") and words[4:].strip():
        return words[4:].strip()
    return None


def net_reference(text: str):
    """{ net = "NAME" } for the form's "net NAME"."""
    reference = tomlkit.inline_table()
    reference["net"] = net_named(text)
    return reference


def _entries(text: str) -> list[list[str]]:
    """ "82k, 0; 100k, 5" -> [["82k", "0"], ["100k", "5"]] (empty entries skipped)."""
    return [[p.strip() for p in part.split(",")] for part in text.split(";") if part.strip()]


def shown(value) -> str:
    """A TOML value as the text a form shows for it."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dict) and list(value) == ["net"]:
        return f"net {value['net']}"
    if isinstance(value, list) and value and all(isinstance(v, dict) for v in value):
        return "; ".join(f"{shown(v.get('r'))}, {shown(v.get('v'))}" for v in value)
    if isinstance(value, list):
        return ", ".join(shown(v) for v in value)
    return str(value)


def stage_fields(text: str, index: int, keys) -> dict[str, str]:
    """Several fields of stage `index` as a form shows them, from one reading of the text."""
    table = _stages(tomlkit.parse(text))[index - 1]
    return {key: shown(table.get(key)) for key in keys}


def section_fields(text: str, section: str, keys) -> dict[str, str]:
    table = tomlkit.parse(text).get(section, {})
    return {key: shown(table.get(key)) for key in keys}


def set_stage_field(text: str, index: int, key: str, value) -> str:
    """Set (or, with None, remove) one field of stage `index` (1-based). A new name is followed
    by every `from` that named the stage (the README's File formats, branches)."""
    document = tomlkit.parse(text)
    stages = _stages(document)
    table = stages[index - 1]
    if key == "name":
        old = str(table.get("name", f"stage {index}"))
        new = f"stage {index}" if value is None else str(value)
        for k, other in enumerate(stages, start=1):
            if k > index and other.get("from") == old and new != old:
                _put(other, "from", new)
    _put(table, key, value)
    return tomlkit.dumps(document)


def set_section_field(text: str, section: str, key: str, value) -> str:
    """Set (or remove) a field of [source] or [conditions], creating the table if needed."""
    document = tomlkit.parse(text)
    if section not in document:
        if value is None:
            return text
        document.add(section, tomlkit.table())
    _put(document[section], key, value)
    return tomlkit.dumps(document)


NET_VALUE_HELP = 'fixed net: value, tolerance, tempco, e.g. "2.5 0.5% 20ppm" (stages read it as "net NAME")'
NET_FRACTION_HELP = 'ratiometric net: a divider\'s ratio of the rail, e.g. "0.5 0.1%"'


def net_shapes(text: str) -> dict[str, tuple[str, str, FieldShape]]:
    """The fields of every [nets.NAME] table as a form shows them: form key -> (net, key, shape).
    Form keys are "net-N-value", "net-N-rail", "net-N-fraction" (N: the net's place in the file)."""
    document = tomlkit.parse(text)
    rails = tuple(document.get("rails", {}))
    found: dict[str, tuple[str, str, FieldShape]] = {}
    for number, (name, table) in enumerate(document.get("nets", {}).items(), start=1):
        if not isinstance(table, dict):
            continue
        if "rail" in table or "fraction" in table:
            found[f"net-{number}-rail"] = (
                name,
                "rail",
                FieldShape("text", "choice", rails, "the rail it follows"),
            )
            found[f"net-{number}-fraction"] = (
                name,
                "fraction",
                FieldShape("fraction", "ratio", help=NET_FRACTION_HELP),
            )
        else:
            found[f"net-{number}-value"] = (name, "value", FieldShape("voltage", help=NET_VALUE_HELP))
    return found


def net_fields(text: str) -> dict[str, str]:
    """Each net field's text as a form shows it, keyed as net_shapes."""
    nets = tomlkit.parse(text).get("nets", {})
    return {key: shown(nets[name].get(field)) for key, (name, field, _) in net_shapes(text).items()}


def set_net_field(text: str, name: str, key: str, value) -> str:
    """Set (or, with None, remove) one field of [nets.NAME]."""
    document = tomlkit.parse(text)
    _put(document["nets"][name], key, value)
    return tomlkit.dumps(document)


def starter_stage(block_name: str, name: str, part: str | None, rails: str | None) -> dict:
    """A new stage that loads as written: every required field gets a plain starter value."""
    block = BLOCKS[block_name]
    table: dict = {"name": name, "block": block_name}
    if block.uses_part and part is not None:
        table["part"] = part
    if rails is not None:
        table["rails"] = rails
    for key, spec in block.fields.items():
        if spec.required:
            table[key] = STARTER_FIELDS.get((block_name, key), STARTER_VALUES.get(spec.kind, "1"))
    return table


def add_stage(text: str, position: int, fields: dict) -> str:
    """Insert a stage so that it becomes stage `position` (1-based; past the end appends)."""
    document = tomlkit.parse(text)
    table = tomlkit.inline_table() if isinstance(_stages(document), Array) else tomlkit.table()
    for key, value in fields.items():
        table[key] = value

    def insert(tables: list, notes: list) -> None:
        at = min(position, len(tables) + 1) - 1
        tables.insert(at, table)
        notes.insert(at, [])

    return _reordered(document, insert)


def remove_stage(text: str, index: int) -> str:
    """Remove stage `index` with the comment lines written just above it."""

    def remove(tables: list, notes: list) -> None:
        del tables[index - 1], notes[index - 1]

    return _reordered(tomlkit.parse(text), remove)


def move_stage(text: str, index: int, offset: int) -> str:
    """Move stage `index` by `offset` places, with the comment lines written just above it."""
    target = index - 1 + offset
    document = tomlkit.parse(text)
    if not 0 <= target < len(_stages(document)) or offset == 0:
        return text

    def move(tables: list, notes: list) -> None:
        tables.insert(target, tables.pop(index - 1))
        notes.insert(target, notes.pop(index - 1))

    return _reordered(document, move)


def _reordered(document, change) -> str:
    """Take every stage with its own comment lines (tomlkit keeps the lines above a table at the
    end of whatever comes before it), change their order, and put them back together."""
    stages = _stages(document)
    if isinstance(stages, Array):
        return _reordered_inline(document, stages, change)
    tables = list(stages.body)
    notes = [_detach_tail(_holder_before(document, stages, tables, i)) for i in range(len(tables))]
    change(tables, notes)
    while len(stages):
        del stages[0]
    for i, table in enumerate(tables):
        _end_with_blank_line(table)
        stages.append(table)
        _holder_before(document, stages, tables, i).extend(notes[i])
    return _dumped(document)


def _reordered_inline(document, stages: Array, change) -> str:
    """The same for stages written as an array of inline tables (`stage = [{...}, {...}]`): one
    insert, delete or move in place, so the other lines keep their comments."""
    old = list(stages)
    new = list(old)
    change(new, [[] for _ in new])
    if len(new) > len(old):
        at = next(i for i, t in enumerate(new) if not any(t is o for o in old))
        stages.insert(at, new[at])
    elif len(new) < len(old):
        del stages[next(i for i, o in enumerate(old) if not any(o is t for t in new))]
    else:
        first = next((i for i, (o, t) in enumerate(zip(old, new)) if o is not t), None)
        if first is not None:
            was = next(i for i, o in enumerate(old) if o is new[first])
            moved = stages[was]
            del stages[was]
            stages.insert(first, moved)
    return _dumped(document)


def _holder_before(document, stages: AoT, tables: list, i: int) -> list:
    """The body list whose end holds the lines written just above stage i."""
    if i > 0:
        return tables[i - 1].value.body
    at = next(k for k, (_, item) in enumerate(document.body) if item is stages)
    before = document.body[at - 1][1] if at > 0 else None
    if isinstance(before, Table):
        return before.value.body
    return _DocumentSlot(document.body, at)


class _DocumentSlot(list):
    """Comment lines that sit in the document itself, right before the [[stage]] array."""

    def __init__(self, body: list, at: int) -> None:
        start = at
        while (
            start > 0 and body[start - 1][0] is None and isinstance(body[start - 1][1], (Comment, Whitespace))
        ):
            start -= 1
        super().__init__(body[start:at])
        self.body, self.start, self.at = body, start, at

    def __delitem__(self, item: slice) -> None:  # type: ignore[override]
        del self.body[self.start + (item.start or 0) : self.at]
        super().__delitem__(item)

    def extend(self, items) -> None:
        at = next(k for k, (key, _) in enumerate(self.body) if key is not None and key.key == "stage")
        self.body[at:at] = list(items)


def _stages(document) -> AoT | Array:
    """The stages: [[stage]] tables, or an array of inline tables (`stage = [{...}, ...]`)."""
    stages = document.get("stage")
    if isinstance(stages, AoT):
        return stages
    if isinstance(stages, Array) and all(isinstance(t, InlineTable) for t in stages):
        return stages
    raise ValueError("the chain has no [[stage]] tables to edit")


def _put(table: Table, key: str, value) -> None:
    if value is None:
        if key in table:
            del table[key]
    else:
        table[key] = value


def _detach_tail(body: list) -> list:
    """Remove and return the comment lines (with the blank lines among them) at the end of body."""
    start = len(body)
    while start > 0 and body[start - 1][0] is None and isinstance(body[start - 1][1], (Comment, Whitespace)):
        start -= 1
    tail = list(body[start:])
    first = next((i for i, (_, item) in enumerate(tail) if isinstance(item, Comment)), None)
    if first is None:
        return []
    del body[start + first :]
    return tail[first:]


def _dumped(document) -> str:
    """The document's text, ending in one newline whatever blank lines the edits left last."""
    return tomlkit.dumps(document).rstrip("\n") + "\n"


def _end_with_blank_line(table: Table) -> None:
    rendered = table.as_string()
    if not rendered.endswith("\n\n"):
        table.add(tomlkit.nl())
