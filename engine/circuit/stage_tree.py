"""The stages of a chain in signal order, with the tree (`from`) drawn before each name.

One reading for every view: the interface's stage list, the `railroom check` table and the
Markdown report draw the same tree, in the glyphs each can show.
"""

from __future__ import annotations

# (a branch, the last branch, the line kept below a branch still to come)
BOX_GLYPHS = ("├ ", "└ ", "│ ")
ASCII_GLYPHS = ("|- ", "`- ", "|  ")


def tree_rows(
    parents: tuple[int, ...] | list[int], glyphs: tuple[str, str, str] = BOX_GLYPHS
) -> list[tuple[int, str]]:
    """The stages in signal order, each with the tree drawn before its name: (0-based stage,
    prefix). A stage that is its parent's only input continues the line at the parent's level;
    the stages fed by one output (or by the source) are each drawn one level in, with "├ "
    ("└ " for the last), and the lines below a "├ " keep a "│ " for the branches still to come.
    One row per stage; every stage comes after the one it takes its input from."""
    branch, last, line = glyphs
    blank = " " * len(last)
    children: list[list[int]] = [[] for _ in parents]
    roots: list[int] = []
    for k, parent in enumerate(parents):
        (children[parent] if 0 <= parent < k else roots).append(k)
    rows: list[tuple[int, str]] = []
    # an explicit stack (a chain has up to 300 stages): (stage, lead, glyph)
    stack = [
        (k, "", "" if len(roots) == 1 else (last if i == len(roots) - 1 else branch))
        for i, k in enumerate(roots)
    ]
    stack.reverse()
    while stack:
        k, lead, glyph = stack.pop()
        rows.append((k, lead + glyph))
        below = lead + {branch: line, last: blank}.get(glyph, "")
        fed = children[k]
        if len(fed) == 1:
            stack.append((fed[0], below, ""))
        else:
            for i in reversed(range(len(fed))):
                stack.append((fed[i], below, last if i == len(fed) - 1 else branch))
    return rows


def branched(parents: tuple[int, ...] | list[int]) -> bool:
    """The chain is not one line: some stage takes its input from other than the one before."""
    return any(parent != k - 1 for k, parent in enumerate(parents))
