"""The engine's Monte Carlo margins per drawn circuit against that circuit solved whole (issue 11).

Reference: per_draw_nodal.rows_reference, one whole-chain netlist per row of the draw matrix,
solved by numpy.linalg (references/nodal.py, imports nothing of railroom). Sign matters per draw:
a row's margin must never be above the margin of the circuit it stands for, for either sign of
the pins' bias currents (both into the pins as bipolar inputs draw them, or opposite).
"""

from __future__ import annotations

import numpy as np
import pytest

from references.per_draw_nodal import rows_reference
from railroom.engine.benchmark.chains import stages_text
from railroom.engine.circuit.model import Part
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners, montecarlo
from railroom.engine.walks import circuit_walk as dw
from railroom.engine.walks.preparation import band_grid, plan_chain

VOLT, AMP = 1e-6, 1e-9  # the brief's bounds: 1 uV, 1 nA


def part(pid: str, gbw: float, a0: float, offset: float, bias: float) -> Part:
    """Generic illustrative parts (not a maker's)."""
    return Part(
        id=pid,
        description="generic",
        supply=(4.0, 36.0),
        supply_abs_max=40.0,
        output_headroom=(1.5, 1.5),
        output_resistance=75.0,
        input_headroom=(2.0, 2.0),
        gbw=gbw,
        slew=0.5e6,
        open_loop_gain=a0,
        offset=offset,
        offset_drift=5e-6,
        bias_current=bias,
        output_current=20e-3,
    )


PARTS = {
    "bip": part("bip", 1e6, 1e5, 3e-3, 100e-9),
    "prec": part("prec", 1.5e6, 3e6, 50e-6, 2e-9),
}


def head(amplitude: str, band: str) -> str:
    return f"""format = 1
title = "per-draw"
[conditions]
temperature = [-20, 70]
margin = "20m"
default_tolerance = "1%"
[rails.analog]
positive = "12"
negative = "-12"
tolerance = "5%"
[source]
level = ["-20m", "20m"]
amplitude = "{amplitude}"
band = {band}
impedance = "50"
"""


FILTERS = [  # an MFB low-pass, Sallen-Key, band-pass, inverting, a loaded follower
    ("follower", "bip", "analog", {}),
    ("sallen_key_lowpass", "bip", "analog", {"r1": "10k", "r2": "10k", "c1": "22n 5%", "c2": "10n 5%"}),
    ("mfb_lowpass", "bip", "analog", {"r1": "10k", "r2": "10k", "r3": "10k", "c1": "22n 5%", "c2": "4n7 5%"}),
    ("noninverting", "prec", "analog", {"rf": "10k 0.1%", "rg": "10k 0.1%"}),
    (
        "mfb_bandpass",
        "prec",
        "analog",
        {"r1": "10k", "r2": "100k", "r3": "1k", "c1": "10n 5%", "c2": "10n 5%"},
    ),
    ("inverting", "bip", "analog", {"rin": "10k", "rf": "10k"}),
    ("follower", "bip", "analog", {"load": "10k"}),
]
GAIN_20 = [  # a gain of 20 on a 1 MHz part: loop gain 1 near 50 kHz (issue 11, gbw)
    ("noninverting", "bip", "analog", {"rf": "19k", "rg": "1k"}),
    ("mfb_lowpass", "bip", "analog", {"r1": "10k", "r2": "10k", "r3": "10k", "c1": "1n 5%", "c2": "220p 5%"}),
    ("inverting", "bip", "analog", {"rin": "10k", "rf": "10k", "load": "2k"}),
]


def engine_and_reference(text: str, rows: int, pins):
    chain = chain_from_text(text, "<per-draw>")
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, rows, chain.conditions.seed, chunk=rows))
    found = dw.walk_draws(layout, D, dT)
    assert all(stage.linear.all() for stage in found)  # a linear circuit in every row
    return plans, found, rows_reference(chain, plans, layout.variables, layout.freqs, D, dT, pins)


def excess(plans, found, reference) -> dict:
    """(stage, block, check) -> the largest engine - reference margin over the rows."""
    worst = {}
    for k, (stage, ref) in enumerate(zip(found, reference), start=1):
        for check, value in ref.items():
            worst[(k, plans[k - 1].block.name, check)] = float(np.max(stage.margins[check] - value))
    return worst


@pytest.mark.parametrize("pins", [(1.0, 1.0), (1.0, -1.0), (-1.0, -1.0)])
@pytest.mark.parametrize("stages", [FILTERS, GAIN_20], ids=["filters", "gain-20"])
def test_no_row_is_above_its_own_circuit_at_dc(stages, pins):
    # DC (no AC amplitude): the comparison reads no frequency grid, so the bound is the brief's.
    # Before the fix the bias currents were one signed shift per row: the Sallen-Key + pin sat
    # 3.7 mV, the loaded follower's output-low 14 mV above their circuits' (r1 + r2 = 20k,
    # 100 nA, both currents into the pins)
    plans, found, reference = engine_and_reference(head("0", '["10", "10k"]') + stages_text(stages), 48, pins)
    for (k, block, check), over in excess(plans, found, reference).items():
        bound = AMP if check == "current" else VOLT
        if check == "slew":
            continue  # no AC: both need nothing
        assert over <= bound, (k, block, check, over)


