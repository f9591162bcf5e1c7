"""How far the source amplitude may rise before a stage leaves its linear regime (headroom_db)."""

from __future__ import annotations

import numpy as np

from railroom.engine.methods import corners

HEADROOM_LIMIT_DB = 120.0


def linear_room(results) -> float:
    """Least margin of the linear checks over the stages, each relative to its own scale;
    negative once any stage leaves its linear regime (saturated-by-design stages excepted)."""
    return min(check_rooms(results).values(), default=float(np.inf))


def check_rooms(results) -> dict[tuple[int, str], float]:
    """Each stage's linear checks, each margin relative to its own scale ((stage, check) ->
    room); a clipping stage also (stage, "clipping") -> -1e-12 (linear_room is their least)."""
    from railroom.engine.verdict.judge import LINEAR_CHECKS

    rooms: dict[tuple[int, str], float] = {}
    for k, result in enumerate(results):
        if result.regime == "saturated":
            continue
        for check in LINEAR_CHECKS:
            if check in result.margins:
                rooms[(k, check)] = result.margins[check] / _check_scale(result, check)
        if result.regime == "clipping":
            rooms[(k, "clipping")] = -1e-12
    return rooms


def crossing(before: float, at_before: dict, low: float, at_low: dict) -> float | None:
    """Where the first check is met at equality above `low`, each check's room a straight line
    in the amplitude through its values at two linear amplitudes `before` < `low`: inside the
    linear regime every bound a walk finds is a sum of the source's bounds times fixed gains,
    so the margins move in proportion to the amplitude (slew and current too, while no limit
    of their own takes over). None when no check falls between the two."""
    found = None
    for key, a in at_low.items():
        b = at_before.get(key)
        if b is not None and b > a >= 0:
            x = low + a * (low - before) / (b - a)
            found = x if found is None else min(found, x)
    return found


def steps(amplitude: float) -> int:
    """The 0.01 dB step at or below an amplitude scale, as a count of steps (1e-9: a scale
    made from a step, 10 ** (k / 2000), is that step again)."""
    return int(np.floor(20 * np.log10(amplitude) * 100 + 1e-9))


def step_above(low: float) -> float:
    """The amplitude scale of the 0.01 dB step after the one at or below `low`."""
    return float(10 ** ((steps(low) + 1) / 2000))


def on_step(guess: float, low: float, high: float) -> float:
    """The 0.01 dB step at or below `guess` strictly between low and high (there is one: the
    search stops otherwise); the first step above low when the guess's own is not above it."""
    step = float(10 ** (steps(guess) / 2000))
    if low > 0 and step <= low:
        step = step_above(low)
    if step >= high or step <= low:  # low == 0: the guess itself (no step is below every other)
        return guess
    return step


def _check_scale(result, check: str) -> float:
    """The search's own normalisation (volts as they are; slew and current by what the op amp
    has): the edge it finds, where the least margin crosses zero, does not depend on it. The
    check's scale for verdicts and the limiting check is judge.check_scale, from the table."""
    amps = result.measure.opamps
    if check == "slew" and amps:
        return max(amps[0].slew_available, 1e-30)
    if check == "current" and amps:
        return max(amps[0].current_available, 1e-30)
    return 1.0


def headroom_db(prepared: corners.Prepared, at_full_scale=None, stop=None) -> float | None:
    """dB the source AC amplitude may rise (negative: must fall) before a stage leaves the linear
    regime; None without an AC part or when DC alone already fails. `at_full_scale`: the corners
    results of `prepared` at the file's amplitude when the caller has them (saves one walk;
    margins and regime do not depend on the nominal notes).

    The figure is a 0.01 dB step: the largest one whose amplitude keeps every stage linear (the
    steps above it do not), so the amplitude it names is itself linear. The amplitude is
    bracketed by walks at 0, 1 and tenfold steps; then each walk's guess is the crossing of the
    first check to run out of room, each check's margin a straight line in the amplitude through
    the two highest linear walks (crossing: exact while the chain stays linear, so a long chain
    needs no more walks than a short one), else false position on the least room (Illinois
    variant; Dahlquist & Bjorck, Numerical Methods, 6.2), taken to the 0.01 dB step at or below
    it; the search ends when no step lies between the highest linear walk and the lowest
    clipping one. `stop()`, called before each walk, raises to end a search gone stale
    (analysis.Stopper).
    """
    if prepared.chain.source.amplitude <= 0:
        return None
    if all(plan.block.saturates or plan.block.window_only for plan in prepared.plans):
        return None  # no stage with a linear regime to leave: no headroom to quote

    def room(scale: float) -> tuple[float, dict]:
        if stop is not None:
            stop()
        rooms = check_rooms(corners.walk(prepared, scale=scale, lean=True))
        return min(rooms.values(), default=float(np.inf)), rooms

    (room_low, at_low), low = room(0.0), 0.0
    if room_low < 0:
        return None
    high = 1.0
    if at_full_scale is None:
        room_high, at_high = room(1.0)
    else:
        at_high = check_rooms(at_full_scale)
        room_high = min(at_high.values(), default=float(np.inf))
    limit = 10 ** (HEADROOM_LIMIT_DB / 20)
    before, at_before = low, at_low  # the linear amplitude below `low` (crossing)
    while room_high >= 0:
        if high >= limit:
            return HEADROOM_LIMIT_DB
        before, at_before = low, at_low
        low, room_low, at_low = high, room_high, at_high
        high = min(high * 10.0, limit)
        room_high, at_high = room(high)
    side = 0
    for _ in range(60):
        if low > 0 and step_above(low) >= high:
            break  # no 0.01 dB step between: the figure is low's, and the step above is not linear
        # the first check's crossing on the lines through the two highest linear amplitudes
        # (crossing); where none falls between low and high, false position on the least room
        # (Illinois variant). Then the 0.01 dB step at or below it, inside the bracket: the
        # figure is a step, so the search walks steps only
        guess = crossing(before, at_before, low, at_low) if before < low else None
        if guess is None or not low < guess < high:
            guess = high - room_high * (high - low) / (room_high - room_low)
            guess = min(max(guess, low + 1e-9 * high), high - 1e-9 * high)
        guess = on_step(guess, low, high)
        value, at = room(guess)
        if value >= 0:
            before, at_before = low, at_low
            low, room_low, at_low = guess, value, at
            if side == 1:
                room_high /= 2
            side = 1
        else:
            high, room_high, at_high = guess, value, at
            if side == -1:
                room_low /= 2
            side = -1
    if low <= 0:
        return -HEADROOM_LIMIT_DB
    # down to the 0.01 dB below, not to the nearest: a rounded-up figure could sit past the edge
    # (the 1e-9 keeps a figure already on the 0.01 dB grid, such as 6.02, where it is)
    return float(np.floor(20 * np.log10(low) * 100 + 1e-9) / 100)
