"""The status line: chain title, file, method and the verdict in words, with the statistical run."""
from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.widgets import ProgressBar, Static

from railroom.engine.results import ChainResult


def verdict_words(result: ChainResult) -> str:
    if result.go:
        return "GO"
    return f"NO-GO: {result.failing} of {len(result.stages)} stages fail (marked !)"


class StatusLine(Vertical):
    """Two lines: what is open and its verdict; then method, headroom and any running method."""

    def compose(self) -> ComposeResult:
        yield Static(id="status-verdict")
        with Horizontal(id="status-facts-row"):
            yield Static(id="status-facts")
            yield ProgressBar(total=None, show_eta=False, show_percentage=False,
                              id="status-progress")

    def on_mount(self) -> None:
        self.query_one("#status-progress").display = False

    def show(self, result: ChainResult, file_label: str, modified: bool, note: str = "") -> None:
        verdict = Text(no_wrap=True, overflow="ellipsis")
        verdict.append(verdict_words(result), style="bold green" if result.go else "bold red")
        verdict.append("  ")
        verdict.append(result.chain.title, style="bold")       # user text: a Text, never markup
        self.query_one("#status-verdict", Static).update(verdict)
        facts = Text(no_wrap=True, overflow="ellipsis")
        facts.append(file_label)
        if modified:
            facts.append(" [modified]", style="bold yellow")
        facts.append(f"  method {result.method}")
        if result.samples:
            facts.append(f" ({result.samples} draws)")
        if result.chain_yield is not None:
            facts.append(f"  yield {result.chain_yield:.4%}")
        if result.headroom_db is not None:
            facts.append(f"  headroom {result.headroom_db:+.2f} dB")
        if note:
            facts.append(f"  {note}", style="italic")
        self.query_one("#status-facts", Static).update(facts)

    def running(self, busy: bool) -> None:
        bar = self.query_one("#status-progress", ProgressBar)
        bar.display = busy
        if busy:
            bar.update(total=None, progress=0)      # pulses until the method reports progress

    def progress(self, fraction: float) -> None:
        """Share of Monte Carlo draws done."""
        self.query_one("#status-progress", ProgressBar).update(total=1.0, progress=fraction)
