"""The railroom interface: wires the chain session, the screens, the keys and the engine.

    app = build_app("chain.toml", ("./more-presets",))     # tests reuse this factory

A chain file that cannot be opened (missing, bad TOML, unknown part, bad value) still opens the
interface, on the problems screen; the file is watched and the chain screen takes its place as
soon as the file loads.
"""

from __future__ import annotations

import os
import time
from functools import partial
from typing import cast
from pathlib import Path
from collections.abc import Callable

from textual import work
from textual.app import App
from textual.binding import Binding
from textual.timer import Timer
from textual.worker import get_current_worker

from railroom.engine import Cancelled, Chain, ChainResult, InputError, Library, Problem, analyse, escaped
from railroom.tui.commands import RailroomCommands
from railroom.tui.screens.chain import ChainScreen
from railroom.tui.screens.dialogs import ConfirmScreen, SaveAsScreen
from railroom.tui.screens.help import HelpScreen
from railroom.tui.screens.problems import ProblemsScreen
from railroom.tui.session import Session, WaitingFile, open_chain
from railroom.tui.widgets.status_line import StatusLine

WATCH_SECONDS = 1.0
# While values are being typed, the full check (the file's method with the design aids) waits for a
# pause in the typing: started on every keystroke it would compete with the repaint for the CPU.
TYPING_PAUSE_SECONDS = 0.3


def same_file(one: Path, other: Path) -> bool:
    return os.path.realpath(one) == os.path.realpath(other)


def problem_words(problems: list[Problem]) -> str:
    first = problems[0]
    return f"{first.field}: {first.message}" if first.field != "(edit)" else first.message


def key(keys: str, action: str, words: str, ident: str, tooltip: str, show: bool = True) -> Binding:
    return Binding(keys, action, words, show=show, id=f"app.{ident}", tooltip=tooltip)


