"""The built-in demo chains (shipped as package data)."""

from __future__ import annotations

from pathlib import Path


def demo_file(name: str = "pump_vibration") -> Path:
    """The shipped demo chain file `name`.toml (the interface opens pump_vibration by default)."""
    return Path(__file__).parent / f"{name}.toml"
