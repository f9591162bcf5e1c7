"""The stage list: one row per stage, with its limiting check and its margin bar; the rows follow
the chain's tree (`from`), branches drawn one level in."""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.widgets import DataTable

from railroom.engine import ChainResult, StageResult, stage_parents, tree_rows
from railroom.engine import margin_words as check_margin_words
from railroom.tui.bars import SHORT_LEGEND, stage_bar

REGIME_STYLES = {"linear": "green", "clipping": "bold red", "saturated": "cyan"}
BAR_LIMITS = (11, 48)


def margin_words(stage: StageResult) -> Text:
    """The engine's limiting check and its margin, as the check command words it."""
    check = stage.limiting
    if check is None:
        return Text("-")
    value = stage.margins[check]
    style = "" if value >= 0 else "bold red"
    return Text(check_margin_words(check, value), style=style)


def regime_words(stage: StageResult) -> Text:
    word = stage.regime_word
    plain = (stage.go and stage.shown_regime != "fed-clipped") or stage.regime == "clipping"
    style = REGIME_STYLES[stage.regime] if plain else "yellow"
    return Text(word, style=style)


# The block's short name, for a narrow window (the detail panel names the block in full).
BLOCK_SHORT = {
    "follower": "follower",
    "noninverting": "non-inv",
    "inverting": "inverting",
    "summing": "summing",
    "difference": "diff",
    "instrumentation": "in-amp",
    "integrator": "integr",
    "comparator": "compare",
    "schmitt": "schmitt",
    "sallen_key_lowpass": "SK low",
    "sallen_key_highpass": "SK high",
    "mfb_lowpass": "MFB low",
    "mfb_bandpass": "MFB band",
    "divider": "divider",
    "rc_lowpass": "RC low",
    "ac_coupling": "AC coupl",
    "adc": "adc",
}
LABELS = ("#", "stage", "block", "part", "regime", "limiting margin")
# "fed-clipped"; "output-high -3.46 V" and the like (a slew margin in V/µs may be longer)
STEADY = {"regime": 12, "limiting margin": 19}  # "fed-clipped!", "output-high -3.46 V"


def column_widths(total: int, cells: list[dict[str, Text]]) -> tuple[dict[str, int], bool]:
    """Words keep their width while they fit. When the window is narrow, what gives way first is
    what the detail panel shows anyway: the part column goes, then blocks take their short names,
    and only then are stage names cut (rows stay told apart by their names). The bar takes what
    is left. Returns the widths (without "part" when it went) and whether blocks are short."""

    def wanted(label: str, key: str | None = None) -> int:
        return max([len(label)] + [c[key or label].cell_len for c in cells])

    widths = {label: wanted(label) for label in LABELS}
    # the words that change as values are typed keep one width, so the columns do not jump
    for label, steady in STEADY.items():
        widths[label] = max(widths[label], steady)
    short = False
    room = total - 3  # the scrollbar and a little air

    def over() -> int:
        return sum(widths.values()) + len(widths) + 1 + BAR_LIMITS[0] - room

    if over() > 0:
        del widths["part"]
    if over() > 0:
        widths["block"], short = wanted("block", "short"), True
    for label, smallest in (("stage", 12), ("block", 5)):
        if over() > 0:
            widths[label] = max(smallest, widths[label] - over())
    widths["rail span"] = min(
        max(room - sum(widths.values()) - len(widths) - 1, BAR_LIMITS[0]), BAR_LIMITS[1]
    )
    return widths, short


def clipped(text: str | Text, width: int) -> Text:
    cell = text.copy() if isinstance(text, Text) else Text(text)
    cell.truncate(width, overflow="ellipsis")
    return cell


class StageList(DataTable):
    """Arrow keys or j/k move; the highlighted stage drives the detail panel."""

    BINDINGS = [
        Binding("j", "cursor_down", "down", show=False, id="stage.down", tooltip="Highlight the next stage"),
        Binding("k", "cursor_up", "up", show=False, id="stage.up", tooltip="Highlight the previous stage"),
    ]

    def __init__(self, **kwargs) -> None:
        super().__init__(cursor_type="row", cell_padding=0, zebra_stripes=True, **kwargs)
        self._result: ChainResult | None = None
        self._width = 0
        self._widths: dict[str, int] = {}
        self._rows: list[list[Text]] = []  # the cells as last shown, row by row
        self._order: list[int] = []  # the 1-based stage shown on each row (signal order)

    def stage_at(self, row: int) -> int:
        """The 1-based stage shown on `row` (rows follow the tree, not always the file)."""
        if not self._order:
            return row + 1
        return self._order[min(max(row, 0), len(self._order) - 1)]

    def row_of(self, index: int) -> int:
        """The row showing stage `index` (1-based)."""
        return self._order.index(index) if index in self._order else index - 1

    def highlight_stage(self, index: int) -> None:
        self.move_cursor(row=self.row_of(index), animate=False)

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
        if result is None:
            return
        row = self.cursor_row
        kept = self.stage_at(row) if len(self._order) == len(result.stages) else None
        tree = tree_rows(stage_parents([stage.stage for stage in result.stages]))
        self._order = [k + 1 for k, _ in tree]
        if kept is not None:  # the same stage stays highlighted when a `from` moves its row
            row = self.row_of(kept)
        stages = [result.stages[k] for k, _ in tree]
        cells = [
            {
                "#": Text(str(stage.index)),
                "stage": Text(prefix + stage.stage.name),
                "block": Text(stage.stage.block),
                "short": Text(BLOCK_SHORT.get(stage.stage.block, stage.stage.block)),
                "part": Text(stage.stage.part or "-"),
                "regime": regime_words(stage),
                "limiting margin": margin_words(stage),
            }
            for stage, (_, prefix) in zip(stages, tree)
        ]
        widths, short = column_widths(self.size.width or 80, cells)
        if short:
            for row_cells in cells:
                row_cells["block"] = row_cells["short"]
        rows = [self._row_cells(stage, row_cells, widths) for stage, row_cells in zip(stages, cells)]
        if not rebuild and self.columns and self._widths == widths and len(rows) == len(self._rows):
            self._update_changed(rows)
            if row != self.cursor_row:
                self.move_cursor(row=row, animate=False)
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

    def _row_cells(
        self, stage: StageResult, row_cells: dict[str, Text], widths: dict[str, int]
    ) -> list[Text]:
        # the op amp inside the stage with the least room, with its input's range
        assert self._result is not None  # rows are made only from a result
        bar = stage_bar(self._result.chain, stage, width=widths["rail span"])
        return [
            clipped(row_cells[label], width) for label, width in widths.items() if label != "rail span"
        ] + [bar]

    def _update_changed(self, rows: list[list[Text]]) -> None:
        """Same rows and columns: touch only the cells whose words or colours changed (every
        DataTable update re-renders the visible rows, so an unchanged result costs nothing)."""
        for index, (old, new) in enumerate(zip(self._rows, rows), start=1):
            for label, before, after in zip(self._widths, old, new):
                if before != after:
                    self.update_cell(str(index), label, after)
        self._rows = rows
