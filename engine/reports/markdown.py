"""Results -> a Markdown report for a design review (pure: the caller prints or saves it).

Sections: verdict, conditions and method, a table of stages, their margins, a level diagram of the
chain in plain ASCII (it survives any font, diff tool or CI log), reasons, cautions, and where the
method provides them sensitivity and fixes. A chain with branches (`from`) gets a `from` column in
the table of stages, and its level diagram follows the tree, branches drawn one level in. Every piece of user text is escaped for Markdown and
stripped of control characters, so a stage name can never change the document's structure.
"""

from __future__ import annotations

import re
from pathlib import Path

from railroom.engine.verdict.results import CHECK_TABLE, CHECKS, ChainResult, StageResult, check_unit
from railroom.engine.verdict.results import margin_words as check_margin_words
from railroom.engine.formats.values import format_si, visible
from railroom.engine.circuit.model import stage_parents
from railroom.engine.circuit.stage_tree import ASCII_GLYPHS, branched, tree_rows

DIAGRAM_WIDTH = 56
# why a stage fails, from the table of checks (engine/verdict/results.py), and the one reason that is no check
REASON_WORDS = {
    **{c.name: c.words for c in CHECK_TABLE.values() if c.words},
    "fed-clipped": "fed by a clipping stage before it",
}
# a converter input (no op amp) has a window of its own: its input checks are about that window
CONVERTER_REASON_WORDS = {c.name: c.converter_words for c in CHECK_TABLE.values() if c.converter_words}
METHOD_WORDS = {
    "corners": "worst case: every combination of tolerance ends, rails, temperature ends, offset "
    "and bias signs, source range ends and AC peak sign, at every band frequency",
    "rss": "statistical: root sum of squares of the independent contributions",
    "montecarlo": "statistical: Monte Carlo draws of every toleranced value",
}
# Enough to keep user text literal: emphasis, code, links, HTML and its entities (`&#x202E;`
# would become a direction override), table cells, strikethrough.
_MARKDOWN_SPECIAL = re.compile(r"([\\`*_\[\]<|~&])")
# What GitHub-flavoured Markdown turns into a link without brackets (GFM spec 0.29, section 6.9,
# "Autolinks (extension)": www., http://, https:// and e-mail addresses; GitHub also takes ftp://,
# mailto: and xmpp:); such a run is shown as a code span, where nothing is a link.
_BARE_LINK = re.compile(
    r"(?i)(?:\b(?:https?|ftp|file)://|\bwww\.|\b(?:mailto|xmpp):)[^\s|`]*"
    r"|[^\s|`@]+@[^\s|`@]+\.[^\s|`@]+"
)


def md(text: str) -> str:
    """User text as literal Markdown inline text: specials escaped, on one line, a bare address
    as a code span (no link)."""
    text = visible(text.replace("\n", " "), 200)
    pieces, at = [], 0
    for found in _BARE_LINK.finditer(text):
        pieces.append(_MARKDOWN_SPECIAL.sub(r"\\\1", text[at : found.start()]))
        pieces.append(f"`{found[0]}`")
        at = found.end()
    pieces.append(_MARKDOWN_SPECIAL.sub(r"\\\1", text[at:]))
    return "".join(pieces)


def volts(value: float | None) -> str:
    return "-" if value is None else format_si(value, "V")


def margin_words(check: str | None, value: float | None) -> str:
    if check is None or value is None:
        return "-"
    return check_margin_words(check, value)


def markdown_report(result: ChainResult) -> str:
    sections = [
        header(result),
        conditions(result),
        stage_table(result),
        margin_table(result),
        gain_table(result),
        level_diagram(result),
        reasons(result),
        cautions(result),
        sensitivity(result),
        fixes(result),
    ]
    return "\n\n".join(s for s in sections if s) + "\n"


def header(result: ChainResult) -> str:
    verdict = "GO" if result.go else "NO-GO"
    count = len(result.stages)
    summary = (
        f"every one of the {count} stages stays in its intended regime with the required margin"
        if result.go
        else f"{result.failing} of {count} stages fail"
    )
    return f"# Rail headroom review: {md(result.chain.title)}\n\n**Verdict: {verdict}**: {summary}."


