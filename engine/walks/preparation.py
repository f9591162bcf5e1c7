"""From a loaded chain to what the methods evaluate: parts resolved, values spread, grid built."""

from __future__ import annotations

from dataclasses import dataclass
from collections.abc import Mapping
from typing import cast

import numpy as np

from railroom.engine.circuit.blocks import BLOCKS
from railroom.engine.circuit.blocks.base import Block
from railroom.engine.circuit.model import Chain, InputError, Part, Problem, Rails, Stage
from railroom.engine.formats.values import Quantity, visible

POINTS_PER_DECADE = 16


@dataclass(frozen=True)
class StagePlan:
    index: int
    stage: Stage
    block: Block
    part: Part | None
    rails: Rails
    quantities: Mapping[str, Quantity]  # every numeric field, flattened ("inputs.1.r")
    flags: Mapping[str, object]  # booleans such as invert
    path: str = "<chain>"  # the chain file, for located messages


def stage_quantities(stage: Stage) -> dict[str, Quantity]:
    found: dict[str, Quantity] = {}
    for key, value in stage.values.items():
        if isinstance(value, Quantity):
            found[key] = value
        elif key == "inputs":
            # a summing block's inputs, as chain_file._read_inputs reads them
            inputs = cast("list[dict[str, Quantity]] | None", value)
            for i, item in enumerate(inputs or [], start=1):
                found[f"inputs.{i}.r"] = item["r"]
                found[f"inputs.{i}.v"] = item["v"]
    if stage.load is not None:
        found["load"] = stage.load
        if stage.load_to is not None:
            found["load_to"] = stage.load_to  # a fixed voltage the load returns to (blocks.base)
    return found


def plan_chain(chain: Chain, parts: Mapping[str, Part]) -> list[StagePlan]:
    """Resolve every stage's part and rails; unknown parts are located problems."""
    problems = []
    plans = []
    for index, stage in enumerate(chain.stages, start=1):
        block = BLOCKS[stage.block]
        part = None
        if block.uses_part:
            part = parts.get(stage.part or "")
            if part is None:
                problems.append(
                    unknown_part(
                        chain.path, stage.lines.get("part", stage.line), index, stage.part or "", parts
                    )
                )
        flags = {k: v for k, v in stage.values.items() if isinstance(v, bool)}
        plans.append(
            StagePlan(
                index, stage, block, part, chain.rails_for(stage), stage_quantities(stage), flags, chain.path
            )
        )
    if problems:
        raise InputError(problems)
    return plans


def unknown_part(path: str, line: int | None, index: int, name: str, parts: Mapping[str, Part]) -> Problem:
    broken = getattr(parts, "broken", {}).get(name)
    if broken is not None:  # presets.PartTable: its latest definition failed to read
        where = f"{broken.file}:{broken.line}" if broken.line else broken.file
        return Problem(
            path,
            line,
            f"stage.{index}.part",
            f"part {name!r} is defined in {where}, which could not be read "
            f"({broken.field}: {visible(broken.message, 120)}); no other "
            "definition is used in its place",
        )
    near = _near(name, parts)
    return Problem(
        path,
        line,
        f"stage.{index}.part",
        f"unknown part {name!r}" + (f"; did you mean {near!r}?" if near else "; see `railroom presets list`"),
    )


def _near(name: str, parts: Mapping[str, Part]) -> str | None:
    import difflib

    found = difflib.get_close_matches(name, list(parts), n=1, cutoff=0.5)
    return found[0] if found else None


def spread(q: Quantity, temperature_rise: float, default_tolerance: float = 0.0) -> tuple[float, float]:
    """The two ends of a value: tolerance and +/- tempco over the worst temperature rise."""
    tol = q.tolerance if q.tolerance is not None else 0.0
    drift = (q.tempco or 0.0) * temperature_rise
    ends = (q.value * (1 - tol) * (1 - drift), q.value * (1 + tol) * (1 + drift))
    return (min(ends), max(ends))


