"""The margin bar: a stage's rail span drawn in characters that read without colour.

    ▓  out of reach: between a rail and the part's output swing window
    ─  room: inside the window, not reached by the signal
    █  signal: the worst-case output span, inside the window
    X  clips: the worst-case output span past the window (the overshoot)
    [ ]  input limits: the ends of the + input's common-mode range, where they fall on the axis
    x  input over: the + input's worst-case span past its common-mode range
    ┊  0 V, where it lies inside the span drawn
    ·  off rails: outside this stage's rails (only on a common scale shared by several stages)

A regime word ending in "!" ("linear!", "clipping!") is a stage that fails GO (its margin is
short of the one the conditions ask for, or it clips).

Rich only (no Textual): the `check` command, the stage list, the level view and the help all take
their legend words from MARKS, so they say the same thing.
"""

from __future__ import annotations

from rich.text import Text

MARKS = (
    ("▓", "out of reach"),
    ("─", "room"),
    ("█", "signal"),
    ("X", "clips"),
    ("[ ]", "input limits"),
    ("x", "input over"),
    ("┊", "0 V"),
)
OFF_RAILS = ("·", "off rails")
FAILS_GO = ("!", "fails GO")


def legend(marks=MARKS + (FAILS_GO,), gap: str = "   ") -> str:
    return gap.join(f"{mark} {words}" for mark, words in marks)


LEGEND = legend()
# the same words, closer together and without the 0 V mark, for the stage list's border at 80
# columns (the status line says "marked !" beside a NO-GO verdict)
SHORT_LEGEND = legend(MARKS[:-1], gap="  ")


def margin_bar(
    rails: tuple[float, float],
    window: tuple[float, float] | None,
    span: tuple[float, float],
    width: int = 24,
    colour: bool = True,
    scale: tuple[float, float] | None = None,
    input_span: tuple[float, float] | None = None,
    input_window: tuple[float, float] | None = None,
) -> Text:
    """`scale` draws on a common axis (the level view); by default the axis is this stage's rails.
    `input_span` and `input_window` (the + input's common-mode span and range) add the input's
    marks: its limits as [ and ], the part of its span past them as x."""
    low, high = scale or (min(rails[0], span[0]), max(rails[1], span[1]))
    if high <= low:
        high = low + 1.0
    step = (high - low) / width
    window = window or (low, high)
    cells = []
    for i in range(width):
        a, b = low + i * step, low + (i + 1) * step
        inside_window = b > window[0] and a < window[1]
        in_span = b > span[0] and a < span[1]
        if (
            in_span
            and (a < window[0] - 1e-12 or b > window[1] + 1e-12)
            and not (a >= window[0] and b <= window[1])
        ):
            past = (span[0] < window[0] and a < window[0]) or (span[1] > window[1] and b > window[1])
            cells.append(("X", "bold red") if past else ("█", "green"))
        elif in_span:
            cells.append(("█", "green"))
        elif inside_window:
            cells.append(("┊", "dim") if a <= 0.0 < b else ("─", "dim"))
        elif b <= rails[0] or a >= rails[1]:
            cells.append(("·", "dim"))
        else:
            cells.append(("▓", "grey50"))
    if input_span is not None and input_window is not None:
        input_marks(cells, low, step, input_span, input_window)
    text = Text()
    for char, style in cells:
        text.append(char, style=style if colour else "")
    return text


def input_marks(
    cells: list, low: float, step: float, span: tuple[float, float], window: tuple[float, float]
) -> None:
    """The input's marks over the output's cells: x where the input span passes its range (over
    everything), [ and ] at the range's ends (over room and out-of-reach cells only)."""
    for i, (char, _) in enumerate(cells):
        a, b = low + i * step, low + (i + 1) * step
        over = (span[1] > window[1] and b > window[1] and a < span[1]) or (
            span[0] < window[0] and a < window[0] and b > span[0]
        )
        if over:
            cells[i] = ("x", "bold red")
        elif char in "─▓┊" and a <= window[0] < b:
            cells[i] = ("[", "bold")
        elif char in "─▓┊" and a < window[1] <= b:
            cells[i] = ("]", "bold")


def stage_bar(chain, stage, width: int = 24, colour: bool = True) -> Text:
    """A stage's bar: the op amp with the least room inside it (StageResult.drawn), with that op
    amp's input range and span."""
    rails = chain.rails_for(stage.stage)
    span, window, label = stage.drawn
    amps = stage.measure.opamps
    amp = next((a for a in amps if a.label == label), amps[0] if amps else None)
    return margin_bar(
        (rails.negative_range[0], rails.positive_range[1]),
        window,
        span,
        width=width,
        colour=colour,
        input_span=amp.input if amp is not None else None,
        input_window=amp.input_window if amp is not None else None,
    )
