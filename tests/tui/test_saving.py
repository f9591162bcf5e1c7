"""Saving from the interface never loses a file (issue 12, items 2, 3 and 5)."""

from __future__ import annotations

import os

from textual.widgets import Input

from railroom.tui.screens.dialogs import ConfirmScreen, SaveAsScreen
from railroom.tui.widgets.status_line import StatusLine

SIZE = (80, 24)


def status_text(app) -> str:
    return " ".join(
        str(static.content) for static in app.screen_stack[0].query_one(StatusLine).query("Static")
    )


async def retype(pilot, field: str, text: str) -> None:
    box = pilot.app.screen.query_one(f"#field-{field}", Input)
    box.focus()
    box.value = text
    await pilot.pause()
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()


async def save_as(pilot, name: str) -> None:
    await pilot.press("W")
    await pilot.pause()
    assert isinstance(pilot.app.screen, SaveAsScreen)
    pilot.app.screen.query_one(Input).value = name
    await pilot.press("enter")
    await pilot.pause()


async def test_save_as_over_an_existing_file_asks_and_keeps_a_backup(make_app, tmp_path):
    other = tmp_path / "other.toml"
    other.write_text("# someone's chain\n")
    app = make_app(None)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await save_as(pilot, str(other))
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("escape")  # leave it: nothing is written
        assert other.read_text() == "# someone's chain\n" and app.session.read_only
        await save_as(pilot, str(other))
        await pilot.press("o")
        await pilot.pause()
        assert app.session.path == other and not app.session.read_only
    assert "# railroom demo" in other.read_text()
    assert (tmp_path / "other.toml.bak").read_text() == "# someone's chain\n"


async def test_a_bare_name_is_saved_beside_the_open_file(make_app, two_stage, tmp_path, monkeypatch):
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await save_as(pilot, "copy.toml")
    assert (two_stage.parent / "copy.toml").read_text() == two_stage.read_text()
    assert not (elsewhere / "copy.toml").exists()


async def test_after_a_failed_reload_w_asks_before_overwriting_the_disk_version(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rf", "20k")
        await pilot.press("escape")
        broken = two_stage.read_text().replace('rg = "10k"', 'rg = "10q"  # half typed by a colleague')
        two_stage.write_text(broken)
        os.utime(two_stage, ns=(1, 1))
        await pilot.press("r")  # fails: the disk version has a problem
        await pilot.pause()
        assert "NOT RELOADED" in status_text(app) and "stage.2.rg" in status_text(app)
        app.watch_file()  # the watcher does not ask again
        await pilot.pause()
        assert not isinstance(app.screen, ConfirmScreen)
        await pilot.press("w")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)  # asked, not silently overwritten
        await pilot.press("escape")
        await pilot.pause()
    assert two_stage.read_text() == broken


async def test_a_chain_save_keeps_the_previous_file_as_bak(make_app, two_stage):
    before = two_stage.read_text()
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rf", "20k")
        await pilot.press("escape", "w")
        await pilot.pause()
    assert 'rf = "20k"' in two_stage.read_text()
    assert (two_stage.parent / "two_stage.toml.bak").read_text() == before


async def test_a_read_only_chain_is_refused_with_a_message(make_app, two_stage):
    before = two_stage.read_text()
    two_stage.chmod(0o444)
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rf", "20k")
        await pilot.press("escape", "w")
        await pilot.pause()
        assert any("read-only" in str(n.message) for n in app._notifications)
        assert app.session.modified  # the edit is still on screen
    assert two_stage.read_text() == before


async def test_saving_through_a_symlink_edits_the_target(make_app, two_stage, tmp_path):
    link = tmp_path / "link.toml"
    link.symlink_to(two_stage)
    app = make_app(link)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rf", "20k")
        await pilot.press("escape", "w")
        await pilot.pause()
    assert link.is_symlink() and 'rf = "20k"' in two_stage.read_text()


async def test_clearing_an_optional_field_and_typing_again_keeps_its_line_and_comment(make_app, two_stage):
    text = two_stage.read_text().replace(
        'part = "generic-bipolar-15v"\nrf = "10k"',
        'part = "generic-bipolar-15v"\nload = "2k"         # the next board\'s input\nrf = "10k"',
    )
    two_stage.write_text(text)
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "load", "")
        await pilot.press(*"3k")
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert app.session.text == text.replace('load = "2k"  ', 'load = "3k"  ')
        await retype(pilot, "load", "")
        await pilot.press("escape")  # left empty: removed
        await pilot.pause()
        assert app.session.text == text.replace('load = "2k"         # the next board\'s input\n', "")
        assert app.session.chain.stages[1].load is None
