"""The level picture of a chain: an SVG or PNG for design reviews (matplotlib, Agg backend).

Top: the level diagram, one row per stage on a common voltage axis: the rails the part can reach
(grey, ends marked), the output window (pale green) with the worst-case output span inside it
(blue; red where it passes the window; for a block of several op amps, the one with the least
room to its window, as the interface's bar), below it the input common-mode window (pale orange
outline) with the + input's span (orange) of the op amp with the least input room, and beside
each row its least output and input margin in volts. Below: for every stage whose own gain moves
across the band (engine/walks/levels.py), its worst-case output span against frequency with the window
and the rails. In an SVG each stage's row is one group with id `stage-N`, each band panel one
with id `stage-N-band`; text is drawn as paths (no font is named or fetched) and the file has no
date, so the same chain gives the same file.

matplotlib is imported only here, and only when a picture is drawn.
"""

from __future__ import annotations

from pathlib import Path
from collections.abc import Mapping

from railroom.engine.walks.levels import StageLevels, frequency_levels
from railroom.engine.circuit.model import Part
from railroom.engine.verdict.results import ChainResult, StageResult
from railroom.engine.formats.values import format_si, visible

SUFFIXES = (".svg", ".png")
COLOURS = {
    "reach": "#d9d9d9",
    "window": "#d8f0d0",
    "span": "#2f6db5",
    "past": "#c0392b",
    "input_window": "#e8a33c",
    "input": "#e08a00",
    "rail": "#555555",
}


def voltage_margins(stage: StageResult) -> tuple[float | None, float | None]:
    """(least output margin, least input margin), V; None where the stage has no such check."""
    out = [stage.margins[c] for c in ("output-high", "output-low") if c in stage.margins]
    inp = [stage.margins[c] for c in ("input-high", "input-low") if c in stage.margins]
    return (min(out) if out else None, min(inp) if inp else None)


def margin_words(stage: StageResult) -> str:
    """'out 128 mV, in 1.35 V; fails: slew' (the failing checks of a NO-GO stage)."""
    out, inp = voltage_margins(stage)
    words = []
    if out is not None:
        words.append(f"out {format_si(out, 'V')}")
    if inp is not None:
        words.append(f"in {format_si(inp, 'V')}")
    text = ", ".join(words) or "no voltage check"
    failing = [r for r in stage.reasons if r != "fed-clipped"]
    return text + (f"\nfails: {', '.join(failing)}" if failing else "")


def tightest_input(stage: StageResult):
    amps = stage.measure.opamps
    if not amps:
        return None
    return min(amps, key=lambda a: min(a.input_window[1] - a.input[1], a.input[0] - a.input_window[0]))


def _grouped(figure, axes, gid: str, artists: list):
    """One artist drawing `artists` inside one SVG group <g id=gid>."""
    from matplotlib.artist import Artist

    class Group(Artist):
        def draw(self, renderer):
            renderer.open_group(gid, gid=gid)
            for artist in artists:
                artist.draw(renderer)
            renderer.close_group(gid)

    group = Group()
    for artist in artists:
        artist.set_figure(figure)
        artist.axes = axes
        if not artist.is_transform_set():
            artist.set_transform(axes.transData)
        if artist.get_clip_on():
            artist.set_clip_path(axes.patch)
    axes.add_artist(group)
    return group


