"""Part limits as datasheets give them (engine/part_limits.py; README "File formats", the preset file)."""
import math

import pytest

from railroom.engine.analysis import analyse
from railroom.engine.files import chain_from_text
from railroom.engine.presets import parts_from_text
from railroom.engine.report import chain_report

BASE = '''description = "test class (illustrative values)"
supply = ["4", "36"]
supply_abs_max = "40"
output_headroom = ["1", "1"]
input_headroom = ["1", "1"]
gbw = "1M"
slew = "1V/us"
open_loop_gain = "100dB"
offset = "0"
output_current = "20m"
'''


def part_of(extra: str = "", part_id: str = "p"):
    parts, problems = parts_from_text(f"[part.{part_id}]\n{BASE}{extra}", "lab.toml")
    assert problems == []
    return {part_id: parts[0]}


def problems_of(extra: str):
    parts, problems = parts_from_text(f"[part.p]\n{BASE}{extra}", "lab.toml")
    assert parts == []
    return problems


def follower(temperature="[25, 25]", level='["0", "1"]', stage_extra="", positive="12",
             negative="-12", block="follower"):
    return f'''format = 1
[conditions]
temperature = {temperature}
[rails.main]
positive = "{positive}"
negative = "{negative}"
[source]
level = {level}
[[stage]]
name = "buffer"
block = "{block}"
part = "p"
{stage_extra}
'''


def run(text: str, parts, **kw):
    return analyse(chain_from_text(text), parts, design_aids=False, headroom=False, **kw)


# --- 1. temperature_range ----------------------------------------------------------------

def test_a_chain_range_outside_the_rated_range_is_a_caution_naming_part_and_stage():
    # the definition in the README: the rated ambient range must hold the chain's whole range
    parts = part_of('temperature_range = ["0", "70"]\n')
    hot = run(follower("[-40, 85]"), parts)
    (caution,) = hot.stages[0].cautions
    assert "'p'" in caution and "[0, 70]" in caution and "[-40, 85]" in caution
    assert any(c.startswith("stage 1 (buffer):") and "rated range" in c
               for c in chain_report(hot)["cautions"])
    assert run(follower("[0, 70]"), parts).stages[0].cautions == ()
    assert run(follower("[0, 71]"), parts).stages[0].cautions != ()


def test_a_rated_range_given_high_to_low_is_a_located_error():
    (problem,) = problems_of('temperature_range = ["85", "-40"]\n')
    assert problem.file == "lab.toml" and problem.line == 12
    assert problem.field == "part.p.temperature_range" and "reversed" in problem.message