class RailroomApp(App):
    TITLE = "railroom"
    CSS_PATH = "railroom.tcss"
    COMMANDS = App.COMMANDS | {RailroomCommands}
    BINDINGS = [
        key("w", "save", "save", "save", "Save the chain file (keeps comments; atomic)"),
        key("W", "save_as", "save as", "save_as", "Save the chain under a new file name", show=False),
        key("r", "reload", "reload", "reload", "Read the file again from disk", show=False),
        key(
            "i",
            "screenshot",
            "picture",
            "screenshot",
            "Save the screen as an SVG picture for reports",
            show=False,
        ),
        key("p", "presets", "presets", "presets", "Open the part presets screen", show=False),
        key("question_mark", "help", "help", "help", "Show every key"),
        key("colon", "command_palette", "commands", "commands", "Open the command palette", show=False),
        key("q", "quit", "quit", "quit", "Quit (asks first when there are unsaved changes)"),
    ]

    # the keys that need no chain: the problems screen offers only these
    WITHOUT_CHAIN = {"reload", "help", "quit", "command_palette", "screenshot"}

    def __init__(self, opened: Session | WaitingFile) -> None:
        super().__init__()
        self.session: Session | None = opened if isinstance(opened, Session) else None
        self.waiting: WaitingFile | None = opened if isinstance(opened, WaitingFile) else None
        self.result: ChainResult | None = None
        self._generation = 0
        self._full_timer: Timer | None = None
        self._edit_running = False  # an instant check of typed text is computing (type_edit)
        # field edits typed but not yet checked: (form, field) -> (edit, where its verdict goes)
        self._pending: dict[tuple[str, str], tuple[Callable[[str], str], Callable]] = {}

    def get_default_screen(self) -> ChainScreen | ProblemsScreen:
        if self.waiting is not None:
            return ProblemsScreen(self.waiting)
        return ChainScreen(id="chain")

    def on_mount(self) -> None:
        self.set_interval(WATCH_SECONDS, self.watch_file)
        if self.session is not None:
            self.warn_presets()

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        return self.session is not None or action in self.WITHOUT_CHAIN

    @property
    def open_session(self) -> Session:
        """The open chain's session. What uses it runs only while a chain is open (check_action
        holds back every other key), so its absence here is a railroom bug, not the user's."""
        if self.session is None:
            raise RuntimeError("no chain is open")
        return self.session

    @property
    def chain_screen(self) -> ChainScreen:
        return cast(ChainScreen, self.screen_stack[0])

    # the engine
    def apply_edit(self, change: Callable[[str], str], typing: bool = False) -> str | None:
        """Apply an edit of the chain text at once (a command: add, move, method ...); on success
        re-check, else return the problem. Values typed in a form go through `type_edit`."""
        self.settle()
        problems = self.open_session.edit(change)
        if problems:
            return problem_words(problems)
        self.recheck(TYPING_PAUSE_SECONDS if typing else 0.0)
        return None

    def type_edit(
        self, step: tuple[str, str], change: Callable[[str], str], judged: Callable[[str | None], None]
    ) -> None:
        """A keystroke's edit of one field (`step`: form and field): loaded and checked in a
        worker thread, so the event loop never waits on the engine while the user types.

        Single flight: at most one instant check computes at a time. A keystroke while one runs
        only records its edit (every character is in the field already) and makes the running
        check stale, which stops it at its next phase (analyse's `cancelled`); when it ends, the
        newest pending text is checked, the ones typed in between never are. A full check still
        running stops the same way. `judged(problem or None)` runs when the newest result is in."""
        self._pending[step] = (change, judged)
        self._generation += 1
        self._stop_full_timer()
        if not self._edit_running:
            self._start_edit_job()

    def _start_edit_job(self) -> None:
        self._edit_running = True
        self.run_worker(
            partial(self._edit_job, self._generation, self.open_session.text, list(self._pending.items())),
            thread=True,
            group="edit",
            exit_on_error=False,
        )

    def _edit_job(self, generation: int, base: str, steps: list) -> None:
        """In a worker thread: every pending field edit applied to `base`, loaded and checked
        (corners, without design aids). Only reads the session; the app thread keeps the result.
        Always hands back to the app thread (`_edit_done`), stale or not: that ends the flight."""
        prepared: tuple[str, Chain, Library] | None = None
        outcomes: dict[tuple[str, str], str | None] = {}
        result = None
        try:
            prepared, outcomes, result = self._edit_check(generation, base, steps)
        except Cancelled:
            prepared, result = None, None  # stale: a newer keystroke or command came meanwhile
        except Exception as err:  # never lose the app (and the typing) to a bug here
            outcomes = {step: f"the check failed: {err!r}" for step, _ in steps}
            prepared, result = None, None
        finally:
            try:
                self.call_from_thread(self._edit_done, generation, base, steps, prepared, outcomes, result)
            except RuntimeError:
                pass  # the app closed meanwhile

    def _edit_check(self, generation: int, base: str, steps: list):
        def stale() -> bool:
            return generation != self._generation

        text, prepared = base, None
        outcomes: dict[tuple[str, str], str | None] = {}
        for step, (change, _) in steps:
            if stale():
                raise Cancelled()
            try:
                found = self.open_session.prepare(text, change)
            except Exception as err:  # never lose the app (and the typing) to a bug here
                found = [Problem(str(self.open_session.path), None, "(edit)", repr(err))]
            if isinstance(found, list):
                outcomes[step] = problem_words(found)
            else:
                text, prepared, outcomes[step] = found[0], found, None
        result = None
        if prepared is not None:
            try:
                result = analyse(
                    prepared[1],
                    prepared[2].parts,
                    method="corners",
                    design_aids=False,
                    headroom=False,
                    cancelled=stale,
                )
            except Cancelled:
                raise
            except Exception as err:
                for step in outcomes:
                    outcomes[step] = f"the check failed: {err!r}"
                prepared = None
        return prepared, outcomes, result

    def _edit_done(
        self,
        generation: int,
        base: str,
        steps: list,
        prepared: tuple[str, Chain, Library] | None,
        outcomes: dict,
        result: ChainResult | None,
    ) -> None:
        self._edit_running = False
        if generation != self._generation or base != self.open_session.text:
            # a newer keystroke (or command) owns the screen: check what is pending now
            if self._pending and self.session is not None:
                self._start_edit_job()
            return
        self._pending.clear()
        if prepared is not None:
            step = steps[0][0] if len(steps) == 1 else None
            self.open_session.commit(*prepared, step=step)
        for step, (_, judged) in steps:
            judged(outcomes[step])
        if prepared is not None and result is not None:
            self._show_corners(result)
            self._schedule_full(TYPING_PAUSE_SECONDS)

    def settle(self) -> None:
        """Keep the field edits still being checked, at once (before a save, an undo, a command):
        the last thing typed is what counts."""
        if not self._pending:
            return
        pending, self._pending = list(self._pending.values()), {}
        self._generation += 1  # drops the worker's (now older) answer
        changed = False
        for change, judged in pending:
            problems = self.open_session.edit(change)
            changed |= not problems
            judged(problem_words(problems) if problems else None)
        if changed:
            self.recheck()

    def recheck(self, full_after: float = 0.0) -> None:
        """Corners at once on this thread; then, in a worker, the file's own method with the
        design aids (sensitivity, fixes), after `full_after` seconds. A newer edit cancels the
        older run (and a full run still waiting to start)."""
        self._generation += 1
        self._show_corners(self.open_session.corners())
        self._schedule_full(full_after)

    def _show_corners(self, result: ChainResult) -> None:
        self.result = result
        method = self.open_session.chain.conditions.method
        self.chain_screen.query_one("StatusLine", StatusLine).running(method if method != "corners" else None)
        self.chain_screen.show(self.result)

    def _stop_full_timer(self) -> None:
        if self._full_timer is not None:
            self._full_timer.stop()
            self._full_timer = None

    def _schedule_full(self, after: float) -> None:
        self._stop_full_timer()
        start = partial(
            self.run_full, self._generation, self.open_session.chain, self.open_session.library.parts
        )
        if after > 0:
            self._full_timer = self.set_timer(after, start)
        else:
            start()

    @work(thread=True, exclusive=True, group="full-check")
    def run_full(self, generation: int, chain, parts) -> None:
        worker = get_current_worker()
        problem = ""
        status = self.chain_screen.query_one("StatusLine", StatusLine)
        last = [0.0]

        def stale() -> bool:
            return worker.is_cancelled or generation != self._generation

        def progress(fraction: float) -> bool:
            # a few repaints a second at most
            now = time.monotonic()
            if now - last[0] > 0.2:
                last[0] = now
                self.call_from_thread(status.progress, fraction)
            return True

        # a newer edit (or keystroke) makes the run stale: analyse stops at its next phase
        try:
            result = analyse(chain, parts, progress=progress, cancelled=stale)
        except Cancelled:
            return
        except (NotImplementedError, InputError, ValueError) as err:
            problem = str(err)
            if stale():
                return
            try:
                result = analyse(chain, parts, method="corners", cancelled=stale)
            except Cancelled:
                return
        if not stale():
            self.call_from_thread(self.full_done, generation, result, problem)

    def full_done(self, generation: int, result: ChainResult, problem: str) -> None:
        if generation != self._generation:
            return  # the user changed something meanwhile: a newer run owns it
        self.chain_screen.query_one("StatusLine", StatusLine).running(None)
        self.result = result
        if problem:
            self.chain_screen.show(result, f"{problem}; showing corners")
            self.notify(problem, title="method", severity="warning", markup=False)
        else:
            self.chain_screen.show(result)

    # the file
    def watch_file(self) -> None:
        if self.session is None:
            # help open on top: try again once it is closed (the chain screen replaces the top)
            waiting = self.waiting
            if isinstance(self.screen, ProblemsScreen) and waiting is not None and waiting.changed_on_disk():
                self.try_open()
            return
        if not self.session.changed_on_disk() or isinstance(self.screen, ConfirmScreen):
            return

        def answered(answer: str | None) -> None:
            if answer == "reload":
                self.action_reload()
            else:
                self.open_session.keep_mine()

        lost = " (your unsaved changes would be lost)" if self.session.modified else ""
        self.push_screen(
            ConfirmScreen(
                f"{escaped(self.session.path.name)} changed on disk.",
                [
                    ("r", "reload", f"reload it{lost}"),
                    ("k", "keep", "keep what is on screen (saving asks before overwriting)"),
                ],
            ),
            answered,
        )

    def try_open(self, asked: bool = False) -> None:
        """Open the waiting file if it loads now, on the chain screen; else show its problems."""
        if self.waiting is None:
            return
        session = self.waiting.try_open()
        if session is None:
            cast(ProblemsScreen, self.screen_stack[0]).show()
            if asked:
                self.notify("still not loadable: the problems are listed", severity="warning")
            return
        self.session, self.waiting = session, None
        # a mode of its own: the chain screen is then the base of the stack, as when the file
        # opened at once (the problems screen is the base of the default mode's stack)
        self.add_mode("chain", lambda: ChainScreen(id="chain"))
        self.switch_mode("chain")
        self.notify(f"opened {escaped(str(session.path))}", markup=False)
        self.warn_presets()

    def warn_presets(self) -> None:
        warnings = self.open_session.preset_warnings()
        if warnings:
            self.notify(
                "\n".join(warnings[:4]) + ("\n..." if len(warnings) > 4 else ""),
                title="presets",
                severity="warning",
                markup=False,
                timeout=8,
            )

    def action_reload(self) -> None:
        if self.session is None:
            self.try_open(asked=True)
            return
        self.settle()
        problems = self.session.reload()
        if problems:
            self.notify(
                "\n".join(str(p) for p in problems[:4]), title="not reloaded", severity="error", markup=False
            )
            if self.result is not None:
                self.chain_screen.show(self.result)
            return
        self.chain_screen.close_form()  # its fields showed the text before the reload
        self.recheck()
        self.notify("reloaded from disk")

    def action_save(self, then: Callable[[], None] | None = None) -> None:
        self.settle()
        if self.open_session.read_only:
            self.action_save_as(then)
            return
        if not self.open_session.disk_is_newer():
            self._write(None, then)
            return

        def answered(answer: str | None) -> None:
            if answer == "overwrite":
                self._write(None, then)
            elif answer == "reload":
                self.action_reload()

        broken = (
            " The version on disk does not load: " + str(self.open_session.disk_problems[0])
            if self.open_session.disk_problems
            else ""
        )
        self.push_screen(
            ConfirmScreen(
                f"{escaped(self.open_session.path.name)} changed on disk since it was read.{broken}",
                [
                    ("o", "overwrite", "overwrite it with what is on screen (the old file is kept as .bak)"),
                    ("r", "reload", "reload it and drop the changes on screen"),
                ],
            ),
            answered,
        )

    def action_save_as(self, then: Callable[[], None] | None = None) -> None:
        self.settle()
        # a name typed without a folder goes beside the open file (the demo's copy: here)
        folder = Path.cwd() if self.open_session.read_only else self.open_session.path.parent
        why = (
            "The built-in demo is read-only. Save a copy as:"
            if self.open_session.read_only
            else "Save the chain as:"
        )

        def named(name: str | None) -> None:
            if not name:
                return
            target = Path(name).expanduser()
            target = Path(os.path.abspath(target if target.is_absolute() else folder / target))
            if not self.open_session.read_only and same_file(target, self.open_session.path):
                self.action_save(then)
            elif target.exists():

                def answered(answer: str | None) -> None:
                    if answer == "overwrite":
                        self._write(target, then)

                self.push_screen(
                    ConfirmScreen(
                        f"{escaped(str(target))} exists.",
                        [
                            (
                                "o",
                                "overwrite",
                                f"overwrite it (the old file is kept as {escaped(target.name)}.bak)",
                            )
                        ],
                    ),
                    answered,
                )
            else:
                self._write(target, then)

        self.push_screen(
            SaveAsScreen(self.open_session.path.name, f"{why}  (in {escaped(str(folder))})"), named
        )

    def _write(self, path: Path | None, then: Callable[[], None] | None) -> None:
        try:
            self.open_session.save(path)
        except (OSError, InputError) as err:
            self.notify(str(err), title="not saved", severity="error", markup=False)
            return
        drafts = self.open_session.draft_lines()
        if drafts:
            self.notify(
                f"saved {escaped(str(self.open_session.path))}, without the values still in the forms that "
                "are not in the chain: " + "; ".join(drafts[:4]),
                severity="warning",
                markup=False,
                timeout=8,
            )
        else:
            self.notify(f"saved {escaped(str(self.open_session.path))}", markup=False)
        if self.result is not None:
            self.chain_screen.show(self.result)
        if then is not None:
            then()

    async def action_quit(self) -> None:
        if self.session is not None:
            self.settle()
        drafts = self.session.draft_lines() if self.session is not None else []
        if self.session is None or not (self.session.modified or drafts):
            self.exit(0)
            return

        def answered(answer: str | None) -> None:
            if answer == "save":
                self.action_save(then=lambda: self.exit(0))
            elif answer == "discard":
                self.exit(0)

        question = "The chain has unsaved changes." if self.session.modified else ""
        if drafts:
            question += (
                " Values typed into forms are not in the chain (they have a problem) "
                "and are lost on quitting: " + "; ".join(drafts[:4])
            )
        answers = [("s", "save", "save, then quit")] if self.session.modified else []
        self.push_screen(
            ConfirmScreen(question.strip(), answers + [("d", "discard", "quit without saving")]), answered
        )

    # other rooms
    def action_help(self) -> None:
        from railroom.tui.screens.presets import PresetsScreen
        from railroom.tui.widgets.field_form import FieldForm
        from railroom.tui.widgets.preset_form import PresetForm
        from railroom.tui.widgets.stage_list import StageList

        rooms = (
            self.BINDINGS,
            ChainScreen.BINDINGS,
            StageList.BINDINGS,
            FieldForm.BINDINGS,
            PresetsScreen.BINDINGS,
            PresetForm.BINDINGS,
            ProblemsScreen.BINDINGS,
        )
        self.push_screen(HelpScreen([b for room in rooms for b in room if isinstance(b, Binding) and b.id]))

    def action_screenshot(self) -> None:  # type: ignore[override]  # to the working folder, always
        from railroom.tui.screen_picture import save_screen_picture

        path = save_screen_picture(self, Path.cwd())  # no web font in the picture
        self.notify(f"picture saved: {path}", markup=False)

    def action_presets(self) -> None:
        try:
            from railroom.tui.screens.presets import PresetsScreen
        except ImportError:
            self.notify("the presets screen is not available yet", severity="warning")
            return
        from railroom.engine import user_folder

        self.push_screen(
            PresetsScreen(
                list(self.open_session.library.folders), user_folder(), on_change=self.presets_changed
            )
        )

    def open_preset(self, part_id: str) -> None:
        """The presets screen with `part_id` highlighted (the command palette's "preset: ...")."""
        self.action_presets()
        screen = self.screen
        if hasattr(screen, "refill"):
            self.call_after_refresh(screen.refill, part_id)

    def switch_method(self, method: str) -> None:
        """The conditions' method set to `method` (the command palette's "method: ...")."""
        from railroom.engine import set_section_field

        problem = self.apply_edit(lambda t: set_section_field(t, "conditions", "method", method))
        if problem:
            self.notify(problem, title="method", severity="error", markup=False)

    def presets_changed(self) -> None:
        """A preset was edited: read the library again and check the chain against it."""
        self.settle()
        problems = self.open_session.reload_library()
        if problems:
            self.notify(
                "\n".join(str(p) for p in problems[:4]), title="presets", severity="error", markup=False
            )
            return
        self.chain_screen.close_form()  # its part choices came from the old library
        self.recheck()


def build_app(chain_path: str | Path | None = None, extra_preset_dirs: tuple[str, ...] = ()) -> RailroomApp:
    """The app on a chain file (the built-in demo when None); on the problems screen when the
    file cannot be opened."""
    return RailroomApp(open_chain(chain_path, tuple(str(d) for d in extra_preset_dirs)))


def run_app(chain_path: str | None, extra_preset_dirs: tuple[str, ...] = ()) -> int:
    app = build_app(chain_path, extra_preset_dirs)
    app.run()
    return app.return_code or 0
