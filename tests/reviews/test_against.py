"""`railroom check NEW --against OLD`: two versions of a demo, compared stage by stage.

The expected sets of changed stages come from outside the comparison: two plain, separate
`check --json` runs of each version (their stage entries compared field by field here), and
circuit reasoning (a load at the last stage's output changes only that stage's output current;
Ohm's law gives by how much).
"""

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parents[2] / "engine" / "demos" / "pump_vibration.toml"
CHANGE_KEYS = {"name", "change", "margins"}


def run(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", "check", *args],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=cwd,
        env={
            "PATH": "/usr/bin:/bin",
            "COLUMNS": "100",
            "RAILROOM_PRESETS_HOME": str(Path(cwd or ".").resolve()),
        },
    )


def version(tmp_path: Path, name: str, old: str, new: str) -> Path:
    text = DEMO.read_text(encoding="utf-8")
    assert text.count(old) == 1, old
    path = tmp_path / name
    path.write_text(text.replace(old, new), encoding="utf-8")
    return path


def plain_report(path: Path) -> dict:
    done = run(str(path), "--json")
    assert done.returncode in (0, 1), done.stderr
    return json.loads(done.stdout)


def differing_stages(old: dict, new: dict) -> set[str]:
    """Stages whose regime, verdict or any margin differs between two separate reports."""
    before = {s["name"]: s for s in old["stages"]}
    return {
        s["name"]
        for s in new["stages"]
        if (s["regime"], s["go"], s["margins"])
        != (before[s["name"]]["regime"], before[s["name"]]["go"], before[s["name"]]["margins"])
    }


@pytest.fixture
def old(tmp_path):
    path = tmp_path / "old.toml"
    shutil.copy(DEMO, path)
    return path


def against(new: Path, old_spec: str, cwd: Path | None = None) -> tuple[int, dict]:
    done = run(str(new), "--against", old_spec, "--json", cwd=cwd)
    assert done.returncode in (0, 1), done.stderr
    return done.returncode, json.loads(done.stdout)


def test_alarm_load_changes_exactly_the_alarm_stage(tmp_path, old):
    new = version(tmp_path, "new.toml", 'load = "4k7"', 'load = "10k"')
    status, report = against(new, str(old))
    section = report["against"]
    assert section["file"] == str(old) and section["verdict"] == "no-go"
    for entry in section["stages"]:
        assert CHANGE_KEYS <= set(entry) and entry["change"] in ("changed", "same", "added", "removed")
        assert all(len(pair) == 2 for pair in entry["margins"].values())
    import jsonschema

    from railroom.engine.reports.compare import AGAINST_SCHEMA
    from railroom.engine.formats.schema import report_schema

    jsonschema.validate(section, AGAINST_SCHEMA)
    jsonschema.validate(report, report_schema())
    changed = [e for e in section["stages"] if e["change"] != "same"]
    assert [e["name"] for e in changed] == ["over-vibration alarm"]
    assert list(changed[0]["margins"]) == ["current"]
    # Ohm's law: the comparator's high output level V_oh (between 4.5 V and the 5 V rail + 2 %,
    # common practice for a rail-to-rail part) drives V_oh / R, largest at the low end of the
    # file's 1 % default tolerance; 4k7 -> 10k frees V_oh / 0.99 * (1/4k7 - 1/10k)
    before, after = changed[0]["margins"]["current"]
    freed = after - before
    step = (1 / 4.7e3 - 1 / 10e3) / 0.99
    assert 4.5 * step <= freed <= 5.1 * step
    assert status == 1  # NEW is NO-GO (stage 4 still short of slew rate)


def test_gain_resistor_names_the_stages_two_plain_runs_disagree_on(tmp_path, old):
    new = version(tmp_path, "new.toml", 'rf = "90k9 0.1%"', 'rf = "80k6 0.1%"')
    _, report = against(new, str(old))
    expected = differing_stages(plain_report(old), plain_report(new))
    named = {e["name"] for e in report["against"]["stages"] if e["change"] == "changed"}
    assert "gain x10" in expected and "pickup buffer" not in expected
    assert named == expected
    # before/after pairs are the two plain reports' margins
    plain_old, plain_new = plain_report(old), plain_report(new)
    gain_old = next(s for s in plain_old["stages"] if s["name"] == "gain x10")["margins"]
    gain_new = next(s for s in plain_new["stages"] if s["name"] == "gain x10")["margins"]
    entry = next(e for e in report["against"]["stages"] if e["name"] == "gain x10")
    for check, (a, b) in entry["margins"].items():
        assert (a, b) == (gain_old[check], gain_new[check])


def test_exit_status_is_new_and_verdict_changes_come_first(tmp_path, old):
    fixed = version(tmp_path, "fixed.toml", 'rin = "20k"', 'rin = "24k"')
    status, report = against(fixed, str(old))
    assert status == 0 and report["verdict"] == "go" and report["against"]["verdict"] == "no-go"
    first = report["against"]["stages"][0]
    assert first["name"] == "shift to mid-supply" and first["go"] == [False, True]
    status, report = against(old, str(fixed))
    assert status == 1 and report["against"]["verdict"] == "go"


def test_renamed_stage_is_removed_and_added(tmp_path, old):
    new = version(tmp_path, "new.toml", 'name = "anti-alias"', 'name = "band limit"')
    _, report = against(new, str(old))
    changes = {e["name"]: e for e in report["against"]["stages"]}
    assert changes["band limit"]["change"] == "added"
    assert changes["band limit"]["renamed_from"] == "anti-alias"
    assert changes["anti-alias"]["change"] == "removed"
    assert {e["change"] for n, e in changes.items() if n not in ("band limit", "anti-alias")} == {"same"}


def test_table_and_markdown_show_before_and_after(tmp_path, old):
    new = version(tmp_path, "new.toml", 'load = "4k7"', 'load = "10k"')
    table = run(str(new), "--against", str(old), "--no-color")
    assert table.returncode == 1
    assert "verdict NO-GO -> NO-GO" in " ".join(table.stdout.split())
    assert "18.9 mA" in table.stdout and "19.5 mA" in table.stdout
    markdown = run(str(new), "--against", str(old), "--markdown")
    assert "## What changed against" in markdown.stdout
    assert "| over-vibration alarm | changed | current | 18.9 mA | 19.5 mA |" in markdown.stdout


@pytest.mark.skipif(shutil.which("git") is None, reason="needs git")
def test_against_a_git_revision(tmp_path):
    repo = tmp_path / "boards"
    repo.mkdir()
    board = repo / "pump.toml"
    shutil.copy(DEMO, board)
    git = ["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid"]
    subprocess.run([*git, "init", "-q"], cwd=repo, check=True)
    subprocess.run([*git, "add", "pump.toml"], cwd=repo, check=True)
    subprocess.run([*git, "commit", "-q", "-m", "first"], cwd=repo, check=True)
    board.write_text(board.read_text().replace('load = "4k7"', 'load = "10k"'))
    status, report = against(board, "HEAD:pump.toml", cwd=repo)
    assert status == 1 and report["against"]["file"] == "HEAD:pump.toml"
    assert [e["name"] for e in report["against"]["stages"] if e["change"] != "same"] == [
        "over-vibration alarm"
    ]
    missing = run(str(board), "--against", "HEAD:nothing.toml", cwd=repo)
    assert missing.returncode == 2
    assert "HEAD:nothing.toml" in missing.stderr and "--against" in missing.stderr


def test_against_takes_one_chain(tmp_path, old):
    done = run(str(old), str(old), "--against", str(old))
    assert done.returncode == 2 and "--against" in done.stderr and "single CHAIN" in done.stderr
