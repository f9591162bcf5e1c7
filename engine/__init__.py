"""railroom engine: pure numeric core (no printing, no UI imports).

The names the interface and the command line use, loaded on first access so that importing a
submodule (railroom.engine.circuit.model, say) stays cheap:

    from railroom.engine import load_checked, analyse, chain_report
    chain, library = load_checked("board.toml")
    report = chain_report(analyse(chain, library.parts))
"""

from __future__ import annotations

from importlib import import_module

# exported name -> module under railroom.engine that defines it
_EXPORTS = {
    "load_checked": "formats.loading",
    "analyse": "analysis",
    "load_chain": "formats.chain_file",
    "chain_from_text": "formats.chain_file",
    "ChainResult": "verdict.results",
    "StageResult": "verdict.results",
    "InputError": "circuit.model",
    "Problem": "circuit.model",
    "METHODS": "circuit.model",
    "Cancelled": "methods.montecarlo",
    "BLOCKS": "circuit.blocks",
    "chain_report": "reports.json_report",
    "markdown_report": "reports.markdown",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str):
    """PEP 562 module __getattr__: import the defining module only when a name is first used."""
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'railroom.engine' has no attribute {name!r}")
    value = getattr(import_module(f"railroom.engine.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted({*globals(), *__all__})
