"""The presets screen: the user's library, listed, viewed and edited without ever losing a line.

Type to filter; Enter or ↓ moves to the list. e edits, c makes a new preset from a copy, r renames,
x deletes (after a confirmation). Shipped presets are only read: an edit saves a copy into the user's
folder, which overrides the shipped one. After every change the screen calls `on_change`, so the
chains that use a preset are checked again at once.
"""

from __future__ import annotations

from pathlib import Path
from collections.abc import Callable

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Static

from railroom.engine import (
    ChangedOnDisk,
    EditSession,
    InputError,
    Library,
    PresetEditError,
    Problem,
    copy_part,
    delete_part,
    is_shipped,
    load_library,
    open_preset_file,
    read_preset_file,
    rename_part,
    save_preset_text,
    shipped_folder,
)
from railroom.tui.screens.preset_dialogs import ConfirmDialog, NameDialog
from railroom.tui.subcommands.presets import part_lines
from railroom.tui.widgets.preset_form import PresetForm


NESTING_SHOWN = 100  # the line named for a file too deeply nested: where it passes this


def library_of(folders: list[Path]) -> Library:
    """The library of `folders`; a file nested too deeply for the reader (arrays in arrays ...)
    is a located problem of its own and the other files are still read."""
    try:
        return load_library(folders)
    except RecursionError:
        pass
    library = Library(folders=list(folders))
    for folder in folders:
        for path in sorted(folder.glob("*.toml")) if folder.is_dir() else ():
            try:
                parts, problems = read_preset_file(path)
            except RecursionError:
                parts, problems = (
                    [],
                    [
                        Problem(
                            str(path),
                            nesting_line(path),
                            "(file)",
                            "nested too deeply to read (arrays or tables "
                            f"more than {NESTING_SHOWN} levels inside "
                            "each other)",
                        )
                    ],
                )
            library.problems.extend(problems)
            for part in parts:
                library.add(part)
    return library


def nesting_line(path: Path) -> int | None:
    """The line where brackets and braces first nest deeper than NESTING_SHOWN."""
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError:
        return None
    depth = 0
    for number, line in enumerate(text.splitlines(), 1):
        for char in line:
            depth += char in "[{"
            depth -= char in "]}"
            if depth > NESTING_SHOWN:
                return number
    return None


