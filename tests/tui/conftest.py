"""Shared pieces for the interface tests: sample chains and the app factory."""

from __future__ import annotations

import asyncio
import inspect
import shutil
from pathlib import Path

import pytest

DATA = Path(__file__).resolve().parent / "data"


@pytest.fixture
def two_stage(tmp_path) -> Path:
    """A writable copy of the two-stage test chain."""
    target = tmp_path / "two_stage.toml"
    shutil.copy(DATA / "two_stage.toml", target)
    return target


@pytest.fixture
def make_app():
    from railroom.tui.app import build_app

    return build_app


@pytest.hookimpl(tryfirst=True)
def pytest_pyfunc_call(pyfuncitem):
    """Run `async def` tests in a fresh event loop (no async plugin is installed)."""
    if inspect.iscoroutinefunction(pyfuncitem.obj):
        names = pyfuncitem._fixtureinfo.argnames
        asyncio.run(pyfuncitem.obj(**{n: pyfuncitem.funcargs[n] for n in names}))
        return True
    return None