def frequency_grid(chain: Chain, critical: list[np.ndarray], amplitude: float) -> np.ndarray:
    """Band frequencies: log-spaced with both ends, plus every block's possible peak inside it."""
    low, high = chain.source.band
    if amplitude == 0 or high <= low:
        return np.array([high])
    count = max(8, int(np.ceil(np.log10(high / low) * POINTS_PER_DECADE)) + 1)
    grid = np.geomspace(low, high, count)
    extra = np.concatenate([np.ravel(c) for c in critical]) if critical else np.empty(0)
    extra = extra[(extra > low) & (extra < high)]
    return np.unique(np.concatenate((grid, extra)))


def band_grid(chain: Chain, plans) -> np.ndarray:
    return nominal_band(chain, plans)[0]


def nominal_band(chain: Chain, plans) -> tuple[np.ndarray, tuple | None]:
    """(the band grid, what refining it walked): the grid, and when refining added no point,
    the nominal Prepared (corners.prepare(..., nominal=True)) on that very grid with its walk's
    results, which are then the nominal walk of the chain (analysis.analyse reuses them);
    None when the grid was refined (or too short to refine)."""
    from railroom.engine.methods.corners import corner_values

    from railroom.engine.walks.reuse import STAGE_FACTS, frozen, plan_key

    rise = chain.conditions.worst_temperature_rise
    critical = []
    for p in plans:
        if not p.block.saturates:

            def peaks(p=p) -> tuple[np.ndarray, np.ndarray]:
                v = corner_values(p, rise)
                # the ideal-op-amp peaks and the real ones (finite gain-bandwidth)
                return frozen((p.block.critical_frequencies(v), p.block.real_critical_frequencies(v, p.part)))

            # kept by the stage's own inputs (walks/reuse.py): a keystroke changes one stage
            critical += STAGE_FACTS.get(("peaks", plan_key(p), repr(rise)), peaks)
    return refined_walked(chain, plans, frequency_grid(chain, critical, chain.source.amplitude))


REFINE_POINTS = 8  # added between the neighbours of each stage's peak inside the band


def refined_walked(chain: Chain, plans, grid: np.ndarray) -> tuple[np.ndarray, tuple | None]:
    """The grid with more points around every frequency inside the band where some stage's
    nominal extreme (highest value, lowest value, amplitude, or slope 2 pi f a), or an op amp's
    output current per volt of the signal, peaks: each
    block's own peak is on the grid already, but a chain's product of a falling and a rising
    response peaks between the points (an integrator then a Sallen-Key high-pass read 0.07 %
    short on the 16-per-decade grid; tests/references/catalogue_brute.py). A peak is flat, so the
    shortfall shrinks with the square of the spacing: about 80 times less with 8 points added.
    A chain with named nets walks each joint walk (methods/corners.py); each one's peaks count.
    With the grid comes (the nominal Prepared, its walk's results) when no point was added
    (nominal_band), else None."""
    if len(grid) < 3:
        return grid, None
    from railroom.engine.methods import corners
    from railroom.engine.walks.bounds_walk import walk_chain

    prepared = corners.prepare(chain, plans, grid, nominal=True)
    walks = getattr(prepared, "joint_walks", None) or (prepared,)
    peaks = set()
    results = None
    for each in walks:
        levels: dict = {}
        # the nominal walk itself (corners.walk(prepared, nominal=True)): levels change no result
        results = walk_chain(each, corners.start_signal(chain, grid), nominal=True, levels=levels)
        for response in each.responses:  # each op amp's output current peaks on its own
            for amp in response.opamps if response is not None else ():
                transfer = amp.current.transfers.get("in")
                if transfer is not None and transfer.shape[-1] == len(grid) + 1:
                    i = int(np.argmax(np.max(np.abs(transfer[..., 1:]), axis=0)))
                    if 0 < i < len(grid) - 1:
                        peaks.add(i)
        for bounds in levels.values():
            if bounds is None:
                continue
            for curve in (bounds.hi, -bounds.lo, bounds.amp_hi, bounds.amp_hi * grid):
                i = int(np.argmax(np.max(curve, axis=0)))
                if 0 < i < len(grid) - 1:
                    peaks.add(i)
    extra = [np.geomspace(grid[i - 1], grid[i + 1], 2 * REFINE_POINTS + 3)[1:-1] for i in sorted(peaks)]
    if extra:
        return np.unique(np.concatenate([grid, *extra])), None
    return grid, (prepared, results) if len(walks) == 1 and walks[0] is prepared else None
