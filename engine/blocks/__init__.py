"""The block catalogue: one small module per block family, registered here by name."""

from __future__ import annotations

from railroom.engine.blocks.base import Block
from railroom.engine.blocks.comparator import Comparator
from railroom.engine.blocks.difference import Difference
from railroom.engine.blocks.filters import MfbBandpass, MfbLowpass, SallenKeyHighpass, SallenKeyLowpass
from railroom.engine.blocks.gain import Follower, Inverting, Noninverting, Summing
from railroom.engine.blocks.instrumentation import Instrumentation
from railroom.engine.blocks.integrator import Integrator
from railroom.engine.blocks.passive import AcCoupling, ConverterInput, Divider, RcLowpass
from railroom.engine.blocks.schmitt import Schmitt

BLOCKS: dict[str, Block] = {
    block.name: block
    for block in (
        Follower(),
        Noninverting(),
        Inverting(),
        Summing(),
        Difference(),
        Instrumentation(),
        Integrator(),
        SallenKeyLowpass(),
        SallenKeyHighpass(),
        MfbLowpass(),
        MfbBandpass(),
        Comparator(),
        Schmitt(),
        Divider(),
        RcLowpass(),
        AcCoupling(),
        ConverterInput(),
    )
}

# Fields every block accepts besides its own (the README's File formats).
COMMON_FIELDS = ("name", "block", "part", "rails", "load", "load_capacitance")
