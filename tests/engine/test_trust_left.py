"""Issue 11, the items left after the whole-chain reference: the plain comparator's thresholds with
the op amp's errors, and the stages fed a clipped signal taking their needs from it. Each against
a hand calculation named beside it; `part()` is an illustrative part with no offset or bias."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.files import chain_from_text

from clean_part import part


def result(text: str, parts: dict, **options):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **options)


def comparator(before: str = "", impedance: str = "10k", invert: str = "false") -> str:
    return f'''format = 1
title = "comparator"
[rails.main]
positive = "5"
negative = "0"
[source]
level = ["2", "3"]
impedance = "{impedance}"
{before}
[[stage]]
name = "alarm"
block = "comparator"
part = "clean"
threshold = "2.5"
invert = {invert}
'''


DIVIDER = """[[stage]]
name = "halve"
block = "divider"
top = "10k"
bottom = "10k"
"""

ERRORS = dict(offset=1e-3, bias_current=100e-9)


@pytest.mark.parametrize("invert", ["false", "true"])
def test_comparator_threshold_carries_offset_and_bias_through_the_source_impedance(invert):
    # the flip is V+ + Vos = V- (the op amp's input offset, Sedra & Smith ch. 2), and the bias
    # current drawn from the signal's pin drops Ib Rd across the 10k source impedance (Ohm's law):
    # threshold 2.5 V +/- (1 mV + 100 nA x 10k) = 2.5 V +/- 2 mV, at either input
    stage = result(comparator(invert=invert), part(**ERRORS)).stages[0]
    to_high, to_low = stage.measure.thresholds
    assert to_high == pytest.approx((2.498, 2.502), abs=1e-12)
    assert to_low == pytest.approx((2.498, 2.502), abs=1e-12)
    # the signal's pin: 2..3 V moved by 100 nA x 10k = 1 mV either way
    assert stage.measure.opamps[0].input == pytest.approx((1.999, 3.001), abs=1e-12)


def test_comparator_threshold_bias_through_a_divider_before_it():
    # the divider's Thevenin resistance 10k || 10k = 5k (Horowitz & Hill ch. 1) with no source
    # impedance: 2.5 V +/- (1 mV + 100 nA x 5k) = 2.5 V +/- 1.5 mV
    stage = result(comparator(DIVIDER, impedance="0"), part(**ERRORS)).stages[1]
    assert stage.measure.thresholds[0] == pytest.approx((2.4985, 2.5015), abs=1e-12)


def test_comparator_with_a_clean_part_keeps_the_written_threshold():
    stage = result(comparator(), part()).stages[0]
    assert stage.measure.thresholds[0] == pytest.approx((2.5, 2.5), abs=1e-15)
