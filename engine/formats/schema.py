"""JSON Schemas of railroom's files, built from the engine's own tables so they cannot drift.

Editors that understand TOML with JSON Schema (the Taplo toolkit and the editor extensions built on
it) validate and complete a chain or preset file against these; scripts validate the JSON report.
Block fields come from BLOCKS[...].fields, part fields from presets.PART_FIELDS, the chain's own
tables from the key tuples of chain_file.py (a key added there without a schema entry here fails fast).
The schemas are draft-07: the newest dialect those editor tools read.
"""

from __future__ import annotations

from railroom.engine.formats import chain_file as files
from railroom.engine.formats import presets
from railroom.engine.circuit.blocks import BLOCKS, COMMON_FIELDS
from railroom.engine.circuit.model import DISTRIBUTIONS, METHODS
from railroom.engine.verdict.results import CHECKS
from railroom.engine.formats.values import EXAMPLES, POSITIVE_KINDS

DIALECT = "http://json-schema.org/draft-07/schema#"
# Every value text the parser accepts starts with a sign, a digit, a point or IEC 60062's "R"
# ("R47"); a positive kind takes no minus sign. Tolerances and units follow (values.py).
VALUE_START = r"^\s*[+-]?(?:[0-9]|\.[0-9]|R[0-9])"
POSITIVE_START = r"^\s*\+?(?:[0-9]|\.[0-9]|R[0-9])"


def value(kind: str, description: str = "") -> dict:
    """A TOML number or a value string as the README's File formats write it ("10k 1% 50ppm", "0.5V/us")."""
    positive = kind in POSITIVE_KINDS
    number = {"type": "number", **({"exclusiveMinimum": 0} if positive else {})}
    text = {"type": "string", "pattern": POSITIVE_START if positive else VALUE_START}
    about = f"{kind}, e.g. {EXAMPLES[kind]}" if kind in EXAMPLES else kind
    return {"description": f"{description} ({about})" if description else about, "anyOf": [number, text]}


NET_REFERENCE = {
    "type": "object",
    "properties": {"net": {"type": "string", "description": "a [nets.NAME] table's name"}},
    "required": ["net"],
    "additionalProperties": False,
}


def voltage_field(description: str = "") -> dict:
    """A stage's voltage: a value, or { net = "NAME" } (the README's File formats, Named DC nets)."""
    schema = value("voltage", description)
    schema["anyOf"] = [*schema["anyOf"], NET_REFERENCE]
    return schema


NET = {
    "description": "a named DC voltage shared by stages: fixed (value) or ratiometric (rail, fraction)",
    "oneOf": [
        {
            "type": "object",
            "properties": {"value": value("voltage", 'value, tolerance, tempco, e.g. "2.5 0.5% 20ppm"')},
            "required": ["value"],
            "additionalProperties": False,
        },
        {
            "type": "object",
            "properties": {
                "rail": {
                    "type": "string",
                    "description": "the [rails.NAME] whose positive voltage it follows",
                },
                "fraction": {
                    "description": 'a divider\'s ratio with its tolerance, e.g. "0.5 0.1%" (above 0, at most 1)',
                    "anyOf": [{"type": "number", "exclusiveMinimum": 0, "maximum": 1}, {"type": "string"}],
                },
            },
            "required": ["rail", "fraction"],
            "additionalProperties": False,
        },
    ],
}


def pair(kind: str, description: str) -> dict:
    return {"description": description, "type": "array", "minItems": 2, "maxItems": 2, "items": value(kind)}


def whole(low: int, high: int, description: str) -> dict:
    return {"description": description, "type": "integer", "minimum": low, "maximum": high}


def choice(options: tuple[str, ...], description: str) -> dict:
    return {"description": description, "type": "string", "enum": list(options)}


def text(description: str) -> dict:
    return {"description": description, "type": "string"}


def table(properties: dict, required: tuple[str, ...] = (), description: str = "") -> dict:
    schema = {"type": "object", "properties": properties, "additionalProperties": False}
    if required:
        schema["required"] = list(required)
    if description:
        schema["description"] = description
    return schema


def matching(fields: dict, keys: tuple[str, ...], where: str) -> dict:
    """The schema entries for exactly the loader's keys, in the loader's order."""
    if set(fields) != set(keys):
        raise RuntimeError(
            f"schema of {where} out of step with the loader: {sorted(set(fields) ^ set(keys))}"
        )
    return {key: fields[key] for key in keys}


