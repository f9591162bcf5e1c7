"""A chain with a passive stage whose shown span waits for the stage it feeds (a 1M/1M divider
into a buffer drawing its bias current) and, later, a passive stage feeding two stages: the draw
walk keeps the two apart (a merge once reused one name for both and the walk stopped with a
TypeError in rss and Monte Carlo). The node numbers are checked against Millman's theorem."""

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
