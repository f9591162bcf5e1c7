"""What `railroom blocks [NAME]` prints, taken from the block table itself so it cannot drift.

Each block class carries its one-line summary, its fields (kind, default, and in the help which
node each component connects: the topology) and its ideal-op-amp formulas. The formulas are the
textbook ones for each circuit (node equations with an ideal op amp; the filter forms as in
Sallen and Key, IRE Trans. Circuit Theory, 1955, and the multiple-feedback forms of standard active
filter texts); the engine itself solves every loop with the part's finite gain and bandwidth.
"""

from __future__ import annotations

from railroom.engine.circuit.blocks import BLOCKS, COMMON_FIELDS
from railroom.engine.circuit.blocks.base import Block

KIND_UNITS = {
    "resistance": "ohm",
    "capacitance": "F",
    "voltage": "V",
    "flag": "true/false",
    "inputs": "list of {r, v}",
}

COMMON_HELP = {
    "name": 'the stage\'s name in reports (default "stage N")',
    "block": "which circuit the stage is (one of `railroom blocks`)",
    "part": "the op amp's part preset id (blocks with an op amp)",
    "rails": "which [rails.NAME] supplies the op amp (needed when a chain has more than one)",
    # the edit form shows these two as well (engine/formats/chain_editing.py): one wording for both
    "load": "load from the output to 0 V (optional)",
    "load_capacitance": "capacitive load to 0 V (optional)",
    "load_to": "the voltage the load returns to (default 0 V)",
    "from": 'the earlier stage (by name) or "source" this stage takes its input from (default: the one before)',
}


def block_names() -> list[tuple[str, str]]:
    """Every block with its one-line summary, in the catalogue's order."""
    return [(name, block.summary) for name, block in BLOCKS.items()]


def _default(spec) -> str:
    if spec.required:
        return "required"
    if spec.default is None:
        return "optional"
    if isinstance(spec.default, bool):
        return f"default {str(spec.default).lower()}"
    return f"default {spec.default:g}"


def describe(name: str) -> dict | None:
    """One block as plain data: summary, whether it needs a part, fields, formulas; None if unknown."""
    block: Block | None = BLOCKS.get(name)
    if block is None:
        return None
    common = [f for f in COMMON_FIELDS if block.uses_part or f not in ("part", "rails")]
    return {
        "name": name,
        "summary": block.summary,
        "uses_part": block.uses_part,
        "saturates": block.saturates,
        "differential_input": block.takes_differential,
        "fields": [
            {
                "key": key,
                "kind": spec.kind,
                "unit": KIND_UNITS.get(spec.kind, ""),
                "default": _default(spec),
                "connects": spec.help,
                # a stage voltage also takes { net = "NAME" } (the README, Named DC nets)
                "takes_net": spec.kind == "voltage",
            }
            for key, spec in block.fields.items()
        ],
        "common_fields": [{"key": key, "help": COMMON_HELP[key]} for key in common],
        "ideal": list(block.ideal),
    }