def conditions(result: ChainResult) -> str:
    chain, c, source = result.chain, result.chain.conditions, result.chain.source
    method = f"{result.method} ({METHOD_WORDS.get(result.method, result.method)})"
    if result.samples:
        method += f"; {result.samples} draws, seed {c.seed}, {c.distribution} distribution"
    rails = "; ".join(
        f"{md(r.name)}: {format_si(r.positive, 'V')} / {format_si(r.negative, 'V')}"
        f" ± {format_si(r.tolerance, '%')}"
        for r in chain.rails.values()
    )
    level = f"{volts(source.level[0])} to {volts(source.level[1])}"
    if source.differential:
        level = (
            f"common mode {level}, difference {volts(source.difference[0])} to {volts(source.difference[1])}"
        )
    band = f"{format_si(source.band[0], 'Hz')} to {format_si(source.band[1], 'Hz')}"
    rows = [
        ("file", md(Path(chain.path).name)),
        ("method", method),
        ("temperature", f"{c.temperature[0]:g} °C to {c.temperature[1]:g} °C"),
        ("required margin", volts(c.margin)),
        ("default tolerance", format_si(c.default_tolerance, "%")),
        ("rails", rails),
        (
            "source",
            f"{source.kind}, level {level}, AC {volts(source.amplitude)} peak, "
            f"band {band}, impedance {format_si(source.impedance, 'Ω')}",
        ),
        ("headroom", headroom_words(result.headroom_db)),
    ]
    if chain.nets:
        rows.insert(-1, ("nets", nets_words(result)))
    if result.chain_yield is not None:
        from railroom.engine.methods.rare import yield_words

        rows.append(("yield", yield_words(result.chain_yield, result.samples or 0, result.rare)))
    lines = ["## Conditions and method", "", "| | |", "|---|---|"]
    return "\n".join(lines + [f"| {k} | {v} |" for k, v in rows])


def nets_words(result: ChainResult) -> str:
    """Each named net with what it is and its span (one value per corner or draw, shared)."""
    from railroom.engine.circuit.nets import net_span

    words = []
    for name, net in result.chain.nets.items():
        low, high = net_span(result.chain, net)
        what = f"{net.fraction.value:g} x {md(net.rail or '')} +, " if net.fraction is not None else ""
        words.append(f"{md(name)}: {what}{volts(low)} to {volts(high)}")
    return "; ".join(words)


def headroom_words(db: float | None) -> str:
    if db is None:
        return "not defined (no AC part, or DC alone leaves the linear regime)"
    verb = "may rise" if db >= 0 else "must fall"
    return f"{db:+.2f} dB: the source AC amplitude {verb} by {abs(db):.2f} dB before a stage clips"


def stage_table(result: ChainResult) -> str:
    probability = result.method == "montecarlo"
    columns = [
        "#",
        "stage",
        "block",
        "part",
        "rails",
        "regime",
        "GO",
        "limiting margin",
        "output span",
        "window",
    ] + (["P(leaves linear)"] if probability else [])
    parents = chain_parents(result)
    tree = branched(parents)
    if tree:  # a chain with branches: the stage (#) each takes its input from
        columns.insert(2, "from")
    lines = ["## Stages", "", "| " + " | ".join(columns) + " |", "|" + "|".join("---" for _ in columns) + "|"]
    for s in result.stages:
        m = s.measure
        window = "-" if m.window is None else f"{volts(m.window[0])} to {volts(m.window[1])}"
        rails = result.chain.rails_for(s.stage).name if s.stage.part else "-"
        cells = [
            str(s.index),
            md(s.stage.name),
            s.stage.block,
            md(s.stage.part or "-"),
            md(rails),
            s.shown_regime,
            "yes" if s.go else "**no**",
            margin_words(s.limiting, s.margins.get(s.limiting) if s.limiting else None),
            f"{volts(m.output[0])} to {volts(m.output[1])}",
            window,
        ]
        if tree:
            parent = parents[s.index - 1]
            cells.insert(2, "source" if parent < 0 else str(parent + 1))
        if probability:
            cells.append("-" if m.probability is None else f"{m.probability:.2%}")
        lines.append("| " + " | ".join(cells) + " |")
    return "\n".join(lines)


def margin_table(result: ChainResult) -> str:
    used = [c for c in CHECKS if any(c in s.margins for s in result.stages)]
    if not used:
        return ""
    lines = [
        "### Margins (negative: violated)",
        "",
        "| # | " + " | ".join(used) + " |",
        "|---|" + "|".join("---:" for _ in used) + "|",
    ]
    for s in result.stages:
        cells = [format_si(s.margins[c], check_unit(c)) if c in s.margins else "" for c in used]
        lines.append(f"| {s.index} | " + " | ".join(cells) + " |")
    return "\n".join(lines)


def gain_words(gain: dict | None, key: str) -> str:
    """A gain magnitude's range, 4 significant figures ("-" for a saturated stage)."""
    if gain is None:
        return "-"
    low, high = gain[key]
    if f"{low:.4g}" == f"{high:.4g}":
        return f"{high:.4g}"
    return f"{low:.4g} to {high:.4g}"


def gain_table(result: ChainResult) -> str:
    """Each stage's small-signal gain and the chain's from the source (engine/walks/gains.py)."""
    lines = [
        "### Gain (magnitude over the tolerances)",
        "",
        "| # | stage | DC | band | from the source, DC | from the source, band |",
        "|---|---|---:|---:|---:|---:|",
    ]
    for s in result.stages:
        m = s.measure
        cells = [gain_words(g, key) for g in (m.gain, m.gain_from_source) for key in ("dc", "band")]
        lines.append(f"| {s.index} | {md(s.stage.name)} | " + " | ".join(cells) + " |")
    return "\n".join(lines)