# With a signal the band is read at frequencies: each row walks the band ends, the frequencies
# of its flat extremes, and a column at each of its own response peaks (walks/circuit_walk.
# peak_layout, row_freqs). Before (one shared list: three rows' own frequencies, later the grid
# between them) a row read the Q = 5 MFB band-pass output 9.8 mV low, the follower after it 12 mV
# and its current 1.0 uA, then up to 1.6e-4 V, 36 V/s of slew (48 rows, the reference on 400
# more log points); now at most 3.9e-5 V (2e-4 of the 0.2 V amplitude, the band-pass's - pin on
# the filters chain) and 0.33 V/s. The bound here is 3e-4 of the source amplitude and 2e-6 of
# the parts' slew rate (0.5 V/us; 1e-3 and 1e-4 before); the spans' test below reads the outputs.
AC = {"filters": ("200m", '["10", "10k"]', FILTERS), "gain-20": ("50m", '["10", "50k"]', GAIN_20)}


@pytest.mark.parametrize("name", sorted(AC))
def test_rows_with_signal_stay_within_the_grid_bound(name):
    amplitude, band, stages = AC[name]
    plans, found, reference = engine_and_reference(
        head(amplitude, band) + stages_text(stages), 48, (1.0, 1.0)
    )
    volts = 3e-4 * float(amplitude.rstrip("m")) * 1e-3
    for (k, block, check), over in excess(plans, found, reference).items():
        bound = {"current": AMP, "slew": 2e-6 * 0.5e6}.get(check, volts)
        assert over <= bound, (k, block, check, over)


# A Q = 5 MFB band-pass after a gain of 5.7 (20 mV to 3.6 V at the peak): ideal centre
# f0 = sqrt((1/r1 + 1/r3) / (r2 c1 c2)) / 2 pi = 1125 Hz, Q = f0 2 pi c1 c2 r2 / (c1 + c2) = 5.2
# (Franco, Design with Operational Amplifiers, ch. 3). c2 5 % moves each row's own peak over
# some +/-2.5 %, ten times its half-power width / Q over 2.
Q5 = [
    ("noninverting", "bip", "analog", {"rf": "4k7", "rg": "1k"}),
    ("mfb_bandpass", "bip", "analog", {"r1": "1k", "r2": "100k", "r3": "10k", "c1": "10n", "c2": "22n 5%"}),
]
SPANS = {
    "q5": ("20m", '["10", "50k"]', Q5, 1125.0),
    "filters": ("200m", '["10", "10k"]', FILTERS, 1600.0),
    "gain-20": ("50m", '["10", "50k"]', GAIN_20, 1.0e4),
}
# each row's output extremes against its circuit solved whole on the band grid, the engine's
# nominal frequencies, 80 log points and 6000 more within +/-30 % of the peak (spacing 1e-4 in
# ln f: that grid reads a Q = 5 peak at most 2 Q^2 (5e-5)^2 = 1.3e-7 of it low). Before (one
# shared list for every row: the corners' peaks and the grid between them) the Q = 5 rows read
# their output 1.6 mV low (48 rows) and the filters chain 3.2e-4 V; now 1e-8 V and 5.1e-5 V
# (2.5e-4 of its 0.2 V amplitude: a Sallen-Key low-pass of Q near 0.74, whose peak runs towards DC
# with Q, read on fixed columns, circuit_walk.flat_columns), the gain-20 chain none.
READ_LOW = {"q5": 1e-6, "filters": 1e-4, "gain-20": 1e-6}


@pytest.mark.parametrize("name", sorted(SPANS))
def test_each_row_reads_its_own_peak(name):
    amplitude, band, stages, peak = SPANS[name]
    chain = chain_from_text(head(amplitude, band) + stages_text(stages), "<per-draw>")
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 48, chain.conditions.seed, chunk=48))
    found = dw.walk_draws(layout, D, dT)
    dense = np.concatenate([layout.freqs, peak * np.exp(np.linspace(-0.3, 0.3, 6001))])
    dense = dense[(dense >= freqs[0]) & (dense <= freqs[-1])]
    reference = rows_reference(chain, plans, layout.variables, dense, D, dT, (1.0, 1.0), spans=True)
    low = 0.0
    for stage, ref in zip(found, reference):
        if "span-high" in ref:
            low = max(
                low,
                float(np.max(ref["span-high"] - stage.out_hi)),
                float(np.max(stage.out_lo - ref["span-low"])),
            )
    assert low <= READ_LOW[name], (name, low)
    assert layout.peaks is not None and len(layout.freqs) < {"q5": 8, "filters": 40, "gain-20": 13}[name]
