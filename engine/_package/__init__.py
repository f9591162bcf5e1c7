"""railroom: worst-case rail headroom of op-amp signal chains, as a Python library.

This folder installs as the top-level package `railroom` (pyproject.toml, package-dir): the
repository's top level holds only the project's own folders, so the package that names them
lives here, beside the engine it fronts. Names load on first use, so `import railroom` and
`import railroom.engine...` stay cheap.

    import railroom
    chain = railroom.load("board.toml")
    result = railroom.analyse(chain)
    result.go, railroom.to_dict(result)["verdict"], railroom.rows(result)[0]["margin"]
"""

from __future__ import annotations

import os
from importlib import import_module

# One BLAS thread. The engine's matrix products are small and many (a few thousand rows by a few
# dozen columns); a threaded BLAS wakes its pool for each and, on a busy machine, waits for it:
# on 2 cores at load 7 the 12-stage filter chain's corners check took 1.16 s threaded and 0.31 s
# on one thread (the rank step's products went from 0.6 ms to 125 ms a call). numpy reads these
# when it is first imported, so they are set here, before any engine module imports it; a
# value the user set is kept.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")

__version__ = "0.1.0"

# exported name -> module that defines it
_EXPORTS = {
    "load": "railroom.engine.api",
    "analyse": "railroom.engine.api",
    "parts_for": "railroom.engine.api",
    "to_dict": "railroom.engine.api",
    "rows": "railroom.engine.api",
    "row": "railroom.engine.api",
    "load_text": "railroom.engine.api",
    "ChainResult": "railroom.engine.verdict.results",
    "StageResult": "railroom.engine.verdict.results",
    "StageMeasure": "railroom.engine.verdict.results",
    "OpAmpMeasure": "railroom.engine.verdict.results",
    "Chain": "railroom.engine.circuit.model",
    "Stage": "railroom.engine.circuit.model",
    "Part": "railroom.engine.circuit.model",
    "InputError": "railroom.engine.circuit.model",
    "Problem": "railroom.engine.circuit.model",
    "METHODS": "railroom.engine.circuit.model",
    "Cancelled": "railroom.engine.methods.montecarlo",
    "BLOCKS": "railroom.engine.circuit.blocks",
    "chain_report": "railroom.engine.reports.json_report",
    "markdown_report": "railroom.engine.reports.markdown",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    """PEP 562: import the defining module only when a name is first used."""
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'railroom' has no attribute {name!r}")
    value = getattr(import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__})
