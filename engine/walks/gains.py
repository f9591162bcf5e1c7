"""Gain per stage and from the source (README, "The JSON report"): small-signal magnitudes.

Every block reports its output as transfers per volt of what drives it ("in": the source's
open-circuit voltage, or the Thevenin voltage of a passive stage before it, whose impedance the
stage meets itself). Per corner row and Laplace point (DC first):

    stage gain        |H_k|  (a differential source: |H_pos - H_neg| / 2, per volt of difference)
    from the source   |H_1 H_2 ... H_k|, row by row where a stage's corners pair with the passive
                      stage's before it (corners.stage_values), else the extremes multiplied

A passive stage followed by a stage that knows its input terminal (bounds_walk.shows_input_of) is
quoted with that stage's input on it, the voltage the stage shows: its gain is |H_k T| and the
next stage's |H_{k+1} / T|, T the terminal per volt of the Thevenin voltage, so the product is
unchanged. Magnitudes multiply, so the extremes of a product of independent factors are the
products of their extremes, per frequency: exact for the corners enumerated, and where the stage
walk merges rows the same outside bound. A passive stage feeding several meets each with the others' inputs on its
node (walks/sibling_loads.py): the node per volt of its Thevenin voltage, |s| per row, multiplies
in. A saturated-by-design stage has no small-signal gain;
the stages after it have none from the source.
"""

from __future__ import annotations

import numpy as np

from railroom.engine.walks.bounds_walk import plan_parents, shows_input_of

Range = tuple[float, float]


def _magnitude(node, rows: int, width: int, differential: bool) -> np.ndarray:
    t = node.transfers
    if differential:
        h = (np.asarray(t.get("pos", 0.0)) - np.asarray(t.get("neg", 0.0))) / 2.0
    else:
        h = np.asarray(t.get("in", 0.0))
    return np.broadcast_to(np.abs(h), (rows, width)) if np.ndim(h) else np.zeros((rows, width))


def _tiled(x: np.ndarray, rows: int) -> np.ndarray:
    """A passive stage's rows handed to the stage after it (bounds_walk.paired)."""
    reps = rows // x.shape[0]
    return np.broadcast_to(x, (reps, *x.shape)).reshape(rows, x.shape[-1])


def _ranges(mag: np.ndarray) -> dict[str, Range]:
    band = mag[:, 1:] if mag.shape[-1] > 1 else mag[:, :1]
    dc = mag[:, 0]
    return {"dc": (float(dc.min()), float(dc.max())), "band": (float(band.min()), float(band.max()))}


def stage_gains(prepared) -> list[tuple[dict[str, Range] | None, dict[str, Range] | None]]:
    """Per stage (gain, gain_from_source), each {"dc": (min, max), "band": (min, max)} or None."""
    plans, responses = prepared.plans, prepared.responses
    width = len(prepared.freqs) + 1
    own: list[np.ndarray | None] = []
    source: list[tuple[np.ndarray, np.ndarray] | None] = []
    differential = prepared.chain.source.differential
    parents = plan_parents(plans)
    thevenin: dict = {}  # a passive stage feeding several: its own figures, before a child quotes it
    thevenin_own: dict = {}
    for k, response in enumerate(responses):
        rows = max(np.shape(x)[0] if np.ndim(x) else 1 for x in prepared.values[k].values())
        if response is None:  # saturated by design
            own.append(None)
            source.append(None)
            continue
        mag = _magnitude(response.output, rows, width, differential and parents[k] < 0)
        parent = parents[k]
        if parent < 0:  # fed by the source
            source.append((mag, mag))
        elif (fed := source[parent]) is None:
            source.append(None)
        else:
            lo, hi = thevenin.get(parent, fed)
            before = thevenin_own.get(parent, own[parent])
            view = prepared.views.get(k) if hasattr(prepared, "views") else None
            if view is not None:  # each stage it feeds reads its Thevenin figures, not the last's
                thevenin.setdefault(parent, (lo, hi))
                thevenin_own.setdefault(parent, before)
            if view is not None:  # the passive stage's node loaded by the others it feeds
                factor = view.magnitude
                lo, hi = _tiled(lo, factor.shape[0]) * factor, _tiled(hi, factor.shape[0]) * factor
                before = None if before is None else _tiled(before, factor.shape[0]) * factor
            if prepared.joint[k]:
                lo, hi = _tiled(lo, rows), _tiled(hi, rows)
            else:
                lo, hi = np.min(lo, axis=0, keepdims=True), np.max(hi, axis=0, keepdims=True)
            source.append((lo * mag, hi * mag))
            if prepared.joint[k] and shows_input_of(plans, responses, parent, k) and before is not None:
                # the passive stage before is quoted with this stage's input on it (and, when
                # it feeds several, the others' too: sibling_loads.py)
                terminal = _magnitude(response.terminal, rows, width, False)
                own[parent] = _tiled(before, rows) * terminal
                source[parent] = (lo * terminal, hi * terminal)
                mag = np.divide(mag, terminal, out=np.zeros_like(mag), where=terminal > 0)
        own.append(mag)
    return [
        (None if g is None else _ranges(g), None if s is None else _joined(s)) for g, s in zip(own, source)
    ]


def _joined(pair: tuple[np.ndarray, np.ndarray]) -> dict[str, Range]:
    lo, hi = _ranges(pair[0]), _ranges(pair[1])
    return {key: (lo[key][0], hi[key][1]) for key in lo}