def _row(result: ChainResult, stage: StageResult, y: float, figure, axes, text_x: float, least: float):
    """One stage's row; `least` is the narrowest span drawn (V), so a point span shows."""
    from matplotlib.patches import Rectangle
    from matplotlib.text import Text

    output, window, _ = stage.drawn  # the op amp with the least room to its window
    parts: list = []
    if stage.stage.part is not None:
        rails = result.chain.rails_for(stage.stage)
        low, high = rails.negative_range[0], rails.positive_range[1]
        parts.append(Rectangle((low, y - 0.36), high - low, 0.72, color=COLOURS["reach"], lw=0))
        parts += [Rectangle((edge, y - 0.4), 0, 0.8, ec=COLOURS["rail"], lw=1.2) for edge in (low, high)]
    if window is not None:
        parts.append(
            Rectangle((window[0], y - 0.02), window[1] - window[0], 0.34, color=COLOURS["window"], lw=0)
        )
    past = window is not None and (output[0] < window[0] or output[1] > window[1])
    width = max(output[1] - output[0], least)
    centre = (output[0] + output[1]) / 2
    parts.append(
        Rectangle(
            (min(output[0], centre - width / 2), y + 0.04),
            width,
            0.22,
            color=COLOURS["past" if past else "span"],
            lw=0,
        )
    )
    amp = tightest_input(stage)
    if amp is not None:
        lo, hi = amp.input_window
        parts.append(Rectangle((lo, y - 0.3), hi - lo, 0.22, fill=False, ec=COLOURS["input_window"], lw=1.0))
        width = max(amp.input[1] - amp.input[0], least)
        centre = (amp.input[0] + amp.input[1]) / 2
        parts.append(
            Rectangle(
                (min(amp.input[0], centre - width / 2), y - 0.26), width, 0.14, color=COLOURS["input"], lw=0
            )
        )
    label = Text(
        text_x,
        y,
        margin_words(stage),
        va="center",
        ha="left",
        fontsize=8,
        color="#000000" if stage.go else COLOURS["past"],
        transform=axes.get_yaxis_transform(),
    )
    label.set_clip_on(False)
    parts.append(label)
    _grouped(figure, axes, f"stage-{stage.index}", parts)


def _band_panel(result: ChainResult, stage: StageResult, levels: StageLevels, figure, axes):
    from matplotlib.collections import PolyCollection
    from matplotlib.lines import Line2D

    f, lo, hi = levels.freqs, levels.low, levels.high
    verts = [list(zip(f, hi)) + list(zip(f[::-1], lo[::-1]))]
    parts: list = [PolyCollection(verts, facecolors=COLOURS["span"], alpha=0.6, lw=0)]
    m = stage.measure
    ends = [float(lo.min()), float(hi.max())]
    if m.window is not None:
        parts += [Line2D([f[0], f[-1]], [w, w], color="#2e8b2e", lw=1.2) for w in m.window]
        ends += list(m.window)
    if stage.stage.part is not None:
        rails = result.chain.rails_for(stage.stage)
        for rail in (rails.negative_range[0], rails.positive_range[1]):
            parts.append(Line2D([f[0], f[-1]], [rail, rail], color=COLOURS["rail"], lw=0.8, ls=":"))
            ends.append(rail)
    axes.set_xscale("log")
    axes.set_xlim(f[0], f[-1] if f[-1] > f[0] else f[0] * 10)
    pad = 0.05 * (max(ends) - min(ends) or 1.0)
    axes.set_ylim(min(ends) - pad, max(ends) + pad)
    axes.set_title(visible(f"{stage.index} {stage.stage.name}: span across the band", 60), fontsize=8)
    axes.set_xlabel("Hz", fontsize=7)
    axes.set_ylabel("V", fontsize=7)
    axes.tick_params(labelsize=7)
    _grouped(figure, axes, f"stage-{stage.index}-band", parts)


