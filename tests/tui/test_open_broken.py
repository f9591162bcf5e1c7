"""A chain file that cannot be opened still opens the interface, on the problems screen, and the
chain screen takes its place as soon as the file on disk loads (the user fixes it in an editor)."""

from __future__ import annotations

import io
import shutil
from pathlib import Path

import pytest
from rich.console import Console

from railroom.tui.screens.chain import ChainScreen
from railroom.tui.screens.problems import ProblemsScreen
from railroom.tui.session import demo_path
from railroom.tui.widgets.status_line import StatusLine

SIZE = (80, 24)
DATA = Path(__file__).resolve().parent / "data"
GOOD = (DATA / "two_stage.toml").read_text(encoding="utf-8")


def plain(static) -> str:
    console = Console(width=1000, file=io.StringIO(), record=True, color_system=None)
    console.print(static.content)
    return console.export_text()


def problems_text(app) -> str:
    screen = app.screen_stack[0]
    return " ".join(plain(screen.query_one(f"#problems-{part}")) for part in ("title", "body", "watch"))


def line_of(text: str, fragment: str) -> int:
    """1-based line of the first line holding `fragment`: the line number an editor shows."""
    return next(n for n, line in enumerate(text.splitlines(), 1) if fragment in line)


def notes(app) -> str:
    return "\n".join(str(n.message) for n in app._notifications)


async def wait_for_screen(pilot, kind, seconds: float = 4.0) -> None:
    """The file is polled once a second: wait for the next look, no longer than `seconds`."""
    for _ in range(int(seconds / 0.1)):
        if isinstance(pilot.app.screen, kind):
            return
        await pilot.pause(0.1)
    raise AssertionError(f"still on {type(pilot.app.screen).__name__}")


async def test_bad_value_lists_file_line_field_then_fix_on_disk_opens(make_app, tmp_path):
    path = tmp_path / "broken.toml"
    # user text that looks like markup must be shown as typed
    broken = GOOD.replace('rf = "10k"', 'rf = "[b]10q"')
    path.write_text(broken, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, ProblemsScreen)
        shown = problems_text(app)
        assert f"{path}:{line_of(broken, 'rf = ')}: stage.2.rf:" in shown
        assert '"[b]10q"' in shown
        assert "1 problem." in shown and "Watching the file" in shown
        await pilot.press("escape", "w", "p")  # harmless here: no chain to save or show
        assert isinstance(app.screen, ProblemsScreen)
        assert path.read_text(encoding="utf-8") == broken
        path.write_text(GOOD, encoding="utf-8")  # the editor in the other pane saves
        await wait_for_screen(pilot, ChainScreen)
        await pilot.pause()
        verdict = plain(app.screen.query_one(StatusLine).query_one("#status-verdict"))
        assert verdict.startswith("GO")
        # non-inverting gain 1 + rf/rg = 2 (Horowitz & Hill, 3rd ed., 4.2.3) on a 100 mV peak
        assert app.result.stages[1].measure.nominal[1] == pytest.approx(0.2, rel=1e-3)
        assert f"opened {path}" in notes(app)


async def test_unknown_part_and_bad_toml_are_located(make_app, tmp_path):
    path = tmp_path / "chain.toml"
    unknown = GOOD.replace('part = "generic-bipolar-15v"\n\n#', 'part = "no-such-part"\n\n#')
    path.write_text(unknown, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        shown = problems_text(app)
        # the part's own line, or the line of its stage's [[stage]] header (plan problems locate
        # the stage): either one takes the editor to the right place
        stage_header = line_of(unknown, "[[stage]]")
        assert any(
            f"{path}:{line}: stage.1.part: unknown part 'no-such-part'" in shown
            for line in (stage_header, line_of(unknown, "no-such-part"))
        )
        assert "no-such-part" in shown
        bad_toml = GOOD.replace('rg = "10k"', 'rg = = "10k"')
        path.write_text(bad_toml, encoding="utf-8")
        await pilot.press("r")  # reload now, without waiting for the poll
        await pilot.pause()
        assert isinstance(app.screen, ProblemsScreen)
        shown = problems_text(app)
        assert f"{path}:{line_of(bad_toml, 'rg = =')}: (file): not valid TOML" in shown
        assert "still not loadable" in notes(app)


async def test_missing_file_is_watched_until_it_appears(make_app, tmp_path):
    path = tmp_path / "later.toml"
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        shown = problems_text(app)
        assert f"No chain file at {path}." in shown
        assert "Watching for it to appear" in shown
        shutil.copy(DATA / "two_stage.toml", path)
        await wait_for_screen(pilot, ChainScreen)
        await pilot.pause()
        assert len(app.result.stages) == 2


async def test_missing_file_started_from_demo_with_n(make_app, tmp_path):
    path = tmp_path / "new.toml"
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("n")
        await pilot.pause()
        assert isinstance(app.screen, ChainScreen)
        assert path.read_text(encoding="utf-8") == demo_path().read_text(encoding="utf-8")
        assert not app.session.read_only and app.session.path == path
        assert len(app.result.stages) == 7  # the demo's seven stages
        await pilot.press("n")  # a chain key now: nothing is overwritten


async def test_help_and_quit_on_the_problems_screen(make_app, tmp_path):
    app = make_app(tmp_path / "absent.toml")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("question_mark")
        await pilot.pause()
        assert "Read the chain file again now" in plain(
            app.screen.query("Static")[2]
        )  # after the esc line and the intro
        await pilot.press("escape")
        await pilot.pause()
        assert isinstance(app.screen, ProblemsScreen)
        await pilot.press("q")
        await pilot.pause()
    assert app.return_code == 0


async def test_open_file_broken_on_disk_keeps_the_chain_on_reload(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        two_stage.write_text(GOOD.replace('rf = "10k"', 'rf = "10q"'), encoding="utf-8")
        app.watch_file()
        await pilot.pause()
        await pilot.press("r")  # the question's "reload it"
        await pilot.pause()
        assert isinstance(app.screen, ChainScreen)
        assert "not reloaded" in "\n".join(str(n.title) for n in app._notifications)
        assert "stage.2.rf" in notes(app)
        assert len(app.result.stages) == 2 and app.session.text == GOOD


async def test_bad_preset_folder_and_broken_user_preset_still_open(
    make_app, two_stage, _own_presets_folder, tmp_path
):
    (_own_presets_folder / "mine.toml").write_text("[part\n", encoding="utf-8")
    app = make_app(two_stage, (str(tmp_path / "no-such-folder"),))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, ChainScreen)
        said = notes(app)
        assert f"preset folder not found: {tmp_path / 'no-such-folder'}" in said
        assert f"{_own_presets_folder / 'mine.toml'}:1: (file): not valid TOML" in said
