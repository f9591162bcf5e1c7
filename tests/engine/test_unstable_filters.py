"""A Sallen-Key stage whose gain undoes its damping has its poles in the right half-plane: the
check says so (engine/circuit/blocks/filters.py unstable_cautions). Issue 11's last false alarm:
tests/chains/filters_rss.toml's low-pass of gain 2 is such a stage at its nominal values, and
the 51.6 mA its linear figures ask of the stage before is the steady state of no real circuit.

Reference: the Sallen-Key transfer with gain K (Franco, Design with Operational Amplifiers,
ch. 3): low-pass denominator 1 + s (c2 (r1 + r2) + (1 - K) r1 c1) + s^2 r1 r2 c1 c2, high-pass
1 + s (r1 (c1 + c2) + (1 - K) r2 c2) + s^2 r1 r2 c1 c2; a second-order polynomial with positive
ends has its roots in the right half-plane exactly when its middle coefficient is negative
(Routh-Hurwitz)."""

from __future__ import annotations

import itertools
from pathlib import Path

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text, load_chain
from railroom.engine.formats.presets import load_library, search_order

from clean_part import part

CHAINS = Path(__file__).parent.parent / "chains"


def ends(value: float, tolerance: float) -> tuple[float, float]:
    return value * (1 - tolerance), value * (1 + tolerance)


def test_the_gain_two_low_pass_is_said_to_be_unstable_at_its_nominal_values():
    # r1 = r2 = 11k, rf = rg = 10k at the chain's default 1 %, c1 = 2n2 and c2 = 1n at 5 %
    unstable = 0
    for r1, r2, rf, rg, c1, c2 in itertools.product(
        ends(11e3, 0.01),
        ends(11e3, 0.01),
        ends(10e3, 0.01),
        ends(10e3, 0.01),
        ends(2.2e-9, 0.05),
        ends(1e-9, 0.05),
    ):
        unstable += c2 * (r1 + r2) + (1 - (1 + rf / rg)) * r1 * c1 < 0
    assert unstable == 54
    assert 1e-9 * 22e3 + (1 - 2) * 11e3 * 2.2e-9 < 0  # the nominal circuit itself
    chain = load_chain(str(CHAINS / "filters_rss.toml"))
    result = analyse(
        chain, load_library(search_order()).parts, method="rss", design_aids=False, headroom=False
    )
    (caution,) = [c for c in result.cautions if "right half-plane" in c]
    assert caution.startswith("stage 2 ('low-pass 10 kHz')")
    assert f"at {unstable} of 64 corners, the nominal values included" in caution


SK = """format = 1
[rails.main]
positive = "15"
negative = "-15"
[source]
level = ["0", "0"]
amplitude = "0.1"
band = ["10", "1k"]
[[stage]]
name = "f"
block = "{block}"
part = "clean"
r1 = "10k 1%"
r2 = "10k 1%"
c1 = "10n 5%"
c2 = "10n 5%"
rf = "{rf}"
rg = "10k 1%"
"""


def cautions(block: str, rf: str) -> list[str]:
    text = SK.format(block=block, rf=rf)
    result = analyse(chain_from_text(text), part(), design_aids=False, headroom=False)
    return [c for c in result.cautions if "right half-plane" in c]


def test_equal_component_filters_are_unstable_only_past_a_gain_of_three():
    # equal r and c: the middle coefficient is r c (3 - K) at nominal for both kinds; at the
    # worst corner c (r1 + r2) 1.05 x 2.02 against (K - 1) r c 0.99 x 0.95: K = 2 (rf 10k) is
    # stable at every corner, K = 3.4 (rf 24k, rf/rg at least 2.35) at none
    for block in ("sallen_key_lowpass", "sallen_key_highpass"):
        assert cautions(block, "10k 1%") == []
        (caution,) = cautions(block, "24k 1%")
        assert "at 64 of 64 corners, the nominal values included" in caution
