"""Margins -> regime, reasons, limiting check, verdict and cautions. The one place that decides.

Margins are volts for voltage checks, V/s for slew (available - needed), amperes for current
(available - needed), volts for supply (room inside the part's allowed span); negative means
violated (the README's JSON report).
"""

from __future__ import annotations

import math

from railroom.engine.circuit.blocks import BLOCKS
from railroom.engine.verdict.margins import met_at_equality
from railroom.engine.verdict.margins import supply_margin as kernel_supply_margin
from railroom.engine.circuit.model import Chain, Part, Rails
from railroom.engine.circuit.part_limits import DIFFERENTIAL_CHECK, differential_margin
from railroom.engine.verdict.results import CHECK_TABLE, VOLTAGE_CHECKS, StageMeasure, StageResult

GAIN_ERROR_CAUTION = 0.01  # the README's JSON report: a caution above 1 %
SELV_DC_LIMIT = 60.0  # V DC between conductors: SELV (IEC 60335-1, 3.4.2), ES1 (IEC 62368-1)
LINEAR_CHECKS = (*VOLTAGE_CHECKS, "slew", "current")
# the linear checks a saturated-by-design stage keeps (its output swings rail to rail by design)
SATURATED_LINEAR_CHECKS = tuple(c for c in LINEAR_CHECKS if c in ("input-high", "input-low", "current"))
LIMITING_TIE = 1e-10  # relative margins this close limit alike (rounding)


def opamp_margins(measure: StageMeasure) -> tuple[dict[str, float], dict[str, str]]:
    """Each check's worst margin over the op amps of the stage, and which op amp set it."""
    margins: dict[str, float] = {}
    nodes: dict[str, str] = {}
    for amp in measure.opamps:
        found = {
            "input-high": amp.input_window[1] - amp.input[1],
            "input-low": amp.input[0] - amp.input_window[0],
            "current": amp.current_available - amp.current_needed,
        }
        if not measure.saturated:
            found.update(
                {
                    "output-high": amp.window[1] - amp.output[1],
                    "output-low": amp.output[0] - amp.window[0],
                    "slew": amp.slew_available - amp.slew_needed,
                }
            )
        for check, value in found.items():
            if check not in margins or value < margins[check]:
                margins[check] = value
                nodes[check] = amp.label
    if measure.window is not None and not measure.opamps:
        # a converter input: its window is the range of the converter's INPUT (the signal it is
        # fed), so its two checks are named for that side
        margins["input-high"] = measure.window[1] - measure.output[1]
        margins["input-low"] = measure.output[0] - measure.window[0]
    return margins, nodes


def supply_margin(part: Part, rails: Rails) -> float:
    low, high = rails.span_range
    return float(kernel_supply_margin(part, low, high))


_SCALES: dict[tuple[int, int], tuple] = {}  # (id(part), id(rails)) -> (part, rails, scales)


def check_scales(part: Part | None, rails: Rails) -> dict[str, float]:
    """check_scale of every check in the table for one part on one set of rails, found once per
    pair (every walk judges each stage again); the pair is kept beside them, so the ids stay
    theirs, and the few kept are dropped once many have been seen."""
    key = (id(part), id(rails))
    found = _SCALES.get(key)
    if found is None or found[0] is not part or found[1] is not rails:
        if len(_SCALES) > 512:
            _SCALES.clear()
        found = (part, rails, {c: check_scale(c, part, rails) for c in CHECK_TABLE})
        _SCALES[key] = found
    return found[2]


def check_scale(check: str, part: Part | None, rails: Rails) -> float:
    """The size a check's margin is measured against, from the table of checks (Check.scale):
    the rail span for voltages, the part's own limit for slew, current and supply (the rail span
    where the stage has no part)."""
    row = CHECK_TABLE.get(check)
    kind = row.scale if row is not None else "rails"
    if part is not None and kind != "rails":
        if kind == "slew":
            return part.slew
        if kind == "current":
            return part.output_current
        if kind == "supply":
            return part.supply[1]
        raise KeyError(kind)
    return rails.positive - rails.negative


