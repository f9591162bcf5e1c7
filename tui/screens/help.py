"""The help screen: every key of the interface and the bar's legend (binding ids only tell
duplicates apart: they are not shown)."""

from __future__ import annotations

from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from railroom.tui.bars import LEGEND, OFF_RAILS, legend

INTRO = (
    "railroom checks that every op amp in the chain stays in its linear regime under worst-case "
    "tolerances. Edits are checked as you type; the verdict repaints at once."
)


# Textual's key names for the printable keys, shown as the key itself.
KEY_WORDS = {
    "question_mark": "?",
    "colon": ":",
    "slash": "/",
    "full_stop": ".",
    "comma": ",",
    "minus": "-",
    "plus": "+",
    "greater_than_sign": ">",
    "less_than_sign": "<",
}


def key_table(bindings: list[Binding]) -> Table:
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("key", "does"):
        table.add_column(column, no_wrap=column != "does")
    seen = set()
    for binding in bindings:
        if binding.id in seen or binding.system:
            continue
        seen.add(binding.id)
        keys = binding.key_display or " ".join(KEY_WORDS.get(k, k) for k in binding.key.split(","))
        table.add_row(Text(keys), Text(binding.tooltip or binding.description))
    return table


class HelpScreen(ModalScreen[None]):
    BINDINGS = [
        Binding("escape,q,question_mark", "close", "close", id="help.close", tooltip="Close the help screen")
    ]

    def __init__(self, bindings: list[Binding]) -> None:
        super().__init__()
        self.bindings = bindings

    def compose(self) -> ComposeResult:
        with VerticalScroll(classes="form", id="help"):
            yield Static(
                Text("esc, q or ? closes this help; the arrows and PageDown scroll it"), classes="hint"
            )
            yield Static(Text(INTRO))
            yield Static(key_table(self.bindings))
            yield Static(
                Text(
                    "In the edit form (in place of the detail panel): tab and shift+tab "
                    "go round the fields, enter on a choice opens it, esc closes the form. "
                    "In a preset's form: enter in any box or the Save button saves."
                )
            )
            yield Static(
                Text(
                    "Margin bars: "
                    + LEGEND
                    + "   "
                    + legend((OFF_RAILS,))
                    + " (level view). The detail panel ends with the stage's "
                    "sensitivity and fixes: f jumps there."
                )
            )

    def on_mount(self) -> None:
        self.query_one("#help").focus()

    def action_close(self) -> None:
        self.dismiss(None)
