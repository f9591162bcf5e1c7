"""Typing into the edit form at any speed keeps exactly what was typed (issue 12, item 1).

A real terminal delivers keys in bursts when the machine is busy; `burst` posts them the way the
terminal driver does, all at once, without waiting for the app between keys (Pilot's `press`
waits after every key, which would hide any reordering).
"""

from __future__ import annotations

import threading
import time

import pytest
from textual import events
from textual.widgets import Input

from railroom.tui import app as app_module
from railroom.tui import session as session_module
from railroom.tui.widgets.status_line import StatusLine

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
    monkeypatch.setattr(app_module, "analyse", slowed)


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
        box.selection = box.selection.cursor(len(box.value))  # cursor at the end, nothing selected
        burst(app, ["backspace"] * 6 + list("14k 0.1%"))
        await settle(pilot)
        assert box.value == "14k 0.1%"
        assert app.session.chain.stages[1].quantity("rf").value == pytest.approx(14e3)
        assert 'rf = "14k 0.1%"          # feedback' in app.session.text


async def test_tab_in_a_burst_sends_the_next_letters_to_the_next_field(make_app, two_stage, slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace"] * 3 + list("22k") + ["tab"] + ["backspace"] + list("4k7"))
        await settle(pilot)
        stage = app.session.chain.stages[1]
        assert (box.value, app.screen.query_one("#field-rg", Input).value) == ("22k", "4k7")
        assert (stage.quantity("rf").value, stage.quantity("rg").value) == (22e3, 4.7e3)


async def test_letters_typed_right_after_esc_are_not_typed_into_the_field(make_app, two_stage, slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace", "escape", "m", "l"])  # m: the method, l: the level view
        await settle(pilot)
        assert box.value == "10"  # not "10ml"
        assert app.session.chain.stages[1].quantity("rf").value == 10.0


async def test_the_engine_never_runs_on_the_event_loop_while_typing(make_app, two_stage, monkeypatch):
    """The engine is held until the test lets it go: the keys are all in and shown meanwhile,
    each check ran in a worker thread, the older answers are dropped and the newest one is shown."""
    real = session_module.analyse
    release = threading.Event()
    threads = []

    def held(*args, **kwargs):
        threads.append(threading.current_thread() is threading.main_thread())
        if not threads[-1]:
            release.wait(30)
        return real(*args, **kwargs)

    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        monkeypatch.setattr(session_module, "analyse", held)
        monkeypatch.setattr(app_module, "analyse", held)
        threads.clear()
        await pilot.press(*list("2M"))  # gain 201: clips on +/-12 V
        assert box.value == "2M"
        assert app.session.chain.stages[1].quantity("rf").value == 10e3  # not checked yet
        assert str(app.screen.query_one(StatusLine).query_one("#status-verdict").content).startswith("GO")
        release.set()
        await settle(pilot)
        assert threads and not any(threads)  # every check of a keystroke: a worker
        assert app.session.chain.stages[1].quantity("rf").value == 2e6
        assert app.result.stages[1].regime == "clipping"
        assert len(app.session.history) == 1  # "2" then "2M": one step for undo
        await pilot.press("escape", "u")
        assert app.session.chain.stages[1].quantity("rf").value == 10e3


async def test_keys_typed_before_a_dialog_opened_are_not_typed_into_it(make_app, two_stage):
    from railroom.tui.screens.dialogs import SaveAsScreen

    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        dialog = SaveAsScreen("copy.toml")
        app.push_screen(dialog)
        await pilot.pause()
        box._forward_event(events.Key("x", "x"))  # typed before the dialog, queued at the field
        await pilot.pause()
        assert dialog.query_one(Input).value == "copy.toml"
        assert box.value == "10kx"
