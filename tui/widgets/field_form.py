"""The edit form: one line per field, checked as typed with the engine's own parser and loader.

It sits inside the chain screen in place of the detail panel (not a screen of its own: a modal
screen over the chain would repaint the whole dimmed chain on every keystroke). Every accepted change
goes straight into the chain, and the status line and stage list above re-check at once; a value
that does not read stays in its field with the engine's message beside it (and is kept as a draft
when the form closes), so nothing the user typed is lost.
"""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Callable

from rich.text import Text
from textual import events
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.geometry import Size
from textual.message import Message
from textual.reactive import Reactive
from textual.widgets import Input, Label, Select

from railroom.engine import FieldShape, value_problem

# Control characters (a pasted escape sequence) would restyle the terminal if echoed: the field
# shows them as the Unicode control pictures (U+2400 block) and the value is refused.
CONTROL_PICTURES = {code: 0x2400 + code for code in range(32)} | {127: 0x2421}
CONTROL_PROBLEM = "control characters are not allowed here (shown as ␛ and the like)"

# (field key, typed text, verdict): the verdict is called with the problem or None, at once or later
Apply = Callable[[str, str, Callable[[str | None], None]], None]
EMPTY_NOTE = (
    "empty: leaving the form removes it (when it may be left out); a value typed "
    "now keeps its line and comment"
)


def choice_prompt(key: str, choices) -> str:
    """What an empty choice box says: which values there are to pick (enter opens the list)."""
    shown = " / ".join(choices[:4]) + (" ..." if len(choices) > 4 else "")
    return f"pick one: {shown} (enter)"


class FieldInput(Input):
    """An Input that runs its editing keys (backspace, delete, arrows, ...) and the form's tab,
    shift+tab and Esc in the order they were typed.

    Textual inserts a printable key in the focused Input's own queue but runs a bound key only when
    the key has bubbled up to the app: when keys arrive in a burst (a slow link, a loaded machine,
    key repeat) a backspace then lands after the letters typed behind it and deletes them. Here
    every key is handled where it arrives, in order; a key that arrives after a tab (or Esc) moved
    the focus away was typed for the new focus and goes there.
    """

    FORM_KEYS = {"tab": "next_field", "shift+tab": "previous_field", "escape": "close"}

    # Input sets its virtual size to the text's width on every keystroke, and the widget's
    # virtual size asks for a layout of the whole screen when it changes (some 20 ms with the
    # stage list and the form on it, on the event loop, beside the worker checking the text).
    # A field is one line of fixed width and height (railroom.tcss .form-value) without scroll
    # bars: the text scrolls inside it by the cursor (Input.scroll_offset, read against the
    # virtual size directly), so the new size needs a repaint only.
    virtual_size: Reactive[Size] = Reactive(Size(0, 0), layout=False, repaint=True)

    async def _on_key(self, event: events.Key) -> None:
        focused = self.app.focused
        if focused is not None and focused is not self and focused.screen is self.screen:
            # (a dialog that opened meanwhile is another screen: it never gets keys typed here)
            event.stop()
            event.prevent_default()
            focused._forward_event(events.Key(event.key, event.character))
            return
        form = next((a for a in self.ancestors if isinstance(a, FieldForm)), None)
        if form is not None and form.closing:
            event.stop()  # typed after Esc: a key for the chain screen
            event.prevent_default()
            self.screen._forward_event(events.Key(event.key, event.character))
            return
        if event.key in self.FORM_KEYS and form is not None:
            event.stop()
            event.prevent_default()
            await form.run_action(self.FORM_KEYS[event.key])
            return
        bindings = self._bindings.key_to_bindings.get(event.key)
        if bindings and not event.is_printable:
            event.stop()
            event.prevent_default()
            await self.run_action(bindings[0].action)
            return
        await super()._on_key(event)


@dataclass(frozen=True)
class FormField:
    key: str
    shape: FieldShape
    text: str  # what the field holds now (or the draft the user left)
    choices: tuple[str, ...] = ()
    label: str = ""  # shown in place of the key (a key must be a widget id; a label need not)


