"""Part limits as datasheets give them (issue 14): reading them, and what each one changes.

- `temperature_range` [low, high] °C: the part's rated ambient range; a chain temperature range
  outside it is a caution naming the stage and the part.
- `bias_current_doubling` N °C: input bias current (FET inputs) doubles every N °C above 25 °C
  (common practice: about 10 °C), Ib(T) = Ib(25 °C) 2^((T - 25)/N). Every method takes it at the
  chain's hottest temperature (an outside bound for every drawn temperature).
- `input_differential_max` V: the largest |V+ - V-| the inputs take (clamp diodes between the
  inputs conduct beyond it and load the source); saturating blocks are checked against it, the
  check "input-differential".
- `phase_reversal` true/false: the output inverts when an input goes beyond its common-mode
  range; a caution on any stage whose input range check fails with such a part.
- `output_headroom_curve` [[current, upper, lower], ...]: the headroom to each rail against the
  output current, linear between the points and held flat beyond the last (the headroom at the
  largest current listed stands for larger currents: the current check limits those).

Pure and numeric: floats or numpy arrays alike.
"""

from __future__ import annotations

from typing import Any

import numpy as np

Number = Any

# key: (kind, is a pair, required) as presets.PART_FIELDS
LIMIT_FIELDS = {
    "temperature_range": ("temperature", True, False),
    "bias_current_doubling": ("temperature", False, False),
    "input_differential_max": ("voltage", False, False),
    "phase_reversal": ("flag", False, False),
    "output_headroom_curve": ("curve", False, False),
}
LIMIT_SIDES = {"temperature_range": ("low", "high")}
LIMIT_UNITS = {
    "temperature_range": "°C",
    "bias_current_doubling": "°C",
    "input_differential_max": "V",
    "phase_reversal": "",
    "output_headroom_curve": "A V V",
}
DIFFERENTIAL_CHECK = "input-differential"


# --- reading -------------------------------------------------------------------------------


def read_limits(t: dict, w: str, r) -> dict[str, Any]:
    """The limit fields of one [part.ID] table; a missing key takes its default, a bad one is a
    located problem (and its value None). Any: each value has its own Part field's type."""
    from railroom.engine.formats.values import ValueTextError, parse_quantity

    values: dict[str, Any] = {}
    if "temperature_range" in t:
        values["temperature_range"] = r.span(
            t, w, "temperature_range", "temperature", None, ordered="low, high"
        )
        if values["temperature_range"] is None:
            values["temperature_range"] = ...
    values["bias_current_doubling"] = r.number(t, w, "bias_current_doubling", "temperature", default=0.0)
    values["input_differential_max"] = r.number(t, w, "input_differential_max", "voltage", default=0.0)
    raw = t.get("phase_reversal", False)
    if isinstance(raw, bool):
        values["phase_reversal"] = raw
    elif isinstance(raw, str) and raw.strip().lower() in ("true", "false"):
        values["phase_reversal"] = raw.strip().lower() == "true"
    else:
        r.problem(f"{w}.phase_reversal", f"expected true or false, got {raw!r}")
        values["phase_reversal"] = None
    if "output_headroom_curve" in t:
        values["output_headroom_curve"] = read_curve(
            t["output_headroom_curve"], f"{w}.output_headroom_curve", r, parse_quantity, ValueTextError
        )
    return {k: (None if v is ... else v) for k, v in values.items()}


CURVE_HINT = (
    'expected points [[current, upper, lower], ...] such as [["0", "30m", "30m"], ["10m", "0.3", "0.35"]]'
)