class PresetsScreen(Screen):
    DEFAULT_CSS = """
    PresetsScreen #preset-filter { dock: top; }
    PresetsScreen #preset-body { height: 1fr; }
    PresetsScreen #preset-table { width: 3fr; }
    PresetsScreen #preset-view { width: 2fr; padding: 0 1; border-left: solid $accent; }
    PresetsScreen #preset-problems { height: auto; max-height: 8; color: $warning; }
    """
    BINDINGS = [
        Binding("e,enter", "edit", "Edit", id="presets.edit", tooltip="Edit the highlighted preset"),
        Binding("c", "copy", "New from copy", id="presets.copy", tooltip="New preset from a copy"),
        Binding("r", "rename", "Rename", id="presets.rename", tooltip="Rename the preset"),
        # x as on the chain screen (x removes a stage; d there shows the detail)
        Binding("x", "delete", "Delete", id="presets.delete", tooltip="Delete (asks first)"),
        Binding("slash", "focus_filter", "Filter", id="presets.filter", tooltip="Type to filter"),
        Binding("escape", "focus_list", show=False),  # harmless: it only moves the focus
        Binding("q", "close", "Back", id="presets.close", tooltip="Back to the chain"),
    ]

    def __init__(self, folders: list[Path], writable: Path, on_change: Callable[[], None] | None = None):
        super().__init__()
        self.folders, self.writable, self.on_change = list(folders), Path(writable), on_change
        self.library = Library()

    def compose(self) -> ComposeResult:
        yield Input(
            placeholder="type to filter (id, description, folder); enter or ↓ goes to the list",
            id="preset-filter",
        )
        with Horizontal(id="preset-body"):
            yield DataTable(id="preset-table", cursor_type="row", zebra_stripes=True)
            yield Static("", id="preset-view")
        yield Static("", id="preset-problems")
        yield Footer()

    def on_mount(self) -> None:
        self.query_one(DataTable).add_columns("preset", "from", "file")
        self.reload_library()
        # the list has the focus, so the footer shows its keys (typing in the filter hides every
        # letter key from it); / goes to the filter
        self.query_one(DataTable).focus()

    def reload_library(self, select: str | None = None) -> None:
        self.library = library_of(self.folders)
        problems = self.library.problems
        self.query_one("#preset-problems", Static).update(
            Text(
                "\n".join(
                    [f"{len(problems)} problem(s) in preset files; the good presets are listed:"]
                    + [str(p) for p in problems]
                )
                if problems
                else ""
            )
        )
        self.refill(select)

    def shown_ids(self) -> list[str]:
        words = self.query_one("#preset-filter", Input).value.lower().split()
        return [
            part_id
            for part_id, part in sorted(self.library.parts.items())
            if all(w in f"{part_id} {part.description} {part.origin}".lower() for w in words)
        ]

    def refill(self, select: str | None = None) -> None:
        table = self.query_one(DataTable)
        table.clear()
        for part_id in self.shown_ids():
            part = self.library.parts[part_id]
            origin = Path(part.origin)
            where = "shipped" if is_shipped(origin) else "yours"
            if part.overrides:
                where += " (overrides)"
            table.add_row(Text(part_id), where, Text(f"{origin.parent.name}/{origin.name}"), key=part_id)
        if select is not None and select in self.shown_ids():
            table.move_cursor(row=table.get_row_index(select))
        self.show_part(self.current_id())

    def current_id(self) -> str | None:
        table = self.query_one(DataTable)
        if table.row_count == 0:
            return None
        return str(table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value)

    def show_part(self, part_id: str | None) -> None:
        view = self.query_one("#preset-view", Static)
        part = self.library.parts.get(part_id or "")
        if part is None:
            view.update("No preset matches." if part_id is None else "")
            return
        lines = [f"[part.{part.id}]", f"from {part.origin}"]
        lines += [f"overrides {earlier}" for earlier in part.overrides]
        if is_shipped(part.origin):
            lines.append("shipped: an edit saves a copy into your folder")
        view.update(Text("\n".join(lines + [""] + [line.strip() for line in part_lines(part)])))

    @on(Input.Changed, "#preset-filter")
    def filter_changed(self) -> None:
        self.refill()

    @on(Input.Submitted, "#preset-filter")
    def to_list(self) -> None:
        self.query_one(DataTable).focus()

    @on(DataTable.RowHighlighted)
    def highlighted(self, event: DataTable.RowHighlighted) -> None:
        self.show_part(str(event.row_key.value))

    def key_down(self) -> None:
        if self.focused is self.query_one("#preset-filter", Input):
            self.query_one(DataTable).focus()

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        if action in ("edit", "copy", "rename", "delete", "close") and isinstance(self.focused, Input):
            # letters typed in the filter are text, not commands: the keys are shown dimmed in
            # the footer (enter or the down arrow goes to the list, where they work)
            return None
        return True

    def action_focus_filter(self) -> None:
        self.query_one("#preset-filter", Input).focus()

    def action_focus_list(self) -> None:
        """Esc leaves the filter for the list (keeping what was typed), so q then goes back."""
        self.query_one(DataTable).focus()

    def action_close(self) -> None:
        if len(self.app.screen_stack) > 1:
            self.app.pop_screen()

    @on(DataTable.RowSelected)
    def action_edit(self) -> None:
        self.edit_part(self.current_id())

    def edit_part(self, part_id: str | None) -> None:
        if part_id is None or part_id not in self.library.parts:
            return
        part = self.library.parts[part_id]
        try:
            session = EditSession(part.origin, part_id, self.writable)
        except (PresetEditError, OSError) as err:
            self.notify(str(err), severity="error", markup=False)
            return
        title = f"Edit {part_id}" + (
            " (a copy in your folder; the shipped file stays as it is)" if is_shipped(part.origin) else ""
        )
        self.app.push_screen(PresetForm(session, title), lambda saved: self.after_form(saved, part_id))

    def after_form(self, saved: bool | None, part_id: str) -> None:
        if saved:
            self.changed(part_id)

    def changed(self, select: str | None) -> None:
        self.reload_library(select)
        if self.on_change is not None:
            self.on_change()

    def action_copy(self) -> None:
        part_id = self.current_id()
        if part_id is None:
            return
        self.app.push_screen(
            NameDialog(
                f"New preset from a copy of {part_id}; its id:", f"{part_id}-copy", set(self.library.parts)
            ),
            lambda name: self.make_copy(part_id, name),
        )

    def make_copy(self, part_id: str, new_id: str | None) -> None:
        if not new_id:
            return
        origin = Path(self.library.parts[part_id].origin)
        target_path = self.writable / origin.name if is_shipped(origin) else origin
        source = open_preset_file(origin)
        if self.write(target_path, lambda text: copy_part(source.text, part_id, text, new_id)):
            self.changed(new_id)
            self.edit_part(new_id)

    def action_rename(self) -> None:
        part_id = self.current_id()
        if part_id is None or self.refuse_shipped(part_id, "renamed"):
            return
        self.app.push_screen(
            NameDialog(f"New id for {part_id}:", part_id, set(self.library.parts) - {part_id}),
            lambda name: self.make_rename(part_id, name),
        )

    def make_rename(self, part_id: str, new_id: str | None) -> None:
        if (
            new_id
            and new_id != part_id
            and self.write(
                Path(self.library.parts[part_id].origin), lambda text: rename_part(text, part_id, new_id)
            )
        ):
            self.changed(new_id)

    def action_delete(self) -> None:
        part_id = self.current_id()
        if part_id is None or self.refuse_shipped(part_id, "deleted"):
            return
        origin = self.library.parts[part_id].origin
        question = f"Delete {part_id} from {origin}?\nThe previous file is kept as {origin}.bak."
        self.app.push_screen(ConfirmDialog(question), lambda yes: self.make_delete(part_id, yes))

    def make_delete(self, part_id: str, yes: bool | None) -> None:
        if yes and self.write(
            Path(self.library.parts[part_id].origin), lambda text: delete_part(text, part_id)
        ):
            self.changed(None)

    def refuse_shipped(self, part_id: str, what: str) -> bool:
        if is_shipped(self.library.parts[part_id].origin):
            self.notify(
                f"Shipped presets are never {what}; make a copy (c) in your folder instead.",
                severity="warning",
                markup=False,
            )
            return True
        return False

    def write(self, path: Path, edit: Callable[[str], str]) -> bool:
        """Apply a whole-part edit to the file as it is on disk now, and save it atomically."""
        if path.resolve().parent == shipped_folder().resolve():
            self.notify("Shipped presets are never modified.", severity="error")
            return False
        try:
            opened = open_preset_file(path)
            save_preset_text(opened, edit(opened.text))
        except InputError as err:
            self.notify("\n".join(str(p) for p in err.problems), severity="error", markup=False)
            return False
        except (ChangedOnDisk, PresetEditError, OSError) as err:
            self.notify(str(err), severity="error", markup=False)
            return False
        self.notify(f"Saved {path} (previous version kept as .bak)", markup=False)
        return True
