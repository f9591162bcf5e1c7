"""The engine's one entry point: a loaded chain and its parts in, a judged result out.

result = analyse(chain, parts)                  # method, samples, seed, margin from the file
result = analyse(chain, parts, method="rss")    # or overridden by the caller
"""

from __future__ import annotations

from dataclasses import replace
from collections.abc import Mapping

import numpy as np

from railroom.engine.checks import chain_cautions
from railroom.engine.methods import corners
from railroom.engine.model import Chain, InputError, Part
from railroom.engine.plan import frequency_grid, plan_chain
from railroom.engine.results import ChainResult

HEADROOM_LIMIT_DB = 120.0
RARE_BELOW = 10  # fewer failing Monte Carlo draws: also estimate the small probability


def with_overrides(
    chain: Chain,
    method: str | None = None,
    samples: int | None = None,
    seed: int | None = None,
    margin: float | None = None,
) -> Chain:
    conditions = chain.conditions
    changes = {
        k: v
        for k, v in (("method", method), ("samples", samples), ("seed", seed), ("margin", margin))
        if v is not None
    }
    return replace(chain, conditions=replace(conditions, **changes)) if changes else chain


def band_grid(chain: Chain, plans) -> np.ndarray:
    from railroom.engine.methods.corners import corner_values

    rise = chain.conditions.worst_temperature_rise
    critical = []
    for p in plans:
        if not p.block.saturates:
            v = corner_values(p, rise)
            # the ideal-op-amp peaks and the real ones (finite gain-bandwidth)
            critical += [p.block.critical_frequencies(v), p.block.real_critical_frequencies(v, p.part)]
    return refined(chain, plans, frequency_grid(chain, critical, chain.source.amplitude))


REFINE_POINTS = 8  # added between the neighbours of each stage's peak inside the band


def refined(chain: Chain, plans, grid: np.ndarray) -> np.ndarray:
    """The grid with more points around every frequency inside the band where some stage's
    nominal extreme (highest value, lowest value, amplitude, or slope 2 pi f a), or an op amp's
    output current per volt of the signal, peaks: each
    block's own peak is on the grid already, but a chain's product of a falling and a rising
    response peaks between the points (an integrator then a Sallen-Key high-pass read 0.07 %
    short on the 16-per-decade grid; tests/references/catalogue_brute.py). A peak is flat, so the
    shortfall shrinks with the square of the spacing: about 80 times less with 8 points added."""
    if len(grid) < 3:
        return grid
    from railroom.engine.methods import corners
    from railroom.engine.stage_walk import walk_chain

    levels: dict = {}
    prepared = corners.prepare(chain, plans, grid, nominal=True)
    walk_chain(prepared, corners.start_signal(chain, grid), nominal=True, levels=levels)
    peaks = set()
    for response in prepared.responses:  # each op amp's output current peaks on its own
        for amp in response.opamps if response is not None else ():
            transfer = amp.current.transfers.get("in")
            if transfer is not None and transfer.shape[-1] == len(grid) + 1:
                i = int(np.argmax(np.max(np.abs(transfer[..., 1:]), axis=0)))
                if 0 < i < len(grid) - 1:
                    peaks.add(i)
    for bounds in levels.values():
        for curve in (bounds.hi, -bounds.lo, bounds.amp_hi, bounds.amp_hi * grid):
            i = int(np.argmax(np.max(curve, axis=0)))
            if 0 < i < len(grid) - 1:
                peaks.add(i)
    extra = [np.geomspace(grid[i - 1], grid[i + 1], 2 * REFINE_POINTS + 3)[1:-1] for i in sorted(peaks)]
    return np.unique(np.concatenate([grid, *extra])) if extra else grid


