"""A summing stage's interchangeable fixed inputs are enumerated by how many sit in each state
(engine/methods/corners.py exchangeable_inputs): every span and margin equals the plain
enumeration of all 2^k corners, which is the definition of the worst case (extreme value
analysis over the tolerance box)."""

from __future__ import annotations

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.methods import corners
from railroom.engine.walks.preparation import plan_chain

from clean_part import part

MIXED = """format = 1
title = "two kinds of fixed inputs"
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["-0.2", "0.3"]
amplitude = "0.5"
band = ["10", "1k"]
impedance = "1k"
[[stage]]
name = "sum"
block = "summing"
part = "clean"
rin = "10k 1%"
rf = "47k 1% 50ppm"
inputs = [
  { r = "100k 10%", v = "-0.5" }, { r = "100k 10%", v = "-0.5" }, { r = "100k 10%", v = "-0.5" },
  { r = "47k 5%", v = "1 2%" }, { r = "47k 5%", v = "1 2%" }, { r = "47k 5%", v = "1 2%" },
  { r = "100k 10%", v = "0.5" },
]
load = "2k 5%"
"""


def spans_and_margins(text: str):
    stage = analyse(chain_from_text(text), part(), design_aids=False, headroom=False).stages[0]
    return tuple(stage.measure.output), dict(stage.margins)


def test_groups_are_found_by_both_ends_of_r_and_v():
    plan = plan_chain(chain_from_text(MIXED), part())[0]
    ends = {name: corners.spread(q, 0.0) for name, q in plan.quantities.items()}
    varying = [name for name, (lo, hi) in ends.items() if lo != hi]
    groups = sorted(sorted(g) for g in corners.exchangeable_inputs(plan, ends, varying))
    # the 0.5 V input has the same resistor as the -0.5 V ones but another voltage: not in a group
    assert groups == [
        [("inputs.1.r",), ("inputs.2.r",), ("inputs.3.r",)],
        [("inputs.4.r", "inputs.4.v"), ("inputs.5.r", "inputs.5.v"), ("inputs.6.r", "inputs.6.v")],
    ]


def test_grouped_corners_give_the_plain_enumeration(monkeypatch):
    grouped = spans_and_margins(MIXED)
    monkeypatch.setattr(corners, "exchangeable_inputs", lambda plan, ends, varying: [])
    plain = spans_and_margins(MIXED)
    assert grouped[0] == pytest.approx(plain[0], abs=1e-12)
    assert grouped[1].keys() == plain[1].keys()
    for check in plain[1]:
        assert grouped[1][check] == pytest.approx(plain[1][check], abs=1e-12), check


def test_the_grouped_table_has_the_multiset_count():
    # 3 members of 2 states: C(4, 1) = 4 rows; 3 members of 4 states: C(6, 3) = 20; one more
    # value at both ends: 4 x 20 x 2 = 160 rows instead of 2^10 = 1024
    groups = [[("a.r",), ("b.r",), ("c.r",)], [("d.r", "d.v"), ("e.r", "e.v"), ("f.r", "f.v")]]
    varying = ["a.r", "b.r", "c.r", "d.r", "d.v", "e.r", "e.v", "f.r", "f.v", "x"]
    columns, table = corners.grouped_table(varying, groups)
    assert sorted(columns) == sorted(varying)
    assert table.shape == (160, 10)
    assert len({tuple(row) for row in table}) == 160
