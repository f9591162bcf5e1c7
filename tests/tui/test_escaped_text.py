"""Text that comes from files and file names reaches the terminal escaped (issue 17, item 1): a
file name carrying an OSC 52 sequence (which asks a terminal to set the clipboard) shows as
visible \\x1b ... \\x07 in the header, the problems screen and the notices; a chain file saved
with a byte-order mark is not kept with the mark in the session text."""

from __future__ import annotations

import io
import shutil

from rich.console import Console
from textual.widgets import Static

from railroom.tui.screens.problems import ProblemsScreen
from railroom.tui.session import Session

from .conftest import DATA

OSC52 = "\x1b]52;c;aGk=\x07"


def plain(static) -> str:
    console = Console(width=300, file=io.StringIO(), record=True, color_system=None)
    console.print(static.render())
    return console.export_text()


def hostile_copy(tmp_path):
    target = tmp_path / f"chain{OSC52}.toml"
    shutil.copy(DATA / "two_stage.toml", target)
    return target


async def test_a_file_name_with_an_escape_sequence_is_shown_escaped(make_app, tmp_path):
    path = hostile_copy(tmp_path)
    app = make_app(path)
    async with app.run_test(size=(200, 24)) as pilot:
        await app.workers.wait_for_complete()
        await pilot.pause()
        header = plain(app.screen.query_one("#status-facts", Static))
        assert "\x1b" not in header and "\x07" not in header
        assert "chain\\x1b]52;c;aGk=\\x07.toml" in header
        await pilot.press("w")
        await pilot.pause()
        saved = [str(n.message) for n in app._notifications if "saved" in str(n.message)]
        assert saved and all("\x1b" not in s for s in saved)
        assert any("\\x1b]52" in s for s in saved)


async def test_the_problems_screen_escapes_the_file_name(make_app, tmp_path):
    path = tmp_path / f"missing{OSC52}.toml"
    path.write_text("format = 1\ntitle = \n", encoding="utf-8")  # a TOML syntax error
    app = make_app(path)
    async with app.run_test(size=(200, 24)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, ProblemsScreen)
        for part in ("#problems-title", "#problems-body"):
            words = plain(app.screen.query_one(part, Static))
            assert "\x1b" not in words and "\x07" not in words
            assert "missing\\x1b]52" in words


def test_a_byte_order_mark_is_not_kept_in_the_session_text(tmp_path):
    path = tmp_path / "bom.toml"
    path.write_bytes(b"\xef\xbb\xbf" + (DATA / "two_stage.toml").read_bytes())
    session = Session.open(path)
    assert not session.text.startswith("\ufeff")
    assert session.text == (DATA / "two_stage.toml").read_text(encoding="utf-8")
    assert not session.modified
    session.path.write_bytes(b"\xef\xbb\xbf" + (DATA / "two_stage.toml").read_bytes())
    assert session.reload() == [] and not session.text.startswith("\ufeff")