def analyse(
    chain: Chain,
    parts: Mapping[str, Part],
    *,
    method: str | None = None,
    samples: int | None = None,
    seed: int | None = None,
    margin: float | None = None,
    design_aids: bool = True,
    headroom: bool = True,
    progress=None,
) -> ChainResult:
    """Check every stage of the chain; raises InputError for unknown parts. `design_aids`:
    sensitivity ranking and fixes (engine/fixes.py); `headroom`: the headroom_db search. The
    interface turns both off for the instant re-check and fills them in from a worker.
    `progress(fraction) -> bool` hears how far Monte Carlo is; returning False stops it with
    methods.montecarlo.Cancelled."""
    chain = with_overrides(chain, method, samples, seed, margin)
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    nominal = corners.run(corners.prepare(chain, plans, freqs, nominal=True), nominal=True)
    notes = [
        {"nominal": n.measure.output, "gain_error": e} for n, e in zip(nominal, gain_errors(chain, plans))
    ]
    prepared = corners.prepare(chain, plans, freqs)
    stages = corners.run(prepared, notes=notes)
    method_name = chain.conditions.method
    chain_yield = None
    corner_stages = stages
    # The per-circuit layout and its linearisation serve the statistical method and the design
    # aids alike: built once here from the prepared responses rather than once by each.
    layout = lin = None
    if method_name != "corners" or design_aids:
        from railroom.engine.draw_walk import build_layout

        layout = build_layout(chain, plans, freqs, prepared, corner_stages)
    if method_name == "rss" or design_aids:
        from railroom.engine.sensitivity import linearise

        lin = linearise(layout, decisive=method_name == "montecarlo")
    if method_name != "corners":
        from railroom.engine.methods import run_statistical

        stages, chain_yield = run_statistical(
            method_name, chain, plans, freqs, stages, progress, layout=layout, lin=lin
        )
    rare = None
    if method_name == "montecarlo" and chain_yield is not None and layout is not None:
        from railroom.engine.methods.rare import estimate, failing_draws

        if failing_draws(chain_yield, chain.conditions.samples) < RARE_BELOW:
            from railroom.engine.sensitivity import linearise

            rare = estimate(layout, lin or linearise(layout), seed=chain.conditions.seed)
    headroom_found = headroom_db(prepared, corner_stages) if headroom else None
    if design_aids:
        from railroom.engine.fixes import design_aids as aids

        stages = aids(
            chain,
            plans,
            freqs,
            stages,
            corner_stages,
            headroom_found,
            lin=lin,
            baseline=corner_stages if method_name == "montecarlo" else stages,
        )
    from railroom.engine.part_limits import with_limit_cautions

    stages = with_limit_cautions(chain, plans, stages, prepared.responses)
    return ChainResult(
        chain=chain,
        method=method_name,
        samples=chain.conditions.samples if method_name == "montecarlo" else None,
        stages=tuple(stages),
        go=all(s.go for s in stages),
        headroom_db=headroom_found,
        cautions=tuple(chain_cautions(chain)),
        chain_yield=chain_yield,
        rare=rare,
    )


