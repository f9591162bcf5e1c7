"""JSON Schemas: the report against the README's JSON report, the file schemas against shipped and broken files.

The report is checked twice: against a schema transcribed here by hand from the README's JSON report (the
documented format, independent of the code), and against the schema `railroom schema report` prints.
"""

from __future__ import annotations

import copy
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from jsonschema import Draft7Validator

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

import railroom.engine.demos
import railroom.presets
from fuzz_inputs import DEMO_CHAIN, GENERIC_PRESETS, chain_files, extreme_values, preset_files
from railroom.engine.analysis import analyse
from railroom.engine.formats.loading import load_checked
from railroom.engine.circuit.blocks import BLOCKS
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import InputError
from railroom.engine.formats.presets import PART_FIELDS, parts_from_text
from railroom.engine.reports.json_report import chain_report
from railroom.engine.formats.schema import SCHEMAS, chain_schema, preset_schema, report_schema

DEMOS = sorted(Path(railroom.engine.demos.__file__).parent.glob("*.toml"))
PRESET_FILES = sorted(Path(railroom.presets.__file__).parent.glob("*.toml"))
EXPLORE = bool(os.environ.get("RAILROOM_FUZZ_EXPLORE"))
NUM = {"type": ["number", "null"]}
# the README's JSON report, transcribed: keys, their types and the listed word choices.
SPEC_REPORT = {
    "type": "object",
    "required": ["format", "title", "verdict", "method", "samples", "headroom_db", "cautions", "stages"],
    "properties": {
        "format": {"const": 1},
        "title": {"type": "string"},
        "verdict": {"enum": ["go", "no-go"]},
        "method": {"enum": ["corners", "rss", "montecarlo"]},
        "samples": {"type": ["integer", "null"]},
        "headroom_db": NUM,
        "cautions": {"type": "array", "items": {"type": "string"}},
        "stages": {
            "type": "array",
            "items": {
                "type": "object",
                "required": [
                    "index",
                    "name",
                    "block",
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
                ],
                "properties": {
                    "index": {"type": "integer"},
                    "name": {"type": "string"},
                    "block": {"type": "string"},
                    "part": {"type": ["string", "null"]},
                    "regime": {"enum": ["linear", "clipping", "saturated"]},
                    "go": {"type": "boolean"},
                    "reasons": {
                        "type": "array",
                        "items": {
                            "enum": [
                                "output-high",
                                "output-low",
                                "input-high",
                                "input-low",
                                "slew",
                                "current",
                                "supply",
                                "fed-clipped",
                            ]
                        },
                    },
                    "gain_error": NUM,
                    "limiting": {"type": ["string", "null"]},
                    "output": {
                        "type": "object",
                        "required": ["min", "max", "nominal"],
                        "properties": {
                            "min": NUM,
                            "max": NUM,
                            "nominal": {"type": "array", "items": NUM, "minItems": 2, "maxItems": 2},
                        },
                    },
                    "window": {
                        "anyOf": [
                            {"type": "null"},
                            {
                                "type": "object",
                                "required": ["low", "high"],
                                "properties": {"low": NUM, "high": NUM},
                            },
                        ]
                    },
                    "input": {
                        "anyOf": [
                            {"type": "null"},
                            {
                                "type": "object",
                                "required": ["min", "max"],
                                "properties": {"min": NUM, "max": NUM},
                            },
                        ]
                    },
                    "margins": {"type": "object", "additionalProperties": NUM},
                    "probability": NUM,
                },
            },
        },
    },
}


def report_of(path: Path, **options) -> dict:
    chain, library = load_checked(str(path))
    return chain_report(analyse(chain, library.parts, **options))


@pytest.mark.parametrize(
    "options", [{}, {"method": "montecarlo", "samples": 2000, "seed": 3}], ids=["corners", "montecarlo"]
)
@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_json_report_of_every_demo_follows_spec_section_5(path, options):
    report = json.loads(json.dumps(report_of(path, **options), allow_nan=False))
    Draft7Validator(SPEC_REPORT).validate(report)
    Draft7Validator(report_schema()).validate(report)
    assert report["verdict"] == ("go" if all(s["go"] for s in report["stages"]) else "no-go")


def test_every_schema_is_a_valid_draft_7_schema_and_printed_by_the_command():
    for kind, build in SCHEMAS.items():
        Draft7Validator.check_schema(build())
        out = subprocess.run(
            [sys.executable, "-m", "railroom.tui.cli", "schema", kind],
            capture_output=True,
            text=True,
            timeout=60,
            check=True,
        )
        assert json.loads(out.stdout) == build()


