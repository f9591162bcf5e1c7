"""Generated chain and preset files through `railroom check` itself (cli.main, in-process):
0 tracebacks (an exception out of main, or the guard's "railroom bug" line), 0 hangs (a POSIX
alarm per file), 0 changed files, nothing on the terminal a terminal would act on (issue 12).

The suite runs FUZZ_COUNT files of each kind; RAILROOM_FUZZ_LONG=1 runs the long test, 3,000
chain files and 1,000 preset folders, and prints the figures (pytest -s)."""

from __future__ import annotations

import io
import os
import signal
from collections import Counter
from contextlib import contextmanager, redirect_stderr, redirect_stdout
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fuzz_inputs import DEMO_CHAIN, chain_files, extreme_values, has_control, preset_files
from railroom.tui import cli

FUZZ_COUNT = 150
LONG = bool(os.environ.get("RAILROOM_FUZZ_LONG"))
EXPLORE = bool(os.environ.get("RAILROOM_FUZZ_EXPLORE"))
TIME_LIMIT_S = 20
FIGURES: Counter = Counter()


def settings_for(count: int):
    return settings(
        max_examples=count,
        deadline=None,
        database=None,
        derandomize=not EXPLORE,
        suppress_health_check=list(HealthCheck),
    )


# Structure a user could not type by hand but a file can hold: nesting past the limit, long
# names, many unknown keys, a byte-order mark.
hostile_tails = st.one_of(
    st.integers(1, 600).map(lambda n: "x = " + "[" * n + "]" * n + "\n"),
    st.integers(1, 300).map(lambda n: "y = " + "{a = " * n + "1" + "}" * n + "\n"),
    st.integers(100, 3000).map(lambda n: "".join(f"k{i} = 1\n" for i in range(n))),
    st.integers(150, 400).map(lambda n: f'title = "{"t" * n}"\n'),
)
chains = st.one_of(
    chain_files(),
    extreme_values(DEMO_CHAIN),
    st.tuples(st.booleans(), hostile_tails).map(
        lambda p: ("\ufeff" if p[0] else "") + DEMO_CHAIN.read_text(encoding="utf-8") + p[1]
    ),
)


@contextmanager
def time_limit(seconds: int = TIME_LIMIT_S):
    def expired(signum, frame):
        raise TimeoutError(f"no answer within {seconds} s")

    previous = signal.signal(signal.SIGALRM, expired)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


def run_check(*args: str) -> tuple[int, str, str]:
    return run_command("check", *args, "--no-color")


def run_command(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    try:
        with time_limit(), redirect_stdout(out), redirect_stderr(err):
            status = cli.main(list(args))
    except TimeoutError:
        FIGURES["hangs"] += 1
        raise
    except BaseException:
        FIGURES["tracebacks"] += 1
        raise
    return status, out.getvalue(), err.getvalue()


def assert_well_behaved(status: int, out: str, err: str) -> None:
    FIGURES[f"exit {status}"] += 1
    if "railroom bug" in err:
        FIGURES["tracebacks"] += 1
    assert status in (0, 1, 2), err
    assert "railroom bug" not in err and "Traceback" not in err + out, err
    assert not has_control(out) and not has_control(err), repr(err[:400])
    if status == 2:
        assert err and all(line.startswith("railroom: ") for line in err.splitlines()), err
    else:
        assert "verdict" in out


def check_chain_text(folder: Path, text: str) -> None:
    chain = folder / "board.toml"
    chain.write_text(text, encoding="utf-8")
    before = chain.read_bytes()
    assert_well_behaved(*run_check(str(chain)))
    FIGURES["chain files"] += 1
    if chain.read_bytes() != before:
        FIGURES["changed files"] += 1
    assert chain.read_bytes() == before


def check_preset_text(folder: Path, text: str) -> None:
    preset = folder / "lab.toml"
    preset.write_text(text, encoding="utf-8")
    before = preset.read_bytes()
    assert_well_behaved(*run_check(str(DEMO_CHAIN), "--presets", str(folder)))
    for command in (("presets", "list", "--presets", str(folder)), ("presets", "check", str(preset))):
        status, out, err = run_command(*command)
        assert status in (0, 2), err
        assert "Traceback" not in err + out and not has_control(out) and not has_control(err)
        assert all(line.startswith("railroom: ") for line in err.splitlines()), err
    FIGURES["preset files"] += 1
    if preset.read_bytes() != before:
        FIGURES["changed files"] += 1
    assert preset.read_bytes() == before


@settings_for(FUZZ_COUNT)
@given(chains)
def test_generated_chain_files_through_check(tmp_path_factory, text):
    check_chain_text(tmp_path_factory.mktemp("chain"), text)


@settings_for(FUZZ_COUNT // 3)
@given(preset_files())
def test_generated_preset_files_through_check(tmp_path_factory, text):
    check_preset_text(tmp_path_factory.mktemp("presets"), text)


@pytest.mark.skipif(not LONG, reason="the long run: RAILROOM_FUZZ_LONG=1")
def test_the_long_run_3000_chains_and_1000_preset_files(tmp_path_factory):
    FIGURES.clear()

    @settings_for(3000)
    @given(chains)
    def chains_run(text):
        check_chain_text(tmp_path_factory.mktemp("chain"), text)

    @settings_for(1000)
    @given(preset_files())
    def presets_run(text):
        check_preset_text(tmp_path_factory.mktemp("presets"), text)

    chains_run()
    presets_run()
    print("\nfuzz figures:", dict(sorted(FIGURES.items())))
    assert FIGURES["tracebacks"] == FIGURES["hangs"] == FIGURES["changed files"] == 0