class FieldForm(VerticalScroll):
    """Tab and shift+tab go round the fields; Esc closes the form (accepted changes are already
    in) and posts `Closed`, so the screen puts the detail panel back."""

    remove_field: Callable[[str], str | None]  # set by the screen: takes an emptied field out of the file

    BINDINGS = [
        Binding(
            "escape",
            "close",
            "close form",
            id="form.close",
            tooltip="Close the form; accepted changes stay, drafts are kept",
        ),
        Binding(
            "tab",
            "next_field",
            "next field",
            show=False,
            id="form.next",
            tooltip="The next field of the form (goes round)",
        ),
        Binding(
            "shift+tab",
            "previous_field",
            "previous field",
            show=False,
            id="form.previous",
            tooltip="The previous field of the form (goes round)",
        ),
    ]

    class Closed(Message):
        """The user left the form."""

    def __init__(
        self,
        title: str,
        fields: list[FormField],
        apply: Apply,
        drafts: dict[str, str],
        focus_key: str | None = None,
        form_id: str = "",
    ) -> None:
        super().__init__()
        self.form_id = form_id
        self.title_words = title
        self.fields = {f.key: f for f in fields}
        self.apply = apply
        self.drafts = drafts
        self.focus_key = focus_key
        self.closing = False
        # what each field's message line says (as composed: its help), and whether a problem
        self._messages: dict[str, tuple[str, bool]] = {f.key: (f.shape.help, False) for f in fields}

    def compose(self) -> ComposeResult:
        yield Label(Text(self.title_words), classes="form-title")
        for field in self.fields.values():
            with Horizontal(classes="form-row"):
                yield Label(Text(field.label or field.key), classes="form-key")
                yield self._editor(field)
            yield Label(Text(field.shape.help), id=f"message-{field.key}", classes="form-message")
        yield Label(Text("tab next field   esc close   every change is checked at once"), classes="hint")

    def _editor(self, field: FormField):
        choices = field.choices or field.shape.choices
        if field.shape.form == "flag":
            choices = ("false", "true")
        if choices:
            value = field.text if field.text in choices else Select.NULL
            return Select(
                [(Text(c), c) for c in choices],
                value=value,
                allow_blank=value is Select.NULL,
                id=f"field-{field.key}",
                classes="form-value",
                prompt=choice_prompt(field.key, choices),
            )
        return FieldInput(
            value=field.text, id=f"field-{field.key}", classes="form-value", placeholder="not set"
        )

    def on_mount(self) -> None:
        self.border_title = "edit"
        for key, text in self.drafts.items():
            if key in self.fields:
                self._judge(key, text)
        target = self.focus_key if self.focus_key in self.fields else None
        editors = self.query(".form-value")
        if target:
            self.query_one(f"#field-{target}").focus()
        elif editors:
            editors.first().focus()

    def _step(self, offset: int) -> None:
        editors = list(self.query(".form-value"))
        if not editors:
            return
        here = next((i for i, e in enumerate(editors) if e.has_focus_within), -offset)
        # at once, not later as focus() does: the keys typed after the tab go to the next field
        self.screen.set_focus(editors[(here + offset) % len(editors)])

    def action_next_field(self) -> None:
        self._step(1)

    def action_previous_field(self) -> None:
        self._step(-1)

    def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        shown = event.value.translate(CONTROL_PICTURES)
        if shown != event.value:
            event.input.value = shown  # posts another Changed, judged as refused below
            return
        self._judge((event.input.id or "").removeprefix("field-"), event.value)

    def on_select_changed(self, event: Select.Changed) -> None:
        event.stop()
        if event.value is not Select.NULL:
            self._judge((event.select.id or "").removeprefix("field-"), str(event.value))

    def _judge(self, key: str, text: str) -> None:
        field = self.fields[key]
        if text == field.text and key not in self.drafts:
            return
        problem: str | None
        if any(0x2400 <= ord(c) <= 0x2421 for c in text):
            problem = CONTROL_PROBLEM
        else:
            problem = value_problem(text, field.shape)
        if problem:
            self.drafts[key] = text  # the newest text: an older one's answer does not replace it
            self._judged(key, text, problem)
            return
        if not text.strip():
            # the key stays in the file, with its place and comment, while the box is empty:
            # typing a value again sets it in place; leaving the form empty removes it
            self.drafts[key] = text
            self._message(key, EMPTY_NOTE, False)
            return
        # kept as a draft until the engine has read it: closing the form meanwhile loses nothing
        self.drafts[key] = text
        self.apply(key, text, lambda problem: self._judged(key, text, problem))

    def _judged(self, key: str, text: str, problem: str | None) -> None:
        """The verdict on `text` in field `key` (at once, or when the engine's answer is in)."""
        field = self.fields[key]
        newer = self.drafts.get(key, text) != text  # typed on meanwhile: that text's verdict stands
        if problem:
            if newer:
                return  # an older text's problem: the newer text is judged on its own
            self.drafts[key] = text
        else:
            if not newer:
                self.drafts.pop(key, None)
            self.fields[key] = FormField(key, field.shape, text, field.choices)
            if newer:
                return  # the file took this text; the box holds a newer one, judged on its own
        if self.is_mounted:  # else the form was closed meanwhile: the draft stays
            self._message(key, problem or field.shape.help, bool(problem))

    def _message(self, key: str, words: str, problem: bool) -> None:
        message = self.query_one(f"#message-{key}", Label)
        if self._messages.get(key) != (words, problem):  # unchanged: no repaint, no layout pass
            self._messages[key] = (words, problem)
            message.update(Text(words))
            message.set_class(problem, "problem")

    def remove_emptied(self, remove: Callable[[str], str | None]) -> None:
        """The form is closing: a field left empty is removed from the file now (`remove` gives
        the problem when the field may not be left out; the empty draft then stays)."""
        for key, text in list(self.drafts.items()):
            if key in self.fields and not text.strip() and remove(key) is None:
                del self.drafts[key]

    def action_close(self) -> None:
        self.closing = True
        self.post_message(self.Closed())
