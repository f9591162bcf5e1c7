"""A chain with branches (`from`) in the Markdown report and the `railroom check` table (issue 13,
real boards, item 3): the tree drawn in both, a `from` column in the report, 80 columns kept."""

from __future__ import annotations

from pathlib import Path

import railroom.engine.demos as demos
from command_line import railroom as run_railroom
from railroom.engine import branched, tree_rows
from railroom.engine.analysis import analyse
from railroom.engine.circuit.stage_tree import ASCII_GLYPHS
from railroom.engine.formats.chain_file import load_chain
from railroom.engine.formats.presets import load_library, search_order
from railroom.engine.reports.markdown import markdown_report

DEMOS = Path(demos.__file__).parent
PUMP = DEMOS / "pump_vibration.toml"  # stage 5 feeds stages 6 and 7


def report(path: Path) -> str:
    chain = load_chain(path)
    parts = load_library(search_order(chain.preset_dirs)).parts
    return markdown_report(analyse(chain, parts, design_aids=False, headroom=False))


def test_the_tree_in_ascii_and_box_glyphs():
    parents = (-1, 0, 0, 1)
    assert tree_rows(parents, ASCII_GLYPHS) == [(0, ""), (1, "|- "), (3, "|  "), (2, "`- ")]
    assert tree_rows(parents) == [(0, ""), (1, "├ "), (3, "│ "), (2, "└ ")]
    assert branched(parents) and not branched((-1, 0, 1))


def test_the_report_has_a_from_column_and_draws_the_tree_when_the_chain_branches():
    text = report(PUMP)
    table = [line for line in text.splitlines() if line.startswith("| ") and "follower" in line]
    header = next(line for line in text.splitlines() if line.startswith("| # | stage |"))
    assert header.startswith("| # | stage | from | block |")
    # stage 1 from the source, stage 5 (converter driver) from stage 4
    assert table[0].startswith("| 1 | pickup buffer | source | follower |")
    assert any(line.startswith("| 5 | converter driver | 4 | follower |") for line in table)
    diagram = text.split("```text\n", 1)[1].split("```", 1)[0].splitlines()
    assert diagram[6].startswith("  6 |- converter input ")
    assert diagram[7].startswith("  7 `- over-vibration al~")


def test_a_chain_in_one_line_keeps_its_report_as_before():
    text = report(DEMOS / "bridge_sensor.toml")
    header = next(line for line in text.splitlines() if line.startswith("| # | stage |"))
    assert header.startswith("| # | stage | block |") and "from" not in header
    assert "|- " not in text and "`- " not in text


def test_the_check_table_draws_the_tree_in_80_columns(tmp_path):
    run = run_railroom("check", str(PUMP), home=tmp_path, columns="80")
    lines = run.stdout.splitlines()
    assert max(len(line) for line in lines) <= 80
    rows = [line for line in lines if line[:1].isdigit()][:7]
    assert [row.split()[0] for row in rows] == ["1", "2", "3", "4", "5", "6", "7"]
    assert rows[5].startswith("6  ├ converter input ")
    assert rows[6].startswith("7  └ over-vibration alarm ")
