"""Small modal questions: confirm with lettered answers, pick one of a list, name a file."""

from __future__ import annotations

import textwrap

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, OptionList
from textual.widgets.option_list import Option


class ConfirmScreen(ModalScreen[str]):
    """A question answered by one letter; Esc answers `cancel` (it never does harm)."""

    BINDINGS = [
        Binding(
            "escape", "answer('cancel')", "cancel", id="confirm.cancel", tooltip="Leave everything as it is"
        )
    ]

    def __init__(self, question: str, answers: list[tuple[str, str, str]]) -> None:
        """answers: (key, answer id, words), e.g. ("s", "save", "save and quit")."""
        super().__init__()
        self.question = question
        self.answers = answers

    def compose(self) -> ComposeResult:
        # wrapped here: a label wider than the dialog would be cut off, and a long file name or
        # a problem in the question must be read whole
        width = max(40, min(80, self.app.size.width - 14))
        with Vertical(classes="dialog"):
            yield Label(Text(textwrap.fill(self.question, width)))
            for key, _, words in self.answers:
                yield Label(
                    Text(textwrap.fill(f"  {key}  {words}", width, subsequent_indent=" " * (len(key) + 4)))
                )
            yield Label(Text("  esc  leave everything as it is"), classes="hint")

    def on_key(self, event) -> None:
        for key, answer, _ in self.answers:
            if event.key == key:
                event.stop()
                self.dismiss(answer)

    def action_answer(self, answer: str) -> None:
        self.dismiss(answer)


class ChoiceScreen(ModalScreen[str | None]):
    """Pick one entry with the arrows and enter; Esc picks nothing."""

    BINDINGS = [
        Binding("escape", "pick_nothing", "cancel", id="choice.cancel", tooltip="Close without choosing")
    ]

    def __init__(self, title: str, choices: list[tuple[str, str]], current: str | None = None):
        super().__init__()
        self.title_words = title
        self.choices = choices
        self.current = current

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label(Text(self.title_words))
            # above the list: a long list scrolls, and this line stays in sight
            yield Label(Text("↑ ↓ move   enter chooses   esc closes without choosing"), classes="hint")
            yield OptionList(*[Option(Text(words), id=key) for key, words in self.choices], id="choices")

    def on_mount(self) -> None:
        options = self.query_one(OptionList)
        ids = [key for key, _ in self.choices]
        if self.current in ids:
            options.highlighted = ids.index(self.current)
        options.focus()

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        self.dismiss(event.option.id)

    def action_pick_nothing(self) -> None:
        self.dismiss(None)


class SaveAsScreen(ModalScreen[str | None]):
    """A file name for the chain; enter saves, Esc does not."""

    BINDINGS = [Binding("escape", "cancel", "cancel", id="save_as.cancel", tooltip="Close without saving")]

    def __init__(self, suggestion: str, why: str = "") -> None:
        super().__init__()
        self.suggestion = suggestion
        self.why = why

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Label(Text(self.why or "Save the chain as:"))
            yield Input(value=self.suggestion, id="save-as-name")
            yield Label(Text("enter  save    esc  cancel"), classes="hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        name = event.value.strip()
        if name:
            self.dismiss(name)

    def action_cancel(self) -> None:
        self.dismiss(None)
