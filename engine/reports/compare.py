"""Two versions of a chain, side by side: what a change did to every stage's margins.

    old_chain, old_library = load_against("HEAD~1:boards/x.toml")     # or a plain file
    section = against_report(analyse(old_chain, ...), analyse(new_chain, ...), "HEAD~1:boards/x.toml")

Stages are matched by name (the k-th stage of a name with the k-th of the same name). A matched
stage is "changed" when its definition (block, part, rails, load, fields) differs, or its regime,
verdict or any margin moved by more than one part in a million (the JSON report shows six
significant digits); otherwise "same". A name found on one side only is "added" or "removed"; an
added and a removed stage at the same position with the same block is taken for a rename (the
added entry says `renamed_from`). Entries whose verdict flipped come first, then the others in the
new chain's order, removed stages last. Reading `REV:PATH` asks git (`git show REV:PATH`) when git
is there; the old chain's preset folders are resolved against the working-tree location of PATH.
"""

from __future__ import annotations

import math
import shutil
import subprocess
from dataclasses import dataclass, replace
from pathlib import Path

from railroom.engine.circuit.model import InputError, Problem
from railroom.engine.reports.json_report import _number
from railroom.engine.verdict.results import CHECKS, ChainResult, StageResult, check_unit

RELATIVE_CHANGE = 1e-6
CHANGES = ("changed", "same", "added", "removed")
_NUMBER = {"type": ["number", "null"]}
_PAIR = {"type": "array", "minItems": 2, "maxItems": 2}
# JSON Schema (draft-07) of the report's "against" section; engine/formats/schema.py's report schema
# leaves extra top-level keys open, so a report with this section validates there too.
AGAINST_SCHEMA = {
    "type": "object",
    "required": ["file", "verdict", "stages"],
    "properties": {
        "file": {"type": "string"},
        "verdict": {"enum": ["go", "no-go"]},
        "stages": {
            "type": "array",
            "items": {
                "type": "object",
                "required": ["name", "change", "margins"],
                "properties": {
                    "name": {"type": "string"},
                    "change": {"enum": list(CHANGES)},
                    "margins": {
                        "type": "object",
                        "propertyNames": {"enum": list(CHECKS)},
                        "additionalProperties": {**_PAIR, "items": _NUMBER},
                    },
                    "go": {**_PAIR, "items": {"type": ["boolean", "null"]}},
                    "regime": {**_PAIR, "items": {"enum": ["linear", "clipping", "saturated", None]}},
                    "renamed_from": {"type": "string"},
                },
            },
        },
    },
}


@dataclass(frozen=True)
class StageChange:
    name: str
    change: str  # changed | same | added | removed
    before: StageResult | None
    after: StageResult | None
    margins: dict[str, tuple[float | None, float | None]]  # changed margins only
    renamed_from: str | None = None

    @property
    def verdict_flipped(self) -> bool:
        return self.before is not None and self.after is not None and self.before.go != self.after.go


