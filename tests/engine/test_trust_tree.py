"""The trust fixes (tests/engine/test_trust_left.py) on a tree (`from`, the README's File formats):
each stage's output is loaded by every child, through converter inputs and passive stages, and a
clipped signal's slope bound reaches every child. Each against a hand calculation named beside
it; `part()` is an illustrative part with no offset or bias."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text

from clean_part import part


def result(text: str, parts: dict, **options):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **options)


HEAD = """format = 1
title = "a tree"
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["{level}", "{level}"]
"""


def stage(name: str, block: str, extra: str = "", source: str | None = None) -> str:
    fed = f'from = "{source}"\n' if source else ""
    return f'[[stage]]\nname = "{name}"\nblock = "{block}"\n{fed}{extra}'


CLEAN = 'part = "clean"\n'


def test_an_output_feeding_two_followers_supplies_all_their_pins_bias():
    # a follower at 0 V feeding two followers: its own - pin and each child's + pin draw up to
    # 1 uA of bias either way, 3 uA by Kirchhoff's current law. Each child is taken to draw from
    # both its pins (a child's - pin may hang on its input through a resistor): 1 + 2 x (2 x 1 uA),
    # an outside bound, pessimistic here by the children's - pins (2 uA). The tree before charged
    # nothing, and counting only the stage listed next gave 1 + 2 x 1 uA.
    text = (
        HEAD.format(level="0")
        + stage("buffer", "follower", CLEAN)
        + stage("left", "follower", CLEAN)
        + stage("right", "follower", CLEAN, source="buffer")
    )
    buffer = result(text, part(bias_current=1e-6)).stages[0]
    assert buffer.measure.opamps[0].current_needed == pytest.approx(5e-6, rel=1e-9)


def test_a_converter_input_on_a_branch_passes_its_childs_load_to_the_stage_before():
    # buffer at 2 V; a follower listed next, and on a branch a converter input feeding an inverting
    # stage with rin = 1k to its virtual earth at 0 V: 2 V / 1k = 2 mA (Ohm's law) from the buffer,
    # and the 40 ohm output resistance of the part costs 80 mV of upper swing. Walking the stage
    # listed next (the follower, which draws nothing) read 0 mA.
    text = (
        HEAD.format(level="2")
        + stage("buffer", "follower", CLEAN)
        + stage("side", "follower", CLEAN)
        + stage("converter input", "adc", 'low = "0"\nhigh = "4"\n', source="buffer")
        + stage("inverting", "inverting", CLEAN + 'rin = "1k"\nrf = "1k"\n')
    )
    buffer = result(text, part()).stages[0]
    assert buffer.measure.opamps[0].current_needed == pytest.approx(2e-3, rel=1e-6)
    assert buffer.margins["output-high"] == pytest.approx(15 - 0.03 - 0.08 - 2.0, abs=1e-6)


def divider_branch(children: int) -> str:
    text = (
        HEAD.format(level="2")
        + stage("buffer", "follower", CLEAN)
        + stage("halve", "divider", 'top = "10k"\nbottom = "10k"\n')
        + stage("side", "follower", CLEAN, source="buffer")
        + stage("converter input", "adc", 'low = "0"\nhigh = "0.7"\n', source="halve")
    )
    for i in range(children):
        text += stage(
            f"inverting {i}", "inverting", CLEAN + 'rin = "10k"\nrf = "10k"\n', source="converter input"
        )
    return text


@pytest.mark.parametrize("method", ["corners", "montecarlo"])
def test_a_converter_input_with_one_child_on_a_branch_sees_that_childs_terminal(method):
    # 2 V into 10k/10k with the inverting stage's 10k to its virtual earth on the node:
    # 2 V x (10k || 10k) / (10k + 10k || 10k) = 2/3 V (Thevenin, Horowitz & Hill ch. 1), inside the
    # 0.7 V window by 33 mV; the stages are not listed one after the other (a sibling between)
    found = result(divider_branch(1), part(), method=method, samples=200 if method == "montecarlo" else None)
    names = [s.measure.stage.name for s in found.stages]
    adc = found.stages[names.index("converter input")]
    assert adc.margins["input-high"] == pytest.approx(0.7 - 2 / 3, abs=1e-6)
    assert found.stages[names.index("halve")].measure.output == pytest.approx((2 / 3, 2 / 3), abs=1e-6)
    inverting = found.stages[names.index("inverting 0")]
    assert inverting.measure.output == pytest.approx((-2 / 3, -2 / 3), abs=1e-5)


def test_a_converter_input_feeds_one_stage_at_most():
    # the read-through above assumes one child; the loader keeps it so (a stage with no op amp
    # drives one stage at most)
    from railroom.engine.circuit.model import InputError

    text = divider_branch(1) + stage(
        "inverting 1", "inverting", CLEAN + 'rin = "10k"\nrf = "10k"\n', source="converter input"
    )
    with pytest.raises(InputError, match="drives one stage at most"):
        chain_from_text(text)


def test_every_child_of_a_clipping_stage_needs_the_clipped_sines_full_slope():
    # 1 V at 1 kHz times 1 + 90k/10k = 10 V peak, clipped at the 5 V rails less 30 mV: the clipped
    # sine keeps the unclipped slope at its zero crossings, 2 pi f A = 2 pi 1k 10 = 62.83 kV/s (the
    # slope of A sin(wt) at 0), for each follower it feeds, not 2 pi 1k 4.97 V = 31.2 kV/s
    text = """format = 1
title = "a clipping gain feeding two buffers"
[rails.main]
positive = "5"
negative = "-5"
[source]
level = ["0", "0"]
amplitude = "1"
band = ["1k", "1k"]
""" + (
        stage("gain", "noninverting", CLEAN + 'rf = "90k"\nrg = "10k"\n')
        + stage("left", "follower", CLEAN)
        + stage("right", "follower", CLEAN, source="gain")
    )
    first, *children = result(text, part()).stages
    assert first.regime == "clipping"
    for child in children:
        assert child.measure.opamps[0].slew_needed == pytest.approx(62832, rel=1e-4)
