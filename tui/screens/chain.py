"""The main room: status line, stage list, and the detail or level view of the chain.

Editing happens in place: the edit form takes the place of the detail or level view while the
status line and the stage list above it stay in sight and repaint as each value is typed.
"""

from __future__ import annotations

from typing import TYPE_CHECKING
from functools import partial
from dataclasses import replace

from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import ContentSwitcher, DataTable, Footer

from railroom.engine import (
    format_span,
    net_span,
    net_fields,
    net_shapes,
    set_net_field,
    BLOCKS,
    FORM_SECTIONS,
    METHODS,
    ChainResult,
    FieldShape,
    add_stage,
    escaped,
    move_stage,
    remove_stage,
    section_fields,
    set_section_field,
    set_stage_field,
    stage_fields,
    stage_shapes,
    starter_stage,
    toml_value,
)
from railroom.tui.screens.dialogs import ChoiceScreen, ConfirmScreen
from railroom.tui.screens.net_dialog import open_new_net, open_remove_net
from railroom.tui.widgets.detail import StageDetail
from railroom.tui.widgets.field_form import FieldForm, FormField
from railroom.tui.widgets.level_view import LevelView
from railroom.tui.widgets.stage_list import StageList
from railroom.tui.widgets.status_line import StatusLine

if TYPE_CHECKING:
    from textual import getters

    from railroom.tui.app import RailroomApp


def key(keys: str, action: str, words: str, ident: str, tooltip: str, show: bool = True) -> Binding:
    return Binding(keys, action, words, show=show, id=f"chain.{ident}", tooltip=tooltip)


def net_spans(chain) -> dict[str, str]:
    """Each net's span in words (engine/circuit/nets.py), as the form's help shows it."""
    return {name: format_span(*net_span(chain, net), "V") for name, net in chain.nets.items()}


def net_label(name: str, field: str, width: int = 17) -> str:
    """A net field's label in the form's key column: the field word always whole."""
    room = width - len(field) - 1
    return f"{name if len(name) <= room else name[: room - 1] + '…'} {field}"


