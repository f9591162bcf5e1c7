"""railroom's own commands in the command palette (:): every key's action, open a part preset,
switch the method, jump to a stage by name. The framework's stock commands stay beside them."""

from __future__ import annotations

from typing import TYPE_CHECKING

from collections.abc import Callable
from functools import partial

from rich.text import Text
from textual.binding import Binding
from textual.command import DiscoveryHit, Hit, Hits, Provider

from railroom.engine import METHODS

if TYPE_CHECKING:
    from railroom.tui.app import RailroomApp

METHOD_WORDS = {
    "corners": "corners (worst case at every tolerance corner)",
    "rss": "rss (root sum of squares of the spreads)",
    "montecarlo": "Monte Carlo (random draws)",
}


class RailroomCommands(Provider):
    """The commands of the room on screen, found by their words."""

    if TYPE_CHECKING:  # the railroom app, for the type checker; Provider's own `app` at run time

        @property
        def app(self) -> RailroomApp: ...

    def commands(self) -> list[tuple[str, Callable[[], object], str | None]]:
        """(words, what runs, help) for every command that makes sense now."""
        from railroom.tui.screens.chain import ChainScreen

        app = self.app
        found: list[tuple[str, Callable[[], object], str | None]] = []
        chain = next((s for s in app.screen_stack if isinstance(s, ChainScreen)), None)
        rooms = [(app, app.BINDINGS)] + ([(chain, ChainScreen.BINDINGS)] if chain else [])
        for owner, bindings in rooms:
            for binding in bindings:
                if not isinstance(binding, Binding) or not binding.id or binding.action == "command_palette":
                    continue
                if owner is app and not app.check_action(binding.action, ()):
                    continue
                keys = binding.key_display or binding.key.replace("question_mark", "?")
                found.append(
                    (
                        f"{binding.tooltip or binding.description}  [{keys}]",
                        partial(app.run_action, binding.action, owner),
                        None,
                    )
                )
        session = app.session
        if session is None or chain is None:
            return found
        for method in METHODS:
            found.append(
                (
                    f"method: {METHOD_WORDS.get(method, method)}",
                    partial(app.switch_method, method),
                    "switch the check's method",
                )
            )
        for index, stage in enumerate(session.chain.stages, start=1):
            found.append(
                (
                    f"stage {index}: {stage.name}",
                    partial(chain.jump_to_stage, index),
                    f"highlight the stage ({stage.block})",
                )
            )
        for part_id in session.part_ids:
            found.append(
                (f"preset: {part_id}", partial(app.open_preset, part_id), "open the part presets on this one")
            )
        return found

    async def discover(self) -> Hits:
        for words, run, help_words in self.commands():
            yield DiscoveryHit(Text(words), run, text=words, help=help_words)

    async def search(self, query: str) -> Hits:
        matcher = self.matcher(query)
        for words, run, help_words in self.commands():
            score = matcher.match(words)
            if score > 0:
                yield Hit(score, matcher.highlight(words), run, text=words, help=help_words)
