"""An illustrative op-amp part with no offset, drift or bias, so that a test sees only the effect
it is about (the trust tests vary one field at a time with `part(...)`)."""

from __future__ import annotations

from railroom.engine.circuit.model import Part

CLEAN = dict(
    id="clean",
    description="test part",
    supply=(2.7, 40.0),
    supply_abs_max=44.0,
    output_headroom=(0.03, 0.03),
    output_resistance=40.0,
    input_headroom=(-0.1, -0.1),
    gbw=10e6,
    slew=10e6,
    open_loop_gain=1e7,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=50e-3,
)


def part(**changes) -> dict[str, Part]:
    return {"clean": Part(**{**CLEAN, **changes})}
