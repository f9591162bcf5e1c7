"""The Markdown review report: snapshot of a test chain, structure for every demo, hostile names.

Regenerate the snapshot after an intended change of the report or of the engine's numbers:
    RAILROOM_UPDATE_SNAPSHOTS=1 .venv/bin/python -m pytest tests/engine/test_markdown.py
then read the diff of tests/engine/snapshots/ before committing it.
"""

from __future__ import annotations

import os
import re
from pathlib import Path

import pytest

import railroom.engine.demos
from railroom.engine.analysis import analyse
from railroom.engine.formats.loading import load_checked
from railroom.engine.formats.chain_file import chain_from_text
from railroom.engine.reports.markdown import markdown_report, md
from railroom.engine.formats.presets import load_library, search_order

DEMOS = sorted(Path(railroom.engine.demos.__file__).parent.glob("*.toml"))
SNAPSHOTS = Path(__file__).parent / "snapshots"


def report_of(path: Path) -> tuple[str, object]:
    chain, library = load_checked(str(path))
    result = analyse(chain, library.parts)
    return markdown_report(result), result


def test_report_matches_the_stored_snapshot():
    # a chain kept under tests/chains (a frozen copy of the pump demo), so a wording change in
    # the shipped demo breaks no snapshot
    text, _ = report_of(Path(__file__).parents[1] / "chains" / "pump_stand.toml")
    stored = SNAPSHOTS / "pump_stand.md"
    if os.environ.get("RAILROOM_UPDATE_SNAPSHOTS"):
        stored.write_text(text, encoding="utf-8")
    assert text == stored.read_text(encoding="utf-8"), (
        "the Markdown report changed; if intended, regenerate (see this module's docstring)"
    )


def cells(row: str) -> list[str]:
    """Table cells split at unescaped pipes (CommonMark GFM tables: \\| is a literal pipe)."""
    return re.split(r"(?<!\\)\|", row.strip())[1:-1]


def tables(text: str) -> list[list[str]]:
    found, current = [], []
    for line in text.splitlines():
        if line.startswith("|"):
            current.append(line)
        elif current:
            found.append(current)
            current = []
    return found + ([current] if current else [])


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_every_demo_report_has_its_verdict_and_one_row_per_stage(path):
    text, result = report_of(path)
    verdict = "GO" if result.go else "NO-GO"
    assert f"**Verdict: {verdict}**" in text
    stage_rows = [t for t in tables(text) if "regime" in t[0]][0]
    assert len(stage_rows) == 2 + len(result.stages)
    for table in tables(text):
        widths = {len(cells(row)) for row in table}
        assert len(widths) == 1, table
    diagram = text.split("```text\n")[1].split("```")[0].splitlines()
    assert len(diagram) == 1 + len(result.stages)


HOSTILE_NAMES = [
    "a | b",
    "`code` and ```fence```",
    "<script>x</script>",
    "[x](http://e.example)",
    "**bold** _em_ ~~gone~~",
    "[bold red]markup[/]",
    "# heading",
    "ü€😀 Ω",
]


def hostile_chain() -> str:
    stages = "".join(
        f'[[stage]]\nname = {name!r}\nblock = "follower"\npart = "generic-rro-5v"\n\n'.replace("'", '"')
        if '"' not in name
        else ""
        for name in HOSTILE_NAMES
    )
    return (
        'format = 1\ntitle = "title | with `ticks` and <b>tags</b>"\n'
        '[rails.main]\npositive = "5"\n[source]\nlevel = ["1", "2"]\n\n' + stages
    )


def test_user_text_cannot_change_the_document_structure():
    chain = chain_from_text(hostile_chain(), "hostile.toml")
    result = analyse(chain, load_library(search_order()).parts)
    text = markdown_report(result)
    fence = re.search(r"^(`{3,})text$", text, re.MULTILINE)[1]
    outside_code = text.split(fence)[0] + text.split(fence)[-1]
    assert not re.search(r"(?<!\\)<", outside_code), "HTML must be escaped"
    for table in tables(text):
        assert len({len(cells(row)) for row in table}) == 1, table
    assert len(fence) > max(len(r) for r in re.findall(r"`+", hostile_chain()))
    assert text.count(fence) == 2
    headings = [line for line in text.splitlines() if line.startswith("#")]
    assert all(h.startswith(("# Rail headroom review", "## ", "### ")) for h in headings)


def test_markdown_escape_keeps_text_literal():
    # CommonMark 0.30, section 2.4: any ASCII punctuation may be backslash-escaped.
    assert md("a|b*c_d`e[f]g<h~i") == r"a\|b\*c\_d\`e\[f\]g\<h\~i"
    assert md("line\nbreak\x1b[2J") == r"line break\\x1b\[2J"


def test_level_diagram_places_a_follower_span_between_its_rails():
    text = (
        'format = 1\n[rails.main]\npositive = "10"\nnegative = "-10"\n[source]\n'
        'level = ["0", "5"]\n[[stage]]\nblock = "follower"\npart = "generic-bipolar-15v"\n'
    )
    result = analyse(chain_from_text(text, "f.toml"), load_library(search_order()).parts)
    line = markdown_report(result).split("```text\n")[1].splitlines()[1]
    bar = line[26 : 26 + 56]
    # Axis -10 V .. 10 V over 56 cells of 20/56 V: the span [0 V - offset, 5 V + offset] covers
    # cells 27 (just below 0 V, from the part's offset) to floor(15.0x / (20/56)) = 42.
    low, high = result.stages[0].measure.output
    assert -0.01 < low < 0 and 5 < high < 5.01
    assert bar[0] == "|" and bar[-1] == "|"
    assert bar.index("#") == 27 and bar.rindex("#") == 42
    # generic-bipolar-15v: output 1.5 V from each rail -> window -8.5..8.5 V, "-" outside it.
    assert bar[1:4] == "---" and bar[5] == "."


def test_a_converter_input_fails_in_converter_words():
    # 4.8 V into a converter that reads up to 4.5 V: its input-high check fails by 0.3 V, and the
    # review says so about the converter's range, not an op amp's common-mode range
    text = """format = 1
[rails.main]
positive = "5"
negative = "0"
[source]
level = ["4.8", "4.8"]
[[stage]]
block = "follower"
part = "generic-rro-5v"
[[stage]]
block = "adc"
low = "0"
high = "4.5"
"""
    chain = chain_from_text(text)
    result = analyse(chain, load_library(search_order()).parts)
    adc = result.stages[1]
    assert list(adc.reasons) == ["input-high"]
    assert adc.margins["input-high"] < 0
    report = markdown_report(result)
    assert "input-high (signal above the converter's input range)" in report
    assert "input common mode" not in report.split("## Why stages fail")[1].split("\n\n")[1]
