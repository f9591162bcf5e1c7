"""Chains with a passive stage whose shown span waits for the stage it feeds (a 1M/1M divider
into a stage drawing its bias current) and, later, a passive stage feeding two stages: the draw
walk keeps the two apart (a merge once reused one name for both, and with a comparator after
the first divider the walk stopped with a TypeError in Monte Carlo). The node numbers are checked
against Millman's theorem."""

from __future__ import annotations

from pathlib import Path

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.loading import load_checked

CHAIN = """format = 1
title = "a settled divider, then a divider feeding two stages"
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["-1", "1"]
[[stage]]
name = "high divider"
block = "divider"
top = "1meg 1%"
bottom = "1meg 1%"
[[stage]]
name = "buffer"
block = "follower"
part = "generic-bipolar-15v"
[[stage]]
name = "split"
block = "divider"
top = "10k 0.01%"
bottom = "10k 0.01%"
[[stage]]
name = "left"
block = "inverting"
part = "generic-bipolar-15v"
rin = "10k 0.01%"
rf = "10k 0.01%"
[[stage]]
name = "right"
block = "inverting"
from = "split"
part = "generic-bipolar-15v"
rin = "10k 0.01%"
rf = "10k 0.01%"
ref = "1"
"""


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_split_node_follows_millman_after_a_settled_divider(tmp_path: Path, method):
    path = tmp_path / "chain.toml"
    path.write_text(CHAIN, encoding="utf-8")
    chain, library = load_checked(str(path))
    result = analyse(chain, library.parts, method=method, samples=2000, design_aids=False, headroom=False)
    buffer_lo, buffer_hi = result.stages[1].measure.output
    left_lo, left_hi = result.stages[3].measure.output
    # Millman at the split node: the 10k top from the buffer, the 10k bottom to 0 V, "left"'s
    # rin to its - pin at 0 V and "right"'s rin to its - pin at 1 V: Vn = (Vb + 1) / 4, and
    # "left" (gain -1) gives -Vn. The buffer's own offset and the pins' bias move it by
    # well under 10 mV with these parts.
    assert left_lo == pytest.approx(-(buffer_hi + 1) / 4, abs=0.01)
    assert left_hi == pytest.approx(-(buffer_lo + 1) / 4, abs=0.01)
    assert buffer_hi == pytest.approx(0.5, abs=0.06)  # 1 V over 1M/1M, less the bias drop


COMPARATOR_FIRST = CHAIN.replace(
    'name = "buffer"\nblock = "follower"\npart = "generic-bipolar-15v"',
    'name = "buffer"\nblock = "comparator"\npart = "generic-bipolar-15v"\nthreshold = "0.2"',
)


@pytest.mark.parametrize("method", ["corners", "montecarlo"])
def test_a_comparator_after_a_settled_divider_then_a_shared_divider(tmp_path: Path, method):
    assert COMPARATOR_FIRST != CHAIN
    path = tmp_path / "chain.toml"
    path.write_text(COMPARATOR_FIRST, encoding="utf-8")
    chain, library = load_checked(str(path))
    result = analyse(chain, library.parts, method=method, samples=2000, design_aids=False, headroom=False)
    level_lo, level_hi = result.stages[1].measure.output  # the comparator's two output levels
    left_lo, left_hi = result.stages[3].measure.output
    # Millman at the split node as above, fed the comparator's levels: "left" gives -(V + 1) / 4;
    # the comparator's output resistance into the 10k divider drops its level by up to about
    # 14 V x 75 / 15k = 70 mV, a quarter of it at the node: within 20 mV
    assert left_lo == pytest.approx(-(level_hi + 1) / 4, abs=0.02)
    assert left_hi == pytest.approx(-(level_lo + 1) / 4, abs=0.02)
