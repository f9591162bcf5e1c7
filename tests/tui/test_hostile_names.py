"""Names and files that once crashed the interface (issue 12, item 6): user text is never markup,
a deeply nested preset file is a located problem, and a chain written with inline stage tables
is edited like any other."""

from __future__ import annotations

import asyncio
import functools
import io

from rich.console import Console
from textual.app import App
from textual.widgets import DataTable, Input, Static

from railroom.engine.formats.presets import search_order, user_folder
from railroom.tui.screens.presets import PresetsScreen
from railroom.tui.widgets.field_form import FieldForm
from railroom.tui.widgets.preset_form import PresetForm

PART = """\
[part."{id}"]
description = "lab part"
supply = ["4", "30"]
supply_abs_max = "32"
output_headroom = ["1", "1"]
input_headroom = ["1", "1"]
gbw = "1M"
slew = "0.5V/us"
open_loop_gain = "100dB"
offset = "1m"
output_current = "10m"
"""


def synchronous(test):
    @functools.wraps(test)
    def run(*args, **kwargs):
        asyncio.run(test(*args, **kwargs))

    return run


class PresetsApp(App):
    def on_mount(self) -> None:
        self.push_screen(PresetsScreen(search_order(), user_folder()))


def notices(app) -> list[str]:
    return [str(n.message) for n in app._notifications]


def plain(static) -> str:
    console = Console(width=200, file=io.StringIO(), record=True, color_system=None)
    console.print(static.render())
    return console.export_text()


async def save_one_field(pilot, part_id: str) -> None:
    grid = pilot.app.screen.query_one("#preset-table", DataTable)
    grid.move_cursor(row=grid.get_row_index(part_id))
    grid.focus()
    await pilot.press("e")
    await pilot.pause()
    form = pilot.app.screen
    assert isinstance(form, PresetForm)
    form.query_one("#field-gbw", Input).value = "2M"
    form.action_save()
    await pilot.pause()


@synchronous
async def test_a_preset_id_with_markup_is_saved_and_named_literally():
    ids = ["[/]", "[@click=app.quit]lab2"]
    path = user_folder() / "odd.toml"
    path.write_text("\n".join(PART.format(id=i) for i in ids), encoding="utf-8")
    app = PresetsApp()
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        for part_id in ids:
            await save_one_field(pilot, part_id)
            assert app.is_running  # no markup error, no quit action
            saved = [n for n in app._notifications if f"Saved {part_id} to " in str(n.message)]
            assert saved and not any(n.markup for n in saved)  # shown as written, never markup
        await pilot.pause()
        assert app.is_running
    assert path.read_text(encoding="utf-8").count('gbw = "2M"') == 2


@synchronous
async def test_a_preset_file_nested_500_deep_is_a_located_problem():
    deep = user_folder() / "deep.toml"
    deep.write_text("x = " + "[" * 500 + "]" * 500 + "\n", encoding="utf-8")
    (user_folder() / "good.toml").write_text(PART.format(id="lab-good"), encoding="utf-8")
    app = PresetsApp()
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, PresetsScreen)
        problems = plain(app.screen.query_one("#preset-problems", Static))
        assert "deep.toml" in problems
        grid = app.screen.query_one("#preset-table", DataTable)
        assert "lab-good" in [
            str(grid.coordinate_to_cell_key((r, 0)).row_key.value) for r in range(grid.row_count)
        ]


INLINE = """\
format = 1
title = "inline stages"
# both stages on one line each
stage = [
  {name = "buffer", block = "follower", part = "generic-bipolar-15v"},
  {name = "gain two", block = "noninverting", part = "generic-bipolar-15v", rf = "10k", rg = "10k"},  # x2
]

[rails.main]
positive = "12"
negative = "-12"

[source]
level = ["0", "0"]
amplitude = "100m"
band = ["10", "1k"]
"""


async def test_e_on_inline_stage_tables_edits_them(make_app, tmp_path):
    path = tmp_path / "inline.toml"
    path.write_text(INLINE, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await pilot.pause()
        assert app.screen.query_one(FieldForm)
        box = app.screen.query_one("#field-rf", Input)
        assert box.value == "10k"
        box.focus()
        box.value = "30k"
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        # non-inverting gain 1 + rf/rg = 4 (any op-amp text): 400 mV nominal peak
        assert app.result.stages[1].measure.nominal[1] == __import__("pytest").approx(0.4, rel=1e-3)
        await pilot.press("escape", "w")
        await pilot.pause()
    saved = path.read_text(encoding="utf-8")
    assert saved == INLINE.replace('rf = "10k"', 'rf = "30k"')
