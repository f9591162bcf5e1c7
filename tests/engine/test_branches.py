"""Branches (`from`) and `load_to` (issue 13 items 1 and 4; the README's File formats): located
errors, fed-clipped along a branch only, every method and the design aids on a tree."""

from __future__ import annotations

import json

import pytest

from command_line import railroom
from railroom.engine.analysis import analyse
from railroom.engine.walks.preparation import band_grid
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import InputError
from railroom.engine.formats.presets import load_library, search_order

CHAIN = """\
format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["-0.2", "0.2"]
amplitude = "0.5"
band = ["10", "1k"]
[[stage]]
name = "buffer"
block = "follower"
part = "generic-bipolar-15v"
[[stage]]
name = "gain"
block = "noninverting"
part = "generic-bipolar-15v"
rf = "390k 1%"
rg = "10k 1%"
[[stage]]
name = "after gain"
block = "follower"
part = "generic-bipolar-15v"
[[stage]]
name = "side"
block = "inverting"
part = "generic-bipolar-15v"
from = "buffer"
rin = "10k 1%"
rf = "20k 1%"
load = "2k"
[[stage]]
name = "side after"
block = "follower"
part = "generic-bipolar-15v"
"""


@pytest.fixture(scope="module")
def parts():
    return load_library(search_order()).parts


def problems(text: str) -> list[str]:
    with pytest.raises(InputError) as err:
        chain_from_text(text, "board.toml")
    return [str(p) for p in err.value.problems]


def line_of(text: str, needle: str) -> int:
    return [i for i, line in enumerate(text.splitlines(), start=1) if line == needle][-1]


@pytest.mark.parametrize(
    "old, new, field, words",
    [
        ('from = "buffer"', 'from = "bufer"', "stage.4.from", "no stage named 'bufer'"),
        ('from = "buffer"', 'from = "side after"', "stage.4.from", "after this one"),
        ('from = "buffer"', 'from = "side"', "stage.4.from", "cannot take its input from itself"),
        ('name = "after gain"', 'name = "gain"', "stage.3.name", "names must be unique"),
        ('from = "buffer"', "from = 3", "stage.4.from", "expected"),
    ],
)
def test_a_bad_from_is_a_located_error(old, new, field, words):
    text = CHAIN.replace(old, new)
    found = problems(text)
    assert len(found) == 1, found
    where = new if field.endswith("from") else new
    assert found[0].startswith(f"board.toml:{line_of(text, where)}: {field}: "), found
    assert words in found[0]


def test_a_bad_from_exits_2_naming_file_line_and_field(tmp_path, home):
    path = tmp_path / "board.toml"
    text = CHAIN.replace('from = "buffer"', 'from = "nowhere"')
    path.write_text(text, encoding="utf-8")
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    line = line_of(text, 'from = "nowhere"')
    assert f"{path}:{line}: stage.4.from: no stage named 'nowhere'" in done.stderr


def test_a_passive_stage_feeds_several_a_converter_input_after_one_feeds_one():
    # each stage on a passive output meets it loaded by the others (walks/sibling_loads.py;
    # tests/references/test_passive_branches_reference.py checks the numbers)
    text = CHAIN.replace(
        '[[stage]]\nname = "gain"',
        '[[stage]]\nname = "rc"\nblock = "rc_lowpass"\nr = "1k"\nc = "1n"\n[[stage]]\nname = "gain"',
    ).replace('from = "buffer"', 'from = "rc"')
    assert chain_from_text(text).parents == (-1, 0, 1, 2, 1, 4)
    # a converter input passes its input on: after a passive stage it would hand the node on
    # to several without their loads on it
    text = text.replace(
        'name = "gain"\nblock = "noninverting"', 'name = "gain"\nblock = "adc"\nlow = "-5"\nhigh = "5"'
    )
    text = text.replace('part = "generic-bipolar-15v"\nrf = "390k 1%"\nrg = "10k 1%"\n', "")
    text = text.replace('from = "rc"', 'from = "gain"')
    found = problems(text)
    assert len(found) == 1 and "stage.5.from" in found[0] and "drives one stage at most" in found[0]


def test_load_to_needs_a_load():
    text = CHAIN.replace('load = "2k"', 'load_to = "2.5"')
    assert any("stage.4.load_to" in p and "give the stage a load" in p for p in problems(text))
    comparator = (
        CHAIN
        + 'load = "10k"\nload_to = "1"\n[[stage]]\nblock = "comparator"\npart = "generic-bipolar-15v"\nthreshold = "0"\nload = "1k"\nload_to = "5"\n'
    )
    # a saturated stage takes load_to too (its levels by Millman's theorem: test_saturated_load_to)
    assert chain_from_text(comparator).stages[5].load_to.value == 5.0


def test_without_from_a_chain_reads_as_before():
    chain = chain_from_text(CHAIN.replace('from = "buffer"\n', ""))
    assert chain.parents == (-1, 0, 1, 2, 3)
    chain = chain_from_text(CHAIN)
    assert chain.parents == (-1, 0, 1, 0, 3)
    assert chain.children == ((1, 3), (2,), (), (4,), ())


