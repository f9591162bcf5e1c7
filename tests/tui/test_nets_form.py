"""Named DC nets in the interface: shown with the source and in the detail, edited in the source
form (s), and read by a stage's voltage field as "net NAME" (the README's File formats, Named
DC nets). Comments and layout stay as written."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from textual.widgets import Input, Label

import railroom.engine.demos as demos
from railroom.tui.widgets.detail import stage_story

SIZE = (80, 24)
DEMO = Path(demos.__file__).parent / "pump_vibration.toml"


@pytest.fixture
def pump(tmp_path) -> Path:
    target = tmp_path / "pump.toml"
    shutil.copy(DEMO, target)
    return target


async def settle(pilot) -> None:
    for _ in range(3):
        await pilot.pause()
        await pilot.app.workers.wait_for_complete()
    await pilot.pause()


async def type_into(pilot, box: Input, text: str) -> None:
    box.focus()
    await pilot.pause()
    box.value = ""
    await pilot.press(*[{" ": "space", "%": "percent_sign", ".": "full_stop"}.get(c, c) for c in text])
    await settle(pilot)


async def test_the_source_form_lists_the_nets_and_edits_a_fraction(make_app, pump):
    app = make_app(pump)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot)
        await pilot.press("s")
        await settle(pilot)
        screen = app.screen
        labels = [str(label.render()) for label in screen.query(".form-key").results(Label)]
        assert "converter_q… rail" in labels and "convert… fraction" in labels
        box = screen.query_one("#field-net-1-fraction", Input)
        assert box.value == "0.25 0.15%"
        # the help names the net and its span: 0.25 (1 -/+ 0.15 %) x 5 V (1 -/+ 2 %)
        help_text = str(screen.query_one("#message-net-1-fraction", Label).render())
        assert "converter_quarter: 1.22 V .. 1.28 V" in help_text
        await type_into(pilot, box, "0.26 0.1%")
        assert 'fraction = "0.26 0.1%"' in app.session.text
        assert "# 30k over 10k, 0.1 % each" in app.session.text  # the comment stays
        assert app.session.chain.nets["converter_quarter"].fraction.value == pytest.approx(0.26)
        await type_into(pilot, box, "0")
        message = str(screen.query_one("#message-net-1-fraction", Label).render())
        assert "a divider's ratio above 0 and at most 1" in message
        assert app.session.chain.nets["converter_quarter"].fraction.value == pytest.approx(0.26)


async def test_a_stage_voltage_field_reads_net_name(make_app, pump):
    app = make_app(pump)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot)
        await pilot.press("j", "j", "j", "e")
        await settle(pilot)
        box = app.screen.query_one("#field-ref", Input)
        assert box.value == "net converter_quarter"
        await type_into(pilot, box, "net nosuch")
        message = str(app.screen.query_one("#message-ref", Label).render())
        assert "no net named 'nosuch'" in message
        await type_into(pilot, box, "net converter_low")
        assert 'ref = {net = "converter_low"}' in app.session.text
        assert app.session.chain.stages[3].values["ref"].net == "converter_low"
        await type_into(pilot, box, "1.3")
        assert app.session.chain.stages[3].quantity("ref").value == pytest.approx(1.3)


def test_the_detail_names_the_net_a_stage_reads_with_its_span(pump):
    from rich.console import Console

    from railroom.engine.analysis import analyse
    from railroom.engine.formats.loading import load_checked

    chain, library = load_checked(str(pump))
    result = analyse(chain, library.parts, design_aids=False, headroom=False)
    console = Console(width=200, record=True)
    console.print(stage_story(result.stages[3], chain, library.parts))
    text = console.export_text()
    assert "ref net converter_quarter" in text
    assert "nets: converter_quarter = 0.25 x rail converter +: 1.22 V .. 1.28 V" in text


def test_a_converter_input_shows_no_rails_it_does_not_have(pump):
    # the converter input (stage 6) has no op amp: its detail names its window and its nets,
    # not the analog rails a stage with a part would take by default; the buffer before it does
    from rich.console import Console

    from railroom.engine import analyse
    from railroom.engine.formats.loading import load_checked

    chain, library = load_checked(str(pump))
    result = analyse(chain, library.parts, design_aids=False, headroom=False)

    def story(index: int) -> str:
        console = Console(width=200, record=True)
        console.print(stage_story(result.stages[index], chain, library.parts))
        return console.export_text()

    assert "rails" not in story(5).split("\n")[1]
    assert "window 343 mV .. 4.58 V" in story(5)
    assert story(4).split("\n")[1].startswith("rails converter: 0 V / 5 V ±2%")
