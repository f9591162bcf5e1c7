"""Adding and removing a named net in a chain file's text (engine/formats/net_editing.py): the
table lands where the demos keep nets, comments stay, a net a stage reads is never removed, and
what is wrong with a new net is located (file, line, field) by the one chain loader."""

from __future__ import annotations

from pathlib import Path

import pytest

import railroom.engine.demos as demos
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.formats.net_editing import NetInUse, add_net, net_readers, new_net_problem, remove_net

DEMOS = Path(demos.__file__).parent
BRIDGE = (DEMOS / "bridge_sensor.toml").read_text()  # no nets
PUMP = (DEMOS / "pump_vibration.toml").read_text()  # three ratiometric nets


def test_a_net_in_a_file_without_nets_goes_before_the_source_and_comes_out_again():
    text = add_net(BRIDGE, "mid", value="2.5 1%")
    assert '[nets.mid]\nvalue = "2.5 1%"\n\n[source]' in text
    chain = chain_from_text(text)
    assert chain.nets["mid"].value.value == 2.5 and chain.nets["mid"].value.tolerance == pytest.approx(0.01)
    assert remove_net(text, "mid") == BRIDGE  # byte for byte: comments and layout as written


def test_a_net_joins_the_others_and_keeps_every_comment():
    text = add_net(PUMP, "half", rail="converter", fraction="0.5 0.1%")
    assert text.index("[nets.half]") > text.index("[nets.converter_high]")
    assert text.index("[nets.half]") < text.index("[source]")
    for line in PUMP.splitlines():
        assert line in text
    assert chain_from_text(text).nets["half"].rail == "converter"


def test_a_net_a_stage_reads_is_not_removed():
    assert net_readers(PUMP, "converter_low") == ["stage 6 (converter input) low"]
    with pytest.raises(NetInUse, match=r"read by stage 6 \(converter input\) low"):
        remove_net(PUMP, "converter_low")


def test_what_is_wrong_with_a_new_net_is_located():
    problem = new_net_problem(PUMP, "bias", value="2.5 2x", path="pump.toml")
    assert (problem.file, problem.field) == ("pump.toml", "nets.bias.value")
    assert problem.line is not None and "expected a voltage" in problem.message
    problem = new_net_problem(PUMP, "bias", rail="nowhere", fraction="0.5", path="pump.toml")
    assert problem.field == "nets.bias.rail" and "no rails named 'nowhere'" in problem.message
    assert new_net_problem(PUMP, "bias", rail="converter", fraction="1.5").field == "nets.bias.fraction"
    assert "already" in new_net_problem(PUMP, "converter_low", value="1").message
    assert "not both" in new_net_problem(PUMP, "bias", value="1", rail="converter", fraction="0.5").message
    assert "needs a name" in new_net_problem(PUMP, "", value="1").message
    assert new_net_problem(PUMP, "bias", value="2.5 1%") is None
