"""Pictures of the main screen (pytest-textual-snapshot). After a deliberate change to the screen:
pytest tests/tui/test_snapshots.py --snapshot-update, then look at the new pictures."""

from __future__ import annotations

import pytest


async def settled(pilot) -> None:
    """Wait for the background check (design aids) so the picture does not race it."""
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()


# Every picture renders a chain kept under tests/chains, not the shipped demo, so a wording change
# in a demo breaks no picture. PUMP is a frozen copy of the pump demo.
PUMP = "tests/chains/pump_stand.toml"


@pytest.fixture
def pump(make_app, monkeypatch):
    """The app on PUMP opened by its path relative to the repository (the header shows it)."""
    from pathlib import Path

    monkeypatch.chdir(Path(__file__).resolve().parents[2])
    return make_app(Path(PUMP))


def test_main_screen_80x24(snap_compare, pump):
    assert snap_compare(pump, terminal_size=(80, 24), run_before=settled)


def test_main_screen_120x40(snap_compare, pump):
    assert snap_compare(pump, terminal_size=(120, 40), run_before=settled)


def test_level_view_120x40(snap_compare, pump):
    assert snap_compare(pump, press=["j", "v"], terminal_size=(120, 40), run_before=settled)


def test_main_screen_no_color(snap_compare, make_app, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")  # Textual reads it when the app is built
    from pathlib import Path

    monkeypatch.chdir(Path(__file__).resolve().parents[2])
    assert snap_compare(make_app(Path(PUMP)), terminal_size=(80, 24), run_before=settled)


def test_edit_form_in_place_80x24(snap_compare, pump):
    """The form takes the detail panel's place; the status line and stage list stay in sight."""
    assert snap_compare(pump, press=["j", "j", "j", "e"], terminal_size=(80, 24), run_before=settled)


# New pictures on a chain kept for the tests (tests/chains), not the shipped demo: the 80-column
# stage list keeps the names whole (part column dropped, short block names), the input limits
# and the input overshoot marked on the bar, "! fails GO" explained (issue 17).
ALARMS = "tests/chains/alarms_nogo.toml"


@pytest.fixture
def alarms(make_app, monkeypatch):
    """The app on ALARMS opened by its path relative to the repository, as a user in the checkout
    would type it: the header shows that path, the same in every clone."""
    from pathlib import Path

    monkeypatch.chdir(Path(__file__).resolve().parents[2])
    return make_app(Path(ALARMS))


def test_alarms_80x24(snap_compare, alarms):
    assert snap_compare(alarms, press=["j", "j"], terminal_size=(80, 24), run_before=settled)


def test_alarms_120x40(snap_compare, alarms):
    assert snap_compare(alarms, press=["j", "j"], terminal_size=(120, 40), run_before=settled)


def test_alarms_no_color_80x24(snap_compare, alarms, monkeypatch):
    monkeypatch.setenv("NO_COLOR", "1")
    assert snap_compare(alarms, terminal_size=(80, 24), run_before=settled)


def test_alarms_method_dialog_80x24(snap_compare, alarms):
    """The dialog says how to leave it (esc) above its list."""
    assert snap_compare(alarms, press=["m"], terminal_size=(80, 24), run_before=settled)


def test_alarms_fixes_80x24(snap_compare, alarms):
    """f: the detail panel scrolled to its sensitivity and fixes."""
    assert snap_compare(alarms, press=["f"], terminal_size=(80, 24), run_before=settled)