def judge(
    measure: StageMeasure,
    part: Part | None,
    rails: Rails,
    required: float,
    measured: tuple[dict[str, float], dict[str, str]] | None = None,
    lean: bool = False,
) -> StageResult:
    """The verdict of one stage. `measured`: (each check's margin, which op amp set it) when the
    method measured them itself (rss, Monte Carlo); otherwise they are read off the measure's
    spans and windows (opamp_margins). `lean`: margins, regime, reasons and verdict only, no
    limiting check and no cautions (for a search that reads the margins alone)."""
    block = BLOCKS[measure.stage.block]
    margins, nodes = opamp_margins(measure) if measured is None else (dict(measured[0]), dict(measured[1]))
    if part is not None:
        margins["supply"] = supply_margin(part, rails)
    scales = check_scales(part, rails)
    margins = {
        c: met_at_equality(m, scales[c] if c in scales else check_scale(c, part, rails))
        for c, m in margins.items()
    }
    checked = SATURATED_LINEAR_CHECKS if block.saturates else LINEAR_CHECKS
    leaves_linear = False
    for c in checked:
        if margins.get(c, 0.0) < 0:
            leaves_linear = True
            break
    if part is not None and (block.saturates or leaves_linear):  # open loop, or broken by clipping
        margins.update(differential_margin(part, measure.input_differential))
    if block.saturates:
        regime = "saturated"
    else:
        regime = "clipping" if leaves_linear else "linear"
    reasons = [c for c in VOLTAGE_CHECKS if c in margins and margins[c] < required]
    reasons += [c for c in ("slew", "current", "supply") if margins.get(c, 0.0) < 0]
    reasons += [c for c in (DIFFERENTIAL_CHECK,) if c in margins and margins[c] < required]
    # go is the stage's own checks' result (on the clipped signal it is fed, if it is)
    go = not reasons and (regime == "saturated") == block.saturates
    if measure.fed_clipped:
        # fed by a clipping stage: a marker, not a failure of this stage (the clipping stage
        # before it already makes the chain NO-GO)
        reasons.append("fed-clipped")
    return StageResult(
        measure=measure,
        regime=regime,
        go=go,
        reasons=tuple(reasons),
        margins=margins,
        limiting=None if lean else limiting_check(margins, rails, part),
        failing_nodes=nodes,
        cautions=() if lean else tuple(stage_cautions(measure, part, rails)),
    )


def limiting_check(margins: dict[str, float], rails: Rails, part: Part | None) -> str | None:
    """The check with the least margin, each margin taken relative to its own scale. The supply
    check only limits when it fails: a part inside its supply range is not nearer to clipping
    for being near its supply limit."""
    considered = {c: m for c, m in margins.items() if c != "supply" or m < 0}
    if not considered:
        return None
    scales = check_scales(part, rails)
    relative = {
        c: m / (scales[c] if c in scales else check_scale(c, part, rails)) for c, m in considered.items()
    }
    first = min(relative, key=lambda c: relative[c])
    least = relative[first]
    if not math.isfinite(least):
        return first
    # mirror-image checks of a symmetric chain (input-high and input-low) differ by rounding
    # only: within LIMITING_TIE they are one, and the first in the checks' order limits
    return next((c for c, r in relative.items() if r <= least + LIMITING_TIE * (1.0 + abs(least))), first)


def stage_cautions(measure: StageMeasure, part: Part | None, rails: Rails) -> list[str]:
    cautions = []
    if measure.gain_error is not None and measure.gain_error > GAIN_ERROR_CAUTION:
        cautions.append(
            f"closed-loop gain falls {measure.gain_error:.1%} short at the top of the "
            "band: the part's gain-bandwidth is low for this noise gain"
        )
    if part is not None and rails.span_range[1] > part.supply_abs_max:
        cautions.append(
            f"the supply can reach {rails.span_range[1]:.3g} V, above the part's "
            f"absolute maximum of {part.supply_abs_max:.3g} V: the part may be damaged"
        )
    if measure.reaches is not None:
        low, high = measure.always if measure.always is not None else measure.reaches
        if not high:
            cautions.append(
                "the input may never cross the threshold upward at every tolerance "
                "corner, so the output can stick low"
            )
        if not low:
            cautions.append(
                "the input may never cross the threshold downward at every tolerance "
                "corner, so the output can stick high"
            )
    return cautions


def chain_cautions(chain: Chain) -> list[str]:
    cautions = []
    source = chain.source
    if source.amplitude > 0 and not source.band_given:
        # the loader's default band when none is written; a band = [1, 1] written is meant
        cautions.append(
            f"{chain.path}: source.band: the AC amplitude of {source.amplitude:.3g} V is checked "
            "at 1 Hz only (no band given): write band = [lowest, highest] for the frequencies "
            'it has, or ["0", "0"] for a DC swing'
        )
    for rails in chain.rails.values():
        top = rails.span_range[1]
        if top > SELV_DC_LIMIT:
            cautions.append(
                f"rails {rails.name!r} span up to {top:.3g} V between conductors, above the 60 V DC "
                "limit of safety extra-low voltage (SELV in IEC 60335-1, ES1 in IEC 62368-1): "
                "follow local codes and licensed practice for insulation, clearances and protection"
            )
    return cautions
