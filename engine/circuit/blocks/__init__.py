"""The block catalogue: one small module per block family, registered here by name."""

from __future__ import annotations

from railroom.engine.circuit.blocks.base import Block
from railroom.engine.circuit.blocks.comparator import Comparator
from railroom.engine.circuit.blocks.difference import Difference
from railroom.engine.circuit.blocks.filters import (
    MfbBandpass,
    MfbLowpass,
    SallenKeyHighpass,
    SallenKeyLowpass,
)
from railroom.engine.circuit.blocks.gain import Follower, Inverting, Noninverting, Summing
from railroom.engine.circuit.blocks.instrumentation import Instrumentation
from railroom.engine.circuit.blocks.integrator import Integrator
from railroom.engine.circuit.blocks.passive import AcCoupling, ConverterInput, Divider, RcLowpass
from railroom.engine.circuit.blocks.schmitt import Schmitt

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
COMMON_FIELDS = ("name", "block", "part", "rails", "load", "load_capacitance", "load_to", "from")
