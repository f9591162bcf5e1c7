"""The level view: every stage's worst-case output span against its window, on one common axis,
so a glance down the chain shows where the signal comes close to a rail."""

from __future__ import annotations

from rich.text import Text
from textual.containers import VerticalScroll
from textual.widgets import Static

from railroom.engine import VOLTAGE_CHECKS, ChainResult, format_si
from railroom.tui.bars import LEGEND, OFF_RAILS, legend, margin_bar

LABEL = 18
NUMBERS = 22


def common_axis(result: ChainResult) -> tuple[float, float]:
    lows, highs = [], []
    for stage in result.stages:
        rails = result.chain.rails_for(stage.stage)
        lows += [rails.negative_range[0], stage.measure.output[0]]
        highs += [rails.positive_range[1], stage.measure.output[1]]
    low, high = min(lows), max(highs)
    return (low, high) if high > low else (low, low + 1.0)


def closest_approach(result: ChainResult) -> Text:
    """The smallest voltage margin in the chain, as the engine computed it."""
    found = [
        (s.margins[c], c, s)
        for s in result.stages
        for c in VOLTAGE_CHECKS
        # the signal's own levels: op amps' outputs, and a converter input's window (no op amp)
        if (c.startswith("output") or not s.measure.opamps) and c in s.margins
    ]
    if not found:
        return Text("")
    margin, check, stage = min(found, key=lambda item: item[0])
    text = Text("closest to a limit: ")
    text.append(f"stage {stage.index} ")
    text.append(stage.stage.name)
    text.append(f", {check} {format_si(margin, 'V')}", style="bold red" if margin < 0 else "bold")
    return text


def axis_line(low: float, high: float, width: int) -> Text:
    left, right = format_si(low, "V"), format_si(high, "V")
    gap = max(width - len(left) - len(right), 1)
    return Text(" " * (LABEL + 1) + left + " " * gap + right, style="dim")


def level_picture(result: ChainResult, width: int) -> Text:
    bar_width = max(width - LABEL - NUMBERS - 3, 10)
    low, high = common_axis(result)
    picture = Text()
    for stage in result.stages:
        rails = result.chain.rails_for(stage.stage)
        name = Text(f"{stage.index:>2} ") + Text(stage.stage.name)
        name.truncate(LABEL, overflow="ellipsis", pad=True)
        picture.append_text(name)
        picture.append(" ")
        amp = stage.measure.opamps[0] if stage.measure.opamps else None
        picture.append_text(
            margin_bar(
                (rails.negative_range[0], rails.positive_range[1]),
                stage.measure.window,
                stage.measure.output,
                width=bar_width,
                scale=(low, high),
                input_span=amp.input if amp else None,
                input_window=amp.input_window if amp else None,
            )
        )
        out = stage.measure.output
        picture.append(f" {format_si(out[0], 'V'):>9} ..{format_si(out[1], 'V'):>9}\n")
    picture.append_text(axis_line(low, high, bar_width))
    picture.append("\n")
    picture.append_text(closest_approach(result))
    picture.append("\n" + LEGEND + "   " + legend((OFF_RAILS,)), style="dim")
    return picture


class LevelView(VerticalScroll):
    can_focus = True

    def compose(self):
        yield Static(id="level-body")

    def on_mount(self) -> None:
        self.border_title = "levels along the chain"
        self._result: ChainResult | None = None

    def show(self, result: ChainResult) -> None:
        self._result = result
        width = self.scrollable_content_region.width or 78
        self.query_one("#level-body", Static).update(level_picture(result, width))

    def on_resize(self) -> None:
        if self._result is not None:
            self.show(self._result)
