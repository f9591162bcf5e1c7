"""Small failure probabilities (engine/methods/rare.py) against closed forms and plain draws.

A follower whose output-high margin is linear in the positive rail and the offset,
    m = (15 (1 + 0.05 d_r) - 1.5) - (level + 3 mV d_o) = m0 + 0.75 d_r - 0.003 d_o,
has, with normal tolerances (d = 3 sigma), P(m < 0) = Phi(-m0 / sd), sd = sqrt(0.25^2 + 0.001^2)
(a sum of independent normals is normal: any probability text). With uniform tolerances the
offset term averages out of the linear case: P = (1 - m0 / 0.75) / 2 while |m0| <= 0.75 - 0.003.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.walks.preparation import band_grid
from railroom.engine.walks.circuit_walk import build_layout
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners
from railroom.engine.methods.normal import erfc, normal_tail
from railroom.engine.methods.rare import design_point, estimate, to_deviates, wilson, yield_words
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain
from railroom.engine.reports.json_report import chain_report
from railroom.engine.aids.sensitivity import linearise

PART = Part(
    id="amp",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.5, 1.5),
    output_resistance=0.0,
    input_headroom=(0.5, 0.5),
    gbw=1e9,
    slew=1e9,
    open_loop_gain=1e9,
    offset=3e-3,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)
TEXT = """format = 1
[conditions]
method = "montecarlo"
samples = {samples}
distribution = "{dist}"
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["{level}", "{level}"]
[[stage]]
name = "buffer"
block = "follower"
part = "amp"
"""
SD = math.hypot(0.75 / 3, 0.003 / 3)


def _layout(dist: str, level: float, samples: int = 10000):
    chain = chain_from_text(TEXT.format(dist=dist, level=level, samples=samples))
    plans = plan_chain(chain, {"amp": PART})
    freqs = band_grid(chain, plans)
    prepared = corners.prepare(chain, plans, freqs)
    layout = build_layout(chain, plans, freqs, prepared, corners.walk(prepared))
    return chain, layout, linearise(layout)


def test_erfc_matches_the_standard_library():
    x = np.linspace(-6.0, 9.0, 301)
    reference = np.array([math.erfc(v) for v in x])
    assert np.max(np.abs(erfc(x) / reference - 1)) < 1.2e-7  # Numerical Recipes' stated bound


@pytest.mark.parametrize("level, m0", [(12.31, 1.19), (12.9, 0.6)])
def test_normal_tolerances_against_the_closed_form(level, m0):
    _, layout, lin = _layout("normal", level)
    found = estimate(layout, lin, seed=5)
    exact = float(normal_tail(np.array(m0 / SD)))  # 9.68e-7 and 8.20e-3
    assert found.low <= exact <= found.high
    assert exact / 2 < found.probability < exact * 2  # the target: a factor of 2 at 95 %
    assert found.beta == pytest.approx(m0 / SD, rel=1e-6)  # the design point is exact (linear)


@pytest.mark.parametrize("level", [12.9, 12.76])
def test_uniform_tolerances_against_the_closed_form(level):
    _, layout, lin = _layout("uniform", level)
    found = estimate(layout, lin, seed=2)
    exact = (1 - (13.5 - level) / 0.75) / 2  # 0.1 and 0.00667
    assert found.low <= exact <= found.high


def test_agrees_with_plain_draws_where_both_are_feasible():
    # 8.2e-3 by plain Monte Carlo over 200,000 draws: its own 95 % interval overlaps the estimate
    chain, layout, lin = _layout("normal", 12.9, samples=200000)
    plain = analyse(chain, {"amp": PART}, design_aids=False, headroom=False)
    failures = round((1 - plain.chain_yield) * 200000)
    low, high = wilson(failures, 200000)
    found = estimate(layout, lin, seed=9)
    assert found.low <= high and low <= found.high


def test_uniform_margin_that_cannot_fail_is_said_so():
    # m0 = 0.76 > 0.75 + 0.003: no corner of the tolerance box reaches the limit
    _, layout, lin = _layout("uniform", 12.74)
    found = estimate(layout, lin)
    assert found.beta is None and found.probability == 0.0
    assert "no failure is possible" in yield_words(1.0, 10000, found)


def test_design_point_of_a_linear_margin_in_normal_space():
    # m = 1 + 0.3 d1 - 0.4 d2, d = u / 3: beta = 1 / |(0.1, -0.1333)| = 6.0, u* along the gradient
    u, beta = design_point(1.0, np.array([0.3, -0.4]), "normal")
    assert beta == pytest.approx(6.0, rel=1e-9)
    assert 1.0 + np.array([0.3, -0.4]) @ to_deviates(u, "normal") == pytest.approx(0.0, abs=1e-12)


def test_the_report_quotes_yield_with_its_interval_and_the_small_probability():
    chain = chain_from_text(TEXT.format(dist="normal", level=12.31, samples=5000))
    report = chain_report(analyse(chain, {"amp": PART}))
    assert report["yield"] == 1.0
    low, high = report["yield_interval"]
    # Wilson with no failure: low = n / (n + z^2), z = 1.96
    assert high == 1.0 and 1 - low == pytest.approx(1.96**2 / (5000 + 1.96**2), rel=1e-3)
    fp = report["failure_probability"]
    assert fp["method"] == "importance sampling" and fp["low"] <= 9.68e-7 <= fp["high"]
    assert "no draw of 5,000 left the linear regime" in yield_words(1.0, 5000, None)
