"""How far the source amplitude may rise before a stage leaves its linear regime (headroom_db)."""

from __future__ import annotations

import numpy as np

from railroom.engine.methods import corners

HEADROOM_LIMIT_DB = 120.0


def linear_room(results) -> float:
    """Least margin of the linear checks over the stages, each relative to its own scale;
    negative once any stage leaves its linear regime (saturated-by-design stages excepted)."""
    from railroom.engine.verdict.judge import LINEAR_CHECKS

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

    The least linear margin falls almost linearly with the amplitude, so a false-position search
    on the amplitude (Illinois variant; Dahlquist & Bjorck, Numerical Methods, 6.2) brackets the
    edge in a handful of passes; a final step keeps the answer on the linear side, to 0.01 dB, and the figure is rounded down
    to the 0.01 dB below, so the amplitude it names is itself linear. `stop()`, called before
    each walk, raises to end a search gone stale (analysis.Stopper)."""
    if prepared.chain.source.amplitude <= 0:
        return None
    if all(plan.block.saturates or plan.block.window_only for plan in prepared.plans):
        return None  # no stage with a linear regime to leave: no headroom to quote

    def room(scale: float) -> float:
        if stop is not None:
            stop()
        return linear_room(corners.walk(prepared, scale=scale, lean=True))

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
    # down to the 0.01 dB below, not to the nearest: a rounded-up figure could sit past the edge
    # (the 1e-9 keeps a figure already on the 0.01 dB grid, such as 6.02, where it is)
    return float(np.floor(20 * np.log10(low) * 100 + 1e-9) / 100)
