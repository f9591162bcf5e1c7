"""Safety and plausibility cautions on the result (engine/verdict/judge.py)."""

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.formats.presets import load_library, search_order
from railroom.engine.reports.json_report import chain_report


def chain(positive: str, negative: str, part: str = "generic-bipolar-15v") -> str:
    return f'''format = 1
[rails.main]
positive = "{positive}"
negative = "{negative}"
[source]
level = ["0", "0.1"]
[[stage]]
block = "follower"
part = "{part}"
'''


def result_of(text: str):
    return analyse(chain_from_text(text), load_library(search_order()).parts)


def test_split_supply_of_72_v_gets_the_selv_caution():
    # SELV (IEC 60335-1, 3.4.2) and ES1 (IEC 62368-1, [memory]) 60 V DC; the limit
    # applies between conductors, so +/-36 V is 72 V
    result = result_of(chain("36", "-36"))
    (caution,) = result.cautions
    assert "72 V" in caution and "60 V" in caution and "SELV" in caution
    assert any("60 V" in c for c in chain_report(result)["cautions"])


def test_split_supply_of_24_v_has_no_selv_caution():
    # +/-12 V is 24 V between conductors, under 60 V: a caution here would be noise
    assert result_of(chain("12", "-12")).cautions == ()


def test_rails_above_the_parts_absolute_maximum_get_the_damage_caution():
    # the shipped generic-bipolar-15v preset has supply_abs_max 40 V; +/-22 V is 44 V
    result = result_of(chain("22", "-22"))
    stage = result.stages[0]
    assert any("absolute maximum of 40 V" in c and "44 V" in c for c in stage.cautions)
    assert "supply" in stage.reasons and not result.go
    assert result_of(chain("15", "-15")).stages[0].cautions == ()