def draw_figure(result: ChainResult, levels: list[StageLevels | None]):
    """The matplotlib Figure (not attached to any window: Agg canvas)."""
    from matplotlib.figure import Figure

    stages = result.stages
    banded = [(s, lv) for s, lv in zip(stages, levels) if lv is not None and lv.frequency_dependent]
    rows = max(len(stages), 1)
    band_rows = (len(banded) + 1) // 2
    height = 1.2 + 0.55 * rows + 2.3 * band_rows
    figure = Figure(figsize=(10, height), dpi=100)
    grid = figure.add_gridspec(
        1 + band_rows,
        2,
        height_ratios=[0.55 * rows + 0.6] + [2.0] * band_rows,
        hspace=0.35 if band_rows else 0.2,
        wspace=0.25,
    )
    axes = figure.add_subplot(grid[0, :])
    _level_axes(result, axes)
    low, high = axes.get_xlim()
    for i, stage in enumerate(stages):
        _row(result, stage, -i, figure, axes, 1.01, 0.004 * (high - low))
    for k, (stage, lv) in enumerate(banded):
        _band_panel(result, stage, lv, figure, figure.add_subplot(grid[1 + k // 2, k % 2]))
    figure.subplots_adjust(left=0.2, right=0.82, top=1 - 0.45 / height, bottom=0.5 / height)
    return figure


def _level_axes(result: ChainResult, axes) -> None:
    from railroom.engine.reports.markdown import axis_span

    low, high = axis_span(result)
    for s in result.stages:
        drawn = s.drawn[0]
        low, high = min(low, drawn[0]), max(high, drawn[1])
        amp = tightest_input(s)
        if amp is not None:
            low, high = min(low, amp.input_window[0]), max(high, amp.input_window[1])
    pad = 0.03 * (high - low)
    axes.set_xlim(low - pad, high + pad)
    count = len(result.stages)
    axes.set_ylim(-count + 0.4, 0.6)
    axes.set_yticks([-i for i in range(count)])
    axes.set_yticklabels([visible(f"{s.index} {s.stage.name}", 28) for s in result.stages], fontsize=8)
    axes.set_xlabel("V", fontsize=8)
    axes.tick_params(axis="x", labelsize=8)
    axes.axvline(0.0, color="#999999", lw=0.6, ls="--")
    verdict = "GO" if result.go else f"NO-GO ({result.failing} of {count} stages fail)"
    axes.set_title(visible(f"{result.chain.title}: {verdict}, {result.method}", 110), fontsize=9, loc="left")


def write_picture(result: ChainResult, parts: Mapping[str, Part], path: str | Path) -> Path:
    """Draw the chain's level picture into `path` (.svg or .png by the suffix), atomically."""
    import io

    from railroom.engine.formats.atomic import write_atomic

    path = Path(path)
    kind = path.suffix.lower()
    if kind not in SUFFIXES:
        raise ValueError(f"{path}: the picture is written as .svg or .png, got {path.suffix!r}")
    import matplotlib
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    with matplotlib.rc_context(
        {"svg.fonttype": "path", "svg.hashsalt": "railroom", "font.family": "DejaVu Sans"}
    ):
        figure = draw_figure(result, frequency_levels(result.chain, parts))
        FigureCanvasAgg(figure)
        buffer = io.BytesIO()
        # no RDF block (its namespaces and a web address) and no date: same chain, same file
        metadata = (
            {"Date": None, "Creator": None, "Format": None, "Type": None}
            if kind == ".svg"
            else {"Software": "railroom"}
        )
        figure.savefig(buffer, format=kind[1:], metadata=metadata)
    data = buffer.getvalue()
    existed = path.exists()
    if kind == ".svg":
        write_atomic(path, strip_doctype(data.decode("utf-8")))
    else:
        write_binary_atomic(path, data)
    if not existed:
        usual_mode(path)
    return path


def usual_mode(path: Path) -> None:
    """A new report or picture gets the mode any new file gets here (the umask's), not the
    private 0600 of the temporary file it was written through: CI jobs hand them on."""
    import os

    mask = os.umask(0)
    os.umask(mask)
    try:
        os.chmod(path, 0o666 & ~mask)
    except OSError:
        pass


def strip_doctype(svg: str) -> str:
    """Drop the DOCTYPE line (it names a DTD on the web that a validating reader might fetch)."""
    start = svg.find("<!DOCTYPE")
    if start < 0:
        return svg
    end = svg.find(">", start)
    return svg[:start] + svg[end + 1 :].lstrip("\n")


def write_binary_atomic(path: Path, data: bytes) -> None:
    import os
    import tempfile

    folder = path.parent if str(path.parent) else Path(".")
    handle, temporary = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(handle, "wb") as file:
            file.write(data)
        os.replace(temporary, path)
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise


def embed_in_markdown(markdown: str, image: str, title: str) -> str:
    """The review report with the picture embedded after its level diagram section."""
    from railroom.engine.reports.markdown import md

    target = image.replace("\\", "/").replace(" ", "%20").replace("(", "%28").replace(")", "%29")
    section = f"## Level picture\n\n![level picture of {md(title)}]({target})\n\n"
    at = markdown.find("## Level diagram")
    following = markdown.find("\n## ", at + 1) if at >= 0 else -1
    if following < 0:
        return markdown.rstrip("\n") + "\n\n" + section.rstrip("\n") + "\n"
    return markdown[: following + 1] + section + markdown[following + 1 :]