def _moved(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is not b
    if not (math.isfinite(a) and math.isfinite(b)):
        return not (a == b or (math.isnan(a) and math.isnan(b)))
    return abs(a - b) > RELATIVE_CHANGE * max(abs(a), abs(b), 1e-30)


def _definition(s: StageResult) -> tuple:
    stage = s.stage
    return (
        stage.block,
        stage.part,
        stage.rails,
        repr(stage.load),
        tuple(sorted((k, repr(v)) for k, v in stage.values.items())),
    )


def _keyed(result: ChainResult) -> dict[tuple[str, int], StageResult]:
    seen: dict[str, int] = {}
    keyed = {}
    for s in result.stages:
        count = seen.get(s.stage.name, 0)
        seen[s.stage.name] = count + 1
        keyed[(s.stage.name, count)] = s
    return keyed


def margin_changes(
    before: StageResult | None, after: StageResult | None
) -> dict[str, tuple[float | None, float | None]]:
    """Each check whose margin moved (or exists on one side only): (before, after)."""
    old = before.margins if before is not None else {}
    new = after.margins if after is not None else {}
    return {
        c: (old.get(c), new.get(c))
        for c in CHECKS
        if (c in old or c in new) and _moved(old.get(c), new.get(c))
    }


def compare_results(old: ChainResult, new: ChainResult) -> list[StageChange]:
    """Every stage of either version, verdict flips first (see the module docstring)."""
    old_keyed, new_keyed = _keyed(old), _keyed(new)
    changes = []
    for key, after in new_keyed.items():
        before = old_keyed.get(key)
        margins = margin_changes(before, after)
        if before is None:
            change = "added"
        elif (
            margins
            or before.regime != after.regime
            or before.go != after.go
            or _definition(before) != _definition(after)
        ):
            change = "changed"
        else:
            change = "same"
        changes.append(StageChange(key[0], change, before, after, margins))
    removed = [
        StageChange(key[0], "removed", before, None, margin_changes(before, None))
        for key, before in old_keyed.items()
        if key not in new_keyed
    ]
    changes = _mark_renames(changes, removed) + removed
    flipped = [c for c in changes if c.verdict_flipped]
    return flipped + [c for c in changes if not c.verdict_flipped]


def _mark_renames(changes: list[StageChange], removed: list[StageChange]) -> list[StageChange]:
    gone = {(c.before.index, c.before.stage.block): c.name for c in removed if c.before is not None}
    marked = []
    for c in changes:
        if c.change == "added" and c.after is not None:
            old_name = gone.get((c.after.index, c.after.stage.block))
            if old_name is not None:
                c = replace(c, renamed_from=old_name)
        marked.append(c)
    return marked


def against_report(old: ChainResult, new: ChainResult, label: str) -> dict:
    """The report's "against" section: the old file, its verdict, and every stage's change."""
    stages = []
    for c in compare_results(old, new):
        entry: dict[str, object] = {
            "name": c.name,
            "change": c.change,
            "margins": {k: [_number(a), _number(b)] for k, (a, b) in c.margins.items()},
        }
        # extensions (README): the verdict and regime on each side, a probable rename
        entry["go"] = [None if c.before is None else c.before.go, None if c.after is None else c.after.go]
        entry["regime"] = [
            None if c.before is None else c.before.regime,
            None if c.after is None else c.after.regime,
        ]
        if c.renamed_from is not None:
            entry["renamed_from"] = c.renamed_from
        stages.append(entry)
    return {"file": label, "verdict": "go" if old.go else "no-go", "stages": stages}


# ---- reading the old version ------------------------------------------------------------------


def split_revision(spec: str) -> tuple[str, str] | None:
    """`REV:PATH` -> (REV, PATH) when spec is not an existing file and looks like one."""
    if Path(spec).exists() or ":" not in spec:
        return None
    rev, _, path = spec.partition(":")
    if not rev or not path or (len(rev) == 1 and rev.isalpha() and path[:1] in "\\/"):
        return None  # a Windows drive letter, not a revision
    return rev, path


def read_revision(spec: str, rev: str, path: str) -> tuple[str, Path]:
    """The text of PATH at REV (git show) and the working-tree path PATH stands for."""
    problem = lambda message: InputError([Problem(spec, None, "--against", message)])  # noqa: E731
    git = shutil.which("git")
    if git is None:
        raise problem("is neither a file nor readable as REV:PATH: git is not installed")
    try:
        top = subprocess.run(
            [git, "rev-parse", "--show-toplevel"], capture_output=True, text=True, timeout=30
        )
        shown = subprocess.run([git, "show", f"{rev}:{path}"], capture_output=True, timeout=30)
    except (OSError, subprocess.SubprocessError) as err:
        raise problem(f"git could not run: {err}") from None
    if shown.returncode != 0:
        reason = shown.stderr.decode("utf-8", "replace").strip().splitlines()
        raise problem("is neither a file nor readable with git show" + (f": {reason[0]}" if reason else ""))
    try:
        text = shown.stdout.decode("utf-8")
    except UnicodeDecodeError as err:
        raise problem(f"cannot be read: {err}") from None
    relative = path.startswith(("./", "../"))
    base = Path.cwd() if relative or top.returncode != 0 else Path(top.stdout.strip())
    return text, base / path


def load_against(spec: str, extra_preset_dirs: tuple[str, ...] = ()):
    """The old chain and its preset library, from a file or from `REV:PATH`; InputError as
    load_checked raises it, each problem naming `spec`."""
    from railroom.engine.formats.loading import load_checked
    from railroom.engine.formats.chain_file import chain_from_text
    from railroom.engine.walks.preparation import plan_chain
    from railroom.engine.formats.presets import load_library, search_order

    revision = split_revision(spec)
    if revision is None:
        return load_checked(spec, extra_preset_dirs)
    text, worktree_path = read_revision(spec, *revision)
    try:
        chain = chain_from_text(text, str(worktree_path))
    except InputError as err:
        raise InputError([replace(p, file=spec) for p in err.problems]) from None
    chain = replace(chain, path=spec)
    library = load_library(search_order(chain.preset_dirs, extra_preset_dirs))
    try:
        plan_chain(chain, library.parts)
    except InputError as err:
        raise InputError(
            [
                replace(p, file=spec) if p.file == str(worktree_path) else p
                for p in (*err.problems, *library.problems)
            ]
        ) from None
    return chain, library


# ---- words ------------------------------------------------------------------------------------


def change_words(c: StageChange) -> str:
    """'changed, GO -> NO-GO', 'added (renamed from x?)', 'same', ..."""
    words = c.change
    if c.verdict_flipped and c.before is not None and c.after is not None:
        words += f", {'GO' if c.before.go else 'NO-GO'} -> {'GO' if c.after.go else 'NO-GO'}"
    elif c.before is not None and c.after is not None and c.before.regime != c.after.regime:
        words += f", {c.before.regime} -> {c.after.regime}"
    if c.renamed_from is not None:
        words += f" (renamed from {c.renamed_from!r}?)"
    return words


def margin_value(check: str, value: float | None) -> str:
    from railroom.engine.formats.values import format_si

    return "-" if value is None else format_si(value, check_unit(check))


def change_rows(changes: list[StageChange]) -> list[tuple[str, str, str, str, str]]:
    """(stage, change, check, before, after) per changed margin; one row for a stage without."""
    rows = []
    for c in changes:
        if not c.margins:
            rows.append((c.name, change_words(c), "-", "-", "-"))
        for i, (check, (a, b)) in enumerate(c.margins.items()):
            rows.append(
                (
                    c.name if i == 0 else "",
                    change_words(c) if i == 0 else "",
                    check,
                    margin_value(check, a),
                    margin_value(check, b),
                )
            )
    return rows


def verdict_line(old: ChainResult, new: ChainResult, label: str) -> str:
    before, after = ("GO" if old.go else "NO-GO"), ("GO" if new.go else "NO-GO")
    moved = sum(c.change != "same" for c in compare_results(old, new))
    return (
        f"against {label}: verdict {before} -> {after}; {moved} of "
        f"{len(_keyed(old).keys() | _keyed(new).keys())} stages changed, added or removed"
    )


def against_markdown(old: ChainResult, new: ChainResult, label: str) -> str:
    """The Markdown section of the comparison (user text escaped as in the review report)."""
    from railroom.engine.reports.markdown import md

    lines = [
        f"## What changed against {md(label)}",
        "",
        md(verdict_line(old, new, label)) + ".",
        "",
        "| stage | change | check | before | after |",
        "|---|---|---|---:|---:|",
    ]
    lines += [
        "| " + " | ".join(md(cell) for cell in row) + " |" for row in change_rows(compare_results(old, new))
    ]
    return "\n".join(lines)
