"""Fixes land on IEC 60063 values and restore the margin when applied; sensitivity ranks the
quantity that moves the limiting margin."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.aids.eseries import SERIES
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import Part
from railroom.engine.formats.values import Quantity

PART = Part(
    id="amp",
    description="",
    supply=(1.0, 100.0),
    supply_abs_max=100.0,
    output_headroom=(1.0, 1.0),
    output_resistance=0.0,
    input_headroom=(1.0, 1.0),
    gbw=1e9,
    slew=1e9,
    open_loop_gain=1e7,
    offset=1e-3,
    offset_drift=0.0,
    bias_current=0.0,
    output_current=1.0,
)
PARTS = {"amp": PART}

# Gain 11 on 0.5 V peak: 5.5 V against a 4 V ceiling (5 V rail less 1 V headroom): clips.
CLIPPING = """format = 1
title = "too much gain"
[conditions]
margin = "100m"
method = "{method}"
[rails.main]
positive = "5"
negative = "-5"
[source]
amplitude = "500m"
band = ["10", "1k"]
[[stage]]
name = "gain"
block = "noninverting"
part = "amp"
rf = "100k 1%"
rg = "10k 1%"
"""


def in_series(value: float, series: str) -> bool:
    """IEC 60063: value = mantissa * 10^n with the mantissa in the series table."""
    decade = np.floor(np.log10(value))
    mantissa = value / 10**decade
    return any(abs(mantissa - m) < 1e-9 * m for m in SERIES[series])


def with_value(chain, field: str, value: float):
    stage = chain.stages[0]
    q = stage.values[field]
    stage = replace(stage, values={**stage.values, field: Quantity(value, q.tolerance, q.tempco)})
    return replace(chain, stages=(stage,))


@pytest.mark.parametrize("method", ["corners", "rss"])
def test_fixes_are_series_values_that_restore_the_margin(method):
    chain = chain_from_text(CLIPPING.format(method=method))
    result = analyse(chain, PARTS)
    stage = result.stages[0]
    assert stage.regime == "clipping" and not stage.go
    value_fixes = [f for f in stage.fixes if f.field in ("rf", "rg")]
    assert [f.series for f in value_fixes] == [("E24",), ("E96",)]
    for fix, series in zip(value_fixes, ("E24", "E96")):
        assert in_series(fix.value, series)
        fixed = analyse(with_value(chain, fix.field, fix.value), PARTS).stages[0]
        assert fixed.go and min(fixed.margins[c] for c in ("output-high", "output-low")) >= 0.1
        # nearest: the series value one step closer to the present value does not work
        old = chain.stages[0].values[fix.field].value
        closer = _series_between(old, fix.value, series)
        if closer:
            assert not analyse(with_value(chain, fix.field, closer[-1]), PARTS).stages[0].go


def _series_between(old: float, new: float, series: str) -> list[float]:
    from railroom.engine.aids.eseries import values_between

    lo, hi = sorted((old, new))
    inside = [v for v in values_between(lo, hi, series) if lo * 1.000001 < v < hi / 1.000001]
    return sorted(inside, key=lambda v: abs(np.log(v / old)))


def test_amplitude_fix_keeps_the_chain_linear():
    chain = chain_from_text(CLIPPING.format(method="corners"))
    stage = analyse(chain, PARTS).stages[0]
    (fix,) = [f for f in stage.fixes if f.field == "source.amplitude"]
    # 4 V ceiling less 1 mV offset x 11 over the gain's upper extreme 11.2020 (worked by hand: extreme values and RSS of 1 + rf/rg, ECSS-Q-HB-30-01A): ~0.356 V
    assert fix.value == pytest.approx((4 - 0.011) / 11.20202, rel=2e-3)
    lowered = replace(chain, source=replace(chain.source, amplitude=fix.value))
    assert analyse(lowered, PARTS).stages[0].regime == "linear"


def test_sensitivity_names_the_gain_resistors():
    stage = analyse(chain_from_text(CLIPPING.format(method="rss")), PARTS).stages[0]
    names = [s.quantity for s in stage.sensitivity]
    assert set(names[:2]) == {"rf", "rg"}
    # equal tolerances on rf and rg move G = 1 + rf/rg equally: dG/drf * rf = -dG/drg * rg
    assert stage.sensitivity[0].share == pytest.approx(stage.sensitivity[1].share, rel=1e-3)
    assert sum(s.share for s in stage.sensitivity) <= 1.0 + 1e-12


# Three stages, the middle one 30 mV short of a 100 mV margin (NO-GO but linear), the last one
# loading it (rin 10k) and itself near its ceiling, so a bigger gain in the middle would break it.
TIGHT_MIDDLE = """format = 1
[conditions]
margin = "100m"
[rails.main]
positive = "5"
negative = "-5"
[source]
amplitude = "100m"
band = ["10", "1k"]
[[stage]]
name = "buffer"
block = "follower"
part = "amp"
[[stage]]
name = "gain"
block = "noninverting"
part = "amp"
rf = "{rf} 1%"
rg = "1k 1%"
[[stage]]
name = "invert x3"
block = "inverting"
part = "amp"
rin = "10k 1%"
rf = "30k 1%"
"""


# A passive stage between two amplifiers: the stage after it is enumerated jointly with it.
WITH_PASSIVE = (
    TIGHT_MIDDLE.replace(
        '[[stage]]\nname = "invert x3"',
        '[[stage]]\nname = "smooth"\nblock = "rc_lowpass"\nr = "4k7 5%"\nc = "10n 10%"\n'
        '[[stage]]\nname = "invert x3"',
    )
    + """[[stage]]