CONDITIONS = {
    "temperature": pair("temperature", "ambient range [coldest, hottest], C (default [25, 25])"),
    "margin": value("voltage", "room to every limit needed for GO, V (default 0)"),
    "method": choice(METHODS, "analysis method (default corners)"),
    "samples": whole(1, 10_000_000, "Monte Carlo draws (default 10000)"),
    "seed": whole(0, 2**32 - 1, "Monte Carlo seed (default 1)"),
    "distribution": choice(DISTRIBUTIONS, "Monte Carlo distribution; normal: tolerance = 3 sigma"),
    "default_tolerance": value("fraction", "for resistors and capacitors written without one"),
}
SOURCE = {
    "kind": choice(("single", "differential"), "single-ended or differential source"),
    "level": pair("voltage", "single: DC level range; differential: common-mode range, V"),
    "difference": pair("voltage", "differential only: DC difference range, V"),
    "amplitude": value("voltage", "peak of the AC part, V"),
    "band": pair("frequency", "[lowest, highest] frequency of the AC part, Hz"),
    "impedance": value("number", "source impedance, ohms"),
}
RAILS = table(
    {
        "positive": value("voltage", "positive rail, V"),
        "negative": value("voltage", "negative rail, V (default 0)"),
        "tolerance": value("fraction", "moves each rail independently"),
    },
    ("positive",),
    "a named supply",
)
COMMON = {
    "name": text("stage name shown in reports"),
    "block": choice(tuple(BLOCKS), "the block this stage is"),
    "part": text("part preset id (op-amp blocks only)"),
    "rails": text("rails table name; may be left out when there is one"),
    "load": value("resistance", "resistive load from the output to 0 V"),
    "load_capacitance": value("capacitance", "capacitive load from the output to 0 V (phase margin)"),
    "load_to": value("voltage", "the voltage the load returns to (default 0 V)"),
    "from": text('the earlier stage name, or "source", this stage takes its input from'),
}


def block_field(spec) -> dict:
    if spec.kind == "flag":
        schema = {"type": "boolean", "description": spec.help}
    elif spec.kind == "inputs":
        item = table(
            {
                "r": value("resistance", "from the fixed voltage to the - input"),
                "v": voltage_field("the fixed voltage, V"),
            },
            ("r", "v"),
        )
        schema = {"type": "array", "items": item, "description": spec.help}
    elif spec.kind == "voltage":
        schema = voltage_field(spec.help)
    else:
        schema = value(spec.kind, spec.help)
    if not spec.required and spec.default is not None:
        schema["default"] = spec.default
    return schema


def stage_schema() -> dict:
    common = matching(COMMON, COMMON_FIELDS, "[[stage]]")
    by_block = []
    for name, block in BLOCKS.items():
        allowed = {k: v for k, v in common.items() if block.uses_part or k != "part"}
        allowed.update({key: block_field(spec) for key, spec in block.fields.items()})
        required = [k for k, spec in block.fields.items() if spec.required]
        required += ["part"] if block.uses_part else []
        then = table(allowed, tuple(required), f"{name}: {getattr(block, 'summary', '')}")
        by_block.append(
            {"if": {"properties": {"block": {"const": name}}, "required": ["block"]}, "then": then}
        )
    return {
        "type": "object",
        "required": ["block"],
        "properties": common,
        "allOf": by_block,
        "description": "one stage, in signal order",
    }


def chain_schema() -> dict:
    properties = matching(
        {
            "format": {"const": 1, "description": "file format (1)"},
            "title": text("short description of the chain"),
            "presets": {
                "type": "array",
                "items": {"type": "string"},
                "description": "extra preset folders, relative to this file",
            },
            "conditions": table(matching(CONDITIONS, files.CONDITION_KEYS, "[conditions]")),
            "rails": {
                "type": "object",
                "minProperties": 1,
                "additionalProperties": RAILS,
                "description": "one or more named supplies: [rails.main]",
            },
            "source": table(matching(SOURCE, files.SOURCE_KEYS, "[source]")),
            "stage": {"type": "array", "minItems": 1, "items": stage_schema()},
            "nets": {
                "type": "object",
                "additionalProperties": NET,
                "description": "named DC voltages shared by stages: [nets.mid]",
            },
        },
        files.TOP_KEYS,
        "the chain file",
    )
    return {
        "$schema": DIALECT,
        "title": "railroom chain file (format 1)",
        **table(properties, ("rails", "stage")),
    }


def part_field(key: str, kind: str, is_pair: bool) -> dict:
    unit = presets.UNITS.get(key, "")
    about = key.replace("_", " ") + (f", {unit}" if unit else "")
    if kind == "text":
        return text(about)
    if is_pair:
        return pair(kind, about)
    if kind == "flag":
        return {"description": about, "type": "boolean"}
    if kind == "curve":
        point = {
            "type": "array",
            "minItems": 3,
            "maxItems": 3,
            "items": [value("current"), value("voltage"), value("voltage")],
        }
        return {
            "description": f"{about}: points [current, upper headroom, lower headroom], currents rising",
            "type": "array",
            "minItems": 1,
            "items": point,
        }
    if key == "output_resistance":
        return {
            "description": f"{about} (0 allowed)",
            "anyOf": [{"type": "number", "minimum": 0}, {"type": "string", "pattern": POSITIVE_START}],
        }
    return value(kind, about)


