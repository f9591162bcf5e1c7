"""The room shown when the chain file cannot be opened: every located problem, and the promise
that the file is watched. The app opens the chain screen in its place as soon as the file loads.

Nothing the user typed is lost: the file stays as it is on disk, in their editor, and is only read.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Static

from railroom.engine import Problem, escaped
from railroom.tui.session import WaitingFile

if TYPE_CHECKING:
    from textual import getters

    from railroom.tui.app import RailroomApp


def key(keys: str, action: str, words: str, ident: str, tooltip: str, show: bool = True) -> Binding:
    return Binding(keys, action, words, show=show, id=f"problems.{ident}", tooltip=tooltip)


def problem_lines(problems: tuple[Problem, ...]) -> Text:
    """One line per problem, file:line: field: message; the user's own text shown as it is, with
    control characters escaped (a file name cannot drive the terminal)."""
    text = Text()
    for problem in problems:
        where = f"{problem.file}:{problem.line}" if problem.line else problem.file
        text.append(escaped(str(where)), style="bold")
        text.append(": ")
        text.append(escaped(problem.field), style="bold red")
        text.append(f": {escaped(problem.message)}\n")
    return text


class ProblemsScreen(Screen):
    if TYPE_CHECKING:  # Textual's way to type `self.app` (textual.getters.app); nothing at run time
        app = getters.app(RailroomApp)

    BINDINGS = [
        key("r", "app.reload", "reload now", "reload", "Read the chain file again now"),
        key(
            "n",
            "start_from_demo",
            "new from demo",
            "new",
            "Start the missing file from the built-in demo, saved under its name",
        ),
        key("escape", "nothing", "", "escape", "Does nothing here (the file stays watched)", show=False),
    ]

    def __init__(self, waiting: WaitingFile) -> None:
        super().__init__(id="problems")
        self.waiting = waiting

    def compose(self) -> ComposeResult:
        yield Static("", id="problems-title")
        with VerticalScroll(id="problems-list"):
            yield Static("", id="problems-body")
        yield Static("", id="problems-watch")
        yield Footer()

    def on_mount(self) -> None:
        self.show()

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        if action == "start_from_demo":
            return self.waiting.missing and self.waiting.path is not None
        return True

    def show(self) -> None:
        """Paint the waiting file's problems as they stand after the last try."""
        waiting = self.waiting
        name = escaped(str(waiting.file))
        count = len(waiting.problems)
        if waiting.missing:
            title = Text.assemble("No chain file at ", (name, "bold"), ".")
        else:
            title = Text.assemble(
                (name, "bold"), f" cannot be opened: {count} problem{'s' if count != 1 else ''}."
            )
        self.query_one("#problems-title", Static).update(title)
        self.query_one("#problems-body", Static).update(problem_lines(waiting.problems))
        watch = (
            "Watching for it to appear; it opens as soon as it is there and loads."
            + ("  n starts it from the built-in demo." if self.check_action("start_from_demo", ()) else "")
            if waiting.missing
            else "Watching the file: fix it in your editor and save; it opens as soon as it loads."
        )
        self.query_one("#problems-watch", Static).update(Text(watch))
        self.refresh_bindings()

    def action_nothing(self) -> None:
        """Esc is harmless: a slow link may split an escape sequence."""

    def action_start_from_demo(self) -> None:
        try:
            self.waiting.start_from_demo()
        except OSError as err:
            self.notify(str(err), title="not written", severity="error", markup=False)
            return
        self.app.action_reload()