def gain_errors(chain: Chain, plans) -> list[float | None]:
    """Closed-loop gain shortfall at the top of the band against the ideal op amp, nominal values."""
    from railroom.engine.methods.corners import corner_values
    from railroom.engine.opamp import inverse_open_loop, laplace_grid

    s = laplace_grid(np.array([chain.source.band[1]]))
    errors: list[float | None] = []
    differential = chain.source.differential
    for plan in plans:
        if plan.block.saturates or plan.part is None:
            errors.append(None)
            differential = False
            continue
        v = corner_values(plan, 0.0, nominal=True)
        real = plan.block.respond(v, s, inverse_open_loop(plan.part, s), 0.0, differential).output
        ideal = plan.block.respond(v, s, inverse_open_loop(None, s), 0.0, differential).output
        signal = ("pos", "neg") if differential else ("in",)
        h_real = sum(real.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
        h_ideal = sum(ideal.transfers.get(k, 0) * (-1) ** i for i, k in enumerate(signal))
        magnitude = abs(complex(np.ravel(h_ideal)[-1]))
        errors.append(None if magnitude == 0 else float(1.0 - abs(complex(np.ravel(h_real)[-1])) / magnitude))
        differential = False
    return errors


def linear_room(results) -> float:
    """Least margin of the linear checks over the stages, each relative to its own scale;
    negative once any stage leaves its linear regime (saturated-by-design stages excepted)."""
    from railroom.engine.checks import LINEAR_CHECKS

    room = np.inf
    for result in results:
        if result.regime == "saturated":
            continue
        for check in LINEAR_CHECKS:
            if check in result.margins:
                scale = _check_scale(result, check)
                room = min(room, result.margins[check] / scale)
        if result.regime == "clipping":
            room = min(room, -1e-12)
    return float(room)


def _check_scale(result, check: str) -> float:
    amps = result.measure.opamps
    if check == "slew" and amps:
        return max(amps[0].slew_available, 1e-30)
    if check == "current" and amps:
        return max(amps[0].current_available, 1e-30)
    return 1.0


def headroom_db(prepared: corners.Prepared, at_full_scale=None) -> float | None:
    """dB the source AC amplitude may rise (negative: must fall) before a stage leaves the linear
    regime; None without an AC part or when DC alone already fails. `at_full_scale`: the corners
    results of `prepared` at the file's amplitude when the caller has them (saves one walk;
    margins and regime do not depend on the nominal notes).

    The least linear margin falls almost linearly with the amplitude, so a false-position search
    on the amplitude (Illinois variant; Dahlquist & Bjorck, Numerical Methods, 6.2) brackets the
    edge in a handful of passes; a final step keeps the answer on the linear side, to 0.01 dB."""
    if prepared.chain.source.amplitude <= 0:
        return None
    if all(plan.block.saturates or plan.block.window_only for plan in prepared.plans):
        return None  # no stage with a linear regime to leave: no headroom to quote

    def room(scale: float) -> float:
        return linear_room(corners.run(prepared, scale=scale))

    low, room_low = 0.0, room(0.0)
    if room_low < 0:
        return None
    high, room_high = 1.0, (room(1.0) if at_full_scale is None else linear_room(at_full_scale))
    limit = 10 ** (HEADROOM_LIMIT_DB / 20)
    while room_high >= 0:
        if high >= limit:
            return HEADROOM_LIMIT_DB
        low, room_low = high, room_high
        high, room_high = min(high * 10.0, limit), room(min(high * 10.0, limit))
    side = 0
    for _ in range(60):
        if low > 0 and 20 * np.log10(high / low) < 0.01:
            break
        guess = high - room_high * (high - low) / (room_high - room_low)
        guess = min(max(guess, low + 1e-9 * high), high - 1e-9 * high)
        if low > 0 and guess / low < 10 ** (0.004 / 20):  # creep: step past the edge
            guess = low * 10 ** (0.005 / 20)
        value = room(guess)
        if value >= 0:
            low, room_low = guess, value
            if side == 1:
                room_high /= 2
            side = 1
        else:
            high, room_high = guess, value
            if side == -1:
                room_low /= 2
            side = -1
    if low <= 0:
        return -HEADROOM_LIMIT_DB
    return round(float(20 * np.log10(low)), 2)


def load_checked(path: str, extra_preset_dirs: tuple[str, ...] = (), strict: bool = False):
    """Read a chain file and the preset library it searches; raises InputError on any problem
    that stops the check (a broken preset file only matters when a stage needs its part, but a
    part whose latest definition is broken is never served from an earlier folder).
    `strict` (the check command): a preset folder that is missing (given with --presets or named
    in the chain) or cannot be read stops the check too, since the parts it should hold would
    silently be missing; the interface opens the chain and shows these as a notice instead."""
    from railroom.engine.files import load_chain
    from railroom.engine.presets import load_library, missing_folders, search_order

    missing = missing_folders(extra_preset_dirs) if strict else []
    try:
        chain = load_chain(path, check_folders=strict)
    except InputError as err:  # name unknown parts in the same round as the other problems
        found = [*err.problems, *unknown_parts_in_text(path, extra_preset_dirs)]
        raise InputError([*missing, *sorted(found, key=lambda p: p.line or 0)]) from None
    library = load_library(search_order(chain.preset_dirs, extra_preset_dirs))
    try:
        plan_chain(chain, library.parts)
    except InputError as err:
        raise InputError([*missing, *err.problems, *library.problems]) from None
    if strict and (missing or library.fatal):
        raise InputError([*missing, *library.fatal])
    return chain, library


def unknown_parts_in_text(path: str, extra_preset_dirs: tuple[str, ...] = ()) -> list:
    """Unknown part ids of a chain file that does not load, read straight from its TOML."""
    from pathlib import Path
    from railroom.engine.blocks import BLOCKS
    from railroom.engine.plan import unknown_part
    from railroom.engine.presets import load_library, search_order
    from railroom.engine.reading import FileUnreadable, parse_toml, read_user_file
    from railroom.engine.toml_lines import key_lines

    try:
        text = read_user_file(path).removeprefix("\ufeff")
    except FileUnreadable:
        return []
    data, _ = parse_toml(text, path)
    stages = data.get("stage") if isinstance(data, dict) else None
    if not isinstance(stages, list):
        return []
    named = data.get("presets", [])
    folders = (
        tuple(str(Path(path).parent / p) for p in named if isinstance(p, str))
        if isinstance(named, list)
        else ()
    )
    parts = load_library(search_order(folders, extra_preset_dirs)).parts
    lines = key_lines(text)
    found = []
    for index, stage in enumerate(stages, start=1):
        if not isinstance(stage, dict):
            continue
        block = BLOCKS.get(stage.get("block")) if isinstance(stage.get("block"), str) else None
        part = stage.get("part")
        if block is not None and block.uses_part and isinstance(part, str) and part not in parts:
            found.append(unknown_part(path, lines.get(f"stage.{index}.part"), index, part, parts))
    return found
