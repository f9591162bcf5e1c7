"""`import railroom`: the README's notebook example runs as printed, and its data agree with the
command line's JSON report (an independent process)."""

import json
import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "engine" / "demos" / "pump_vibration.toml"


def readme_example() -> tuple[str, str]:
    """The Python block of the README's "Python API" section and the output block after it."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("\n## Python API", 1)[1].split("\n## ", 1)[0]
    code = re.search(r"```python\n(.*?)\n```", section, re.S).group(1)
    output = re.search(r"```python\n.*?\n```.*?```text\n(.*?)\n```", section, re.S).group(1)
    return code, output


def test_readme_example_runs_and_prints_what_the_readme_says(tmp_path):
    code, output = readme_example()
    assert "import railroom" in code and "railroom.rows(" in code
    done = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=ROOT,
        env={"PATH": "/usr/bin:/bin", "RAILROOM_PRESETS_HOME": str(tmp_path)},
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.rstrip("\n") == output


def test_dicts_and_rows_match_the_command_line_report(tmp_path):
    import railroom

    result = railroom.analyse(railroom.load(str(DEMO)))
    done = subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", "check", str(DEMO), "--json"],
        capture_output=True,
        text=True,
        timeout=120,
        env={"PATH": "/usr/bin:/bin", "RAILROOM_PRESETS_HOME": str(tmp_path)},
    )
    assert railroom.to_dict(result) == json.loads(done.stdout)
    assert json.loads(json.dumps(railroom.to_dict(result))) == railroom.to_dict(result)  # plain
    for row, stage in zip(railroom.rows(result), json.loads(done.stdout)["stages"]):
        assert (row["index"], row["name"], row["regime"], row["go"]) == (
            stage["index"],
            stage["name"],
            stage["regime"],
            stage["go"],
        )
        for check, margin in stage["margins"].items():
            assert row[check] == margin
        assert row["margin"] == (stage["margins"][stage["limiting"]] if stage["limiting"] else None)
    assert railroom.to_dict(result.stages[0])["name"] == "pickup buffer"
    assert isinstance(result, railroom.ChainResult)
    assert isinstance(result.stages[0], railroom.StageResult)


def test_import_railroom_is_cheap_and_names_its_api():
    code = (
        "import sys, railroom\n"
        "print(sorted(m for m in sys.modules if m.startswith('railroom.')))\n"
        "print('numpy' in sys.modules, callable(railroom.load), callable(railroom.analyse))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert done.stdout.splitlines() == ["[]", "False True True"], done.stderr


def test_load_reports_located_problems(tmp_path):
    import pytest

    import railroom

    bad = tmp_path / "bad.toml"
    bad.write_text('format = 1\n[source]\nband = ["10", "x"]\n', encoding="utf-8")
    with pytest.raises(railroom.InputError) as caught:
        railroom.load(str(bad))
    assert any(p.file == str(bad) and p.line == 3 for p in caught.value.problems)
    chain = railroom.load_text(DEMO.read_text(encoding="utf-8"), "cell")
    assert railroom.analyse(chain).go is False
