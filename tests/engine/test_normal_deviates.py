"""Normal tolerance draws need no scipy at run time; the numpy inverse agrees with scipy's."""

import json
import subprocess
import sys

import numpy as np
from scipy.special import ndtri  # the general-purpose reference (test extras only)

from railroom.engine.methods.normal import inverse_normal

CHAIN = """format = 1
title = "normal draws"
[conditions]
method = "montecarlo"
distribution = "normal"
samples = 2000
[rails.main]
positive = "15"
negative = "-15"
tolerance = "5%"
[source]
level = ["-0.1", "0.1"]
[[stage]]
block = "noninverting"
part = "generic-bipolar-15v"
rf = "90k 1%"
rg = "10k 1%"
"""


def test_inverse_normal_matches_scipy_across_the_range():
    # Acklam's approximation: relative error below 1.2e-9 (engine/methods/normal.py).
    p = np.concatenate(
        (np.geomspace(1e-16, 0.02, 400), np.linspace(0.02, 0.98, 400), 1.0 - np.geomspace(1e-12, 0.02, 400))
    )
    expected = ndtri(p)
    assert np.allclose(inverse_normal(p), expected, rtol=2e-9, atol=1e-12)
    # the 3-sigma point of a tolerance: Phi(3) = 0.99865010196837 (standard normal table)
    assert abs(inverse_normal(np.array([0.99865010196837]))[0] - 3.0) < 1e-8


def test_montecarlo_normal_runs_without_scipy_or_the_interface(tmp_path):
    chain = tmp_path / "normal.toml"
    chain.write_text(CHAIN, encoding="utf-8")
    probe = (
        f"import sys, runpy; sys.argv = ['railroom', 'check', {str(chain)!r}, '--json'];"
        "sys.modules['scipy'] = None\n"  # any import of scipy now fails
        "try:\n    runpy.run_module('railroom.tui.cli', run_name='__main__')\n"
        "except SystemExit as e:\n    code = e.code\n"
        "heavy = [m for m in ('textual', 'sympy', 'pytest', 'hypothesis') if m in sys.modules]\n"
        "print('HEAVY', heavy, 'CODE', code, file=sys.stderr)"
    )
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=120)
    assert "HEAVY [] CODE 0" in done.stderr, done.stderr
    report = json.loads(done.stdout)
    assert report["method"] == "montecarlo" and report["samples"] == 2000
