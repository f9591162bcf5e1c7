"""Generated chain files through the interface's load and edit paths (issue 12, "done when"):
opening, reading every form field, setting each field, adding, moving and removing stages and
saving under a new name give a session or located problems, never another exception, and never
change the opened file. RAILROOM_FUZZ_EXAMPLES=3000 for the long run (the suite runs 40)."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings

from fuzz_inputs import DEMO_CHAIN, chain_files, extreme_values
from railroom.engine.formats import chain_editing as editing
from railroom.engine.circuit.blocks import BLOCKS
from railroom.tui.session import Session, open_chain

EXAMPLES = int(os.environ.get("RAILROOM_FUZZ_EXAMPLES", "40"))
TYPED = {
    "inputs": "10k, 1; 22k 1%, -2",
    "pair": "1, 2",
    "integer": "7",
    "flag": "true",
    "choice": "",
    "text": "renamed",
}


def typed_value(shape: editing.FieldShape) -> str:
    if shape.form == "choice":
        return shape.choices[0] if shape.choices else ""
    return TYPED.get(shape.form, {"resistance": "4k7 1%", "capacitance": "10n"}.get(shape.kind, "1"))


def exercise(session: Session) -> None:
    for index, stage in enumerate(session.chain.stages, 1):
        if stage.block not in BLOCKS:
            continue
        shapes = editing.stage_shapes(stage.block)
        shown = editing.stage_fields(session.text, index, shapes)
        assert set(shown) == set(shapes)
        for key, shape in shapes.items():
            value = editing.toml_value(typed_value(shape), shape)
            session.prepare(session.text, lambda t, k=key, v=value: editing.set_stage_field(t, index, k, v))
    for section, shapes in editing.SECTIONS.items():
        editing.section_fields(session.text, section, shapes)
        for key, shape in shapes.items():
            value = editing.toml_value(typed_value(shape), shape)
            session.prepare(
                session.text, lambda t, k=key, v=value, s=section: editing.set_section_field(t, s, k, v)
            )
    count = len(session.chain.stages)
    fields = editing.starter_stage(
        "noninverting",
        "extra",
        next(iter(session.library.parts), None),
        next(iter(session.chain.rails), None),
    )
    session.edit(lambda t: editing.add_stage(t, count + 1, fields))
    session.edit(lambda t: editing.move_stage(t, 1, 1))
    session.edit(lambda t: editing.remove_stage(t, 1))
    while session.undo():
        pass


FUZZ = settings(
    max_examples=EXAMPLES,
    deadline=None,
    database=None,
    derandomize=True,
    suppress_health_check=list(HealthCheck),
)


@FUZZ
@given(chain_files())
def test_generated_chains_through_the_edit_paths(text):
    through_the_edit_paths(text)


@FUZZ
@given(extreme_values(DEMO_CHAIN))
def test_chains_that_load_with_extreme_values_through_the_edit_paths(text):
    through_the_edit_paths(text)


def through_the_edit_paths(text: str) -> None:
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "chain.toml"
        path.write_bytes(text.encode("utf-8", "surrogatepass"))
        before = path.read_bytes()
        opened = open_chain(path)
        if isinstance(opened, Session):
            exercise(opened)
            opened.save(Path(folder) / "copy.toml")
        else:
            assert opened.problems
        assert path.read_bytes() == before