def test_schemas_follow_the_engine_tables():
    stage = chain_schema()["properties"]["stage"]["items"]
    assert [b["if"]["properties"]["block"]["const"] for b in stage["allOf"]] == list(BLOCKS)
    for rule in stage["allOf"]:
        block = BLOCKS[rule["if"]["properties"]["block"]["const"]]
        assert set(block.fields) <= set(rule["then"]["properties"])
        assert ("part" in rule["then"]["properties"]) == block.uses_part
    part = preset_schema()["properties"]["part"]["additionalProperties"]
    assert set(part["properties"]) == set(PART_FIELDS)
    assert set(part["required"]) == {k for k, (_, _, req) in PART_FIELDS.items() if req}


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_chain_schema_accepts_every_demo(path):
    Draft7Validator(chain_schema()).validate(tomllib.loads(path.read_text(encoding="utf-8")))


@pytest.mark.parametrize("path", PRESET_FILES, ids=lambda p: p.stem)
def test_preset_schema_accepts_every_shipped_preset_file(path):
    Draft7Validator(preset_schema()).validate(tomllib.loads(path.read_text(encoding="utf-8")))


def demo() -> dict:
    return tomllib.loads(DEMO_CHAIN.read_text(encoding="utf-8"))


def broken_chains():
    def change(edit):
        data = demo()
        edit(data)
        return data

    yield "unknown top key", change(lambda d: d.update(colour="red"))
    yield "format 2", change(lambda d: d.update(format=2))
    yield "unknown method", change(lambda d: d["conditions"].update(method="fast"))
    yield "zero samples", change(lambda d: d["conditions"].update(samples=0))
    yield "rails without positive", change(lambda d: d["rails"]["analog"].pop("positive"))
    yield "no stages", change(lambda d: d.update(stage=[]))
    yield "unknown block", change(lambda d: d["stage"][0].update(block="tube"))
    yield "field of another block", change(lambda d: d["stage"][0].update(rf="10k"))
    yield "missing rg", change(lambda d: d["stage"][1].pop("rg"))
    yield "part on a passive block", change(lambda d: d["stage"][2].update(part="generic-rro-5v"))
    yield "negative resistor", change(lambda d: d["stage"][1].update(rf="-10k"))
    yield "words for a value", change(lambda d: d["stage"][2].update(c="ten nano"))
    yield "zero capacitor", change(lambda d: d["stage"][2].update(c=0))
    yield "flag as text", change(lambda d: d["stage"][6].update(invert="yes"))
    yield "band not a pair", change(lambda d: d["source"].update(band=["10"]))
    yield "inputs missing v", change(lambda d: d["stage"][3].update(inputs=[{"r": "82k"}]))


def broken_presets():
    base = tomllib.loads(GENERIC_PRESETS.read_text(encoding="utf-8"))
    first = next(iter(base["part"]))
    for name, edit in [
        ("missing gbw", lambda p: p.pop("gbw")),
        ("unknown field", lambda p: p.update(gbw_typ="1M")),
        ("supply not a pair", lambda p: p.update(supply="5")),
        ("negative slew", lambda p: p.update(slew="-1V/us")),
        ("description not text", lambda p: p.update(description=3)),
    ]:
        data = copy.deepcopy(base)
        edit(data["part"][first])
        yield name, data


def to_toml(data: dict) -> str:
    import tomlkit

    return tomlkit.dumps(data)


@pytest.mark.parametrize("name, data", list(broken_chains()), ids=lambda x: x if isinstance(x, str) else "")
def test_chain_schema_rejects_what_the_loader_refuses(name, data):
    assert list(Draft7Validator(chain_schema()).iter_errors(data)), name
    with pytest.raises(InputError):
        chain_from_text(to_toml(data), "broken.toml")


@pytest.mark.parametrize("name, data", list(broken_presets()), ids=lambda x: x if isinstance(x, str) else "")
def test_preset_schema_rejects_what_the_loader_refuses(name, data):
    assert list(Draft7Validator(preset_schema()).iter_errors(data)), name
    assert parts_from_text(to_toml(data), "broken.toml")[1]


SETTINGS = settings(
    max_examples=300,
    deadline=None,
    database=None,
    derandomize=not EXPLORE,
    suppress_health_check=list(HealthCheck),
)


@SETTINGS
@given(chain_files() | extreme_values(DEMO_CHAIN))
def test_chain_schema_never_rejects_a_file_the_loader_accepts(text):
    """An editor must not flag a file railroom reads: loader accepts => schema accepts."""
    try:
        chain_from_text(text, "fuzz.toml")
    except InputError:
        return
    errors = list(Draft7Validator(chain_schema()).iter_errors(tomllib.loads(text)))
    assert not errors, [e.message for e in errors]


@SETTINGS
@given(preset_files() | extreme_values(GENERIC_PRESETS))
def test_preset_schema_never_rejects_parts_the_loader_accepts(text):
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return
    parts, problems = parts_from_text(text, "fuzz.toml")
    if problems:
        return
    errors = list(Draft7Validator(preset_schema()).iter_errors(data))
    assert not errors, [e.message for e in errors]
