"""Typing into the edit form at any speed keeps exactly what was typed (issue 12, item 1).

A real terminal delivers keys in bursts when the machine is busy; `burst` posts them the way the
terminal driver does, all at once, without waiting for the app between keys (Pilot's `press`
waits after every key, which would hide any reordering).
"""
from __future__ import annotations

import time

import pytest
from textual import events
from textual.widgets import Input

from railroom.tui import session as session_module

SIZE = (80, 24)
NAMES = {" ": "space", ".": "full_stop", "%": "percent_sign"}


def burst(app, keys: list[str]) -> None:
    for key in keys:
        character = {"backspace": "\x7f", "tab": "\t", "escape": "\x1b"}.get(key, key)
        event = events.Key(NAMES.get(key, key), character)
        event.set_sender(app)
        app._driver.send_message(event)


async def settle(pilot) -> None:
    for _ in range(3):
        await pilot.pause()
        await pilot.app.workers.wait_for_complete()
    await pilot.pause()


@pytest.fixture
def slow_engine(monkeypatch):
    """The engine made slow (a loaded machine): every analysis sleeps 60 ms first."""
    real = session_module.analyse

    def slowed(*args, **kwargs):
        time.sleep(0.06)
        return real(*args, **kwargs)
    monkeypatch.setattr(session_module, "analyse", slowed)


async def open_gain_stage_rf(pilot):
    await pilot.pause()
    await pilot.press("j", "e")
    await pilot.pause()
    box = pilot.app.screen.query_one("#field-rf", Input)
    box.focus()
    await pilot.pause()
    return box


async def test_held_backspace_then_fast_typing_keeps_every_key(make_app, two_stage, slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))     # cursor at the end, nothing selected
        burst(app, ["backspace"] * 6 + list("14k 0.1%"))
        await settle(pilot)
        assert box.value == "14k 0.1%"
        assert app.session.chain.stages[1].quantity("rf").value == pytest.approx(14e3)
        assert 'rf = "14k 0.1%"          # feedback' in app.session.text


async def test_tab_in_a_burst_sends_the_next_letters_to_the_next_field(make_app, two_stage,
                                                                       slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace"] * 3 + list("22k") + ["tab"] + ["backspace"] + list("4k7"))
        await settle(pilot)
        stage = app.session.chain.stages[1]
        assert (box.value, app.screen.query_one("#field-rg", Input).value) == ("22k", "4k7")
        assert (stage.quantity("rf").value, stage.quantity("rg").value) == (22e3, 4.7e3)


async def test_letters_typed_right_after_esc_are_not_typed_into_the_field(make_app, two_stage,
                                                                        slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace", "escape", "m", "l"])     # m: the method, l: the level view
        await settle(pilot)
        assert box.value == "10"                          # not "10ml"
        assert app.session.chain.stages[1].quantity("rf").value == 10.0
