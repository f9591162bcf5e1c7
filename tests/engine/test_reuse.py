"""What one check keeps for the next (engine/walks/reuse.py) never changes an answer.

Each check of an edit sequence is compared with the same check on an empty store (every value
printed exactly: repr of the result); the edited stage's nominal swing against the textbook
gain of its block (non-inverting 1 + rf/rg, inverting -rf/rin: Sedra & Smith, Microelectronic
Circuits, ch. 2); and two stages the store could confuse (the same values, drive and open-loop
gain, another offset) against the textbook output offset Vos (1 + rf/rg) (ibid., offset voltage).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.formats.presets import load_library, shipped_folder
from railroom.engine.walks import reuse
from railroom.tui.timing import KEYSTROKES, filter_chain_text

PARTS = load_library([shipped_folder()]).parts
ANCHOR = 'name = "stage 2"\nblock = "sallen_key_lowpass"\npart = "generic-bipolar-15v"\nrails = "analog"\nr1 = "10k"'


def instant(chain, parts=PARTS):
    return analyse(chain, parts, method="corners", design_aids=False, headroom=False)


def cold(chain, parts=PARTS):
    reuse.clear()
    return instant(chain, parts)


def typed(text: str, r1: str) -> str:
    edited = text.replace(ANCHOR, ANCHOR.replace('r1 = "10k"', f'r1 = "{r1}"'), 1)
    assert edited != text
    return edited


def test_every_check_of_a_typing_sequence_is_the_check_on_an_empty_store():
    text = filter_chain_text(10)  # two of each filter kind: stages the store may share
    chains = [chain_from_text(typed(text, r1), "<t>") for r1 in KEYSTROKES[:7]]
    expected = [repr(cold(chain)) for chain in chains]
    reuse.clear()
    warm = [repr(instant(chain)) for chain in chains + chains[::-1]]
    assert warm == expected + expected[::-1]
    assert reuse.RESPONSES.hits > 0  # the store was used (a test that cannot fail otherwise)


def test_a_full_check_after_kept_instant_ones_is_the_cold_full_check():
    chain = chain_from_text(typed(filter_chain_text(6), "12k"), "<t>")
    expected = repr(cold(chain) and analyse(chain, PARTS))  # the store holds the instant check's
    reuse.clear()
    assert repr(analyse(chain, PARTS)) == expected


def test_the_edited_stage_follows_the_textbook_gain_after_each_edit():
    head = filter_chain_text(1).split("[[stage]]")[0]
    stage = (
        '[[stage]]\nname = "gain"\nblock = "noninverting"\npart = "generic-bipolar-15v"\nrails = "analog"\n'
    )
    for rf in ("10k", "30k", "10k", "1k"):
        chain = chain_from_text(head + stage + f'rf = "{rf}"\nrg = "10k"\n', "<t>")
        high = instant(chain).stages[0].measure.nominal[1]
        gain = 1 + float(rf[:-1]) * 1e3 / 10e3
        # 200 mV peak on a -50 .. 50 mV level: the nominal top is gain x 50 mV + gain x 200 mV
        # (the part's finite open-loop gain takes off far less than 0.1 %)
        assert high == pytest.approx(gain * 0.25, rel=1e-3)


def test_two_stages_alike_but_for_the_offset_each_get_their_own():
    """Same values, drive and open-loop gain, so the same response; another offset. The kept
    response is one answer for both, the walk must still take each stage's own offset."""
    base = PARTS["generic-bipolar-15v"]
    parts = dict(PARTS)
    parts["offset-a"] = replace(base, id="offset-a", offset=1e-3, offset_drift=0.0)
    parts["offset-b"] = replace(base, id="offset-b", offset=4e-3, offset_drift=0.0)
    head = filter_chain_text(1).split("[[stage]]")[0]
    head = head.replace('level = ["-50m", "50m"]', 'level = ["0", "0"]').replace(
        'amplitude = "200m"', 'amplitude = "0"'
    )
    stages = "".join(
        f'[[stage]]\nname = "{name}"\nblock = "noninverting"\npart = "{part}"\nrails = "analog"\n'
        f'rf = "10k"\nrg = "10k"\n{extra}'
        for name, part, extra in (
            ("buffer", "generic-bipolar-15v", ""),
            ("a", "offset-a", 'from = "buffer"\n'),
            ("b", "offset-b", 'from = "buffer"\n'),
        )
    )
    chain = chain_from_text(head + stages, "<t>")
    reuse.RESPONSES.clear()
    for _ in range(2):  # cold, then with every response kept
        result = instant(chain, parts)
        a, b = result.stages[1].measure.output, result.stages[2].measure.output
        # each output is the first stage's span times the gain, widened both ways by its own
        # Vos (1 + rf/rg) and by bias terms alike: the difference of the two spans is twice the
        # offsets' difference times the largest gain, 1 + 1.01/0.99 with the file's default 1 %
        # (the open-loop gain's 1/A0 in the DC gain is well under 1e-4)
        widen = (b[1] - b[0]) - (a[1] - a[0])
        assert widen == pytest.approx(2 * (4e-3 - 1e-3) * (1 + 1.01 / 0.99), rel=1e-4)


def test_kept_arrays_are_read_only():
    chain = chain_from_text(filter_chain_text(3), "<t>")
    cold(chain)
    table = reuse.RESPONSES._table
    assert table
    response = next(iter(table.values()))[0]
    transfer = response.output.transfers["in"]
    with pytest.raises(ValueError):
        transfer[..., 0] = 0.0
    assert not np.asarray(transfer).flags.writeable


def test_the_store_keeps_to_its_bounds():
    store = reuse.Kept(max_entries=3, max_bytes=10_000)
    for i in range(5):
        store.get(("k", i), lambda i=i: np.full(100, i), reuse.answer_bytes)  # 800 bytes each
    assert len(store._table) == 3 and [k[1] for k in store._table] == [2, 3, 4]
    store.get(("big",), lambda: np.zeros(5000), reuse.answer_bytes)  # 40 kB: never kept
    assert ("big",) not in store._table
    for i in range(5, 20):
        store.get(("k", i), lambda i=i: np.full(500, i), reuse.answer_bytes)  # 4 kB each
    assert store._bytes <= 10_000 and len(store._table) == 2
