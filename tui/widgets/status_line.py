"""The status line: chain title, file, method and the verdict in words, with the statistical run."""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.containers import Vertical
from textual.widgets import Static

from railroom.engine import ChainResult, failing_draws, wilson

# the methods as a person says them (the file's words are corners, rss, montecarlo)
METHOD_WORDS = {"corners": "corners", "rss": "rss", "montecarlo": "Monte Carlo"}


def verdict_words(result: ChainResult) -> str:
    if result.go:
        return "GO"
    return f"NO-GO: {result.failing} of {len(result.stages)} stages fail (marked !)"


def short_yield(chain_yield: float, samples: int) -> str:
    """The yield for the status line, with its 95 % interval (railroom check says it in full, with
    the small-probability estimate): "yield 99.20% (95 %: 98.9% .. 99.4%)", or with no failing
    draw "no failure in 10,000 draws"."""
    failures = failing_draws(chain_yield, samples)
    if failures == 0:
        return f"no failure in {samples:,} draws"
    if failures >= samples:
        return f"every one of {samples:,} draws leaves the linear regime"
    low, high = wilson(samples - failures, samples)
    return f"yield {chain_yield:.2%} (95 %: {low:.2%} .. {high:.2%})"


def running_words(method: str, fraction: float | None) -> str:
    """ "Monte Carlo running (42 %)" while the file's own method runs behind the corners result."""
    words = f"{METHOD_WORDS.get(method, method)} running"
    return words + (f" ({fraction:.0%})".replace("%", " %") if fraction is not None else "...")


class StatusLine(Vertical):
    """Two lines: what is open and its verdict; then method, headroom and any running method."""

    def __init__(self, **kwargs) -> None:
        super().__init__(**kwargs)
        self._facts = (Text(), "", Text())
        self._method_running: str | None = None  # the method running in the background
        self._fraction: float | None = None

    def compose(self) -> ComposeResult:
        yield Static(id="status-verdict")
        yield Static(id="status-facts")

    def show(self, result: ChainResult, file_label: str, modified: bool, note: str = "") -> None:
        verdict = Text(no_wrap=True, overflow="ellipsis")
        verdict.append(verdict_words(result), style="bold green" if result.go else "bold red")
        verdict.append("  ")
        verdict.append(result.chain.title, style="bold")  # user text: a Text, never markup
        # one line each, whatever they say (railroom.tcss): no layout pass for a new verdict
        self.query_one("#status-verdict", Static).update(verdict, layout=False)
        head = Text(no_wrap=True, overflow="ellipsis")
        head.append(file_label)
        if modified:
            head.append(" [modified]", style="bold yellow")
        tail = Text()
        if result.samples and result.chain_yield is None:
            tail.append(f" ({result.samples:,} draws)")
        if result.chain_yield is not None:
            tail.append(f"  {short_yield(result.chain_yield, result.samples or 0)}")
        if result.headroom_db is not None:
            tail.append(f"  headroom {result.headroom_db:+.2f} dB")
        if note:
            tail.append(f"  {note}", style="italic")
        self._facts = (head, METHOD_WORDS.get(result.method, result.method), tail)
        self._paint()

    def _paint(self) -> None:
        head, method, tail = self._facts
        facts = head.copy()
        if self._method_running is not None:
            # the corners result is on screen while the file's own method runs
            facts.append(f"  {running_words(self._method_running, self._fraction)}", style="italic")
            facts.append(f"; {method} shown")
        else:
            facts.append(f"  method {method}")
        facts.append_text(tail)
        self.query_one("#status-facts", Static).update(facts, layout=False)

    def running(self, method: str | None) -> None:
        """`method` runs in the background (None: nothing runs); the corners result is shown."""
        self._method_running, self._fraction = method, None
        self._paint()

    def progress(self, fraction: float) -> None:
        """Share of Monte Carlo draws done."""
        self._fraction = fraction
        self._paint()
