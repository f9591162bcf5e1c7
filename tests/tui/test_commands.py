"""railroom's own commands in the command palette (issue 17, item 5)."""

from __future__ import annotations

from pathlib import Path

from railroom.tui.widgets.stage_list import StageList

ALARMS = Path(__file__).resolve().parents[2] / "tests/chains/alarms_nogo.toml"


async def run_command(pilot, words: str) -> None:
    await pilot.press("colon")
    await pilot.pause()
    await pilot.press(*words)
    # the palette searches in the background: wait for its list to hold a hit
    for _ in range(50):
        await pilot.pause(0.05)
        lists = pilot.app.screen.query("CommandList")
        if lists and lists.first().option_count:
            break
    await pilot.press("enter")
    await pilot.pause()
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()


async def test_the_palette_jumps_to_a_stage_by_name(make_app):
    app = make_app(ALARMS)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await run_command(pilot, "stage 3: latch")
        assert app.screen.query_one(StageList).cursor_row == 2


async def test_the_palette_switches_the_method(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await run_command(pilot, "method: rss")
        assert app.session.chain.conditions.method == "rss"
        assert 'method = "rss"' in app.session.text


async def test_the_palette_runs_a_key_action_and_opens_a_preset(make_app, two_stage):
    from railroom.tui.screens.help import HelpScreen
    from railroom.tui.screens.presets import PresetsScreen

    app = make_app(two_stage)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await run_command(pilot, "Show every key")
        assert isinstance(app.screen, HelpScreen)
        await pilot.press("escape")
        await pilot.pause()
        await run_command(pilot, "preset: generic-bipolar-15v")
        assert isinstance(app.screen, PresetsScreen)
        await pilot.pause()
        assert app.screen.current_id() == "generic-bipolar-15v"
