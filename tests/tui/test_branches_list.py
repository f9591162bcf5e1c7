"""The stage list as a tree (issue 13 item 1): one row per stage in signal order, branches drawn
one level in at 80 columns, the arrows following the rows, and adding a stage as a branch."""

from __future__ import annotations

from railroom.tui.screens.dialogs import ChoiceScreen
from railroom.tui.widgets.field_form import FieldForm
from railroom.tui.widgets.stage_list import StageList, tree_rows

SIZE = (80, 24)

TREE = """\
format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["-0.1", "0.1"]
[[stage]]
name = "buffer"
block = "follower"
part = "generic-bipolar-15v"
[[stage]]
name = "gain"
block = "noninverting"
part = "generic-bipolar-15v"
rf = "10k"
rg = "10k"
[[stage]]
name = "side"
block = "inverting"
part = "generic-bipolar-15v"
from = "buffer"
rin = "10k"
rf = "10k"
[[stage]]
name = "after gain"
block = "follower"
part = "generic-bipolar-15v"
from = "gain"
"""


def test_tree_rows_follow_the_signal_with_branches_one_level_in():
    # a line continues at its level; the stages fed by one output are each one level in
    assert tree_rows((-1, 0, 1, 2)) == [(0, ""), (1, ""), (2, ""), (3, "")]
    # file order buffer, gain, side (from buffer), after gain (from gain): the rows keep each
    # branch together, so "after gain" sits under "gain", not under "side"
    assert tree_rows((-1, 0, 0, 1)) == [(0, ""), (1, "├ "), (3, "│ "), (2, "└ ")]
    # two stages fed by the source, and a branch inside a branch
    assert tree_rows((-1, -1, 1, 1)) == [(0, "├ "), (1, "└ "), (2, "  ├ "), (3, "  └ ")]


def rows_text(app) -> list[str]:
    table = app.screen.query_one(StageList)
    return [str(table.get_row_at(r)[1]) for r in range(table.row_count)]


async def test_the_stage_list_shows_the_tree_and_the_arrows_follow_it(make_app, tmp_path):
    path = tmp_path / "tree.toml"
    path.write_text(TREE, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert rows_text(app) == ["buffer", "├ gain", "│ after gain", "└ side"]
        table = app.screen.query_one(StageList)
        seen = []
        for _ in range(4):
            seen.append(app.screen.highlighted())
            await pilot.press("down")
        assert seen == [1, 2, 4, 3]  # signal order, not file order
        assert sum(c.width for c in table.columns.values()) <= SIZE[0]


async def test_adding_a_stage_offers_where_it_takes_its_input_from(make_app, tmp_path):
    path = tmp_path / "tree.toml"
    path.write_text(TREE, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("a")
        app.screen.dismiss("follower")
        await pilot.pause()
        assert isinstance(app.screen, ChoiceScreen)
        offered = [key for key, _ in app.screen.choices]
        assert offered == ["line", "1", "2", "3", "4", "source"]
        app.screen.dismiss("source")
        await pilot.pause()
        await pilot.pause()
        stages = app.session.chain.stages
        assert [s.name for s in stages][-1] == "new follower" and stages[-1].feed == "source"
        assert app.session.chain.parents == (-1, 0, 0, 1, -1)
        # the new stage is highlighted (its row is the last: a second branch of the source)
        assert app.screen.highlighted() == 5
        assert app.screen.query_one(FieldForm).has_focus_within
        assert rows_text(app)[-1] == "└ new follower"


async def test_the_edit_form_moves_a_stage_to_another_input(make_app, tmp_path):
    from textual.widgets import Select

    path = tmp_path / "tree.toml"
    path.write_text(TREE, encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("down", "down", "down", "e")  # "side", the last row
        await pilot.pause()
        choice = app.screen.query_one("#field-from", Select)
        assert choice.value == "buffer"
        choice.value = "source"
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert app.session.chain.stages[2].feed == "source"
        assert 'from = "source"' in app.session.text


def test_a_new_name_is_followed_by_every_from_that_named_the_stage():
    import tomllib

    from railroom.engine.formats import chain_editing as editing

    renamed = editing.set_stage_field(TREE, 1, "name", "input buffer")
    assert [t.get("from") for t in tomllib.loads(renamed)["stage"]] == [None, None, "input buffer", "gain"]


async def test_a_stage_others_take_from_is_not_removed_and_the_user_is_told(make_app, tmp_path):
    path = tmp_path / "tree.toml"
    path.write_text(TREE, encoding="utf-8")
    app = make_app(path)
    said = []
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.screen.notify = lambda message, **kw: said.append(message)  # type: ignore[method-assign]
        await pilot.press("down", "x", "y")  # "gain": "after gain" takes from it by name
        await pilot.pause()
        assert [s.name for s in app.session.chain.stages] == ["buffer", "gain", "side", "after gain"]
        assert said and "not removed" in said[-1] and "stage.3.from" in said[-1] and "'gain'" in said[-1]
        assert app.session.text == TREE  # nothing lost
