"""JSON reports -> a JUnit XML test report, the layout CI servers already display (pure).

One <testsuite> per chain file; in it, per stage, a test case "regime" (the stage's regime and
reasons as its output) and one test case per check the stage has (output-high, ..., supply). A
check that fails the verdict is a <failure> whose message gives what the circuit needs, the
part's limit and the margin; a file that cannot be checked is a suite with one <error>.
The class name of a stage's cases is "stage N: NAME", so a CI server groups them by stage.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from dataclasses import dataclass

from railroom.engine.verdict.results import check_unit
from railroom.engine.formats.values import format_si, visible

# check -> (node field of the need, node field of the limit, +1 when the limit is above the need)
FIGURES = {
    "output-high": ("output", 1, "window", 1, 1),
    "output-low": ("output", 0, "window", 0, -1),
    "input-high": ("input", 1, "input_window", 1, 1),
    "input-low": ("input", 0, "input_window", 0, -1),
}


@dataclass(frozen=True)
class SuiteInput:
    """One chain file: its JSON report (None when it could not be checked)."""

    file: str
    report: dict | None
    problems: tuple[str, ...] = ()
    required: float | None = None  # the chain's required voltage margin, V
    time: float = 0.0  # seconds the check took


def _value(check: str, value: float | None) -> str:
    return "?" if value is None else format_si(value, check_unit(check))


def _node_figures(check: str, node: dict) -> tuple[float | None, float | None]:
    """(need, limit) of one op amp for a check, from its report entry."""
    if check in FIGURES:
        need_key, i, limit_key, j, _ = FIGURES[check]
        return node[need_key][i], node[limit_key][j]
    if check == "slew":
        return node["slew_needed"], None
    if check == "current":
        return node["current_needed"], None
    return None, None


def check_figures(stage: dict, check: str) -> tuple[float | None, float | None, str | None]:
    """(need, limit, op amp label) behind a stage's margin for `check`: the op amp that sets it
    (named by failing_nodes, else the one with the least room); the limit of slew and current is
    the need plus the margin (the report gives the margin, the part's figure is need + margin)."""
    margin = stage["margins"].get(check)
    nodes = stage.get("nodes") or []
    if check == "supply":
        return None, None, None
    if not nodes:
        if check in ("output-high", "output-low") and stage.get("window"):
            side = 1 if check == "output-high" else 0
            return (
                (stage["output"]["max"], stage["window"]["high"])
                if side
                else (stage["output"]["min"], stage["window"]["low"])
            ) + (None,)
        return None, None, None
    named = stage.get("failing_nodes", {}).get(check)
    candidates = [n for n in nodes if n["label"] == named] or nodes
    node = min(candidates, key=lambda n: _room(check, n))
    need, limit = _node_figures(check, node)
    if limit is None and need is not None and margin is not None:
        limit = need + margin
    return need, limit, node["label"] if len(nodes) > 1 else None


def _room(check: str, node: dict) -> float:
    need, limit = _node_figures(check, node)
    if check in FIGURES and need is not None and limit is not None:
        return (limit - need) * FIGURES[check][4]
    return 0.0


def failure_message(stage: dict, check: str, required: float | None) -> str:
    """'output-high: needs 4.62 V, limit 4.57 V, margin -53 mV (50 mV required)'."""
    margin = stage["margins"].get(check)
    if check == "supply":
        return (
            f"supply: the rails' span must lie inside the part's allowed supply span; "
            f"margin {_value(check, margin)}"
        )
    need, limit, label = check_figures(stage, check)
    words = (
        f"{check}: needs {_value(check, need)}, limit {_value(check, limit)}, margin {_value(check, margin)}"
    )
    if required is not None and check not in ("slew", "current"):
        words += f" ({_value(check, required)} required)"
    return words + (f" [{label}]" if label else "")


def _suite(entry: SuiteInput) -> ET.Element:
    suite = ET.Element("testsuite", name=visible(entry.file, 500))
    cases = failures = errors = 0
    if entry.report is None:
        case = ET.SubElement(suite, "testcase", name="load", classname="chain file", time="0")
        message = visible(entry.problems[0] if entry.problems else "cannot be checked", 500)
        ET.SubElement(case, "error", message=message, type="railroom.input").text = "\n".join(
            visible(p, 2000) for p in entry.problems
        )
        cases, errors = 1, 1
    else:
        for stage in entry.report["stages"]:
            classname = visible(f"stage {stage['index']}: {stage['name']}", 300)
            case = ET.SubElement(suite, "testcase", name="regime", classname=classname, time="0")
            out = f"{stage['regime']}" + (
                f"; reasons: {', '.join(stage['reasons'])}" if stage["reasons"] else ""
            )
            ET.SubElement(case, "system-out").text = out
            cases += 1
            for check in stage["margins"]:
                case = ET.SubElement(suite, "testcase", name=check, classname=classname, time="0")
                cases += 1
                if check in stage["reasons"]:
                    failures += 1
                    words = failure_message(stage, check, entry.required)
                    ET.SubElement(
                        case, "failure", type="railroom.margin", message=visible(words, 500)
                    ).text = visible(words, 2000)
    suite.set("tests", str(cases))
    suite.set("failures", str(failures))
    suite.set("errors", str(errors))
    suite.set("skipped", "0")
    # "0": the same chain gives the same report byte for byte (a measured time would not);
    # how long checks take is what `railroom bench` is for
    suite.set("time", "0")
    return suite


def junit_xml(entries: list[SuiteInput]) -> str:
    """The whole JUnit XML document (UTF-8 text with its declaration)."""
    root = ET.Element("testsuites", name="railroom check")
    suites = [_suite(e) for e in entries]
    for key in ("tests", "failures", "errors"):
        root.set(key, str(sum(int(s.get(key) or 0) for s in suites)))
    root.set("time", "0")
    root.extend(suites)
    ET.indent(root)
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + ET.tostring(root, encoding="unicode") + "\n"
