"""The status line keeps its own state apart from Textual's (a widget's `_running` is Textual's
flag that its message loop runs; the status line once used the same name for the method running)."""

from __future__ import annotations

from railroom.tui.widgets.status_line import StatusLine


async def test_the_status_line_leaves_textuals_running_flag_alone(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        status = app.screen.query_one(StatusLine)
        status.running(None)  # no method in the background: the widget's loop still runs
        assert status.is_running is True
        status.running("montecarlo")
        assert status.is_running is True
