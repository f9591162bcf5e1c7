"""The stage list: one row per stage, with its limiting check and its margin bar."""
from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.widgets import DataTable

from railroom.engine.results import ChainResult, StageResult
from railroom.engine.values import format_si
from railroom.tui.bars import SHORT_LEGEND, margin_bar

MARGIN_UNITS = {"slew": "V/s", "current": "A"}
REGIME_STYLES = {"linear": "green", "clipping": "bold red", "saturated": "cyan"}
BAR_LIMITS = (12, 48)


def margin_words(stage: StageResult) -> Text:
    """The engine's limiting check and its margin, as the check command words it."""
    check = stage.limiting
    if check is None:
        return Text("-")
    value = stage.margins[check]
    style = "" if value >= 0 else "bold red"
    return Text(f"{check} {format_si(value, MARGIN_UNITS.get(check, 'V'))}", style=style)


def regime_words(stage: StageResult) -> Text:
    word = stage.regime_word
    style = REGIME_STYLES[stage.regime] if stage.go or stage.regime == "clipping" else "yellow"
    return Text(word, style=style)


def column_widths(total: int, cells: list[list[Text]]) -> dict[str, int]:
    """Words keep their width while they fit; when the window is narrow the part, block and name
    columns give way first (the detail panel shows them whole), and the bar takes what is left."""
    labels = ("#", "stage", "block", "part", "regime", "limiting margin")
    wanted = [max([len(label)] + [c[i].cell_len for c in cells]) for i, label in enumerate(labels)]
    widths = dict(zip(labels, wanted))
    room = total - len(labels) - 3                    # one space after each column, scrollbar
    for label, smallest in (("part", 8), ("block", 8), ("stage", 12)):
        over = sum(widths.values()) + BAR_LIMITS[0] - room
        if over > 0:
            widths[label] = max(smallest, widths[label] - over)
    widths["rail span"] = min(max(room - sum(widths.values()), BAR_LIMITS[0]), BAR_LIMITS[1])
    return widths


def clipped(text: str | Text, width: int) -> Text:
    cell = text.copy() if isinstance(text, Text) else Text(text)
    cell.truncate(width, overflow="ellipsis")
    return cell


class StageList(DataTable):
    """Arrow keys or j/k move; the highlighted stage drives the detail panel."""

    BINDINGS = [
        Binding("j", "cursor_down", "down", show=False, id="stage.down",
                tooltip="Highlight the next stage"),
        Binding("k", "cursor_up", "up", show=False, id="stage.up",
                tooltip="Highlight the previous stage"),
    ]

    def __init__(self, **kwargs) -> None:
        super().__init__(cursor_type="row", cell_padding=0, zebra_stripes=True, **kwargs)
        self._result: ChainResult | None = None
        self._width = 0
        self._widths: dict[str, int] = {}
        self._rows: list[list[Text]] = []            # the cells as last shown, row by row

    def on_mount(self) -> None:
        self.border_subtitle = SHORT_LEGEND

    def show(self, result: ChainResult) -> None:
        self._result = result
        self._fill(rebuild=self.size.width != self._width)

    def on_resize(self) -> None:
        if self._result is not None and self.size.width != self._width:
            self._fill(rebuild=True)

    def _fill(self, rebuild: bool) -> None:
        result = self._result
        row = self.cursor_row
        cells = [[Text(str(stage.index)), Text(stage.stage.name), Text(stage.stage.block),
                  Text(stage.stage.part or "-"), regime_words(stage), margin_words(stage)]
                 for stage in result.stages]
        widths = column_widths(self.size.width or 80, cells)
        rows = [self._row_cells(stage, row_cells, widths)
                for stage, row_cells in zip(result.stages, cells)]
        if not rebuild and self.columns and self._widths == widths and len(rows) == len(self._rows):
            self._update_changed(rows)
            return
        if rebuild or not self.columns or self._widths != widths:
            self.clear(columns=True)
            for label, width in widths.items():
                self.add_column(label, width=width + 1, key=label)
            self._width, self._widths = self.size.width, widths
        else:
            self.clear()
        for index, fitted in enumerate(rows, start=1):
            self.add_row(*fitted, key=str(index))
        self._rows = rows
        if result.stages:
            self.move_cursor(row=min(max(row, 0), len(result.stages) - 1), animate=False)

    def _row_cells(self, stage: StageResult, row_cells: list[Text], widths: dict[str, int]) -> list[Text]:
        rails = self._result.chain.rails_for(stage.stage)
        span, window, _ = stage.drawn        # the op amp inside the stage with the least room
        bar = margin_bar((rails.negative_range[0], rails.positive_range[1]),
                         window, span, width=widths["rail span"])
        return [clipped(cell, width) for cell, width in zip(row_cells, widths.values())] + [bar]

    def _update_changed(self, rows: list[list[Text]]) -> None:
        """Same rows and columns: touch only the cells whose words or colours changed (every
        DataTable update re-renders the visible rows, so an unchanged result costs nothing)."""
        for index, (old, new) in enumerate(zip(self._rows, rows), start=1):
            for label, before, after in zip(self._widths, old, new):
                if before != after:
                    self.update_cell(str(index), label, after)
        self._rows = rows
