"""Hostile files against the loaders, in-process: every outcome is a model or located problems.

The rule (project hardening brief): a broken chain or preset file gives problems that name the
file, the line and the field, in text a terminal shows as written (no raw control characters);
nothing else is ever raised, nothing hangs, and a value that loads is a finite number.
"""

from __future__ import annotations

import json
import math
import os
import signal
from contextlib import contextmanager

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fuzz_inputs import (
    DEMO_CHAIN,
    GENERIC_PRESETS,
    chain_files,
    edited_file,
    extreme_values,
    has_control,
    preset_files,
)
from railroom.engine.analysis import analyse
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.circuit.model import InputError
from railroom.engine.formats.presets import load_library, parts_from_text, search_order
from railroom.engine.reports.json_report import chain_report
from railroom.engine.formats.toml_lines import key_lines
from railroom.engine.formats.values import KINDS, ValueTextError, parse_quantity

# A fixed sequence in the test run; RAILROOM_FUZZ_EXPLORE=1 draws fresh inputs for a longer hunt.
EXPLORE = bool(os.environ.get("RAILROOM_FUZZ_EXPLORE"))
FAST = settings(
    deadline=None, suppress_health_check=list(HealthCheck), derandomize=not EXPLORE, database=None
)
TIME_LIMIT_S = 10


@contextmanager
def time_limit(seconds: int = TIME_LIMIT_S):
    """A hang shows as a failure instead of stalling the run (POSIX alarm)."""

    def expired(signum, frame):
        raise TimeoutError(f"no answer within {seconds} s")

    previous = signal.signal(signal.SIGALRM, expired)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def assert_located(problems, path: str, text: str) -> None:
    assert problems, "an InputError must carry at least one problem"
    last_line = text.count("\n") + 1
    for p in problems:
        assert p.file == path
        assert isinstance(p.field, str) and p.field
        assert isinstance(p.message, str) and p.message
        assert p.line is None or 1 <= p.line <= last_line, p
        assert not has_control(str(p)), repr(str(p))


def assert_finite_values(obj) -> None:
    """Every number that reached the model is finite (a NaN would poison every margin)."""
    if isinstance(obj, float):
        assert math.isfinite(obj)
    elif isinstance(obj, (tuple, list)):
        for item in obj:
            assert_finite_values(item)
    elif isinstance(obj, dict):
        for item in obj.values():
            assert_finite_values(item)
    elif hasattr(obj, "__dataclass_fields__"):
        for name in obj.__dataclass_fields__:
            assert_finite_values(getattr(obj, name))


def load_or_problems(text: str, path: str = "fuzz.toml"):
    with time_limit():
        try:
            return chain_from_text(text, path)
        except InputError as err:
            assert_located(err.problems, path, text)
            return None


@settings(FAST, max_examples=1500)
@given(chain_files())
def test_chain_loader_answers_with_a_chain_or_located_problems(text):
    chain = load_or_problems(text)
    if chain is not None:
        assert_finite_values(chain)
        assert not has_control(chain.title)
        assert all(not has_control(s.name) for s in chain.stages)


@settings(FAST, max_examples=1000)
@given(preset_files())
def test_preset_loader_answers_with_parts_or_located_problems(text):
    with time_limit():
        parts, problems = parts_from_text(text, "fuzz-presets.toml")
    if problems:
        assert_located(problems, "fuzz-presets.toml", text)
    for part in parts:
        assert_finite_values(part)
        assert not has_control(part.id) and not has_control(part.description)


@settings(FAST, max_examples=1000)
@given(st.one_of(st.text(max_size=40), st.floats(), st.integers(), st.booleans()), st.sampled_from(KINDS))
def test_value_parser_refuses_with_a_sentence_or_gives_a_finite_value(raw, kind):
    try:
        q = parse_quantity(raw, kind)
    except ValueTextError as err:
        assert str(err) and not has_control(str(err))
        return
    assert math.isfinite(q.value)
    assert q.tolerance is None or 0 <= q.tolerance < 1
    assert q.tempco is None or math.isfinite(q.tempco)


@settings(FAST, max_examples=500)
@given(st.text(max_size=300))
def test_line_finder_takes_any_text(text):
    lines = key_lines(text)
    assert all(1 <= n <= text.count("\n") + 1 for n in lines.values())


def shipped_parts():
    return load_library(search_order()).parts


@settings(FAST, max_examples=150)
@given(edited_file(DEMO_CHAIN))
def test_any_chain_that_loads_is_checked_or_refused_with_located_problems(text):
    chain = load_or_problems(text)
    if chain is None:
        return
    with time_limit():
        try:
            result = analyse(chain, shipped_parts())
        except InputError as err:
            assert_located(err.problems, "fuzz.toml", text)
            return
    json.dumps(chain_report(result), allow_nan=False)


@settings(FAST, max_examples=150)
@given(preset_files())
def test_demo_chain_is_checked_against_any_preset_that_loads(text):
    parts, _ = parts_from_text(text, "fuzz-presets.toml")
    library = shipped_parts()
    library.update({p.id: p for p in parts})
    chain = chain_from_text(DEMO_CHAIN.read_text(encoding="utf-8"), str(DEMO_CHAIN))
    with time_limit():
        try:
            result = analyse(chain, library)
        except InputError as err:
            assert err.problems
            return
    json.dumps(chain_report(result), allow_nan=False)


@pytest.mark.parametrize("text", ["", "\n", "format = 1\n", "[[stage]]\n", "stage = 1\nrails = 2\n"])
def test_nearly_empty_chain_files_name_what_is_missing(text):
    with pytest.raises(InputError) as err:
        chain_from_text(text, "empty.toml")
    assert_located(err.value.problems, "empty.toml", text)
    assert any("missing" in p.message or "expected" in p.message for p in err.value.problems)


@settings(FAST, max_examples=300)
@given(st.one_of(extreme_values(DEMO_CHAIN), extreme_values(GENERIC_PRESETS)))
def test_extreme_but_accepted_sizes_give_a_report_or_located_problems(text):
    """Values anywhere from 1e-18 to 1e15: the arithmetic must not overflow into an exception."""
    if "[part." in text:
        parts, problems = parts_from_text(text, "fuzz-presets.toml")
        library = {**shipped_parts(), **{p.id: p for p in parts}}
        text = DEMO_CHAIN.read_text(encoding="utf-8")
    else:
        library = shipped_parts()
    chain = load_or_problems(text)
    if chain is None:
        return
    with time_limit():
        try:
            result = analyse(chain, library)
        except InputError as err:
            assert err.problems
            return
    json.dumps(chain_report(result), allow_nan=False)


def test_control_characters_in_a_part_id_are_refused_and_shown_escaped():
    text = GENERIC_PRESETS.read_text(encoding="utf-8").replace(
        "[part.generic-fast]", '[part."fast\\u001b[2J"]'
    )
    parts, problems = parts_from_text(text, "lab.toml")
    assert "generic-fast" not in {p.id for p in parts} and len(parts) == 5
    assert [p.field for p in problems] == ["part.fast\\x1b[2J"]
    assert_located(problems, "lab.toml", text)
