"""Results -> the JSON report (see the README; pure functions; the caller prints)."""

from __future__ import annotations

import math

from railroom.engine.circuit.model import stage_parents
from railroom.engine.verdict.results import ChainResult, StageResult

REPORT_FORMAT = 1


def _number(value: float | None, digits: int = 6) -> float | None:
    if value is None or not math.isfinite(value):
        return None
    return float(f"{value:.{digits}g}")


def feeds(stages: list[StageResult] | tuple[StageResult, ...]) -> list[str]:
    """Per stage the name of the stage it takes its input from, or "source" (`from`)."""
    parents = stage_parents([s.measure.stage for s in stages])
    return ["source" if p < 0 else stages[p].measure.stage.name for p in parents]


def stage_report(result: StageResult, feed: str | None = None) -> dict:
    """`feed`: the name of the stage it takes its input from, or "source" (the chain knows it;
    alone a stage reports what its file wrote, the stage before by default)."""
    m = result.measure
    amps = m.opamps
    report = {
        "index": m.index,
        "name": m.stage.name,
        "block": m.stage.block,
        "from": feed or m.stage.feed or ("source" if m.index == 1 else f"stage {m.index - 1}"),
        "part": m.stage.part,
        "regime": result.regime,
        "go": result.go,
        "reasons": list(result.reasons),
        "gain_error": _number(m.gain_error),
        "limiting": result.limiting,
        "output": {
            "min": _number(m.output[0]),
            "max": _number(m.output[1]),
            "nominal": [_number(m.nominal[0]), _number(m.nominal[1])],
        },
        "window": (None if m.window is None else {"low": _number(m.window[0]), "high": _number(m.window[1])}),
        "input": (
            None
            if not amps
            else {
                "min": _number(min(a.input[0] for a in amps)),
                "max": _number(max(a.input[1] for a in amps)),
            }
        ),
        "margins": {k: _number(v) for k, v in result.margins.items()},
        "probability": _number(m.probability),
        # extensions beyond the README's JSON report (documented in the README)
        "nodes": [
            {
                "label": a.label,
                "output": [_number(a.output[0]), _number(a.output[1])],
                "window": [_number(a.window[0]), _number(a.window[1])],
                "input": [_number(a.input[0]), _number(a.input[1])],
                "input_window": [_number(a.input_window[0]), _number(a.input_window[1])],
                "slew_needed": _number(a.slew_needed),
                "current_needed": _number(a.current_needed),
            }
            for a in amps
        ],
        "failing_nodes": {
            k: result.failing_nodes[k] for k in result.reasons if k in result.failing_nodes and len(amps) > 1
        },
        "cautions": list(result.cautions),
    }
    report["gain"] = _gain(m.gain)
    report["gain_from_source"] = _gain(m.gain_from_source)
    if m.phase_margin_deg is not None:
        report["phase_margin_deg"] = _number(m.phase_margin_deg, 4)
    if m.thresholds is not None:
        # input levels at which the output switches high and switches low (either may be the
        # upper one: an inverting trigger goes high as its input falls)
        report["thresholds"] = {
            "to_high": [_number(x) for x in m.thresholds[0]],
            "to_low": [_number(x) for x in m.thresholds[1]],
        }
    if result.sensitivity:
        report["sensitivity"] = [
            {"quantity": s.quantity, "label": s.words, "share": _number(s.share, 3)}
            for s in result.sensitivity
        ]
    if result.fixes:
        report["fixes"] = [
            {"text": f.text, "field": f.field, "value": _number(f.value)} for f in result.fixes
        ]
    if m.percentiles:
        report["percentiles"] = {k: {q: _number(v) for q, v in d.items()} for k, d in m.percentiles.items()}
    return report


def _gain(gain: dict | None) -> dict | None:
    """{"dc": [min, max], "band": [min, max]} of a gain magnitude (engine/walks/gains.py)."""
    if gain is None:
        return None
    return {key: [_number(low), _number(high)] for key, (low, high) in gain.items()}


def chain_report(result: ChainResult) -> dict:
    cautions = list(result.cautions)
    for stage in result.stages:
        cautions += [f"stage {stage.index} ({stage.stage.name}): {c}" for c in stage.cautions]
    report = {
        "format": REPORT_FORMAT,
        "title": result.chain.title,
        "verdict": "go" if result.go else "no-go",
        "method": result.method,
        "samples": result.samples,
        "headroom_db": _number(result.headroom_db, 4),
        "cautions": cautions,
        "stages": [stage_report(s, feed) for s, feed in zip(result.stages, feeds(result.stages))],
    }
    if result.chain.nets:
        report["nets"] = nets_report(result)
    if result.chain_yield is not None:
        from railroom.engine.methods.rare import failing_draws, wilson

        report["yield"] = _number(result.chain_yield)
        samples = result.samples or 0
        linear = samples - failing_draws(result.chain_yield, samples)
        report["yield_interval"] = [_number(x) for x in wilson(linear, samples)]
    rare = result.rare
    if rare is not None:
        report["failure_probability"] = {
            "estimate": _number(rare.probability),
            "low": _number(rare.low),
            "high": _number(rare.high),
            "draws": rare.draws,
            "beta": _number(rare.beta),
            "method": "importance sampling" if rare.beta is not None else "impossible within tolerances",
            "stages": [_number(p) for p in rare.stages],
        }
    return report


def nets_report(result: ChainResult) -> list[dict]:
    """Each named net with its span over its tolerance, tempco and (ratiometric) rail, and the
    stages that read it (an extension documented in the README)."""
    from railroom.engine.circuit.model import NetValue
    from railroom.engine.circuit.nets import net_span
    from railroom.engine.walks.preparation import stage_quantities

    found = []
    for name, net in result.chain.nets.items():
        low, high = net_span(result.chain, net)
        users = [
            s.index
            for s in result.stages
            if any(isinstance(q, NetValue) and q.net == name for q in stage_quantities(s.stage).values())
        ]
        nominal = net.value.value if net.value is not None else None
        if net.fraction is not None and net.rail is not None:
            nominal = net.fraction.value * result.chain.rails[net.rail].positive
        found.append(
            {
                "name": name,
                "kind": "ratiometric" if net.ratiometric else "fixed",
                "rail": net.rail,
                "fraction": None if net.fraction is None else _number(net.fraction.value),
                "nominal": _number(nominal),
                "span": [_number(low), _number(high)],
                "stages": users,
            }
        )
    return found