@pytest.mark.parametrize("method", ["corners", "rss", "montecarlo"])
def test_fed_clipped_follows_the_branch_only(parts, method):
    # the gain of 40 clips (0.7 V peak x 40 > 15 V); the stage after it is fed a clipped signal,
    # the branch taken from the buffer is not, and neither is the stage after that branch
    chain = chain_from_text(CHAIN)
    result = analyse(chain, parts, method=method, samples=2000, design_aids=False, headroom=False)
    regimes = [s.regime for s in result.stages]
    fed = [s.measure.fed_clipped for s in result.stages]
    assert regimes[1] == "clipping"
    assert fed == [False, False, True, False, False]
    assert "fed-clipped" in result.stages[2].reasons
    assert result.stages[3].go and result.stages[4].go


def test_one_output_loaded_by_two_stages_sums_their_currents(parts):
    # Kirchhoff's current law at the buffer's output: it drives the gain stage's + input
    # (nothing) and the side stage's 10k to a virtual earth at 0 V. At its peak, 0.7 V (Ohm's
    # law): 0.07 mA; with a second branch of 5k taken from it as well, 0.07 + 0.14 mA.
    one = analyse(chain_from_text(CHAIN), parts, design_aids=False, headroom=False)
    two_text = (
        CHAIN
        + '[[stage]]\nname = "more"\nblock = "inverting"\npart = "generic-bipolar-15v"\nfrom = "buffer"\nrin = "5k"\nrf = "5k"\n'
    )
    two = analyse(chain_from_text(two_text), parts, design_aids=False, headroom=False)
    first, second = (r.stages[0].measure.opamps[0].current_needed for r in (one, two))
    # the part's offset (a few mV at most at 0.7 V) widens each bound slightly, and so does the
    # bound on the - pin's Vout/A0 (15 V / 1e5 = 150 uV, engine/walks/bounds_walk.earth_error)
    assert first == pytest.approx(0.7 / 10e3 * 1.01, rel=0.02)
    assert second - first == pytest.approx(0.7 / 5e3, rel=0.015)


def test_the_json_report_names_each_stages_input(tmp_path, home):
    path = tmp_path / "board.toml"
    path.write_text(CHAIN, encoding="utf-8")
    done = railroom("check", str(path), "--json", home=home)
    report = json.loads(done.stdout)
    assert [s["from"] for s in report["stages"]] == ["source", "buffer", "gain", "buffer", "side"]


def test_sensitivity_on_a_branch_names_only_its_own_upstream(parts):
    result = analyse(chain_from_text(CHAIN), parts)
    side = result.stages[3]
    labels = [s.quantity for s in side.sensitivity]
    assert labels and not any(q.startswith(("stage.2.", "stage.3.")) for q in labels), labels


def test_the_per_draw_reference_agrees_on_a_tree(parts):
    # the slow reference (one nodal solve per drawn circuit and stage) against the draw walk
    from railroom.engine.benchmark import figures as bench
    from railroom.engine.walks import circuit_walk as dw
    from railroom.engine.methods import corners, montecarlo
    from railroom.engine.benchmark import per_draw
    from railroom.engine.walks.preparation import plan_chain

    text = CHAIN.replace('rf = "390k 1%"', 'rf = "39k 1%"') + (
        '[[stage]]\nname = "to mid"\nblock = "divider"\nfrom = "buffer"\ntop = "10k 1%"\nbottom = "10k 1%"\n'
        'load = "10k 1%"\nload_to = "5 1%"\n[[stage]]\nname = "mid buffer"\nblock = "follower"\npart = "generic-bipolar-15v"\n'
        'load = "1k"\nload_to = "-2"\n'
    )
    chain = chain_from_text(text)
    plans = plan_chain(chain, parts)
    freqs = band_grid(chain, plans)
    layout = montecarlo.layout_for(chain, plans, freqs, corners.walk(corners.prepare(chain, plans, freqs)))
    D, dT = next(montecarlo.chunks(layout, 40, 3, chunk=40))
    vector = dw.walk_draws(layout, D, dT)
    reference = per_draw.run_draws(layout, D, dT)
    assert bench.agree(vector, reference)
    # and the load_to value is a drawn quantity like any other
    assert layout.column(6, "load_to", "tolerance") is not None


DIFFERENTIAL = """\
format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
kind = "differential"
level = ["2", "3"]
difference = ["-0.1", "0.1"]
amplitude = "0.1"
band = ["10", "10k"]
[[stage]]
name = "first"
block = "difference"
part = "generic-bipolar-15v"
r1 = "10k"
r2 = "100k"
r3 = "10k"
r4 = "100k"
[[stage]]
name = "second"
block = "difference"
part = "generic-bipolar-15v"
from = "source"
r1 = "10k"
r2 = "100k"
r3 = "10k"
r4 = "100k"
"""


def test_every_stage_fed_by_a_differential_source_reads_both_sides(parts):
    # two identical difference stages on the two sides of one source: the same output span
    # and the same gain shortfall (Black's formula: G0 = 10 with noise gain 11 on a 1 MHz part)
    result = analyse(chain_from_text(DIFFERENTIAL), parts, design_aids=False, headroom=False)
    first, second = result.stages
    assert second.measure.output == pytest.approx(first.measure.output, rel=1e-12)
    assert second.measure.gain_error == pytest.approx(first.measure.gain_error, rel=1e-12)
    assert first.measure.gain_error == pytest.approx(1 - 1 / abs(1 + 11j * 10e3 / 1e6), rel=0.02)
    text = DIFFERENTIAL.replace(
        'block = "difference"\npart = "generic-bipolar-15v"\nfrom',
        'block = "follower"\npart = "generic-bipolar-15v"\nfrom',
    )
    assert any("stage.2.block" in p and "differential source" in p for p in problems(text))
