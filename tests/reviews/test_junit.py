"""`railroom check ... --junit FILE`: validated against the common JUnit XML layout
(tests/reviews/data/junit.xsd, written from memory, see its header) with xmlschema, and its counts
checked against the JSON report of the same check."""

import json
import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest
import xmlschema

ROOT = Path(__file__).resolve().parents[2]
DEMOS = ROOT / "engine" / "demos"
SCHEMA = xmlschema.XMLSchema(str(Path(__file__).parent / "data" / "junit.xsd"))
PREFIX = {"": 1.0, "m": 1e-3, "µ": 1e-6, "u": 1e-6, "n": 1e-9, "k": 1e3}


def run(*args: str, home: Path) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", "check", *args],
        capture_output=True,
        text=True,
        timeout=120,
        env={"PATH": "/usr/bin:/bin", "RAILROOM_PRESETS_HOME": str(home)},
    )


def volts(text: str) -> float:
    number, prefix = re.fullmatch(r"(-?[0-9.]+(?:e-?\d+)?) ?([mµunk]?)V", text).groups()
    return float(number) * PREFIX[prefix]


@pytest.mark.parametrize("demo", ["pump_vibration.toml", "bridge_sensor.toml"])
def test_junit_validates_and_counts_match_the_json_report(demo, tmp_path):
    junit = tmp_path / "report.xml"
    done = run(str(DEMOS / demo), "--junit", str(junit), "--json", home=tmp_path)
    assert done.returncode == 1, done.stderr  # both demos are NO-GO
    report = json.loads(done.stdout)
    SCHEMA.validate(str(junit))
    root = ET.parse(junit).getroot()
    suites = root.findall("testsuite")
    assert len(suites) == 1
    cases = suites[0].findall("testcase")
    checks = sum(len(s["margins"]) for s in report["stages"])
    failing = [(s, r) for s in report["stages"] for r in s["reasons"] if r != "fed-clipped"]
    assert len(cases) == int(suites[0].get("tests")) == checks + len(report["stages"])
    failures = [c for c in cases if c.find("failure") is not None]
    assert len(failures) == int(suites[0].get("failures")) == int(root.get("failures")) == len(failing) > 0
    for case, (stage, reason) in zip(failures, failing):
        assert case.get("name") == reason
        assert case.get("classname") == f"stage {stage['index']}: {stage['name']}"


def test_failure_message_gives_need_limit_and_margin(tmp_path):
    junit = tmp_path / "report.xml"
    done = run(str(DEMOS / "bridge_sensor.toml"), "--junit", str(junit), "--json", home=tmp_path)
    report = json.loads(done.stdout)
    stage = report["stages"][0]
    assert stage["reasons"] == ["output-low"]
    node = next(n for n in stage["nodes"] if n["label"] == stage["failing_nodes"]["output-low"])
    failure = ET.parse(junit).getroot().find(".//failure")
    found = re.fullmatch(
        r"output-low: needs (\S+ \S*V), limit (\S+ \S*V), margin (\S+ \S*V) "
        r"\((\S+ \S*V) required\) \[(.+)\]",
        failure.get("message"),
    )
    assert found, failure.get("message")
    need, limit, margin, required = (volts(found.group(i)) for i in range(1, 5))
    # three significant digits of the report's numbers (the message's precision)
    assert need == pytest.approx(node["output"][0], rel=5e-3)
    assert limit == pytest.approx(node["window"][0], rel=5e-3)
    assert margin == pytest.approx(stage["margins"]["output-low"], rel=5e-3)
    assert margin == pytest.approx(need - limit, rel=1e-2)  # room below: output minus limit
    assert required == pytest.approx(0.05)
    assert found.group(5) == node["label"]


def test_unreadable_file_is_an_error_suite_and_batch_gives_a_suite_per_chain(tmp_path):
    junit = tmp_path / "report.xml"
    missing = tmp_path / "missing.toml"
    done = run(str(DEMOS), str(missing), "--junit", str(junit), home=tmp_path)
    assert done.returncode == 2
    SCHEMA.validate(str(junit))
    root = ET.parse(junit).getroot()
    names = [s.get("name") for s in root.findall("testsuite")]
    assert names == [*(str(p) for p in sorted(DEMOS.glob("*.toml"))), str(missing)]
    assert root.findall("testsuite")[-1].get("errors") == "1"
    assert root.find(".//error").get("message").startswith(str(missing))


def test_the_schema_rejects_a_case_without_a_name():
    """The schema is not a rubber stamp: the layout's required name is enforced."""
    broken = '<testsuites><testsuite name="x" tests="1"><testcase classname="c"/></testsuite></testsuites>'
    assert not SCHEMA.is_valid(broken)
