"""rss and montecarlo against analytic tolerance results, and the Monte Carlo bookkeeping."""

from __future__ import annotations

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.walks.preparation import band_grid
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import Setup, corners, montecarlo
from railroom.engine.circuit.model import Part
from railroom.engine.walks.preparation import plan_chain

# An op amp close to ideal: huge open-loop gain and bandwidth, no headroom, no errors.
IDEAL = Part(
    id="ideal",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(0.0, 0.0),
    output_resistance=0.0,
    input_headroom=(0.0, 0.0),
    gbw=1e15,
    slew=1e15,
    open_loop_gain=1e15,
    offset=0.0,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)
PARTS = {"ideal": IDEAL}


def gain_eleven(distribution: str = "uniform") -> object:
    return chain_from_text(f"""
format = 1
title = "gain 11"
[conditions]
distribution = "{distribution}"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["1", "1"]
[[stage]]
name = "gain"
block = "noninverting"
part = "ideal"
rf = "100k 1%"
rg = "10k 1%"
""")


def raw_outputs(chain, samples: int, seed: int = 1, chunk: int = 8192) -> np.ndarray:
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    return np.concatenate([d[0].out_hi for d in montecarlo.sample(layout, samples, seed, chunk)])


def analytic_sigma(rf: float, rg: float, sigma_fraction: float, level: float = 1.0) -> float:
    """G = 1 + rf/rg: dG/drf = 1/rg, dG/drg = -rf/rg^2; sigma_G^2 = sum (dG/dx sigma_x)^2
    (first-order propagation; ECSS-Q-HB-30-01A root-sum-square)."""
    return level * np.hypot(sigma_fraction * rf / rg, sigma_fraction * rf / rg)


def test_montecarlo_uniform_sigma_converges_to_analytic():
    # Uniform +/-t has sigma t/sqrt(3) (the standard deviation of a uniform distribution).
    out = raw_outputs(gain_eleven(), 200_000)
    expected = analytic_sigma(100e3, 10e3, 0.01 / np.sqrt(3))  # 0.0816497
    assert expected == pytest.approx(0.0816497, rel=1e-6)
    assert np.std(out) == pytest.approx(expected, rel=0.01)
    assert np.mean(out) == pytest.approx(11.0, abs=1e-3)
    # uniform draws never leave the extreme values 10.80198 .. 11.20202 (worked by hand: extreme values and RSS of 1 + rf/rg, ECSS-Q-HB-30-01A)
    assert out.min() >= 10.80198 - 1e-5 and out.max() <= 11.20202 + 1e-5


def test_montecarlo_normal_three_sigma_half_width():
    # 1 % as 3 sigma: 11 +/- 0.1414 (worked by hand: RSS of 1 + rf/rg, ECSS-Q-HB-30-01A).
    out = raw_outputs(gain_eleven("normal"), 200_000)
    assert 3 * np.std(out) == pytest.approx(0.1414, rel=0.01)


def test_rss_normal_three_sigma_half_width():
    # RSS with 1 % as 3 sigma: 11 +/- 0.1414 (worked by hand: RSS of 1 + rf/rg, ECSS-Q-HB-30-01A).
    result = analyse(gain_eleven("normal"), PARTS, method="rss")
    low, high = result.stages[0].measure.output
    assert (high - low) / 2 == pytest.approx(0.1414, abs=2e-4)
    assert (high + low) / 2 == pytest.approx(11.0, abs=1e-6)


def test_rss_uniform_equals_linearised_formula():
    # Linearised propagation with sigma = t/sqrt(3): 3 sigma = 3 * 0.0816497 = 0.244949, which
    # is wider than the extreme value of the same linear model, sum |S_i t_i| (the two terms of
    # rf and rg are equal, rf/rg each: sqrt(2) x the root-sum of t), so rss quotes that instead
    # (root-sum-square never exceeds the extreme values; ECSS-Q-HB-30-01A).
    result = analyse(gain_eleven(), PARTS, method="rss")
    low, high = result.stages[0].measure.output
    three_sigma = 3 * analytic_sigma(100e3, 10e3, 0.01 / np.sqrt(3))
    extreme = np.sqrt(2) * analytic_sigma(100e3, 10e3, 0.01)
    assert extreme < three_sigma
    assert (high - low) / 2 == pytest.approx(extreme, rel=1e-6)


