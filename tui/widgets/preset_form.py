"""The edit form of one part preset: a field per parameter, its unit beside it, read by the engine.

Each box is checked as it is typed with the same value parser the files go through; Save (enter in
any box, the Save button, or ctrl+s where the terminal lets it through: many take ctrl+s for flow
control) hands the values to an `EditSession`, which refuses anything the preset loader would refuse and
notices a file changed on disk in the meantime. The form stays open until the save succeeds.
"""

from __future__ import annotations

import re

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.screen import ModalScreen
from textual.validation import ValidationResult, Validator
from textual.widgets import Button, Footer, Input, Label, Static
from rich.text import Text

from railroom.engine import (
    PAIR_SIDES,
    PART_FIELDS,
    PART_UNITS as UNITS,
    ChangedOnDisk,
    EditSession,
    InputError,
    PresetEditError,
    Raw,
    ValueTextError,
    parse_quantity,
)


# The slew rate is quoted in V/µs: its column says so, a value from the file is shown in it, and
# a bare number typed there is written with that unit (a value typed with its own unit is kept).
SLEW_COLUMN, SLEW_SUFFIX = "V/µs", "V/us"
BARE = re.compile(r"^[+-]?(\d+\.?\d*|\.\d+)(e[+-]?\d+)?[pnuµmkMG]?$")


def column_units(key: str) -> str:
    return SLEW_COLUMN if key == "slew" else UNITS.get(key, "")


def slew_shown(text: str) -> str:
    """A slew rate from the file in the column's V/µs ("0.6V/us" -> "0.6", "500k" V/s -> "0.5");
    text that does not read as a plain rate is shown as it is."""
    try:
        q = parse_quantity(text.strip(), "slew")
    except ValueTextError:
        return text
    if q.tolerance or q.tempco:
        return text
    return f"{q.value / 1e6:.6g}"


def slew_written(text: str) -> str:
    """What a slew box's text means in the file: a bare number is in the column's V/µs."""
    return text + SLEW_SUFFIX if BARE.match(text.strip()) else text


class QuantityText(Validator):
    """A value of one kind as the files write it ("0.5V/us" for a slew rate), read by the engine's parser."""

    def __init__(self, kind: str):
        super().__init__()
        self.kind = kind

    def validate(self, value: str) -> ValidationResult:
        if not value.strip():
            return self.success()
        try:
            text = slew_written(value.strip()) if self.kind == "slew" else value.strip()
            parse_quantity(text, self.kind)
        except ValueTextError as err:
            return self.failure(str(err))
        return self.success()


class FlagText(Validator):
    """true or false (a part limit such as phase_reversal)."""

    def validate(self, value: str) -> ValidationResult:
        if not value.strip() or value.strip().lower() in ("true", "false"):
            return self.success()
        return self.failure("expected true or false")


class CurveText(Validator):
    """Points of current, upper and lower headroom: "0 30m 30m; 10m 0.3 0.35" (engine's reader)."""

    def validate(self, value: str) -> ValidationResult:
        if not value.strip():
            return self.success()
        from railroom.engine import curve_from_text

        message = curve_from_text(value)[1]
        return self.failure(message) if message else self.success()


def key_label(key: str, width: int = 18) -> str:
    """A long field name broken after an underscore so it fits the label column
    ("bias_current_" over "doubling"); the name itself stays whole in the file and messages."""
    lines, line = [], ""
    for word in key.split("_"):
        piece = (line + "_" if line else "") + word
        if line and len(piece) > width - 1:
            lines.append(line + "_")
            line = word
        else:
            line = piece
    return "\n".join([*lines, line])


def validators_for(kind: str) -> list[Validator]:
    if kind == "text":
        return []
    return [{"flag": FlagText, "curve": CurveText}.get(kind, lambda: QuantityText(kind))()]


