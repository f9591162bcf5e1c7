"""The engine facade (railroom.engine) exports what the interface and command line use, lazily."""

import subprocess
import sys

import railroom.engine as engine
from railroom.engine.analysis import analyse
from railroom.engine.formats.loading import load_checked
from railroom.engine.methods.montecarlo import Cancelled
from railroom.engine.circuit.model import InputError, Problem


def test_facade_names_are_the_defining_modules_objects():
    # identity, not equality: the facade re-exports, it does not copy
    assert engine.analyse is analyse
    assert engine.load_checked is load_checked
    assert engine.Cancelled is Cancelled
    assert engine.InputError is InputError and engine.Problem is Problem
    assert engine.METHODS == ("corners", "rss", "montecarlo")
    assert set(engine.__all__) <= set(dir(engine))


def test_unknown_name_is_an_attribute_error():
    try:
        engine.no_such_thing  # noqa: B018 (the lookup itself is the test)
    except AttributeError as err:
        assert "no_such_thing" in str(err)
    else:
        raise AssertionError("expected AttributeError")


def test_importing_a_submodule_does_not_load_the_analysis():
    code = (
        "import sys, railroom.engine.circuit.model; "
        "print('railroom.engine.analysis' in sys.modules, 'numpy' in sys.modules)"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split()[0] == "False"


def test_facade_loads_and_analyses_a_demo(tmp_path):
    from importlib.resources import files

    path = str(files("railroom.engine.demos") / "bridge_sensor.toml")
    chain, library = engine.load_checked(path)
    result = engine.analyse(chain, library.parts, design_aids=False, headroom=False)
    assert isinstance(result, engine.ChainResult)
    report = engine.chain_report(result)
    assert len(report["stages"]) == len(chain.stages) > 0
    assert engine.markdown_report(result).strip()
