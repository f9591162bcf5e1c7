"""The detail panel: every check of the highlighted stage with the engine's numbers."""

from __future__ import annotations

from collections.abc import Mapping

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual.containers import VerticalScroll
from textual.widgets import Static

from railroom.engine import (
    net_span,
    NetValue,
    stage_quantities,
    BLOCKS,
    CHECKS,
    GAIN_ERROR_CAUTION,
    Chain,
    Part,
    Quantity,
    StageResult,
    check_unit,
    format_si,
    format_span,
)
from railroom.engine import needed_and_limit as engine_needed_and_limit

UNITS = {
    "resistance": "Ω",
    "capacitance": "F",
    "voltage": "V",
    "current": "A",
    "frequency": "Hz",
    "slew": "V/s",
}


def volts(value: float, unit: str = "V") -> str:
    return format_si(value, unit)


def span_words(span: tuple[float, float], unit: str = "V") -> str:
    return format_span(span[0], span[1], unit)


def figure_words(value: float | tuple[float, float] | None, unit: str) -> str:
    if value is None:
        return "-"
    return span_words(value, unit) if isinstance(value, tuple) else volts(value, unit)


def needed_and_limit(stage: StageResult, check: str, part: Part | None, chain: Chain) -> tuple[str, str]:
    """What the stage asks of the part and what the part gives, as the engine measured them."""
    needed, limit = engine_needed_and_limit(stage, check, part, chain)
    return figure_words(needed, check_unit(check)), figure_words(limit, check_unit(check))


def checks_table(stage: StageResult, part: Part | None, chain: Chain) -> Table:
    table = Table(box=None, pad_edge=False, show_edge=False, expand=False)
    # steady widths: the columns do not jump as values are typed or stages highlighted
    for column, width in (("check", 11), ("needed", 16), ("limit", 16), ("margin", 10), ("", 4)):
        table.add_column(column, no_wrap=True, min_width=width)
    for check in CHECKS:
        if check not in stage.margins:
            continue
        needed, limit = needed_and_limit(stage, check, part, chain)
        margin = stage.margins[check]
        failing = check in stage.reasons
        where = stage.failing_nodes.get(check) if len(stage.measure.opamps) > 1 else None
        verdict = Text("FAIL" if failing else "ok", style="bold red" if failing else "green")
        if where:
            verdict.append(f" at {where}")
        table.add_row(check, needed, limit, volts(margin, check_unit(check)), verdict)
    error = stage.measure.gain_error
    if error is not None:
        table.add_row(
            "gain error",
            f"{error:.3%}",
            f"{GAIN_ERROR_CAUTION:.0%} (caution)",
            "-",
            Text("caution" if error > GAIN_ERROR_CAUTION else "ok"),
        )
    return table


def quantity_words(q: Quantity, kind: str) -> str:
    words = volts(q.value, UNITS.get(kind, ""))
    if q.tolerance:
        words += f" ±{format_si(q.tolerance, '%')}"
    if q.tempco:
        words += f" {format_si(q.tempco, 'ppm')}/°C"
    return words


def components(stage: StageResult) -> Text:
    text = Text()
    s = stage.stage
    kinds = {key: spec.kind for key, spec in BLOCKS[s.block].fields.items()}
    if getattr(s, "feed", None) is not None:
        text.append(f"from {s.feed}   ")
    if s.load is not None:
        text.append(f"load {quantity_words(s.load, 'resistance')}   ")
    if s.load_to is not None:
        text.append(f"load_to {quantity_words(s.load_to, 'voltage')}   ")
    if s.load_capacitance is not None:
        text.append(f"load_capacitance {quantity_words(s.load_capacitance, 'capacitance')}   ")
    for key, value in s.values.items():
        if isinstance(value, NetValue):
            text.append(f"{key} net {value.net}   ")
        elif isinstance(value, Quantity):
            text.append(f"{key} {quantity_words(value, kinds.get(key, ''))}   ")
        elif isinstance(value, list):
            for i, item in enumerate(value, start=1):
                v = item["v"]
                source = f"net {v.net}" if isinstance(v, NetValue) else quantity_words(v, "voltage")
                text.append(f"{key}.{i} r {quantity_words(item['r'], 'resistance')} from {source}   ")
        else:
            text.append(f"{key} {str(value).lower()}   ")
    return text if text.plain else Text("no components of its own")


def net_words(chain: Chain, name: str) -> str:
    """A net as the detail says it: what it is and its span (one value per corner or draw)."""
    net = chain.nets[name]
    span = span_words(net_span(chain, net))
    if net.fraction is not None:
        return f"{name} = {net.fraction.value:g} x rail {net.rail} +: {span}"
    return f"{name}: {span}"


