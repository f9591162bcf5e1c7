"""`railroom blocks [NAME]` prints the engine's own block table, and its formulas are right.

The ideal-op-amp transfers printed for the filters are checked against an independent derivation:
the node equations of each topology (as the block's field help describes it) solved with sympy,
with the op amp ideal (a virtual earth for the inverting forms, V- = V+ = out/K for Sallen-Key).
"""

from __future__ import annotations

import json

import pytest
import sympy as sp
from sympy.parsing.sympy_parser import (
    convert_xor,
    implicit_multiplication_application,
    parse_expr,
    standard_transformations,
)

from railroom.engine.circuit.blocks import BLOCKS
from railroom.tui.cli import main

s, r1, r2, r3, c1, c2, K, vi, vo, va, vp = sp.symbols("s r1 r2 r3 c1 c2 K vi vo va vp")
SYMBOLS = {str(x): x for x in (s, r1, r2, r3, c1, c2, K)}


def _nodal(name: str):
    """Ideal-op-amp transfer out/in from Kirchhoff's current law at each node (sympy.solve)."""
    if name == "sallen_key_lowpass":  # r1 in->A, r2 A->+, c1 A->out, c2 +->0, out = K V+
        eqs = [
            (vi - va) / r1 + (vo - va) * s * c1 + (vp - va) / r2,
            (va - vp) / r2 - vp * s * c2,
            vo - K * vp,
        ]
        unknowns = [vo, va, vp]
    elif name == "sallen_key_highpass":  # c1 in->A, c2 A->+, r1 A->out, r2 +->0, out = K V+
        eqs = [
            (vi - va) * s * c1 + (vo - va) / r1 + (vp - va) * s * c2,
            (va - vp) * s * c2 - vp / r2,
            vo - K * vp,
        ]
        unknowns = [vo, va, vp]
    elif name == "mfb_lowpass":  # r1 in->A, r2 A->out, r3 A->-, c1 A->0, c2 out->-, V- = 0
        eqs = [(vi - va) / r1 + (vo - va) / r2 - va / r3 - va * s * c1, va / r3 + vo * s * c2]
        unknowns = [vo, va]
    else:  # mfb_bandpass: r1 in->A, r2 - ->out, r3 A->0, c1 A->-, c2 A->out, V- = 0
        eqs = [(vi - va) / r1 - va / r3 - va * s * c1 + (vo - va) * s * c2, va * s * c1 + vo / r2]
        unknowns = [vo, va]
    return sp.solve(eqs, unknowns, dict=True)[0][vo] / vi


def _printed_transfer(name: str):
    line = BLOCKS[name].ideal[0]
    expr, _, where = line.removeprefix("H(s) = ").partition(", ")
    local = dict(SYMBOLS, rp=sp.Symbol("rp"))
    h = parse_expr(
        expr,
        local_dict=local,
        transformations=standard_transformations + (implicit_multiplication_application, convert_xor),
    )
    if where.startswith("rp = "):
        h = h.subs(sp.Symbol("rp"), r1 * r3 / (r1 + r3))
    return h


@pytest.mark.parametrize("name", ["sallen_key_lowpass", "sallen_key_highpass", "mfb_lowpass", "mfb_bandpass"])
def test_printed_filter_transfer_matches_the_node_equations(name):
    assert sp.simplify(_printed_transfer(name) - _nodal(name)) == 0


def test_every_block_has_its_formulas_and_field_topology():
    for name, block in BLOCKS.items():
        assert block.ideal, f"{name} has no ideal-op-amp formula"
        for key, spec in block.fields.items():
            assert spec.help, f"{name}.{key} does not say what it connects"


def test_list_and_one_block(capsys):
    assert main(["blocks"]) == 0
    listing = capsys.readouterr().out
    assert all(name in listing for name in BLOCKS)
    assert main(["blocks", "mfb_bandpass", "--json"]) == 0
    info = json.loads(capsys.readouterr().out)
    assert [f["key"] for f in info["fields"]] == list(BLOCKS["mfb_bandpass"].fields)
    assert info["fields"][0] == {
        "key": "r1",
        "kind": "resistance",
        "unit": "ohm",
        "default": "required",
        "connects": "in to node A",
        "takes_net": False,
    }
    assert [f["key"] for f in info["fields"] if f["takes_net"]] == ["ref"]  # the README, Named DC nets
    assert main(["blocks", "noninverting"]) == 0
    text = capsys.readouterr().out
    assert "out = (1 + rf/rg) in - (rf/rg) ref" in text and "default 0 [V]" in text
    assert '(a field in V also takes { net = "NAME" }' in text


def test_unknown_block_is_refused_with_the_list(capsys):
    assert main(["blocks", "nonverting"]) == 2
    assert "unknown block 'nonverting'" in capsys.readouterr().err


def test_the_edit_form_and_the_block_help_word_load_and_load_capacitance_alike():
    from railroom.engine.reports.block_help import describe
    from railroom.engine.formats.chain_editing import stage_shapes

    common = {f["key"]: f["help"] for f in describe("noninverting")["common_fields"]}
    shapes = stage_shapes("noninverting")
    assert [shapes[k].help for k in ("load", "load_capacitance")] == [
        common["load"],
        common["load_capacitance"],
    ]
