"""The same chain, presets and seed give the same report, byte for byte.

Each report form (JSON, Markdown, the table, a batch over a folder, JUnit, --against) is produced for every chain
kept under tests/ and for both shipped demos, in fresh interpreters whose string hash seeds differ,
so no set or dict order, and no hash-dependent floating-point summation order, can leak into the
output. The reports of each process are compared byte for byte with the first one's.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
CHAINS = sorted((ROOT / "tests").rglob("*.toml")) + sorted((ROOT / "engine" / "demos").glob("*.toml"))
FORMS = (["--json"], ["--markdown"], ["--no-color"])

# Runs every check in one fresh interpreter and prints {chain|form: (exit code, sha256, bytes)}.
DRIVER = r"""
import contextlib, hashlib, io, json, sys
from railroom.tui.cli import main
out = {}
jobs = json.loads(sys.argv[1])
for key, argv in jobs:
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(io.StringIO()):
        try:
            code = main(argv)
        except SystemExit as stop:
            code = stop.code
    text = buf.getvalue()
    if "--junit" in argv:      # the JUnit file is the report here
        with open(argv[argv.index("--junit") + 1], encoding="utf-8") as written:
            text = written.read()
    out[key] = [code, hashlib.sha256(text.encode()).hexdigest(), len(text)]
print(json.dumps(out, sort_keys=True))
"""


def _jobs() -> list[tuple[str, list[str]]]:
    jobs = []
    for chain in CHAINS:
        rel = chain.relative_to(ROOT).as_posix()
        for form in FORMS:
            jobs.append((f"{rel}|{form[0]}", ["check", str(chain), *form]))
    # batch mode over a folder of chains, in both of its forms
    folder = str(ROOT / "tests" / "chains")
    jobs.append(("batch|table", ["check", folder, "--no-color"]))
    jobs.append(("batch|--json", ["check", folder, "--json"]))
    # JUnit, one chain and a folder, and --against (the two demos' versions of the same chain)
    demo = str(ROOT / "engine" / "demos" / "pump_vibration.toml")
    junit = str(Path(tempfile.gettempdir()) / f"railroom-determinism-{os.getpid()}.xml")
    jobs.append(("junit|chain", ["check", demo, "--junit", junit]))
    jobs.append(("junit|batch", ["check", folder, "--junit", junit]))
    jobs.append(
        (
            "against|--json",
            ["check", demo, "--against", str(ROOT / "tests" / "chains" / "alarms_nogo.toml"), "--json"],
        )
    )
    return jobs


def _run(hash_seed: str) -> dict:
    env = dict(os.environ, PYTHONHASHSEED=hash_seed, NO_COLOR="1", COLUMNS="100")
    done = subprocess.run(
        [sys.executable, "-c", DRIVER, json.dumps(_jobs())],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
        check=False,
    )
    assert done.returncode == 0, done.stderr[-2000:]
    return json.loads(done.stdout)


def test_there_are_chains_to_compare():
    # the demos, the interface's test chain and the chains under tests/chains
    assert len(CHAINS) >= 8, [c.name for c in CHAINS]


def test_reports_are_byte_identical_across_fresh_processes():
    runs = {seed: _run(seed) for seed in ("0", "1", "4242")}
    first = runs["0"]
    # every job produced output and the two verdict codes both occur (GO and NO-GO chains)
    assert all(size > 0 for _code, _digest, size in first.values())
    assert {code for code, _d, _s in first.values()} >= {0, 1}
    for seed, run in runs.items():
        differing = sorted(k for k in first if run[k] != first[k])
        assert not differing, f"PYTHONHASHSEED={seed} changed: {differing}"


def test_sensitivity_ties_are_ordered_by_the_circuit():
    # Twelve equal input resistors move the sum equally (each by 0.5 V * rf/r * 10 %): their order
    # in the ranking is the circuit's (input 1, 2, 3), whatever the hash seed.
    env = dict(os.environ, PYTHONHASHSEED="7")
    done = subprocess.run(
        [
            sys.executable,
            "-m",
            "railroom.tui.cli",
            "check",
            str(ROOT / "tests/chains/summing_ties.toml"),
            "--json",
        ],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    entries = json.loads(done.stdout)["stages"][1]["sensitivity"]
    ties = [e for e in entries if e["quantity"].startswith("inputs.")]
    assert [e["quantity"] for e in ties] == ["inputs.1.r", "inputs.2.r", "inputs.3.r"]
    assert len({e["share"] for e in ties}) == 1
