"""Named nets from the interface: a small dialog that adds one ([nets.NAME], a fixed value or a
rail and a fraction), checked on Enter, and the list that removes one no stage reads.

The source form (`s`) applies every keystroke, which suits a value but not a new net's name (a
net per letter typed): the dialog keeps what is typed until Enter, then checks it with the
chain loader (engine new_net_problem: file, line and field) and adds the net, or says what is
wrong and keeps every field as typed. Esc closes it and changes nothing.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Select, Static

from railroom.engine import NetInUse, add_net, net_readers, new_net_problem, remove_net
from railroom.tui.screens.dialogs import ChoiceScreen

if TYPE_CHECKING:
    from railroom.tui.screens.chain import ChainScreen

HINT = 'a value "2.5 0.5%" (fixed), or a fraction "0.5 0.1%" of a rail'
FIELDS = ("name", "value", "fraction")


class NetDialog(ModalScreen[dict | None]):
    """Asks for a new net; `check(fields)` says what is wrong (None: it can be added)."""

    DEFAULT_CSS = """
    NetDialog { align: center middle; }
    NetDialog > Vertical { width: 72; height: auto; border: round $accent; background: $surface;
                           padding: 0 1; }
    NetDialog Horizontal { height: auto; }
    NetDialog Horizontal > Label { width: 10; }
    NetDialog Input, NetDialog Select { width: 1fr; }
    NetDialog #net-error { color: $error; height: auto; }
    NetDialog .hint { color: $text-muted; }
    """

    BINDINGS = [
        Binding("escape", "cancel", "cancel", id="net-dialog.cancel", tooltip="Close without adding a net")
    ]

    def __init__(self, rails: list[str], check):
        super().__init__()
        self.rails, self.check = rails, check

    def compose(self) -> ComposeResult:
        with Vertical():
            yield Label(Text('New net (stages read it as "net NAME")'))
            for key in FIELDS:
                with Horizontal():
                    yield Label(key)
                    yield Input(id=f"net-{key}", compact=True)
                if key == "fraction":
                    with Horizontal():
                        yield Label("of rail")
                        yield Select(
                            [(name, name) for name in self.rails],
                            value=self.rails[0],
                            allow_blank=False,
                            id="net-rail",
                            compact=True,
                        )
            yield Label(Text(HINT), classes="hint")
            yield Static("", id="net-error")
            yield Label(Text("enter adds   esc closes without adding"), classes="hint")

    def on_mount(self) -> None:
        self.query_one("#net-name", Input).focus()

    def fields(self) -> dict[str, str | None]:
        """What is typed: empty fields as None; the rail only with a fraction."""
        found: dict[str, str | None] = {
            key: self.query_one(f"#net-{key}", Input).value.strip() or None for key in FIELDS
        }
        rail = self.query_one("#net-rail", Select).value
        found["rail"] = str(rail) if found["fraction"] is not None and isinstance(rail, str) else None
        found["name"] = self.query_one("#net-name", Input).value  # spaces at its ends are an error
        return found

    @on(Input.Submitted)
    def accept(self) -> None:
        fields = self.fields()
        why = self.check(fields)
        if why:
            self.query_one("#net-error", Static).update(Text(why))
            return
        self.dismiss(fields)

    def action_cancel(self) -> None:
        self.dismiss(None)


def open_new_net(screen: ChainScreen) -> None:
    """`n`: the dialog; on Enter with good fields the net is added (u undoes it)."""
    session = screen.session
    screen.close_form()  # the source form's net fields are numbered: it is rebuilt when opened

    def check(fields: dict) -> str | None:
        problem = new_net_problem(
            session.text,
            fields["name"],
            fields["value"],
            fields["rail"],
            fields["fraction"],
            path=str(session.path),
        )
        return None if problem is None else str(problem)

    def added(fields: dict | None) -> None:
        if fields is None:
            return
        name = fields["name"]
        problem = screen.app.apply_edit(
            lambda t: add_net(t, name, fields["value"], fields["rail"], fields["fraction"])
        )
        if problem is not None:  # checked already; a file changed under the dialog, say
            screen.notify(f"net {name!r} was not added: {problem}", severity="error", markup=False)
            return
        forget_net_drafts(screen)
        screen.notify(
            f'net {name!r} added: a stage reads it as "net {name}" (s edits it; u undoes)', markup=False
        )

    screen.app.push_screen(NetDialog(list(session.chain.rails), check), added)


def open_remove_net(screen: ChainScreen) -> None:
    """`N`: pick a net to remove; one a stage reads is refused with the fields that read it."""
    session = screen.session
    names = list(session.chain.nets)
    if not names:
        screen.notify("the chain has no named nets (n adds one)")
        return
    screen.close_form()
    text = session.text

    def words(name: str) -> str:
        using = net_readers(text, name)
        return f"{name}: " + (f"read by {', '.join(using)}" if using else "unused")

    def chosen(name: str | None) -> None:
        if name is None:
            return
        try:
            remove_net(session.text, name)
        except NetInUse as err:
            screen.notify(f"not removed: {err}", title="remove net", severity="error", markup=False)
            return
        problem = screen.app.apply_edit(lambda t: remove_net(t, name))
        if problem is not None:
            screen.notify(f"not removed: {problem}", title="remove net", severity="error", markup=False)
            return
        forget_net_drafts(screen)
        screen.notify(f"net {name!r} removed (u undoes)", markup=False)

    choices = [(name, words(name)) for name in names]
    screen.app.push_screen(ChoiceScreen("Remove which net?", choices), chosen)


def forget_net_drafts(screen: ChainScreen) -> None:
    """The source form's drafts of net fields name a net by its place: a new or removed net
    moves them, so they go (the values themselves are in the file)."""
    drafts = screen.session.drafts.get("source", {})
    for key in [k for k in drafts if k.startswith("net-")]:
        del drafts[key]
