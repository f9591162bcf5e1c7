"""The table of checks (engine/verdict/results.py) and the figures every view shows beside a margin."""

from __future__ import annotations

import math

import pytest

from railroom.engine import (
    CHECK_TABLE,
    CHECKS,
    analyse,
    demo_file,
    load_checked,
    margin_words,
    needed_and_limit,
)


def test_every_check_has_one_row_and_the_margins_units():
    assert tuple(CHECK_TABLE) == CHECKS
    # SI units of the quantities compared: a slew rate is volts per second, a current amperes
    assert {c.name: c.unit for c in CHECK_TABLE.values() if c.unit != "V"} == {"slew": "V/s", "current": "A"}
    assert margin_words("current", -0.002) == "current -2 mA"


@pytest.mark.parametrize("demo", ["pump_vibration", "bridge_sensor"])
def test_needed_and_limit_are_the_figures_the_margin_is_the_difference_of(demo):
    """A margin is limit - need on the upper side and need - limit on the lower side (the
    README's margins: room left to the limit); the figures shown beside it must say the same."""
    chain, library = load_checked(str(demo_file(demo)))
    result = analyse(chain, library.parts, method="corners", design_aids=False, headroom=False)
    compared = 0
    for stage in result.stages:
        part = library.parts.get(stage.stage.part or "")
        for check in ("output-high", "output-low", "input-high", "input-low", "slew", "current"):
            if check not in stage.margins or (check in ("slew", "current") and not stage.measure.opamps):
                continue
            needed, limit = needed_and_limit(stage, check, part, chain)
            assert isinstance(needed, float) and isinstance(limit, float)
            room = needed - limit if check.endswith("-low") else limit - needed
            assert math.isclose(stage.margins[check], room, rel_tol=1e-9, abs_tol=1e-12), (stage.index, check)
            compared += 1
    assert compared >= 10
