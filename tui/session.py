"""The chain under edit in the interface: its file, its text, the last good result. No Textual here.

Every edit is a function of the text (engine/formats/chain_editing.py); an edit is kept only when the one chain
loader and the part library accept the edited text, so the screen always shows a checked chain.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from collections.abc import Callable

from railroom.engine import (
    Chain,
    ChainResult,
    Fingerprint,
    InputError,
    Library,
    Problem,
    analyse,
    chain_from_text,
    check_parts,
    demo_file,
    fingerprint,
    load_checked,
    load_library,
    search_order,
    write_atomic,
)


def demo_path() -> Path:
    return demo_file("pump_vibration")


@dataclass
class Session:
    """One open chain file. `text` is what the user sees; `saved_text` what the file holds."""

    path: Path
    read_only: bool
    text: str
    chain: Chain
    library: Library
    extra_preset_dirs: tuple[str, ...] = ()
    saved_text: str = ""
    known_print: Fingerprint | None = None  # the file as we last read or wrote it
    ignored_print: Fingerprint | None = None  # a newer file the user chose not to load
    disk_problems: list[Problem] = field(default_factory=list)  # the file on disk does not load
    drafts: dict[str, dict[str, str]] = field(default_factory=dict)  # form -> field -> bad text
    history: list[str] = field(default_factory=list)
    _last_step: object = None  # the field the last kept keystroke was in

    @classmethod
    def open(cls, path: str | Path | None, extra_preset_dirs: tuple[str, ...] = ()) -> Session:
        """Load a chain (the built-in demo, read-only, when path is None); raises InputError."""
        file = Path(path) if path is not None else demo_path()
        chain, library = load_checked(str(file), extra_preset_dirs)
        text = file.read_text(encoding="utf-8-sig")  # a byte-order mark is not text
        return cls(
            path=file,
            read_only=path is None,
            text=text,
            chain=chain,
            library=library,
            extra_preset_dirs=extra_preset_dirs,
            saved_text=text,
            known_print=fingerprint(file),
        )

    @property
    def modified(self) -> bool:
        return self.text != self.saved_text

    @property
    def part_ids(self) -> list[str]:
        return sorted(self.library.parts)

    def corners(self) -> ChainResult:
        """Worst case by corners, whatever method the file asks for, without the design aids
        (sensitivity and fixes re-run the chain many times): the at-once answer."""
        return analyse(self.chain, self.library.parts, method="corners", design_aids=False, headroom=False)

    def edit(self, change: Callable[[str], str]) -> list[Problem]:
        """Apply an edit of the text; keep it only when it loads. Returns the problems, if any."""
        prepared = self.prepare(self.text, change)
        if isinstance(prepared, list):
            return prepared
        self.commit(*prepared)
        return []

    def prepare(self, text: str, change: Callable[[str], str]) -> tuple[str, Chain, Library] | list[Problem]:
        """The edited text with its loaded chain and library, or the problems; changes nothing,
        so a worker thread may run it while the user goes on typing."""
        try:
            edited = change(text)
            chain = chain_from_text(edited, str(self.path))
            library = self._library_for(chain)
            check_parts(chain, library.parts)
        except InputError as err:
            return list(err.problems)
        except (ValueError, IndexError, KeyError, RecursionError) as err:
            return [Problem(str(self.path), None, "(edit)", str(err))]
        return edited, chain, library

    def commit(self, text: str, chain: Chain, library: Library, step: object = None) -> None:
        """Keep a prepared edit. Successive edits with the same `step` (keystrokes in one field)
        are one step for undo."""
        if text != self.text and (step is None or step != self._last_step):
            self.history.append(self.text)
        self._last_step = step
        self.text, self.chain, self.library = text, chain, library

    def draft_lines(self) -> list[str]:
        """The values typed into forms that are not in the chain (they have a problem, or the
        field was emptied), as "stage.2 rf: '4q7'"; saving writes the chain without them."""
        return [
            f"{form} {key}: {text!r}" for form, fields in self.drafts.items() for key, text in fields.items()
        ]

    def undo(self) -> bool:
        if not self.history:
            return False
        text = self.history.pop()
        self._last_step = None
        self.chain = chain_from_text(text, str(self.path))
        self.library = self._library_for(self.chain)
        self.text = text
        return True

    def reload_library(self) -> list[Problem]:
        """Read the preset folders again (a preset changed); keep the old library on a problem."""
        library = load_library(search_order(self.chain.preset_dirs, self.extra_preset_dirs))
        try:
            check_parts(self.chain, library.parts)
        except InputError as err:
            return list(err.problems)
        self.library = library
        return []

    def _library_for(self, chain: Chain) -> Library:
        if chain.preset_dirs == self.chain.preset_dirs:
            return self.library
        return load_library(search_order(chain.preset_dirs, self.extra_preset_dirs))

    def changed_on_disk(self) -> bool:
        """True when someone else wrote the file since we read or saved it, and the user has not
        yet been asked about this version."""
        now = fingerprint(self.path)
        return not self.read_only and now != self.known_print and now != self.ignored_print

    def disk_is_newer(self) -> bool:
        """True when saving now would overwrite a version we never read."""
        return not self.read_only and fingerprint(self.path) != self.known_print

    def save(self, path: Path | None = None) -> None:
        """Write the text atomically (to `path` for save-as); the demo itself is never written."""
        target = Path(path) if path is not None else self.path
        if self.read_only and path is None:
            raise PermissionError("the built-in demo is read-only: save it under a new name")
        if target != self.path:
            self.chain = chain_from_text(self.text, str(target))
            self.library = self._library_for(self.chain)
        write_atomic(target, self.text, backup=True)
        self.path, self.read_only, self.saved_text = target, False, self.text
        self.disk_problems = []
        self.known_print = fingerprint(target)

    def reload(self) -> list[Problem]:
        """Read the file again, dropping unsaved edits; on a problem keep everything as it was."""
        try:
            chain, library = load_checked(str(self.path), self.extra_preset_dirs)
            text = self.path.read_text(encoding="utf-8-sig")
        except InputError as err:
            # not read: the watcher stops asking about this version, but saving still asks before
            # overwriting it (it holds someone's edit, perhaps half done)
            self.ignored_print = fingerprint(self.path)
            self.disk_problems = list(err.problems)
            return list(err.problems)
        self.disk_problems = []
        self._last_step = None
        self.history.append(self.text)
        self.text = self.saved_text = text
        self.chain, self.library = chain, library
        self.known_print = fingerprint(self.path)
        self.drafts.clear()
        return []

    def keep_mine(self) -> None:
        """The user chose to keep their edits: stop asking about this version of the file
        (saving still asks before overwriting it)."""
        self.ignored_print = fingerprint(self.path)

    def preset_warnings(self) -> list[str]:
        """What the user should hear about the preset folders on opening: a folder named by the
        chain or by --presets that is not there, and preset files with problems (their good parts
        are still used; a stage that needs a broken part stops the load with the problem itself)."""
        named = (*self.chain.preset_dirs, *self.extra_preset_dirs)
        warnings = [f"preset folder not found: {d}" for d in named if not Path(d).is_dir()]
        warnings += [str(p) for p in self.library.problems]
        return warnings


@dataclass
class WaitingFile:
    """A chain file that cannot be opened (yet): missing, unreadable or with problems. It is
    watched, with the preset files, and opened as soon as it loads. No Textual here either."""

    path: Path | None  # None: the built-in demo
    extra_preset_dirs: tuple[str, ...]
    problems: tuple[Problem, ...] = ()
    seen: tuple = ()  # the prints of the watched files at the last try

    @property
    def file(self) -> Path:
        return self.path if self.path is not None else demo_path()

    @property
    def missing(self) -> bool:
        return not self.file.exists()

    def _prints(self) -> tuple:
        """The chain file, every preset file of the folders it would search, and every file a
        problem names (a preset folder named only in the broken chain is watched through these)."""
        files = {self.file, *(Path(p.file) for p in self.problems)}
        for folder in search_order((), self.extra_preset_dirs):
            if folder.is_dir():
                files.update(folder.glob("*.toml"))
        return tuple(sorted((str(f), fingerprint(f)) for f in files))

    def changed_on_disk(self) -> bool:
        return self._prints() != self.seen

    def try_open(self) -> Session | None:
        """The session when the file loads now; else None, with the problems brought up to date."""
        try:
            return Session.open(self.path, self.extra_preset_dirs)
        except InputError as err:
            self.problems = err.problems
            return None
        finally:
            self.seen = self._prints()

    def start_from_demo(self) -> None:
        """Write the built-in demo under the missing file's name (never over an existing file)."""
        if self.path is None or self.path.exists():
            raise FileExistsError(f"{self.file} exists: not overwritten")
        write_atomic(self.path, demo_path().read_text(encoding="utf-8"))


def open_chain(path: str | Path | None, extra_preset_dirs: tuple[str, ...] = ()) -> Session | WaitingFile:
    """The session on a chain file, or the file to wait for with the problems that stop it."""
    waiting = WaitingFile(Path(path) if path is not None else None, extra_preset_dirs)
    return waiting.try_open() or waiting