def follower_chain() -> object:
    return chain_from_text("""
format = 1
title = "follower"
[rails.main]
positive = "5"
negative = "-5"
tolerance = "2%"
[source]
level = ["3", "3"]
[[stage]]
name = "buffer"
block = "follower"
part = "real"
""")


def test_rss_exact_on_a_linear_margin():
    """output-high = P (1 + t d_p) - headroom - (V + Vos d_os): linear in every deviate, so the
    root-sum-square is m0 - 3 sqrt((P t)^2 + Vos^2) / sqrt(3) (ECSS-Q-HB-30-01A), but never wider
    than the extreme value of the same linear model, P t + Vos: here 0.1733 > 0.105."""
    part = Part(**{**IDEAL.__dict__, "id": "real", "output_headroom": (0.1, 0.1), "offset": 5e-3})
    result = analyse(follower_chain(), {"real": part}, method="rss")
    width = min(3 * np.hypot(5 * 0.02, 5e-3) / np.sqrt(3), 5 * 0.02 + 5e-3)
    expected = (5 - 0.1 - 3) - width
    assert result.stages[0].margins["output-high"] == pytest.approx(expected, abs=1e-9)


def test_same_seed_same_answer_and_chunking_does_not_matter():
    chain = gain_eleven()
    first = raw_outputs(chain, 5000, seed=7, chunk=8192)
    assert np.array_equal(first, raw_outputs(chain, 5000, seed=7, chunk=8192))
    assert np.array_equal(first, raw_outputs(chain, 5000, seed=7, chunk=333))
    assert not np.array_equal(first, raw_outputs(chain, 5000, seed=8))


def test_montecarlo_report_independent_of_chunk_size_and_percentiles_exact():
    chain = gain_eleven()
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    corner = corners.walk(corners.prepare(chain, plans, freqs))
    chain = chain.__class__(
        **{**chain.__dict__, "conditions": chain.conditions.__class__(samples=3000, seed=3)}
    )
    setup = Setup(chain, plans, freqs, None, corner_stages=corner)
    big_run, small_run = montecarlo.run(setup, chunk=4096), montecarlo.run(setup, chunk=250)
    (big, yield_big), (small, yield_small) = (
        (big_run.stages, big_run.chain_yield),
        (small_run.stages, small_run.chain_yield),
    )
    assert big[0].margins == small[0].margins
    assert big[0].measure.percentiles == small[0].measure.percentiles
    assert yield_big == yield_small == 1.0
    # the kept low tail reproduces numpy.percentile (linear interpolation) over every draw
    out = raw_outputs(chain, 3000, seed=3)
    margin = 15.0 - out  # output-high margin of the ideal op amp
    quoted = big[0].measure.percentiles["output-high"]
    for label, q in (("0.1%", 0.1), ("1%", 1.0), ("50%", 50.0)):
        assert quoted[label] == pytest.approx(np.percentile(margin, q), abs=1e-9)


def test_probability_and_yield_count_clipping_draws():
    """Output 11 V +/- 2 % against a 11 V ceiling: about half of the draws clip."""
    chain = chain_from_text("""
format = 1
title = "gain 11 near the rail"
[conditions]
samples = 20000
[rails.main]
positive = "11"
negative = "-11"
[source]
level = ["1", "1"]
[[stage]]
name = "gain"
block = "noninverting"
part = "ideal"
rf = "100k 1%"
rg = "10k 1%"
""")
    result = analyse(chain, PARTS, method="montecarlo")
    stage = result.stages[0]
    # G > 11 exactly when rf/rg > 10; by symmetry of the uniform draws about 0.5 (sampling sd 0.0035)
    assert stage.measure.probability == pytest.approx(0.5, abs=0.02)
    assert result.chain_yield == pytest.approx(1 - stage.measure.probability, abs=1e-12)
    assert stage.regime == "clipping" and not result.go