def read_curve(raw, where: str, r, parse_quantity, ValueTextError):
    """[[current A, upper headroom V, lower headroom V], ...]: currents 0 or more, rising;
    each headroom never falling as the current rises."""
    if isinstance(raw, str):
        raw = parse_curve_text(raw)
    if not isinstance(raw, list) or len(raw) < 1 or not all(isinstance(p, list) and len(p) == 3 for p in raw):
        r.problem(where, CURVE_HINT)
        return None
    points = []
    for n, point in enumerate(raw, 1):
        row = []
        for item, kind in zip(point, ("current", "voltage", "voltage")):
            try:
                row.append(parse_quantity(item, kind).value)
            except ValueTextError as err:
                r.problem(where, f"point {n}: {err}")
                return None
        points.append(tuple(row))
    message = curve_problem(points)
    if message:
        r.problem(where, message)
        return None
    return tuple(points)


def parse_curve_text(text: str):
    """The form's way of writing a curve: "0 30m 30m; 10m 0.3 0.35" -> nested lists of text."""
    rows = [p.split() for p in text.replace(",", " ").split(";") if p.strip()]
    return [list(row) for row in rows] if rows else text


def curve_problem(points) -> str | None:
    for n, (current, upper, lower) in enumerate(points, 1):
        if current < 0:
            return f"point {n}: negative current {current:g} A; currents are magnitudes (0 or more)"
        if upper < 0 or lower < 0:
            return f"point {n}: headroom below 0: an output cannot swing beyond its own rails"
    for n in range(1, len(points)):
        (c0, u0, l0), (c1, u1, l1) = points[n - 1], points[n]
        if c1 <= c0:
            return f"point {n + 1}: currents must rise from point to point, got {c0:g} A then {c1:g} A"
        if u1 < u0 or l1 < l0:
            return (
                f"point {n + 1}: not monotonic: headroom falls from ({u0:g}, {l0:g}) V to "
                f"({u1:g}, {l1:g}) V as the current rises"
            )
    return None


def limit_problems(part) -> list[tuple[str, str]]:
    """Plausibility of the limit fields, each as (field, message)."""
    found = []
    if part.bias_current_doubling < 0:
        found.append(("bias_current_doubling", "expected 0 (no doubling) or more °C"))
    if part.input_differential_max < 0:
        found.append(("input_differential_max", "expected 0 (not rated) or more V"))
    return found


# --- what each limit changes ---------------------------------------------------------------


def bias_at(part, temperature: float) -> float:
    """Bias current at a temperature: doubling every N °C above 25 °C (common practice for FET
    inputs, N about 10 °C); constant without a doubling interval or at or below 25 °C."""
    n = part.bias_current_doubling
    if n <= 0 or temperature <= 25.0:
        return part.bias_current
    return part.bias_current * 2.0 ** ((temperature - 25.0) / n)


def hot_bias(part, conditions) -> float:
    """The bias current every method uses: at the chain's hottest temperature."""
    return bias_at(part, max(conditions.temperature))


def output_drops(part, sourced: Number, sunk: Number) -> tuple[Number, Number]:
    """(upper, lower) headroom added by the load current. With a curve: its headroom at the
    sourced current (upper side) and the sunk current (lower side), less the light-load
    headroom the windows already take (so the total headroom is the curve's own)."""
    curve = getattr(part, "output_headroom_curve", ())
    if not curve:
        return part.output_resistance * sourced, part.output_resistance * sunk
    currents = np.array([p[0] for p in curve])
    upper = np.interp(sourced, currents, [p[1] for p in curve]) - part.output_headroom[0]
    lower = np.interp(sunk, currents, [p[2] for p in curve]) - part.output_headroom[1]
    if np.ndim(upper) == 0:
        return float(upper), float(lower)
    return upper, lower


