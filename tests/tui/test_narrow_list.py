"""The 80-column stage list and the bar's words (issue 17, item 2)."""

from __future__ import annotations

from pathlib import Path

from railroom.tui import bars
from railroom.tui.bars import LEGEND, MARKS, SHORT_LEGEND, margin_bar
from railroom.tui.widgets.stage_list import StageList

ALARMS = Path(__file__).resolve().parents[2] / "tests/chains/alarms_nogo.toml"


async def test_at_80_columns_names_stay_whole_and_rows_distinct(make_app):
    app = make_app(ALARMS)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        rows = app.screen.query_one(StageList)
        names = [str(rows.get_cell(str(i), "stage")) for i in (1, 2, 3)]
        assert names == ["gain x11", "level alarm", "latch with hysteresis"]  # nothing cut
        blocks = [str(rows.get_cell(str(i), "block")) for i in (1, 2, 3)]
        assert blocks == ["non-inv", "compare", "schmitt"] and "…" not in "".join(blocks)
        assert "part" not in [str(c.label) for c in rows.columns.values()]
    async with make_app(ALARMS).run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        rows = pilot.app.screen.query_one(StageList)
        assert str(rows.get_cell("1", "part")) == "generic-rro-5v"  # wide: the part is back


def test_one_set_of_legend_words():
    for mark, words in MARKS[:-1]:
        assert f"{mark} {words}" in LEGEND and f"{mark} {words}" in SHORT_LEGEND
    assert "! fails GO" in LEGEND
    assert len(SHORT_LEGEND) <= 74  # fits the border of an 80-column list


def test_help_and_check_print_the_same_legend(capsys, tmp_path):
    import inspect

    from railroom.tui.screens import help as help_screen
    from railroom.tui.widgets import level_view

    assert help_screen.LEGEND is bars.LEGEND and level_view.LEGEND is bars.LEGEND
    from railroom.tui.cli import main

    assert "LEGEND" in inspect.getsource(help_screen)
    code = main(["check", "--no-color", str(ALARMS)])
    assert code != 0
    out = capsys.readouterr().out
    for mark, words in MARKS + (bars.FAILS_GO,):
        assert f"{mark} {words}" in out


def test_the_bar_marks_the_input_range_and_its_overshoot():
    # rails 0 .. 10 V in 10 cells of 1 V (the first holds 0 V: ┊ when nothing else is there); output 2 .. 6 V inside a 1 .. 9 V swing window;
    # the + input reaches 0.5 .. 8.5 V against a common-mode range of 1 .. 8 V (worked by hand)
    bar = margin_bar(
        (0.0, 10.0),
        (1.0, 9.0),
        (2.0, 6.0),
        width=10,
        colour=False,
        input_span=(0.5, 8.5),
        input_window=(1.0, 8.0),
    )
    assert bar.plain == "x[████─]x▓"
    inside = margin_bar(
        (0.0, 10.0),
        (0.5, 9.5),
        (4.0, 6.0),
        width=10,
        colour=False,
        input_span=(4.0, 6.0),
        input_window=(1.5, 7.5),
    )
    assert inside.plain == "┊[──██─]──"


def test_the_changing_columns_keep_their_width():
    # issue 17: the regime and margin columns took the width of what they held at the moment
    from rich.text import Text

    from railroom.tui.widgets.stage_list import column_widths

    def row(regime: str, margin: str) -> dict[str, Text]:
        return {
            "#": Text("1"),
            "stage": Text("buffer"),
            "block": Text("follower"),
            "short": Text("follower"),
            "part": Text("-"),
            "regime": Text(regime),
            "limiting margin": Text(margin),
        }

    short, _ = column_widths(120, [row("linear", "slew 1 V/µs")])
    long, _ = column_widths(120, [row("fed-clipped", "output-high -3.46 V")])
    assert short == long


async def test_an_empty_choice_says_what_to_pick(make_app, two_stage):
    from textual.widgets import Select

    app = make_app(two_stage)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        await pilot.press("o")
        await pilot.pause()
        box = app.screen.query_one("#field-distribution", Select)
        assert box.is_blank()
        assert "pick one: uniform / normal" in str(box.prompt)


def test_check_at_80_columns_cuts_no_word(capsys, monkeypatch):
    # the bar takes what the words leave: "fed-clipped" and the bar's end were cut with "…"
    from railroom.tui.cli import main

    monkeypatch.setenv("COLUMNS", "80")
    main(["check", "--no-color", str(ALARMS)])
    table = capsys.readouterr().out.splitlines()[2:6]
    assert all(len(line) <= 80 for line in table)
    assert "…" not in "".join(table) and sum("fed-clipped" in line for line in table) == 2
