"""The small dialogs of the presets screen: confirm a deletion, a preset file changed on disk
(keep mine or reload), and a new part id. The edit form opens the second one too."""

from __future__ import annotations

from pathlib import Path

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from railroom.engine import check_part_id


class ConfirmDialog(ModalScreen[bool]):
    DEFAULT_CSS = """
    ConfirmDialog { align: center middle; }
    ConfirmDialog > Vertical { width: 70; height: auto; border: round $warning; background: $surface;
                               padding: 1 2; }
    ConfirmDialog Horizontal { height: auto; align-horizontal: right; }
    """

    BINDINGS = [
        Binding("escape", "keep", "keep it", id="confirm-dialog.keep", tooltip="Close without doing anything")
    ]

    def __init__(self, question: str, yes: str = "Delete"):
        super().__init__()
        self.question, self.yes = question, yes

    def on_mount(self) -> None:
        self.query_one("#confirm-no", Button).focus()  # enter alone never deletes

    def action_keep(self) -> None:
        self.dismiss(False)

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(Text(self.question))
            with Horizontal():
                yield Button(self.yes, variant="error", id="confirm-yes")
                yield Button("Keep it", id="confirm-no")

    @on(Button.Pressed)
    def answer(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "confirm-yes")


class ChangedOnDiskDialog(ModalScreen[str]):
    """The file moved under the user's feet: reload it, or keep editing (never a silent overwrite)."""

    DEFAULT_CSS = ConfirmDialog.DEFAULT_CSS.replace("ConfirmDialog", "ChangedOnDiskDialog")

    BINDINGS = [
        Binding(
            "escape",
            "keep",
            "keep editing",
            id="changed-dialog.keep",
            tooltip="Keep editing; nothing is written",
        )
    ]

    def __init__(self, path: Path):
        super().__init__()
        self.path = path

    def on_mount(self) -> None:
        self.query_one("#changed-keep", Button).focus()

    def action_keep(self) -> None:
        self.dismiss("keep")

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Static(
                Text(
                    f"{self.path} changed on disk since you opened it "
                    "(another editor, or a copy over SSH). Nothing was written."
                )
            )
            with Horizontal():
                yield Button("Reload from disk", variant="warning", id="changed-reload")
                yield Button("Keep editing", variant="primary", id="changed-keep")

    @on(Button.Pressed)
    def answer(self, event: Button.Pressed) -> None:
        self.dismiss("reload" if event.button.id == "changed-reload" else "keep")


class NameDialog(ModalScreen[str | None]):
    """Asks for a part id, checked as a TOML table name not already taken."""

    DEFAULT_CSS = (
        ConfirmDialog.DEFAULT_CSS.replace("ConfirmDialog", "NameDialog")
        + """
    NameDialog #name-error { color: $error; height: auto; }
    """
    )

    BINDINGS = [
        Binding(
            "escape", "cancel", "cancel", id="name-dialog.cancel", tooltip="Close without naming anything"
        )
    ]

    def __init__(self, question: str, suggestion: str, taken: set[str]):
        super().__init__()
        self.question, self.suggestion, self.taken = question, suggestion, taken

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Label(Text(self.question))
            yield Input(self.suggestion, id="name-input")
            yield Static("", id="name-error")
            with Horizontal():
                yield Button("OK", variant="primary", id="name-ok")
                yield Button("Cancel", id="name-cancel")

    @on(Input.Submitted)
    @on(Button.Pressed, "#name-ok")
    def accept(self) -> None:
        name = self.query_one("#name-input", Input).value.strip()
        why = check_part_id(name, self.taken)
        if why:
            self.query_one("#name-error", Static).update(Text(why))
        else:
            self.dismiss(name)

    @on(Button.Pressed, "#name-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
