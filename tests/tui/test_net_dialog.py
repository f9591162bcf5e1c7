"""A new named net from the interface (issue 13, real boards, item 4): the dialog (n) keeps what
is typed until Enter, adds the net then or says what is wrong (file, field), Esc changes nothing;
N removes a net no stage reads and refuses one a stage reads, with the fields that read it.
Saving keeps the file's comments (engine/formats/net_editing.py, atomic save)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from textual.widgets import Input, Static

import railroom.engine.demos as demos
from railroom.tui.screens.net_dialog import NetDialog

SIZE = (80, 24)
DEMO = Path(demos.__file__).parent / "pump_vibration.toml"
KEYS = {" ": "space", "%": "percent_sign", ".": "full_stop", "_": "underscore"}


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


async def typed(pilot, text: str) -> None:
    await pilot.press(*[KEYS.get(c, c) for c in text])


async def test_a_new_net_is_added_on_enter_and_bad_input_keeps_what_was_typed(make_app, pump):
    app = make_app(pump)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot)
        before = app.session.text
        await pilot.press("n")
        await settle(pilot)
        assert isinstance(app.screen, NetDialog)
        await typed(pilot, "bias_ref")
        await pilot.press("tab")
        await typed(pilot, "2.5 2x")
        await pilot.press("enter")
        await settle(pilot)
        # refused, located, and nothing typed is lost; the file is as it was
        assert isinstance(app.screen, NetDialog)
        error = str(app.screen.query_one("#net-error", Static).render())
        assert "pump.toml" in error and "nets.bias_ref.value" in error and "expected a voltage" in error
        assert app.screen.query_one("#net-name", Input).value == "bias_ref"
        assert app.screen.query_one("#net-value", Input).value == "2.5 2x"
        assert app.session.text == before
        # a taken name is refused by name
        app.screen.query_one("#net-name", Input).value = "converter_low"
        app.screen.query_one("#net-value", Input).value = "2.5 2%"
        await pilot.press("enter")
        await settle(pilot)
        assert "there is a net named 'converter_low' already" in str(
            app.screen.query_one("#net-error", Static).render()
        )
        app.screen.query_one("#net-name", Input).value = "bias_ref"
        await pilot.press("enter")
        await settle(pilot)
        assert not isinstance(app.screen, NetDialog)
        assert app.session.chain.nets["bias_ref"].value.value == 2.5
        assert app.session.chain.nets["bias_ref"].value.tolerance == pytest.approx(0.02)
        # saved: the new table beside the others, every comment kept
        await pilot.press("w")
        await settle(pilot)
        saved = pump.read_text()
        assert '[nets.bias_ref]\nvalue = "2.5 2%"\n' in saved
        for line in before.splitlines():
            assert line in saved
        # a ratiometric one: a fraction of the chosen rail
        await pilot.press("n")
        await settle(pilot)
        await typed(pilot, "half")
        app.screen.query_one("#net-fraction", Input).value = "0.5 0.1%"
        app.screen.query_one("#net-fraction", Input).focus()
        await pilot.press("enter")
        await settle(pilot)
        net = app.session.chain.nets["half"]
        assert net.rail == "analog" and net.fraction.value == pytest.approx(0.5)


async def test_escape_adds_nothing(make_app, pump):
    app = make_app(pump)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot)
        before = app.session.text
        await pilot.press("n")
        await settle(pilot)
        await typed(pilot, "mid")
        await pilot.press("tab")
        await typed(pilot, "1")
        await pilot.press("escape")
        await settle(pilot)
        assert not isinstance(app.screen, NetDialog)
        assert app.session.text == before and not app.session.modified


async def test_a_net_a_stage_reads_is_not_removed_and_an_unused_one_is(make_app, pump):
    app = make_app(pump)
    async with app.run_test(size=SIZE) as pilot:
        await settle(pilot)
        await pilot.press("N")
        await settle(pilot)
        # converter_quarter is first; stage 4 reads it
        await pilot.press("enter")
        await settle(pilot)
        assert "converter_quarter" in app.session.chain.nets
        notes = [n.message for n in app._notifications]
        assert any("not removed" in n and "is read by stage 4" in n for n in notes), notes
        # an unused one goes
        text = app.session.text.replace("[source]", '[nets.spare]\nvalue = "1"\n\n[source]', 1)
        app.apply_edit(lambda _: text)
        await settle(pilot)
        await pilot.press("N")
        await settle(pilot)
        await pilot.press("end", "enter")
        await settle(pilot)
        assert "spare" not in app.session.chain.nets and "[nets.spare]" not in app.session.text
        assert "converter_quarter" in app.session.chain.nets
