"""The README's "File formats" section names every key the readers accept (so it cannot fall behind).

Keys come from the engine's own tables: the chain reader's key tuples, the block table, the part
fields and the JSON report of a real run.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

from railroom.engine.formats import chain_file as files
from railroom.engine.formats import presets
from railroom.engine.circuit.blocks import BLOCKS, COMMON_FIELDS
from railroom.tui.cli import main

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")
SECTION = README.split("## File formats", 1)[1].split("\n## ", 1)[0]
NAMED = set(re.findall(r"`([^`]+)`", SECTION))


def _named(key: str) -> bool:
    return key in NAMED or any(key in entry.split() or f"[{key}" in entry for entry in NAMED)


def test_every_chain_key_is_documented():
    keys = (
        *files.TOP_KEYS,
        *files.CONDITION_KEYS,
        *files.SOURCE_KEYS,
        "positive",
        "negative",
        "tolerance",
        *COMMON_FIELDS,
    )
    missing = [k for k in keys if not _named(k) and f"[{k}" not in SECTION]
    assert not missing


def test_every_block_and_field_is_documented():
    for name, block in BLOCKS.items():
        row = next((line for line in SECTION.splitlines() if line.startswith(f"| `{name}` |")), None)
        assert row is not None, name
        for key in block.fields:
            assert f"`{key}`" in row, f"{name}.{key}"


def test_every_part_field_is_documented():
    for key in presets.PART_FIELDS:
        assert f"| `{key}` |" in SECTION, key
    for key, (first, second) in presets.PAIR_SIDES.items():
        row = next(line for line in SECTION.splitlines() if line.startswith(f"| `{key}` |"))
        assert f"[{first}, {second}]" in row, key


def test_every_json_report_key_is_documented(capsys):
    demo = Path(__file__).resolve().parents[2] / "engine" / "demos" / "pump_vibration.toml"
    main(["check", str(demo), "--json"])
    report = json.loads(capsys.readouterr().out)
    stage_keys = {k for s in report["stages"] for k in s}
    margin_keys = {k for s in report["stages"] for k in s["margins"]}
    for key in (*report, *stage_keys, *margin_keys):
        assert f"`{key}`" in README, key