name = "last"
block = "noninverting"
part = "amp"
rf = "1k 1%"
rg = "100k 1%"
"""
)


# Branches (issue 13): a passive stage and a gain taken from the buffer, beside the main path;
# a change on one branch moves its parent's load, and the re-walk feeds stages off its branch
# what the full walk had.
WITH_BRANCH = (
    WITH_PASSIVE
    + """[[stage]]
name = "side"
block = "inverting"
part = "amp"
from = "buffer"
rin = "2k 1%"
rf = "6k8 1%"
[[stage]]
name = "side filter"
block = "rc_lowpass"
from = "side"
r = "1k 5%"
c = "47n 10%"
[[stage]]
name = "side out"
block = "follower"
part = "amp"
"""
)


@pytest.mark.parametrize(
    "text, changes",
    [
        (TIGHT_MIDDLE, ((1, "rf", 33e3), (1, "rg", 1.2e3), (2, "rin", 12e3), (0, None, None))),
        (
            WITH_BRANCH,
            ((5, "rin", 1e3), (6, "r", 2.2e3), (1, "rf", 33e3), (3, "rin", 12e3), (4, "rg", 82e3)),
        ),
        (
            WITH_PASSIVE,
            ((1, "rf", 33e3), (2, "r", 5.6e3), (3, "rin", 12e3), (3, "rf", 27e3), (4, "rg", 82e3)),
        ),
    ],
)
def test_partial_re_walk_agrees_with_a_walk_of_the_whole_chain(text, changes):
    # The fix search re-walks only from the stage before the change; the whole-chain walk of the
    # changed chain is the reference: every verdict and margin the same.
    from railroom.engine.walks.preparation import band_grid
    from railroom.engine.aids.fixes import Evaluator
    from railroom.engine.methods import corners
    from railroom.engine.walks.preparation import plan_chain

    chain = chain_from_text(text.format(rf="36k"))
    plans = plan_chain(chain, PARTS)
    freqs = band_grid(chain, plans)
    evaluate = Evaluator(chain, plans, freqs)
    evaluate.results(plans, changed=1)  # builds the unchanged walk it reuses
    for k, field, value in changes:
        if field is None:
            changed_plans = plans
        else:
            q = plans[k].quantities[field]
            changed = replace(plans[k], quantities={**plans[k].quantities, field: replace(q, value=value)})
            changed_plans = [*plans[:k], changed, *plans[k + 1 :]]
        whole = corners.walk(corners.prepare(chain, changed_plans, freqs))
        partial = evaluate.results(changed_plans, changed=k)
        assert [r.margins for r in partial] == [r.margins for r in whole]
        assert [r.go for r in partial] == [r.go for r in whole]
        assert [r.measure.output for r in partial] == [r.measure.output for r in whole]
        # stopped after stage k (no stage after it was GO): the same results, cut short
        stopped = evaluate.results(changed_plans, changed=k, stop=k + 1)
        assert [r.margins for r in stopped] == [r.margins for r in whole[: k + 1]]


def test_a_stage_fed_a_clipped_signal_gets_a_note_not_a_search():
    chain = chain_from_text(
        CLIPPING.format(method="corners")
        + """
[[stage]]
name = "after"
block = "follower"
part = "amp"
"""
    )
    first, after = analyse(chain, PARTS).stages
    assert "fed-clipped" in after.reasons
    assert [f.field for f in after.fixes] == [None]
    assert "fix the first clipping stage" in after.fixes[0].text
    assert any(f.field in ("rf", "rg") for f in first.fixes)


def test_a_value_in_both_series_is_offered_once(monkeypatch):
    # rg must reach 14.9k: the nearest E24 value up is 15k and so is the nearest E96 one
    # (IEC 60063: 15 is in E24, 14.7 and 15.0 in E96), so one fix names both series.
    from types import SimpleNamespace
    from railroom.engine.aids import fixes
    from railroom.engine.walks.preparation import plan_chain

    plan = plan_chain(chain_from_text(CLIPPING.format(method="corners")), PARTS)[0]
    done = SimpleNamespace(limiting="output-high", margins={"output-high": 0.2})

    class Stub:
        def works(self, k, field, value):
            return done if field == "rg" and value >= 14.9e3 else None

    monkeypatch.setattr(fixes, "direction", lambda lin, index, check, field: 1.0 if field == "rg" else -1.0)
    found = fixes.value_fixes(Stub(), plan, SimpleNamespace(limiting="output-high"), None)
    assert [(f.field, f.value) for f in found] == [("rg", pytest.approx(15e3))]
    assert "(E24, E96)" in found[0].text