def stage_nets(stage: StageResult, chain: Chain) -> Text:
    """The nets the stage reads, each with its span."""

    names = sorted(
        {
            q.net
            for q in stage_quantities(stage.stage).values()
            if isinstance(q, NetValue) and q.net in chain.nets
        }
    )
    return Text("   ".join(net_words(chain, name) for name in names))


def nodes_table(stage: StageResult) -> Table | None:
    m = stage.measure
    if len(m.opamps) < 2 and not m.inner:
        return None
    table = Table(box=None, pad_edge=False, show_edge=False)
    for column in ("node", "output span", "window", "input span", "input window"):
        table.add_column(column, no_wrap=True)
    for amp in m.opamps:
        table.add_row(
            Text(amp.label),
            span_words(amp.output),
            span_words(amp.window),
            span_words(amp.input),
            span_words(amp.input_window),
        )
    for label, span in m.inner.items():
        table.add_row(Text(label), span_words(span), "", "", "")
    return table


def stage_story(stage: StageResult, chain: Chain, parts: Mapping[str, Part]) -> Group:
    s, m = stage.stage, stage.measure
    part = parts.get(s.part) if s.part else None
    rails = chain.rails_for(s)
    head = Text()
    head.append(f"{stage.index} ", style="bold")
    head.append(s.name, style="bold")
    head.append(f"  {s.block}")
    if part is not None:
        head.append("  part ")
        head.append(part.id)
    block = BLOCKS.get(s.block)
    if block is None or block.uses_part:  # a passive stage or a converter input has no rails
        head.append(
            f"\nrails {rails.name}: {volts(rails.negative)} / {volts(rails.positive)}"
            f" ±{format_si(rails.tolerance, '%')}   "
        )
    else:
        head.append("\n")
    head.append(f"output {span_words(m.output)}  nominal {span_words(m.nominal)}")
    if m.window is not None:
        head.append(f"  window {span_words(m.window)}")
    if m.probability is not None:
        head.append(f"  leaves linear in {m.probability:.3%} of draws")
    parts_shown: list = [head]
    if m.gain is not None:
        parts_shown.append(Text(gain_line(m.gain, m.gain_from_source)))
    parts_shown.append(checks_table(stage, part, chain))
    if m.thresholds is not None:
        to_high, to_low = m.thresholds
        parts_shown.append(
            Text(f"switches: output goes high at input {span_words(to_high)}, low at {span_words(to_low)}")
        )
    if m.phase_margin_deg is not None:
        parts_shown.append(
            Text(
                f"phase margin (estimate, capacitive load): {m.phase_margin_deg:.0f}°",
                style="yellow" if m.phase_margin_deg < 45 else "",
            )
        )
    parts_shown.append(Text("components: ", style="bold") + components(stage))
    read = stage_nets(stage, chain)
    if read.plain:
        parts_shown.append(Text("nets: ", style="bold") + read)
    nodes = nodes_table(stage)
    if nodes is not None:
        parts_shown += [Text("internal nodes", style="bold"), nodes]
    parts_shown += notes(stage)
    return Group(*parts_shown)


def gain_range(gain: dict, key: str) -> str:
    low, high = gain[key]
    return f"{high:.4g}" if f"{low:.4g}" == f"{high:.4g}" else f"{low:.4g} to {high:.4g}"


def gain_line(gain: dict, total: dict | None) -> str:
    """The stage's small-signal gain, and the chain's from the source (engine/walks/gains.py)."""
    words = f"gain {gain_range(gain, 'band')} over the band, {gain_range(gain, 'dc')} at DC"
    if total is not None:
        words += f"; from the source {gain_range(total, 'band')}, {gain_range(total, 'dc')} at DC"
    return words


def notes(stage: StageResult) -> list[Text]:
    lines = []
    failing = [r for r in stage.reasons if r != "fed-clipped"]
    if failing:
        lines.append(Text("fails: " + ", ".join(failing), style="bold red"))
    if "fed-clipped" in stage.reasons:  # a marker, not a failure of this stage
        lines.append(
            Text("fed-clipped: a stage before it clips; checked on the clipped signal", style="yellow")
        )
    lines += [Text(f"caution: {c}", style="yellow") for c in stage.cautions]
    if stage.sensitivity:
        lines.append(Text("sensitivity: " + ", ".join(f"{s.words} {s.share:.0%}" for s in stage.sensitivity)))
    lines += [Text(f"fix: {f.text}") for f in stage.fixes]
    return lines


class StageDetail(VerticalScroll):
    """Scrolls when the stage has more to say than the panel holds."""

    can_focus = True

    def compose(self):
        yield Static(id="detail-body")

    def show(self, stage: StageResult, chain: Chain, parts: Mapping[str, Part]) -> None:
        self.border_title = f"stage {stage.index} detail"
        self.query_one("#detail-body", Static).update(stage_story(stage, chain, parts))
