"""Typing while checks run: one instant check at a time, the newest text checked, a stale full
check stopped (tui/app.py type_edit, run_full; engine/analysis.py analyse's `cancelled`).

The expected verdict is the textbook non-inverting gain 1 + rf/rg (Sedra & Smith, Microelectronic
Circuits, ch. 2) on the test chain's 100 mV peak source.
"""

from __future__ import annotations

import asyncio
import threading
import time

import pytest

from railroom.engine import Cancelled
from railroom.tui import app as app_module
from railroom.tui import session as session_module

from .test_typing import SIZE, burst, open_gain_stage_rf, settle


class Watched:
    """Every instant check (corners, no design aids) the app runs: how many compute at once,
    and which rf each one was asked about; each sleeps `delay` first (a loaded machine)."""

    def __init__(self, delay: float):
        self.real = session_module.analyse
        self.delay = delay
        self.lock = threading.Lock()
        self.running = 0
        self.most = 0
        self.asked: list[float] = []

    def __call__(self, chain, parts, **kwargs):
        if kwargs.get("design_aids", True):  # the full check: not counted
            return self.real(chain, parts, **kwargs)
        with self.lock:
            self.running += 1
            self.most = max(self.most, self.running)
            self.asked.append(chain.stages[1].quantity("rf").value)
        try:
            time.sleep(self.delay)
            return self.real(chain, parts, **kwargs)
        finally:
            with self.lock:
                self.running -= 1


async def test_fast_typing_runs_one_instant_check_at_a_time_and_shows_the_last_text(
    make_app, two_stage, monkeypatch
):
    watched = Watched(delay=0.08)
    monkeypatch.setattr(app_module, "analyse", watched)
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        shown: list[tuple] = []
        original = app._show_corners

        def show(result) -> None:
            original(result)
            rf = app.session.chain.stages[1].quantity("rf")
            shown.append((rf.value, rf.tolerance))

        app._show_corners = show  # type: ignore[method-assign]
        # "10k" -> "10" -> "1" -> "" -> "3" -> "33" -> "33k" -> "33k " -> "33k 1" -> "33k 1%":
        # a key every 25 ms, faster than one check (80 ms here), so most land while one runs
        keys = ["backspace"] * 3 + list("33k 1%")
        for key in keys:
            burst(app, [key])
            await asyncio.sleep(0.025)
        await settle(pilot)
        assert watched.most == 1  # never two instant checks computing together
        assert len(watched.asked) < len(keys)  # the texts typed in between are dropped
        assert box.value == "33k 1%"  # every character kept
        # the distinct texts that load, in the order typed; each verdict shown is for a later
        # one than the verdict before it (no stale one after a newer one)
        typed_order = [(10.0, None), (1.0, None), (3.0, None), (33.0, None), (33e3, None), (33e3, 0.01)]
        positions = [typed_order.index(q) for q in shown]
        assert positions == sorted(positions) and len(set(positions)) == len(positions)
        assert shown[-1] == (33e3, 0.01) and watched.asked[-1] == 33e3
        stage = app.session.chain.stages[1]
        assert (stage.quantity("rf").value, stage.quantity("rf").tolerance) == (33e3, 0.01)
        assert 'rf = "33k 1%"' in app.session.text
        # the verdict shown is the last text's: its nominal swing is gain 1 + 33k/10k on 100 mV
        # peak (the part's finite open-loop gain takes off far less than 0.1 %)
        low, high = app.result.stages[1].measure.nominal
        assert (low, high) == pytest.approx((-0.1 * 4.3, 0.1 * 4.3), rel=1e-3)
        assert len(app.session.history) == 1  # one step for undo


async def test_a_keystroke_stops_the_running_full_check_at_its_next_phase(make_app, two_stage, monkeypatch):
    """The full check (design aids) is held at its first phase boundary until a key is typed;
    the engine must then stop at the very next boundary it asks, and its answer never shows."""
    real = session_module.analyse
    reached = threading.Event()
    typed = threading.Event()
    asked_after_key: list[bool] = []
    ended: list[str] = []

    def full(chain, parts, **kwargs):
        if not kwargs.get("design_aids", True):
            return real(chain, parts, **kwargs)
        stale = kwargs["cancelled"]
        first = not reached.is_set()  # the run held at its first boundary
        asked = [0]

        def held() -> bool:
            asked[0] += 1
            if first and asked[0] == 1:
                reached.set()
                typed.wait(10)
                asked_after_key.append(stale())
            return stale()

        try:
            result = real(chain, parts, **{**kwargs, "cancelled": held})
        except Cancelled:
            ended.append("cancelled")
            raise
        ended.append("finished")
        return result

    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        await settle(pilot)
        monkeypatch.setattr(app_module, "analyse", full)
        burst(app, ["backspace"] * 3 + list("4k7"))  # rf = 4.7k: a verdict, then a full check
        for _ in range(200):
            await asyncio.sleep(0.01)
            if reached.is_set():
                break
        assert reached.is_set(), "the full check did not start"
        shown_before = app.result
        burst(app, ["backspace"] * 3 + list("22k"))  # while the full check is held
        await asyncio.sleep(0.05)
        typed.set()
        for _ in range(500):  # the newer full check starts after a pause in the typing
            await asyncio.sleep(0.01)
            if "finished" in ended:
                break
        await settle(pilot)
        # the held full check found itself stale at the boundary it was held at, and stopped
        assert asked_after_key == [True] and ended[0] == "cancelled"
        assert shown_before is not None
        assert app.session.chain.stages[1].quantity("rf").value == 22e3
        high = app.result.stages[1].measure.nominal[1]
        assert high == pytest.approx(0.1 * (1 + 22e3 / 10e3), rel=1e-3)
        assert ended[1:] == ["finished"]  # the newer full check ran to the end and is shown
        assert app.result.headroom_db is not None  # (the instant check leaves it out)
        assert box.value == "22k"


async def test_a_value_longer_than_its_field_scrolls_to_the_cursor(make_app, two_stage):
    """The field's virtual size follows the text without a layout pass (FieldInput): a value
    wider than the field still scrolls so that the cursor and the last characters show."""
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        long = "".join(str(i % 10) for i in range(3 * box.size.width)) + "END"
        burst(app, list(long))
        await settle(pilot)
        assert box.value == "10k" + long
        assert box.virtual_size.width == len(box.value) + 1  # the text and the cursor after it
        assert box.scroll_offset.x == len(box.value) + 1 - box.content_region.width
        shown = "".join(segment.text for segment in box.render_line(0))
        assert "END" in shown
