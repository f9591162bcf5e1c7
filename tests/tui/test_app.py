"""The interface driven as a user would, with Textual's Pilot (keys in, screen and file out)."""

from __future__ import annotations

import io
import os

import pytest
from rich.console import Console
from textual.widgets import Input

from railroom.engine.formats.values import ValueTextError, parse_quantity
from railroom.tui.screens.dialogs import ChoiceScreen, ConfirmScreen, SaveAsScreen
from railroom.tui.widgets.field_form import FieldForm
from railroom.tui.widgets.stage_list import StageList
from railroom.tui.widgets.status_line import StatusLine

SIZE = (80, 24)


def plain(widget) -> str:
    """What a Static shows, as plain text (rich renders its content)."""
    console = Console(width=120, file=io.StringIO(), record=True, color_system=None)
    console.print(widget.content)
    return console.export_text()


def status_text(app) -> str:
    line = app.screen_stack[0].query_one(StatusLine)
    return " ".join(plain(s).strip() for s in line.query("Static"))


def detail_text(app) -> str:
    return plain(app.screen_stack[0].query_one("#detail-body"))


async def type_into(pilot, field: str, text: str, paste: bool = False) -> None:
    """Replace a field's text key by key (each keystroke re-checks), or all at once (a paste)."""
    editor = pilot.app.screen.query_one(f"#field-{field}", Input)
    editor.focus()
    if paste:
        editor.value = text
    else:
        editor.value = ""
        await pilot.press(*text)
    await pilot.pause()
    await pilot.app.workers.wait_for_complete()  # the engine reads each keystroke in a worker
    await pilot.pause()


async def test_demo_opens_and_arrows_through_stages(make_app):
    app = make_app(None)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert "NO-GO: 2 of 7 stages fail" in status_text(app)  # the demo's verdict (check command)
        assert "built-in demo (read-only)" in status_text(app)
        assert "1 pickup buffer" in detail_text(app)
        await pilot.press("j", "j", "down")
        assert app.screen.query_one(StageList).cursor_row == 3
        assert "4 shift to mid-supply" in detail_text(app)
        assert "slew" in detail_text(app) and "FAIL" in detail_text(app)
        await pilot.press("k")
        assert "3 anti-alias" in detail_text(app)
        await pilot.press("v")
        assert app.screen.query_one("#views").current == "level"
        level = plain(app.screen.query_one("#level-body"))
        assert "closest to a limit: stage 6 converter input" in level


