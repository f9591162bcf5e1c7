"""Puts tests/ on sys.path so reference libraries import as `references.nodal`."""

import sys
from pathlib import Path

_TESTS = str(Path(__file__).resolve().parent)
if _TESTS not in sys.path:
    sys.path.insert(0, _TESTS)

import pytest  # noqa: E402 (the tests folder goes on sys.path first)


@pytest.fixture(autouse=True)
def _own_presets_folder(tmp_path_factory, monkeypatch):
    """Keep the developer's own preset folder out of every test: an empty one per test."""
    folder = tmp_path_factory.mktemp("user-presets")
    monkeypatch.setenv("RAILROOM_PRESETS_HOME", str(folder))
    yield folder
