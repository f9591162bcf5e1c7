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


def test_each_check_is_scaled_by_what_its_row_names():
    """Check.scale is the one definition of a check's own scale: the judge's equality tolerance
    and the limiting check both read it (the rail span for voltages, the part's own limit for
    slew, current and supply)."""
    from railroom.engine.verdict.judge import check_scale, limiting_check

    chain, library = load_checked(str(demo_file("pump_vibration")))
    stage = chain.stages[0]
    part, rails = library.parts[stage.part], chain.rails[stage.rails]
    span = rails.positive - rails.negative
    assert {c: check_scale(c, part, rails) for c in CHECKS} == {
        "output-high": span,
        "output-low": span,
        "input-high": span,
        "input-low": span,
        "slew": part.slew,
        "current": part.output_current,
        "supply": part.supply[1],
        "input-differential": span,
    }
    # a failing supply against an output 10 mV short (-10 mV of the 24 V rail span: -0.042 %):
    # -1 V of the part's 36 V rating is -2.8 % and limits; -12 mV of it is -0.033 % and does not
    # (measured on the rail span instead, as before the table held the scale, it would: -0.05 %)
    assert limiting_check({"output-high": -0.01, "supply": -1.0}, rails, part) == "supply"
    assert limiting_check({"output-high": -0.01, "supply": -0.012}, rails, part) == "output-high"
