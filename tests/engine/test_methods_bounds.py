"""Property: on monotone chains no Monte Carlo draw lands outside the corners bounds.

Extreme value analysis bounds every built circuit when each output is monotone in each
toleranced value (ECSS-Q-HB-30-01A, extreme value analysis): gain stages and dividers are, up to
the first stage that may clip.
"""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from railroom.engine.walks.preparation import band_grid
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners, montecarlo
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain

PART = Part(
    id="amp",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.0, 0.8),
    output_resistance=50.0,
    input_headroom=(1.5, 1.5),
    gbw=1e6,
    slew=0.5e6,
    open_loop_gain=1e5,
    offset=2e-3,
    offset_drift=5e-6,
    bias_current=50e-9,
    output_current=20e-3,
)

STAGES = {
    "noninverting": 'rf = "{a}k {t}% 50ppm"\nrg = "{b}k {t}%"',
    "inverting": 'rin = "{b}k {t}%"\nrf = "{a}k {t}% 25ppm"',
    "divider": 'top = "{a}k {t}%"\nbottom = "{b}k {t}%"',
    "follower": "",
}


def chain_text(kinds, values, tolerance, level, amplitude) -> str:
    text = f"""format = 1
title = "monotone"
[conditions]
temperature = [-20, 70]
[rails.main]
positive = "12"
negative = "-12"
tolerance = "5%"
[source]
level = ["{level[0]}m", "{level[1]}m"]
amplitude = "{amplitude}"
band = ["10", "2k"]
impedance = "100"
"""
    for i, (kind, (a, b)) in enumerate(zip(kinds, values)):
        body = STAGES[kind].format(a=a, b=b, t=tolerance)
        part = "" if kind == "divider" else 'part = "amp"\n'
        text += f'[[stage]]\nname = "s{i}"\nblock = "{kind}"\n{part}{body}\n'
    return text


@settings(max_examples=25, deadline=None)
@given(
    kinds=st.lists(st.sampled_from(sorted(STAGES)), min_size=1, max_size=4),
    values=st.lists(st.tuples(st.integers(1, 100), st.integers(1, 100)), min_size=4, max_size=4),
    tolerance=st.sampled_from([0.1, 1, 5]),
    level=st.tuples(st.integers(-1000, 0), st.integers(0, 1000)),
    amplitude=st.integers(0, 500),
)
def test_no_draw_outside_corners(kinds, values, tolerance, level, amplitude):
    chain = chain_from_text(chain_text(kinds, values, tolerance, level, f"{amplitude}m"))
    plans = plan_chain(chain, {"amp": PART})
    freqs = band_grid(chain, plans)
    corner = corners.walk(corners.prepare(chain, plans, freqs))
    layout = montecarlo.layout_for(chain, plans, freqs, corner)
    draws = next(montecarlo.sample(layout, 400, seed=5))
    for stage, bound in zip(draws, corner):
        span = bound.measure.output
        assert np.all(stage.out_hi <= span[1] + 1e-9 * (1 + abs(span[1])))
        assert np.all(stage.out_lo >= span[0] - 1e-9 * (1 + abs(span[0])))
        for check, worst in bound.margins.items():
            if check == "supply" or check not in stage.margins:
                continue
            assert np.all(stage.margins[check] >= worst - 1e-9 * (1 + abs(worst))), check
        if bound.regime != "linear":
            # past a clipping stage corners carry the clamp at the worst window, which a single
            # circuit clipping at its own (wider) window may exceed: no bound from there on
            break
        assert stage.linear.all()
