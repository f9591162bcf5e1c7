"""The margin bar: a stage's rail span drawn in characters that read without colour.

    ▓  beyond the part's reach (between a rail and the allowed window)
    ─  inside the window, not reached by the signal
    █  the worst-case signal span, inside the window
    X  the worst-case span past the window: the overshoot
    ┊  0 V, where it lies inside the span drawn
    ·  outside this stage's rails (only on a common scale shared by several stages)

Rich only (no Textual): the `check` command draws the same bar.
"""
from __future__ import annotations

from rich.text import Text

LEGEND = "▓ beyond reach   ─ free window   █ worst-case span   X past the window   ┊ 0 V"
SHORT_LEGEND = "▓ out of reach  ─ window  █ span  X overshoot  ┊ 0 V"


def margin_bar(rails: tuple[float, float], window: tuple[float, float] | None,
               span: tuple[float, float], width: int = 24, colour: bool = True,
               scale: tuple[float, float] | None = None) -> Text:
    """`scale` draws on a common axis (the level view); by default the axis is this stage's rails."""
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
        if in_span and (a < window[0] - 1e-12 or b > window[1] + 1e-12) and not (
                a >= window[0] and b <= window[1]):
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
    text = Text()
    for char, style in cells:
        text.append(char, style=style if colour else "")
    return text