def preset_schema() -> dict:
    fields = {key: part_field(key, kind, is_pair) for key, (kind, is_pair, _) in presets.PART_FIELDS.items()}
    required = tuple(key for key, (_, _, req) in presets.PART_FIELDS.items() if req)
    part = table(fields, required, "one part preset: the limits an op amp is checked against")
    return {
        "$schema": DIALECT,
        "title": "railroom part preset file",
        **table(
            {
                "part": {
                    "type": "object",
                    "additionalProperties": part,
                    "description": "[part.ID] tables, one per part",
                }
            }
        ),
    }


NUMBER = {"type": ["number", "null"]}


def bounds(*names: str) -> dict:
    return {"type": "object", "required": list(names), "properties": {n: NUMBER for n in names}}


GAIN_RANGE = {"type": "array", "items": {"type": "number", "minimum": 0}, "minItems": 2, "maxItems": 2}
# a small-signal gain magnitude at DC and over the band, [min, max]; null for a saturated stage
GAIN = {
    "anyOf": [
        {"type": "null"},
        {
            "type": "object",
            "required": ["dc", "band"],
            "properties": {"dc": GAIN_RANGE, "band": GAIN_RANGE},
            "additionalProperties": False,
        },
    ]
}


def report_schema() -> dict:
    """the README's JSON report, with the documented extensions left open (additional properties)."""
    reasons = [*CHECKS, "fed-clipped"]
    stage = {
        "type": "object",
        "required": [
            "index",
            "name",
            "block",
            "from",
            "part",
            "regime",
            "go",
            "reasons",
            "gain_error",
            "limiting",
            "output",
            "window",
            "input",
            "margins",
            "probability",
            "gain",
            "gain_from_source",
        ],
        "properties": {
            "index": {"type": "integer", "minimum": 1},
            "name": {"type": "string"},
            "block": {"enum": list(BLOCKS)},
            "from": {"type": "string", "description": 'the stage it takes its input from, or "source"'},
            "part": {"type": ["string", "null"]},
            "regime": {"enum": ["linear", "clipping", "saturated"]},
            "go": {"type": "boolean"},
            "reasons": {"type": "array", "items": {"enum": reasons}},
            "gain_error": NUMBER,
            "limiting": {"enum": [*CHECKS, None]},
            "output": {
                **bounds("min", "max", "nominal"),
                "properties": {
                    "min": NUMBER,
                    "max": NUMBER,
                    "nominal": {"type": "array", "items": NUMBER, "minItems": 2, "maxItems": 2},
                },
            },
            "window": {"anyOf": [{"type": "null"}, bounds("low", "high")]},
            "input": {"anyOf": [{"type": "null"}, bounds("min", "max")]},
            "margins": {
                "type": "object",
                "propertyNames": {"enum": list(CHECKS)},
                "additionalProperties": NUMBER,
            },
            "probability": {"type": ["number", "null"], "minimum": 0, "maximum": 1},
            "gain": GAIN,
            "gain_from_source": GAIN,
        },
    }
    return {
        "$schema": DIALECT,
        "title": "railroom check --json report (format 1)",
        "type": "object",
        "required": ["format", "title", "verdict", "method", "samples", "headroom_db", "cautions", "stages"],
        "properties": {
            "format": {"const": 1},
            "title": {"type": "string"},
            "verdict": {"enum": ["go", "no-go"]},
            "method": {"enum": list(METHODS)},
            "samples": {"type": ["integer", "null"], "minimum": 1},
            "headroom_db": NUMBER,
            "cautions": {"type": "array", "items": {"type": "string"}},
            "stages": {"type": "array", "items": stage},
            "yield": {"type": ["number", "null"], "minimum": 0, "maximum": 1},
            "nets": {
                "type": "array",
                "items": {
                    "type": "object",
                    "required": ["name", "kind", "rail", "nominal", "span", "stages"],
                    "properties": {
                        "name": {"type": "string"},
                        "kind": {"enum": ["fixed", "ratiometric"]},
                        "rail": {"type": ["string", "null"]},
                        "fraction": NUMBER,
                        "nominal": NUMBER,
                        "span": {"type": "array", "items": NUMBER, "minItems": 2, "maxItems": 2},
                        "stages": {"type": "array", "items": {"type": "integer", "minimum": 1}},
                    },
                },
            },
        },
    }


SCHEMAS = {"chain": chain_schema, "preset": preset_schema, "report": report_schema}
