"""engine/formats/chain_editing.py: edits keep every comment and the loader reads the result."""

from __future__ import annotations

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

import pytest

from railroom.engine.formats import chain_editing as editing
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import InputError
from railroom.tui.session import demo_path

DEMO = demo_path().read_text(encoding="utf-8")


def comments(text: str) -> list[str]:
    return sorted(line.split("#", 1)[1].strip() for line in text.splitlines() if "#" in line)


def test_set_field_keeps_comments_and_changes_only_that_value():
    edited = editing.set_stage_field(DEMO, 4, "ref", "1.3")
    assert comments(edited) == comments(DEMO)
    assert tomllib.loads(edited)["stage"][3]["ref"] == "1.3"
    assert chain_from_text(edited, "x.toml").stages[3].quantity("ref").value == 1.3
    assert edited.replace('ref = "1.3"', 'ref = { net = "converter_quarter" }') == DEMO


def test_move_there_and_back_is_the_same_text():
    moved = editing.move_stage(DEMO, 4, -1)
    assert [s.name for s in chain_from_text(moved, "x").stages][2] == "shift to mid-supply"
    assert editing.move_stage(moved, 3, 1) == DEMO


def test_add_then_remove_is_the_same_text():
    fields = editing.starter_stage("noninverting", "extra", "generic-rro-5v", "converter")
    added = editing.add_stage(DEMO, 3, fields)
    stage = chain_from_text(added, "x").stages[2]
    assert (stage.name, stage.quantity("rf").value, stage.quantity("rg").value) == ("extra", 1e4, 1e4)
    assert editing.remove_stage(added, 3) == DEMO


def test_section_fields_and_pairs():
    edited = editing.set_section_field(DEMO, "source", "band", ["20", "10k"])
    assert chain_from_text(edited, "x").source.band == (20.0, 10e3)
    edited = editing.set_section_field(edited, "conditions", "samples", 500)
    assert chain_from_text(edited, "x").conditions.samples == 500


def test_value_problem_uses_the_engine_parser_words():
    shape = editing.stage_shapes("noninverting")["rf"]
    assert editing.value_problem("4k7 1%", shape) is None
    assert editing.value_problem("4q7", shape).startswith("expected a resistance")
    pair = editing.SOURCE_FIELDS["band"]
    assert editing.value_problem("10", pair) == 'expected two values separated by a comma, such as "-1, 1"'


def test_loader_refuses_reversed_band():
    edited = editing.set_section_field(DEMO, "source", "band", ["5k", "10"])
    with pytest.raises(InputError) as err:
        chain_from_text(edited, "x.toml")
    assert err.value.problems[0].field == "source.band"


def test_inline_stage_tables_add_move_remove_in_place():
    """`stage = [{...}, ...]` is a chain like any other (TOML 1.0 arrays of inline tables)."""
    text = (
        'format = 1\nstage = [\n  {name = "a", block = "follower", part = "p"},  # first\n'
        '  {name = "b", block = "follower", part = "p"},  # second\n]\n'
    )
    added = editing.add_stage(text, 2, {"name": "new", "block": "follower", "part": "p"})
    assert [t["name"] for t in tomllib.loads(added)["stage"]] == ["a", "new", "b"]
    assert "# first" in added and "# second" in added
    assert editing.remove_stage(added, 2) == text
    moved = editing.move_stage(text, 2, -1)
    assert [t["name"] for t in tomllib.loads(moved)["stage"]] == ["b", "a"]
    assert editing.set_stage_field(text, 2, "name", "c").count('name = "c"') == 1


def test_a_new_ac_coupling_stage_starts_below_the_band():
    # the starter values give a corner 1/(2 pi r c) = 1/(2 pi 100k 1u) = 1.59 Hz (RC high-pass),
    # below the demo's 10 Hz band bottom, so adding one does not cut the band
    import math

    fields = editing.starter_stage("ac_coupling", "coupling", None, None)
    stage = chain_from_text(editing.add_stage(DEMO, 2, fields), "x").stages[1]
    corner = 1 / (2 * math.pi * stage.quantity("r").value * stage.quantity("c").value)
    assert corner == pytest.approx(1.5915, rel=1e-4)
