"""The smaller ways a user's work could slip away (issue 12, item 7)."""

from __future__ import annotations

import asyncio
import functools

from textual.app import App
from textual.widgets import Button, Input

from railroom.tui.screens.dialogs import ChoiceScreen, ConfirmScreen
from railroom.tui.screens.preset_dialogs import ChangedOnDiskDialog, ConfirmDialog, NameDialog

SIZE = (80, 24)


async def retype(pilot, field: str, text: str) -> None:
    box = pilot.app.screen.query_one(f"#field-{field}", Input)
    box.focus()
    box.value = text
    await pilot.pause()
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()


async def test_quitting_with_only_a_bad_draft_asks(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rf", "4q7")  # not a value: a draft, not the chain
        await pilot.press("escape")
        assert not app.session.modified
        await pilot.press("q")
        await pilot.pause()
        assert isinstance(app.screen, ConfirmScreen) and app.is_running
        assert "4q7" in app.screen.question
        await pilot.press("escape")
        assert app.is_running
        await pilot.press("q", "d")
        await pilot.pause()
    assert app.return_code == 0


async def test_w_says_which_drafts_it_did_not_save(make_app, two_stage):
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "e")
        await retype(pilot, "rg", "20k")
        await retype(pilot, "rf", "4q7")
        await pilot.press("escape", "w")
        await pilot.pause()
        said = [str(n.message) for n in app._notifications if "saved" in str(n.message)]
        assert said and "rf: '4q7'" in said[-1] and "not in the chain" in said[-1]
    assert 'rg = "20k"' in two_stage.read_text() and 'rf = "10k"' in two_stage.read_text()


async def test_a_stage_added_after_a_passive_one_gets_rails(make_app):
    app = make_app(None)  # the demo: two rails; stage 3 passive
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "j", "a")
        await pilot.pause()
        assert isinstance(app.screen, ChoiceScreen)
        app.screen.dismiss("noninverting")
        await pilot.pause()
        app.screen.dismiss("line")  # in the line after the highlighted stage
        await pilot.pause()
        await pilot.pause()
        stages = app.session.chain.stages
        assert len(stages) == 8 and stages[3].block == "noninverting"
        assert stages[3].rails == "analog"  # the supply of the stages before it


def synchronous(test):
    @functools.wraps(test)
    def run(*args, **kwargs):
        asyncio.run(test(*args, **kwargs))

    return run


class DialogApp(App):
    def __init__(self, dialog) -> None:
        super().__init__()
        self.dialog, self.answers = dialog, []

    def on_mount(self) -> None:
        self.push_screen(self.dialog, self.answers.append)


@synchronous
async def test_preset_dialogs_close_with_esc_and_focus_the_safe_button(tmp_path):
    cases = [
        (ConfirmDialog("Delete lab-audio?"), "#confirm-no", False),
        (ChangedOnDiskDialog(tmp_path / "lab.toml"), "#changed-keep", "keep"),
        (NameDialog("New id:", "lab-copy", set()), None, None),
    ]
    for dialog, safe, answer in cases:
        app = DialogApp(dialog)
        async with app.run_test(size=SIZE) as pilot:
            await pilot.pause()
            if safe is not None:
                assert app.focused is dialog.query_one(safe, Button)
            await pilot.press("escape")
            await pilot.pause()
            assert app.answers == [answer], type(dialog).__name__


async def test_opening_a_form_reads_the_file_once(make_app, two_stage, monkeypatch):
    import tomlkit

    from railroom.engine.formats import chain_editing as editing

    reads, real = [], tomlkit.parse

    def counted(text):
        reads.append(len(text))
        return real(text)

    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        monkeypatch.setattr(editing.tomlkit, "parse", counted)
        await pilot.press("j", "e")
        await pilot.pause()
        assert app.screen.query_one("#field-rf", Input).value == "10k"
        assert len(reads) == 1  # not once per field


@synchronous
async def test_a_long_question_is_wrapped_to_be_read_whole_at_80_columns():
    question = "/a/long/folder/" * 12 + "chain.toml changed on disk since it was read."
    dialog = ConfirmScreen(
        question, [("o", "overwrite", "overwrite it with what is on screen (the old file is kept as .bak)")]
    )
    app = DialogApp(dialog)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        labels = [str(label.content) for label in dialog.query("Label")]
        assert "".join(labels[0].split()) == "".join(question.split())  # every word kept
        frame = dialog.query_one(".dialog")
        inner = frame.content_region.width
        assert all(len(line) <= inner for text in labels for line in text.split("\n"))


async def test_the_summing_stage_inputs_are_edited_in_the_form(make_app, tmp_path):
    from railroom.tui.session import demo_path

    path = tmp_path / "pump.toml"
    path.write_text(demo_path().read_text(encoding="utf-8"), encoding="utf-8")
    app = make_app(path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("j", "j", "j", "e")  # stage 4: the level shift (summing)
        await pilot.pause()
        assert app.screen.query_one("#field-inputs", Input).value == "82k, 0"
        await retype(pilot, "inputs", "82k, 0; 1M 1%, 5")
        inputs = app.session.chain.stages[3].values["inputs"]
        assert [(i["r"].value, i["v"].value) for i in inputs] == [(82e3, 0.0), (1e6, 5.0)]
        assert (
            'inputs = [{r = "82k", v = "0"}, {r = "1M 1%", v = "5"}]   # sets the output' in app.session.text
        )
        await retype(pilot, "inputs", "82k")  # half typed: a draft with a message
        assert "expected" in str(app.screen.query_one("#message-inputs").content)
        assert len(app.session.chain.stages[3].values["inputs"]) == 2