class ChainScreen(Screen):
    if TYPE_CHECKING:  # Textual's way to type `self.app` (textual.getters.app); nothing at run time
        app = getters.app(RailroomApp)

    BINDINGS = [
        key("e", "edit_stage", "edit", "edit", "Edit the highlighted stage's values and part (enter too)"),
        key("s", "edit_source", "source", "source", "Edit the source (levels, amplitude, band) and the nets"),
        key(
            "o",
            "edit_conditions",
            "conditions",
            "conditions",
            "Edit the conditions: temperature, margin, method, draws",
        ),
        key("m", "choose_method", "method", "method", "Choose the method: corners, rss, montecarlo"),
        key("a", "add_stage", "add", "add", "Add a stage after the highlighted one"),
        key("n", "new_net", "new net", "new_net", "Add a named net (a DC voltage stages share)", show=False),
        key("N", "remove_net", "remove net", "remove_net", "Remove a named net no stage reads", show=False),
        key("x", "remove_stage", "remove", "remove", "Remove the highlighted stage (asks first)", show=False),
        key("J", "move_stage(1)", "move down", "move_down", "Move the highlighted stage down", show=False),
        key("K", "move_stage(-1)", "move up", "move_up", "Move the highlighted stage up", show=False),
        key("u", "undo", "undo", "undo", "Undo the last change", show=False),
        key(
            "d", "show_view('detail')", "detail", "detail", "Show the highlighted stage's detail", show=False
        ),
        key(
            "l",
            "show_view('level')",
            "levels",
            "levels",
            "Show the levels of every stage on one axis",
            show=False,
        ),
        key("v", "toggle_view", "view", "view", "Switch between the detail and the level view"),
        key(
            "f",
            "show_fixes",
            "fixes",
            "fixes",
            "Jump to the highlighted stage's sensitivity and fixes (end of the detail panel)",
        ),
        key(
            "escape",
            "focus_stages",
            "stages",
            "stages",
            "Back to the stage list (never discards anything)",
            show=False,
        ),
    ]
    # While a form field has the focus, letters are text and the chain's own keys wait: a letter
    # typed on a closed choice box must not remove or move a stage under the open form.
    FORM_KEYS = {"focus_stages"}

    def compose(self) -> ComposeResult:
        yield StatusLine(id="status")
        yield StageList(id="stages")
        with ContentSwitcher(initial="detail", id="views"):
            yield StageDetail(id="detail")
            yield LevelView(id="level")
        yield Footer(compact=True)  # every shown key fits 80 columns

    def on_mount(self) -> None:
        self.app.recheck()
        self.query_one(StageList).focus()

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        focused = self.focused
        if (
            action not in self.FORM_KEYS
            and focused is not None
            and any(isinstance(node, FieldForm) for node in focused.ancestors_with_self)
        ):
            return False
        return True

    @property
    def session(self):
        return self.app.session

    def highlighted(self) -> int:
        """1-based index of the highlighted stage."""
        table = self.query_one(StageList)
        return min(table.stage_at(table.cursor_row), len(self.session.chain.stages))

    def show(self, result: ChainResult, note: str = "") -> None:
        session = self.session
        label = "built-in demo (read-only)" if session.read_only else escaped(str(session.path))
        if session.disk_problems:
            # first on the line, so a long file name cannot push it out of an 80-column view
            problem = session.disk_problems[0]
            where = f"line {problem.line} " if problem.line else ""
            label = (
                f"NOT RELOADED: disk version has problems ({where}{escaped(problem.field)}; r retries)"
                f"  {label}"
            )
        self.query_one(StatusLine).show(result, label, session.modified, note)
        self.query_one(StageList).show(result)
        self._show_view()

    def _show_view(self) -> None:
        """Paint only the view in sight (a hidden one is painted when it comes back)."""
        if self.has_class("editing"):
            return
        if self.query_one(ContentSwitcher).current == "level":
            if self.app.result is not None:
                self.query_one(LevelView).show(self.app.result)
        else:
            self._show_detail()

    def _show_detail(self) -> None:
        result = self.app.result
        if result is None or not result.stages or self.has_class("editing"):
            return
        stage = result.stages[self.highlighted() - 1]
        detail = self.query_one(StageDetail)
        if detail.border_title != f"stage {stage.index} detail":
            detail.scroll_home(animate=False)  # another stage: its story from the top
        detail.show(stage, result.chain, self.session.library.parts)

    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self._show_detail()

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.action_edit_stage()

    # views
    def action_show_view(self, view: str) -> None:
        self.close_form(leave=True)
        self.query_one(ContentSwitcher).current = view
        self._show_view()

    def action_toggle_view(self) -> None:
        current = self.query_one(ContentSwitcher).current
        self.action_show_view("level" if current == "detail" else "detail")

    def jump_to_stage(self, index: int) -> None:
        """Highlight stage `index` (1-based) and give the stage list the focus."""
        self.close_form(leave=True)
        table = self.query_one(StageList)
        table.highlight_stage(index)
        table.focus()
        self._show_detail()

    def action_show_fixes(self) -> None:
        """The detail panel, scrolled to its end (sensitivity and fixes) and focused, so the
        arrows and PageUp scroll it; Esc goes back to the stage list."""
        self.action_show_view("detail")
        detail = self.query_one(StageDetail)
        detail.focus()
        detail.scroll_end(animate=False)

    def action_focus_stages(self) -> None:
        self.close_form(leave=True)
        self.query_one(StageList).focus()

    def close_form(self, leave: bool = False) -> None:
        """Put the detail or level view back; drafts stay in the session, edits in the chain.
        `leave`: the user left the form, so the fields they emptied are removed from the file."""
        if not self.has_class("editing"):
            return
        for form in self.query(FieldForm):
            if leave:
                form.remove_emptied(form.remove_field)
            form.remove()
        self.remove_class("editing")
        self._show_view()

    def on_field_form_closed(self, event: FieldForm.Closed) -> None:
        event.stop()
        self.action_focus_stages()

    # edits
    def _form(self, title: str, form_id: str, fields: list[FormField], change, focus=None) -> None:
        drafts = self.session.drafts.setdefault(form_id, {})
        fields = [FormField(f.key, f.shape, drafts.get(f.key, f.text), f.choices, f.label) for f in fields]

        def apply(field_key: str, text: str, judged) -> None:
            shape = next(f.shape for f in fields if f.key == field_key)
            self.app.type_edit((form_id, field_key), change(field_key, toml_value(text, shape)), judged)

        self.close_form()
        self.add_class("editing")
        form = FieldForm(title, fields, apply, drafts, focus, form_id)
        form.remove_field = lambda field_key: self.app.apply_edit(change(field_key, None))
        self.mount(form, before=self.query_one(Footer))

    def action_edit_stage(self, focus: str | None = None) -> None:
        index = self.highlighted()
        stage = self.session.chain.stages[index - 1]
        text = self.session.text
        shapes = stage_shapes(stage.block)
        if BLOCKS[stage.block].uses_part:
            shapes = {
                "name": shapes.pop("name"),
                "part": FieldShape(
                    "text", "choice", tuple(self.session.part_ids), "part preset (from the preset folders)"
                ),
                **shapes,
            }
        if len(self.session.chain.rails) > 1:
            shapes["rails"] = FieldShape("text", "choice", tuple(self.session.chain.rails), "which supply")
        earlier = tuple(s.name for s in self.session.chain.stages[: index - 1])
        shapes["from"] = FieldShape(
            "text",
            "choice",
            ("source", *earlier),
            "the stage it takes its input from (empty: the one before)",
        )
        shown = stage_fields(text, index, shapes)
        fields = [FormField(k, s, shown[k]) for k, s in shapes.items()]
        self._form(
            f"stage {index}: {stage.name} ({stage.block})",
            f"stage.{index}",
            fields,
            lambda k, v: lambda t: set_stage_field(t, index, k, v),
            focus,
        )

    def _section_form(self, section: str, focus: str | None = None) -> None:
        shapes = FORM_SECTIONS[section]
        text = self.session.text
        shown = section_fields(text, section, shapes)
        fields = [FormField(k, s, shown[k]) for k, s in shapes.items()]
        self._form(
            f"[{section}]",
            section,
            fields,
            lambda k, v: lambda t: set_section_field(t, section, k, v),
            focus,
        )

    def action_edit_source(self) -> None:
        """The source's fields, then every named net's (the DC voltages stages share)."""
        text = self.session.text
        nets = net_shapes(text)
        if not nets:
            self._section_form("source")
            return
        shapes = FORM_SECTIONS["source"]
        shown = section_fields(text, "source", shapes)
        fields = [FormField(k, s, shown[k]) for k, s in shapes.items()]
        values = net_fields(text)
        spans = net_spans(self.session.chain)
        for key, (name, field, shape) in nets.items():
            help_words = f"{name}: {spans.get(name, '')}   {shape.help}"
            fields.append(
                FormField(key, replace(shape, help=help_words), values[key], label=net_label(name, field))
            )

        def change(key: str, value):
            if key in nets:
                name, field, _ = nets[key]
                return lambda t: set_net_field(t, name, field, value)
            return lambda t: set_section_field(t, "source", key, value)

        self._form("[source] and [nets]", "source", fields, change)

    def action_new_net(self) -> None:
        open_new_net(self)

    def action_remove_net(self) -> None:
        open_remove_net(self)

    def action_edit_conditions(self) -> None:
        self._section_form("conditions")

    def action_choose_method(self) -> None:
        def chosen(method: str | None) -> None:
            if method is not None:
                self.app.apply_edit(lambda t: set_section_field(t, "conditions", "method", method))

        current = self.session.chain.conditions.method
        self.app.push_screen(ChoiceScreen("Method", [(m, m) for m in METHODS], current), chosen)

    def action_add_stage(self) -> None:
        after = self.highlighted()
        near = self.session.chain.stages[after - 1]

        def add(block: str, where: str | None) -> None:
            if where is None:
                return
            chain = self.session.chain
            parts = self.session.part_ids
            part = near.part if near.part else (parts[0] if parts else None)
            name = unique_name(f"new {block}", [s.name for s in chain.stages])
            fields = starter_stage(block, name, part, self._rails_near(after))
            position = after + 1
            if where != "line":  # a branch: at the end, so no stage after it changes its input
                feed = "source" if where == "source" else chain.stages[int(where) - 1].name
                fields = {**fields, "from": feed}
                position = len(chain.stages) + 1
            problem = self.app.apply_edit(lambda t: add_stage(t, position, fields))
            if problem is None:
                self._structure_changed(position)
                self.action_edit_stage()
            else:
                self.notify(
                    f"the new {block} stage was not added: {problem}",
                    title="add",
                    severity="error",
                    markup=False,
                )

        def chosen(block: str | None) -> None:
            if block is None:
                return
            self.app.push_screen(
                ChoiceScreen(f"Where does the new {block} take its input from?", self._inputs(after), "line"),
                partial(add, block),
            )

        blocks = [(name, f"{name}: {block.summary}") for name, block in BLOCKS.items()]
        self.app.push_screen(ChoiceScreen("Add which block after the highlighted stage?", blocks), chosen)

    def _inputs(self, after: int) -> list[tuple[str, str]]:
        """Where a new stage may take its input from: in the line after stage `after` (as the
        stage after it did), or a branch from any stage (a converter input fed by a passive
        stage only while it feeds nothing yet) or from the source, added at the end."""
        chain = self.session.chain
        name = chain.stages[after - 1].name
        choices = [("line", f"in the line after stage {after} ({name})")]
        fed, parents = chain.children, chain.parents
        for k, stage in enumerate(chain.stages, start=1):
            before = BLOCKS[chain.stages[parents[k - 1]].block] if parents[k - 1] >= 0 else None
            passive_before = before is not None and not before.uses_part and not before.window_only
            if not (BLOCKS[stage.block].window_only and passive_before and fed[k - 1]):
                choices.append((str(k), f"stage {k} ({stage.name}), a branch (added at the end)"))
        choices.append(("source", "the source, a branch (added at the end)"))
        return choices

    def _rails_near(self, index: int) -> str | None:
        """The supply for a stage added after stage `index`: that stage's, else the nearest
        earlier stage's (a passive stage names none), else the chain's first, when it has several."""
        chain = self.session.chain
        if len(chain.rails) < 2:
            return None
        named = [s.rails for s in chain.stages[:index] if s.rails is not None]
        return named[-1] if named else next(iter(chain.rails))

    def action_remove_stage(self) -> None:
        index = self.highlighted()
        if len(self.session.chain.stages) == 1:
            self.notify("a chain keeps at least one stage", severity="warning")
            return

        def answered(answer: str | None) -> None:
            if answer == "remove":
                problem = self.app.apply_edit(lambda t: remove_stage(t, index))
                if problem is None:
                    self._structure_changed(index)
                else:  # a stage after it takes its input from it by name (`from`), say
                    self.notify(f"not removed: {problem}", title="remove", severity="error", markup=False)

        name = self.session.chain.stages[index - 1].name
        self.app.push_screen(
            ConfirmScreen(f"Remove stage {index} ({name})?", [("y", "remove", "remove it (u undoes)")]),
            answered,
        )

    def action_move_stage(self, offset: int) -> None:
        index = self.highlighted()
        target = index + offset
        if 1 <= target <= len(self.session.chain.stages):
            problem = self.app.apply_edit(lambda t: move_stage(t, index, offset))
            if problem is None:
                self._structure_changed(target)
            else:  # before the stage it takes its input from (`from`), say
                self.notify(f"not moved: {problem}", title="move", severity="error", markup=False)

    def _structure_changed(self, highlight: int) -> None:
        self.close_form()  # its fields name a stage by its place in the chain
        for form in [f for f in self.session.drafts if f.startswith("stage.")]:
            del self.session.drafts[form]
        self.query_one(StageList).highlight_stage(highlight)
        self._show_detail()

    def action_undo(self) -> None:
        self.app.settle()
        if self.session.undo():
            self.close_form()  # its fields would show the text before the undo
            self.app.recheck()
        else:
            self.notify("nothing to undo")


def unique_name(name: str, taken: list[str]) -> str:
    """`name`, or `name 2`, `name 3` ... when a stage has it (a chain that uses `from` needs
    unique names)."""
    found, count = name, 1
    while found in taken:
        count += 1
        found = f"{name} {count}"
    return found
