"""A field's message follows the newest text in its box, never an older text's late answer.

Found trying the form at 80x24: "4k7x" typed fast into a resistance showed no problem, because
"4k7" (valid, checked by the engine in a worker) answered after "4k7x" was refused at once, and
its answer put the field's help back over the problem.
"""

from __future__ import annotations

import time

import pytest
from textual.widgets import Label

from railroom.tui import app as app_module
from railroom.tui import session as session_module

from tests.tui.test_typing import SIZE, burst, open_gain_stage_rf, settle


@pytest.fixture
def slow_engine(monkeypatch):
    """Every engine check sleeps 80 ms first, so the valid text's answer comes last."""
    real = session_module.analyse

    def slowed(*args, **kwargs):
        time.sleep(0.08)
        return real(*args, **kwargs)

    monkeypatch.setattr(session_module, "analyse", slowed)
    monkeypatch.setattr(app_module, "analyse", slowed)


async def test_a_refused_text_keeps_its_problem_when_an_older_valid_text_answers_late(
    make_app, two_stage, slow_engine
):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace"] * 4 + list("4k7x"))
        await settle(pilot)
        message = str(app.screen.query_one("#message-rf", Label).render())
        assert box.value == "4k7x"
        assert '"x" is not a prefix or a unit of resistance' in message
        # the file took the last valid text; the refused one stays a draft in the box
        assert app.session.chain.stages[1].quantity("rf").value == pytest.approx(4.7e3)
        burst(app, ["backspace"])
        await settle(pilot)
        message = str(app.screen.query_one("#message-rf", Label).render())
        assert box.value == "4k7" and "not a prefix" not in message


async def test_a_valid_text_typed_after_a_refused_one_clears_the_problem(make_app, two_stage, slow_engine):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        box = await open_gain_stage_rf(pilot)
        box.selection = box.selection.cursor(len(box.value))
        burst(app, ["backspace"] * 4 + list("2x") + ["backspace"] + list("2k"))
        await settle(pilot)
        message = str(app.screen.query_one("#message-rf", Label).render())
        assert box.value == "22k" and "not a prefix" not in message
        assert app.session.chain.stages[1].quantity("rf").value == pytest.approx(22e3)