def saturated_differential(block: str, v: dict, flags, signal: tuple, levels) -> Number:
    """Largest |V+ - V-| of a saturating block over its input span (outside bound, per corner or
    row): comparator: the signal against the threshold; Schmitt trigger: the + input (set by the
    input and the output through r1, r2) against the - input (see blocks/schmitt.py)."""
    sig_lo, sig_hi = signal
    (low, _), (_, high) = levels
    if block == "comparator":
        thr = v["threshold"][:, 0]
        return np.maximum(np.maximum(sig_hi - thr, thr - sig_lo), 0.0)
    r1, r2 = v["r1"][:, 0], v["r2"][:, 0]
    ref = v["ref"][:, 0] if "ref" in v else 0.0
    if flags.get("invert"):
        to_low = (ref * r2 + high * r1) / (r1 + r2)  # + input while the output is high
        to_high = (ref * r2 + low * r1) / (r1 + r2)  # + input while the output is low
        found = np.maximum(to_low - sig_lo, sig_hi - to_high)
    else:
        plus_high = (sig_hi * r2 + high * r1) / (r1 + r2)
        plus_low = (sig_lo * r2 + low * r1) / (r1 + r2)
        found = np.maximum(plus_high - ref, ref - plus_low)
    return np.maximum(found, 0.0)


def differential_margin(part, differential) -> dict[str, Number]:
    """{"input-differential": limit - largest |V+ - V-|} when the part rates it."""
    if part is None or differential is None or part.input_differential_max <= 0:
        return {}
    return {DIFFERENTIAL_CHECK: part.input_differential_max - differential}


def limit_cautions(measure, part, conditions, margins: dict) -> list[str]:
    """Cautions from the part's limits: rated temperature, phase reversal, phase margin."""
    found = []
    name = measure.stage.name
    if part is not None and part.temperature_range is not None and conditions is not None:
        low, high = conditions.temperature
        rated = part.temperature_range
        if low < rated[0] or high > rated[1]:
            found.append(
                f"stage {name!r}: the chain's temperature range [{low:g}, {high:g}] °C "
                f"leaves the rated range [{rated[0]:g}, {rated[1]:g}] °C of part "
                f"{part.id!r}: its limits are not given there"
            )
    if (
        part is not None
        and part.phase_reversal
        and (margins.get("input-high", 0.0) < 0 or margins.get("input-low", 0.0) < 0)
    ):
        found.append(
            f"stage {name!r}: the input leaves the common-mode range of part "
            f"{part.id!r}, whose output reverses phase there: the output may swing to "
            "the opposite rail, not just clip"
        )
    return found


def with_limit_cautions(chain, plans, stages, responses=None) -> list:
    """The stage results with the cautions of their parts' limits added, and the phase-margin
    estimate of every stage with a load_capacitance."""
    from dataclasses import replace

    found = []
    for k, (plan, result) in enumerate(zip(plans, stages)):
        extra = limit_cautions(result.measure, plan.part, chain.conditions, result.margins)
        response = responses[k] if responses is not None else None
        margin = stage_phase_margin(plan, response)
        if margin is not None:
            result = replace(result, measure=replace(result.measure, phase_margin_deg=margin))
            if margin < PHASE_MARGIN_CAUTION:
                extra.append(
                    f"estimated phase margin {margin:.0f}° with the "
                    f"{format_capacitance(plan.stage.load_capacitance)} load capacitance, "
                    f"under {PHASE_MARGIN_CAUTION:.0f}° (common practice): the output may "
                    "ring or oscillate; isolate the load with a series resistor or use a "
                    "part rated for it"
                )
        found.append(replace(result, cautions=(*result.cautions, *extra)) if extra else result)
    return found


# --- capacitive load: the phase-margin estimate ---------------------------------------------

PHASE_MARGIN_CAUTION = 45.0  # degrees (common practice)


def format_capacitance(q) -> str:
    from railroom.engine.formats.values import format_si

    return format_si(q.value, "F")