class PresetForm(ModalScreen[bool]):
    """Dismissed with True once saved, False when the user leaves without saving."""

    DEFAULT_CSS = """
    PresetForm { align: center middle; }
    PresetForm > #form-frame { width: 96; max-width: 100%; height: 1fr; max-height: 90%;
                               border: round $accent; background: $surface; padding: 0 1; }
    PresetForm .form-row { height: auto; }
    PresetForm .form-row { margin-top: 1; }
    PresetForm .form-key { width: 30; }
    PresetForm .form-unit { width: 6; padding-left: 1; }
    PresetForm .form-pair-name { width: 7; padding-left: 1; color: $text-muted; }
    PresetForm Input { width: 1fr; }
    PresetForm .form-error { color: $error; height: auto; padding-left: 30; }
    PresetForm #form-problems { color: $error; height: auto; }
    PresetForm #form-buttons { height: auto; align-horizontal: right; }
    """
    # Enter in a box saves (Input.Submitted below): the box's own enter binding would hide a
    # screen-level one from the footer, so the footer shows both keys on the ctrl+s binding.
    BINDINGS = [
        Binding(
            "ctrl+s",
            "save",
            "save",
            key_display="enter/ctrl+s",
            id="preset-form.save",
            tooltip="Save this preset: enter in any box, the Save button, or ctrl+s "
            "(many terminals keep ctrl+s for flow control)",
        ),
        Binding(
            "escape",
            "leave_if_unchanged",
            "close",
            id="preset-form.close",
            tooltip="Close (unsaved values are never dropped by Esc alone)",
        ),
    ]

    def __init__(self, session: EditSession, title: str = ""):
        super().__init__()
        self.session = session
        self.title_text = title or f"Edit {session.part_id}"

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="form-frame"):
            yield Label(Text(self.title_text, style="bold"), id="form-title")
            yield Static(Text(f"saved to {self.session.target.path}"), id="form-target")
            for key, (kind, pair, required) in PART_FIELDS.items():
                yield from self._row(key, kind, pair, required)
            yield Static("", id="form-problems")
            with Horizontal(id="form-buttons"):
                yield Button("Save", variant="primary", id="form-save")
                yield Button("Close", id="form-close")
        yield Footer()

    def _row(self, key: str, kind: str, pair: bool, required: bool) -> ComposeResult:
        validators = validators_for(kind)
        label = key_label(key) + ("" if required else " (optional)")
        row = Horizontal(classes="form-row")
        if "\n" in label:
            row.styles.height = "auto"  # a long name takes two lines (key_label)
        with row:
            yield Label(label, classes="form-key")
            for side, name in enumerate(PAIR_SIDES.get(key, ("",))):
                if pair:
                    yield Label(name, classes="form-pair-name")
                yield Input(
                    id=f"field-{key}-{side}" if pair else f"field-{key}",
                    validators=validators,
                    validate_on=["changed", "submitted"],
                    compact=True,
                )
            yield Label(column_units(key), classes="form-unit")
        yield Static("", id=f"error-{key}", classes="form-error")

    def on_mount(self) -> None:
        self.fill(self.session.started)

    def fill(self, raw: dict[str, Raw]) -> None:
        for key, (_, pair, _) in PART_FIELDS.items():
            value = raw.get(key, ("", "") if pair else "")
            if key == "slew" and isinstance(value, str) and value:
                value = slew_shown(value)
            for box, text in self._boxes(key, value):
                box.value = text
            self.query_one(f"#error-{key}", Static).display = False
        self.query_one("#form-problems", Static).update("")

    def _boxes(self, key: str, value) -> list[tuple[Input, str]]:
        if PART_FIELDS[key][1]:
            pair = value if isinstance(value, tuple) else ("", "")
            return [(self.query_one(f"#field-{key}-{side}", Input), pair[side]) for side in (0, 1)]
        return [(self.query_one(f"#field-{key}", Input), value if isinstance(value, str) else "")]

    @on(Input.Changed)
    def show_field_error(self, event: Input.Changed) -> None:
        key = (event.input.id or "").removeprefix("field-").rsplit("-", 1)[0]
        if key not in PART_FIELDS:
            key = (event.input.id or "").removeprefix("field-")
        if key in PART_FIELDS:
            result = event.validation_result
            message = "" if result is None or result.is_valid else " ".join(result.failure_descriptions)
            error = self.query_one(f"#error-{key}", Static)
            error.update(Text(message))
            error.display = bool(message)

    def values(self) -> tuple[dict[str, Raw | None], list[str]]:
        """The form's values as the file would hold them, and what is wrong with them."""
        found: dict[str, Raw | None] = {}
        wrong = []
        for key, (kind, pair, required) in PART_FIELDS.items():
            texts = [box.value.strip() for box, _ in self._boxes(key, ("", "") if pair else "")]
            if kind != "text":
                for box, _ in self._boxes(key, ""):
                    result = box.validate(box.value)
                    if result is not None and not result.is_valid:
                        wrong.append(f"{key}: {' '.join(result.failure_descriptions)}")
            if not any(texts):
                found[key] = None
                if required:
                    wrong.append(f"{key}: required")
            elif pair and not all(texts):
                wrong.append(f"{key}: needs both values")
            else:
                found[key] = (texts[0], texts[1]) if pair else texts[0]
        slew, started = found.get("slew"), self.session.started.get("slew")
        if isinstance(slew, str):
            # unchanged: the file's own text stays; else the column's unit is written
            found["slew"] = (
                started if isinstance(started, str) and slew == slew_shown(started) else slew_written(slew)
            )
        return found, wrong

    @on(Input.Submitted)
    @on(Button.Pressed, "#form-save")
    def action_save(self) -> None:
        values, wrong = self.values()
        if wrong:
            self.show_problems(wrong)
            return
        had_file = self.session.target.path.exists()
        try:
            path = self.session.save(values)
        except ChangedOnDisk as err:
            from railroom.tui.screens.preset_dialogs import ChangedOnDiskDialog

            self.app.push_screen(ChangedOnDiskDialog(err.path), self.resolve_change)
            return
        except InputError as err:
            self.show_problems(
                [
                    f"line {p.line}: {p.field}: {p.message}" if p.line else f"{p.field}: {p.message}"
                    for p in err.problems
                ]
            )
            return
        except (PresetEditError, OSError) as err:
            self.show_problems([str(err)])
            return
        kept = f" (previous version kept as {path.name}.bak)" if had_file else ""
        self.app.notify(f"Saved {self.session.part_id} to {path}{kept}", markup=False)
        self.dismiss(True)

    def resolve_change(self, choice: str | None) -> None:
        if choice == "reload":
            self.fill(self.session.reload())
            self.app.notify("Reloaded from disk; your unsaved values were dropped.")
        else:
            self.session.keep_editing()
            self.show_problems(
                [
                    "The file changed on disk. Your values are kept; Save applies only "
                    "the fields you changed to the file as it is now."
                ]
            )

    def show_problems(self, lines: list[str]) -> None:
        """Below the fields, and as a notice: at 80x24 the form is taller than the screen and
        the line below the last field is out of sight while a field near the top has focus."""
        self.query_one("#form-problems", Static).update(Text("\n".join(lines)))
        if lines:
            self.notify("\n".join(lines), title="preset not saved", severity="warning", markup=False)

    @on(Button.Pressed, "#form-close")
    def action_leave(self) -> None:
        self.dismiss(False)

    def action_leave_if_unchanged(self) -> None:
        # Esc is harmless: a slow link can split an escape sequence, so it never drops typed values.
        values, wrong = self.values()
        if wrong or any(self.session.started.get(key) != raw for key, raw in values.items()):
            self.show_problems(
                ["Unsaved values: enter or the Save button saves them, the Close button drops them."]
            )
        else:
            self.dismiss(False)