async def test_resistor_change_makes_stage_clip_and_verdict_follow(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert status_text(app).startswith("GO")
        gain = app.result.stages[1]
        # non-inverting gain 1 + rf/rg = 2 (any op-amp text, e.g. Horowitz & Hill, 3rd ed., 4.2.3):
        # the nominal output peak is 2 x 100 mV, less the loop-gain shortfall (A = 1e5 here)
        assert gain.measure.nominal[1] == pytest.approx(0.2, rel=1e-3)
        await pilot.press("j", "e")
        await pilot.pause()
        assert app.screen.query_one(FieldForm).has_focus_within
        await type_into(pilot, "rf", "2M")  # gain 201: 20 V peak on +/-12 V rails
        assert "NO-GO: 1 of 2 stages fail" in status_text(app)
        assert app.result.stages[1].regime == "clipping"
        assert app.result.stages[1].margins["output-high"] < 0
        assert "[modified]" in status_text(app)
        await pilot.press("escape")
        assert "FAIL" in detail_text(app) and "output-high" in detail_text(app)


async def test_bad_value_shows_engine_message_and_keeps_everything(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await type_into(pilot, "name", "gain of two")
        await type_into(pilot, "rf", "4q7", paste=True)
        with pytest.raises(ValueTextError) as expected:
            parse_quantity("4q7", "resistance")
        message = " ".join(plain(app.screen.query_one("#message-rf")).split())
        assert message == str(expected.value)
        assert app.screen.query_one("#field-rf", Input).value == "4q7"
        assert app.session.chain.stages[1].name == "gain of two"  # the good edit stayed
        assert app.session.chain.stages[1].quantity("rf").value == 10e3
        await pilot.press("escape", "e")  # close and come back
        assert app.screen.query_one("#field-rf", Input).value == "4q7"
        assert " ".join(plain(app.screen.query_one("#message-rf")).split()) == str(expected.value)


async def test_save_keeps_comments_and_writes_the_edit(make_app, two_stage):
    before = two_stage.read_text()
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await type_into(pilot, "rf", "30k 0.1%")
        await pilot.press("escape", "w")
        await pilot.pause()
        assert not app.session.modified
    after = two_stage.read_text()
    assert after == before.replace('rf = "10k"          # feedback', 'rf = "30k 0.1%"          # feedback')


async def test_outside_edit_is_noticed_and_reloaded(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        text = two_stage.read_text().replace('rf = "10k"', 'rf = "30k"')
        two_stage.write_text(text)
        os.utime(two_stage, ns=(1, 1))  # a different fingerprint whatever the clock
        app.watch_file()
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("r")
        await pilot.pause()
        # gain 1 + 30k/10k = 4 (non-inverting gain formula): 400 mV nominal peak
        assert app.result.stages[1].measure.nominal[1] == pytest.approx(0.4, rel=1e-3)
        assert app.session.text == text


async def test_save_never_overwrites_newer_file_silently(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await type_into(pilot, "rf", "20k")
        await pilot.press("escape")
        newer = two_stage.read_text().replace("two-stage", "someone else's")
        two_stage.write_text(newer)
        os.utime(two_stage, ns=(1, 1))
        app.watch_file()
        await pilot.pause()
        await pilot.press("k")  # keep what is on screen
        await pilot.press("w")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("escape")
        assert two_stage.read_text() == newer


async def test_demo_is_read_only_and_saves_as(make_app, tmp_path):
    app = make_app(None)
    target = tmp_path / "mine.toml"
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("w")
        assert isinstance(app.screen, SaveAsScreen)
        app.screen.query_one(Input).value = str(target)
        await pilot.press("enter")
        await pilot.pause()
        assert not app.session.read_only and app.session.path == target
    assert "# railroom demo" in target.read_text()


async def test_quit_with_unsaved_changes_asks(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await type_into(pilot, "rg", "20k")
        await pilot.press("escape", "q")
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("escape")  # Esc leaves everything as it is
        assert app.session.modified and app.is_running
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_code == 0


async def test_stages_add_move_remove(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("a")
        assert isinstance(app.screen, ChoiceScreen)
        app.screen.dismiss("inverting")
        await pilot.pause()
        assert isinstance(app.screen, ChoiceScreen)  # where it takes its input from
        await pilot.press("enter")  # in the line after the highlighted stage (the default)
        await pilot.pause()
        await pilot.pause()
        assert app.screen.query_one(FieldForm).has_focus_within
        await pilot.press("escape")
        names = [s.name for s in app.session.chain.stages]
        assert names == ["buffer", "new inverting", "gain two"]
        # starter values rin = rf = 10k: inverting gain -rf/rin = -1 (textbook inverting amplifier)
        assert app.result.stages[1].measure.nominal[1] == pytest.approx(0.1, rel=1e-3)
        await pilot.press("J")
        assert [s.name for s in app.session.chain.stages][2] == "new inverting"
        await pilot.press("x", "y")
        await pilot.pause()
        assert [s.name for s in app.session.chain.stages] == ["buffer", "gain two"]
        assert "# the gain stage: 1 + rf/rg = 2" in app.session.text


async def test_unbuilt_method_shows_message_not_crash(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("m")
        app.screen.dismiss("montecarlo")
        await pilot.pause()
        await app.workers.wait_for_complete()
        await pilot.pause()
        words = status_text(app)
        if app.result.method == "montecarlo":  # once the method exists, its result shows
            assert app.result.samples == 10000
        else:
            assert "not built yet" in words and "showing corners" in words
        assert words.startswith("GO")


async def test_markup_in_names_renders_literally_and_escape_codes_are_refused(make_app, two_stage):
    text = two_stage.read_text().replace('name = "buffer"', 'name = "[bold]x[/bold] [red]r"')
    text = text.replace('title = "two-stage test chain"', 'title = "[reverse]title"')
    two_stage.write_text(text)
    app = make_app(two_stage)
    async with app.run_test(size=(120, 40)) as pilot:
        await pilot.pause()
        svg = app.export_screenshot()
        assert "[bold]x[/bold]" in svg and "[reverse]title" in svg
        await pilot.press("e")
        assert app.screen.query_one("#field-name", Input).value == "[bold]x[/bold] [red]r"
        await type_into(pilot, "name", "a\x1b[31mb", paste=True)  # an escape sequence typed or pasted
        message = plain(app.screen.query_one("#message-name"))
        assert "control characters are not allowed" in message
        assert app.session.chain.stages[0].name == "[bold]x[/bold] [red]r"
        assert "\x1b" not in app.export_screenshot()


async def test_help_lists_every_key_and_says_esc_closes_it(make_app):
    # issue 17: the binding ids had no visible use (they are not shown); the help says how to
    # close it and names the fixes key
    from railroom.tui.screens.help import HelpScreen

    app = make_app(None)
    async with app.run_test(size=(100, 40)) as pilot:
        await pilot.pause()
        await pilot.press("question_mark")
        help_screen = app.screen
        assert isinstance(help_screen, HelpScreen)
        shown = {b.id: b.tooltip for b in help_screen.bindings}
        for ident in (
            "app.save",
            "app.quit",
            "chain.edit",
            "chain.add",
            "chain.fixes",
            "stage.down",
            "form.close",
            "preset-form.save",
        ):
            assert ident in shown
        svg = app.export_screenshot().replace("&#160;", " ")
        assert "app.save" not in svg and "chain.edit" not in svg
        assert "esc, q or ? closes this help" in svg
        await pilot.press("escape")
        assert app.screen is app.screen_stack[0]


async def test_presets_key_opens_screen_or_says_not_yet(make_app):
    app = make_app(None)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("p")
        await pilot.pause()
        try:
            from railroom.tui.screens.presets import PresetsScreen
        except ImportError:
            assert any("not available yet" in str(n.message) for n in app._notifications)
        else:
            assert isinstance(app.screen, PresetsScreen)


def test_every_binding_has_id_and_description():
    from railroom.tui.app import RailroomApp
    from railroom.tui.screens.chain import ChainScreen
    from railroom.tui.widgets.stage_list import StageList

    bindings = [*RailroomApp.BINDINGS, *ChainScreen.BINDINGS, *StageList.BINDINGS]
    assert len(bindings) >= 20
    for binding in bindings:
        assert binding.id and binding.description and binding.tooltip
        # flow control and keys terminals send as enter/backspace/newline stay free
        assert not {"ctrl+s", "ctrl+q", "ctrl+m", "ctrl+h", "ctrl+j"} & set(binding.key.split(","))


async def test_screenshot_key_writes_svg(make_app, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    app = make_app(None)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("i")
        await pilot.pause()
    pictures = list(tmp_path.glob("*.svg"))
    assert len(pictures) == 1 and "<svg" in pictures[0].read_text()


async def test_form_sits_in_the_chain_screen_with_the_stage_list_live(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await pilot.pause()
        assert app.screen is app.screen_stack[0]  # no screen pushed over the chain
        rows = app.screen.query_one(StageList)
        assert str(rows.get_cell("2", "regime")) == "linear"
        await type_into(pilot, "rf", "2M")  # gain 201 on 100 mV: clips
        assert str(rows.get_cell("2", "regime")) == "clipping!"  # the row repainted under the form
        names = [f.id for f in app.screen.query(".form-value")]
        await pilot.press(*["tab"] * len(names))  # tab goes round the form's fields
        assert app.focused.id == "field-rf"
        await pilot.press("escape")
        await pilot.pause()
        assert not app.screen.query(FieldForm) and app.focused is rows
        assert "FAIL" in detail_text(app)


async def test_chain_keys_wait_while_a_form_field_has_the_focus(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("e")
        await pilot.pause()
        app.screen.query_one("#field-part").focus()  # a closed choice box takes no letters
        await pilot.press("x", "J", "a")
        await pilot.pause()
        assert [s.name for s in app.session.chain.stages] == ["buffer", "gain two"]
        assert isinstance(app.screen, type(app.screen_stack[0]))


def test_no_action_is_reached_by_a_ctrl_key_alone():
    """ctrl+s / ctrl+q are flow control on many terminals: each ctrl binding names another way."""
    from railroom.tui.screens.presets import PresetsScreen
    from railroom.tui.widgets.preset_form import PresetForm

    bindings = [*FieldForm.BINDINGS, *PresetsScreen.BINDINGS, *PresetForm.BINDINGS]
    ctrl_only = [b for b in bindings if all(k.startswith("ctrl+") for k in b.key.split(","))]
    assert [b.id for b in ctrl_only] == ["preset-form.save"]
    assert ctrl_only[0].key_display.startswith("enter")


async def test_bridge_bar_shows_the_clipping_first_stage(make_app):
    # The bridge demo's instrumentation amplifier output stays inside its window while its lower
    # input op amp goes below its swing (engine/demos/bridge_sensor.toml; three-op-amp instrumentation
    # amplifier, Sedra & Smith, ch. 2: first-stage outputs V_cm -/+ (1 + 2 rf/rg) V_d/2): the row's bar draws that op amp, overshoot marked X.
    from pathlib import Path

    bridge = Path(__file__).resolve().parents[2] / "engine/demos/bridge_sensor.toml"
    app = make_app(bridge)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        rows = app.screen.query_one(StageList)
        assert str(rows.get_cell("1", "regime")) == "clipping!"
        assert str(rows.get_cell("1", "rail span")).startswith("X")
        assert "X" not in str(rows.get_cell("2", "rail span"))


async def test_dialogs_say_esc_closes_them_and_f_reaches_the_fixes(make_app):
    # issue 17: the method and add dialogs did not say how to leave them; the fixes at the end
    # of the detail panel needed tab then PageDown, which nothing mentioned
    from pathlib import Path

    from textual.widgets import Footer, Label

    from railroom.tui.screens.dialogs import ChoiceScreen
    from railroom.tui.widgets.detail import StageDetail

    alarms = Path(__file__).resolve().parents[2] / "tests/chains/alarms_nogo.toml"
    app = make_app(alarms)
    async with app.run_test(size=(80, 24)) as pilot:
        await app.workers.wait_for_complete()
        await pilot.pause()
        for key in ("m", "a"):
            await pilot.press(key)
            await pilot.pause()
            assert isinstance(app.screen, ChoiceScreen)
            assert any("esc closes" in str(label.render()) for label in app.screen.query(Label))
            await pilot.press("escape")
            await pilot.pause()
        keys = {k.key for k in app.screen.query_one(Footer).query("FooterKey")}
        assert {"f", "q", "question_mark"} <= keys  # all in 80 columns
        detail = app.screen.query_one(StageDetail)
        assert detail.scroll_y == 0 and detail.max_scroll_y > 0
        await pilot.press("f")
        await pilot.pause()
        assert app.focused is detail and detail.scroll_y == detail.max_scroll_y
        await pilot.press("escape", "j")  # another stage: read from its top
        await pilot.pause()
        assert detail.scroll_y == 0


async def test_status_line_words_while_monte_carlo_runs(make_app):
    # issue 17: it read "method corners montecarlo running"
    from railroom.tui.widgets.status_line import StatusLine, short_yield

    app = make_app(None)
    async with app.run_test(size=(120, 24)) as pilot:
        await app.workers.wait_for_complete()
        await pilot.pause()
        status = app.screen.query_one(StatusLine)
        status.running("montecarlo")
        status.progress(0.42)
        await pilot.pause()
        words = str(status.query_one("#status-facts").render())
        assert "Monte Carlo running (42 %); corners shown" in words
        assert "montecarlo" not in words and "method corners" not in words
        status.running(None)
        await pilot.pause()
        assert "running" not in str(status.query_one("#status-facts").render())
    # the yield with its 95 % Wilson interval (Wilson 1927): 9,900 of 10,000 draws,
    # p = 0.99, z = 1.96 gives 0.9879 .. 0.9918 (worked by hand from the score formula)
    assert short_yield(0.99, 10_000) == "yield 99.00% (95 %: 98.79% .. 99.18%)"
    assert short_yield(1.0, 10_000) == "no failure in 10,000 draws"
    # no draw linear: an interval of "0.0% .. 0.0%" would hide its upper end (0.038 %)
    assert short_yield(0.0, 10_000) == "every one of 10,000 draws leaves the linear regime"