def phase_margin_deg(
    gbw: float, noise_gain: float, output_resistance: float, load_capacitance: float
) -> float:
    """Two-pole estimate: the loop crosses over near f_c = gbw / noise gain (the dominant pole
    gives 90° there), and the output resistance with the load capacitance adds a pole at
    f_p2 = 1 / (2 pi Ro CL): phase margin = 90° - atan(f_c / f_p2). Taking the crossover from
    the one-pole asymptote puts it above the true two-pole crossover, so the estimate is low
    (pessimistic): by 6.8° when f_p2 = f_c (51.8° exact, 45° estimated)."""
    f_c = gbw / noise_gain
    return 90.0 - float(np.degrees(np.arctan(f_c * 2.0 * np.pi * output_resistance * load_capacitance)))


def stage_phase_margin(plan, response) -> float | None:
    """The stage's worst estimate over the tolerance: the smallest noise gain (the highest
    crossover) of the op amp driving the output, and the largest load capacitance."""
    c = getattr(plan.stage, "load_capacitance", None)
    part = plan.part
    if c is None or part is None or response is None or plan.block.saturates or not response.opamps:
        return None
    driving = next(
        (j for j, a in enumerate(response.opamps) if a.output is response.output), len(response.opamps) - 1
    )
    gains = response.opamps[driving].output.offset_gain
    if gains is None:
        return None
    closed = np.abs(np.real(np.asarray(gains)[:, driving]))
    # the finite-gain closed loop 1/(1/A0 + beta) back to the ideal noise gain 1/beta
    beta = np.max(1.0 / closed - 1.0 / part.open_loop_gain)
    largest = c.value * (1.0 + (c.tolerance or 0.0))
    return phase_margin_deg(part.gbw, 1.0 / max(beta, 1e-300), part.output_resistance, largest)


class _Collect:
    """A stand-in FieldReader that keeps the first message (for the form's checks as you type)."""

    def __init__(self) -> None:
        self.messages: list[str] = []

    def problem(self, where: str, message: str) -> None:
        self.messages.append(message)


def curve_from_text(text: str) -> tuple[tuple | None, str | None]:
    """A curve written as the form writes it, and what is wrong with it (None when nothing)."""
    from railroom.engine.formats.values import ValueTextError, parse_quantity

    collect = _Collect()
    points = read_curve(text, "output_headroom_curve", collect, parse_quantity, ValueTextError)
    return points, (collect.messages[0] if collect.messages else None)


def curve_level(part, level: Number, conductance: Number, upper: bool) -> Number:
    """A saturated output level with a headroom curve: the unloaded level's current (|V| G,
    capped by the current limit) read on the curve, its extra headroom taken off. The unloaded
    level's current is the larger (the curve never falls), so the level is never optimistic."""
    current = np.minimum(np.abs(level) * conductance, part.output_current)
    drop_high, drop_low = output_drops(part, current, current)
    return level - drop_high if upper else level + drop_low


def clipped_differential(part, response, amps, freqs) -> float | None:
    """Largest |V+ - V-| of a feedback stage's op amps, for a part that rates it; judged only
    when the stage clips (its loop broken). From the loop (opamp.py): V+ - V- = (beta - gamma)
    (ideal output - output), so an output held at its window's edge leaves the overshoot over
    the noise gain across the inputs; while linear, Vout / A(f), at most |Vout| (1/A0 + f/gbw)
    for the single-pole model. Both are taken at their worst (largest overshoot over the
    smallest closed-loop gain, largest swing at the top of the band): an outside bound."""
    if part is None or part.input_differential_max <= 0 or response is None:
        return None
    top = float(np.max(freqs)) if np.size(freqs) else 0.0
    worst = 0.0
    for j, (nodes, amp) in enumerate(zip(response.opamps, amps)):
        gains = nodes.output.offset_gain
        if gains is None:
            continue
        gain = float(np.min(np.abs(np.real(np.asarray(gains)[:, j]))))
        over = max(amp.output[1] - amp.window[1], amp.window[0] - amp.output[0], 0.0)
        swing = max(abs(amp.output[0]), abs(amp.output[1]))
        found = over / max(gain, 1e-300) + swing * (1.0 / part.open_loop_gain + top / part.gbw)
        worst = max(worst, found)
    return worst