def level_diagram(result: ChainResult) -> str:
    body = "\n".join(diagram_lines(result, DIAGRAM_WIDTH))
    fence = "`" * max(3, longest_backtick_run(body) + 1)
    legend = (
        "`|` the op amp's rails (lowest negative, highest positive), `-` out of reach, "
        "`.` room, `#` signal (the worst-case output span), `X` clips (past the window), "
        "`0` 0 V (the interface's legend words)."
    )
    return f"## Level diagram\n\n{fence}text\n{body}\n{fence}\n\n{legend}"


def diagram_lines(result: ChainResult, width: int) -> list[str]:
    """One line per stage on a common voltage axis, with the axis labelled above."""
    low, high = axis_span(result)
    step = (high - low) / width
    label = 26
    axis = [" "] * width
    marks = [(0, volts(low)), (width - len(volts(high)), volts(high))]
    if low < 0 < high:
        zero = int((0 - low) / step)
        if len(volts(low)) + 1 < zero < width - len(volts(high)) - 4:
            marks.append((zero, "0 V"))
    for at, text in marks:
        axis[at : at + len(text)] = text
    lines = [" " * label + "".join(axis).rstrip()]
    # stages in signal order, a chain with branches drawn as a tree before the names (ASCII)
    for k, prefix in tree_rows(chain_parents(result), ASCII_GLYPHS):
        s = result.stages[k]
        name = prefix + visible(s.stage.name, 200)
        name = name if len(name) <= 21 else name[:20] + "~"
        bar = stage_cells(result, s, low, step, width)
        span = f"{volts(s.measure.output[0])} to {volts(s.measure.output[1])}"
        lines.append(f"{s.index:>3} {name:<21} {bar}  {span}")
    return lines


def chain_parents(result: ChainResult) -> tuple[int, ...]:
    """Per stage the 0-based stage it takes its input from (-1: the source)."""
    return stage_parents([s.stage for s in result.stages])


def axis_span(result: ChainResult) -> tuple[float, float]:
    ends = []
    for s in result.stages:
        ends += list(s.measure.output)
        if s.stage.part is not None:
            rails = result.chain.rails_for(s.stage)
            ends += [rails.negative_range[0], rails.positive_range[1]]
    low, high = min(ends, default=-1.0), max(ends, default=1.0)
    return (low, high) if high > low else (low - 1.0, low + 1.0)


def stage_cells(result: ChainResult, s: StageResult, low: float, step: float, width: int) -> str:
    m = s.measure
    rails = result.chain.rails_for(s.stage)
    reach = (rails.negative_range[0], rails.positive_range[1]) if s.stage.part else None
    cells = []
    for i in range(width):
        a, b = low + i * step, low + (i + 1) * step
        if b > m.output[0] and a < m.output[1] or m.output[0] == m.output[1] and a <= m.output[0] < b:
            past = (
                m.window is not None
                and (a < m.window[0] or b > m.window[1])
                and (m.output[0] < m.window[0] or m.output[1] > m.window[1])
            )
            cells.append("X" if past else "#")
        elif m.window is not None and b > m.window[0] and a < m.window[1]:
            cells.append("0" if a <= 0.0 < b else ".")
        elif reach is not None and b > reach[0] and a < reach[1]:
            cells.append("-")
        else:
            cells.append(" ")
    if reach is not None:
        for edge in (reach[0], reach[1]):
            at = min(width - 1, max(0, int((edge - low) / step)))
            if cells[at] in "- ":
                cells[at] = "|"
    return "".join(cells)


def longest_backtick_run(text: str) -> int:
    return max((len(run) for run in re.findall(r"`+", text)), default=0)


def _reason_words(stage, reason: str) -> str:
    if not stage.measure.opamps and reason in CONVERTER_REASON_WORDS:
        return CONVERTER_REASON_WORDS[reason]
    return REASON_WORDS.get(reason, reason)


def reasons(result: ChainResult) -> str:
    lines = [
        f"- stage {s.index} ({md(s.stage.name)}): "
        + "; ".join(f"{r} ({_reason_words(s, r)})" for r in s.reasons)
        for s in result.stages
        if s.reasons
    ]
    return "## Why stages fail\n\n" + "\n".join(lines) if lines else ""


def cautions(result: ChainResult) -> str:
    lines = [f"- {md(c)}" for c in result.cautions]
    lines += [f"- stage {s.index} ({md(s.stage.name)}): {md(c)}" for s in result.stages for c in s.cautions]
    return "## Cautions\n\n" + ("\n".join(lines) if lines else "None.")


def sensitivity(result: ChainResult) -> str:
    rows = [
        f"| {s.index} | {md(s.stage.name)} | {s.limiting or '-'} | {md(x.words)} | {x.share:.0%} |"
        for s in result.stages
        for x in s.sensitivity
    ]
    if not rows:
        return ""
    return "\n".join(
        [
            "## Sensitivity of the limiting margin",
            "",
            "| # | stage | check | quantity | share of the spread |",
            "|---|---|---|---|---:|",
            *rows,
        ]
    )


def fixes(result: ChainResult) -> str:
    lines = [f"- stage {s.index} ({md(s.stage.name)}): {md(f.text)}" for s in result.stages for f in s.fixes]
    return "## Suggested fixes\n\n" + "\n".join(lines) if lines else ""
