"""The interface and the command line sit on the engine's one API and form no import circles.

Read from the source with the standard library's ast module (nothing is imported): every import
statement of every tui/ module, also those inside functions (the lazy imports that keep start-up
fast are imports all the same).
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def module_name(path: Path, root: Path) -> str:
    """tui/screens/chain.py -> railroom.tui.screens.chain (a package's __init__ is the package)."""
    parts = list(path.relative_to(root).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(["railroom", *parts])


def tui_modules(root: Path = ROOT) -> dict[str, ast.Module]:
    return {
        module_name(p, root): ast.parse(p.read_text(encoding="utf-8"), str(p))
        for p in sorted((root / "tui").rglob("*.py"))
    }


def imported(tree: ast.Module, at_run_time: bool = False) -> list[tuple[int, str, str | None]]:
    """(line, module, name) of every import: `import a.b` gives (n, "a.b", None), `from a import
    b` gives (n, "a", "b"). `at_run_time`: leave out those under `if TYPE_CHECKING:`, which only
    the type checker follows (a screen names the app's type so)."""
    skipped = set()
    if at_run_time:
        for node in ast.walk(tree):
            if isinstance(node, ast.If) and getattr(node.test, "id", None) == "TYPE_CHECKING":
                skipped |= {id(inner) for statement in node.body for inner in ast.walk(statement)}
    found: list[tuple[int, str, str | None]] = []
    for node in ast.walk(tree):
        if id(node) in skipped:
            continue
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name, None) for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module:
            found += [(node.lineno, node.module, a.name) for a in node.names]
    return found


def engine_submodule_imports(root: Path = ROOT) -> list[str]:
    """Every place a tui/ module reaches past railroom.engine into one of its submodules."""
    submodules = {module_name(p, root) for p in (root / "engine").rglob("*.py")}
    found = []
    for name, tree in tui_modules(root).items():
        for line, module, item in imported(tree):
            if module.startswith("railroom.engine."):
                found.append(f"{name}:{line} imports {module}")
            elif module == "railroom.engine" and item is None:
                continue  # `import railroom.engine` is the API itself
            elif module == "railroom.engine" and f"railroom.engine.{item}" in submodules:
                found.append(f"{name}:{line} imports the submodule railroom.engine.{item}")
    return found


def import_cycles(root: Path = ROOT) -> list[list[str]]:
    """The import circles among tui/ modules: the strongly connected components with more than
    one module, or a module importing itself (Tarjan's algorithm, iterative)."""
    trees = tui_modules(root)
    graph: dict[str, set[str]] = {}
    for name, tree in trees.items():
        targets = set()
        for _, module, item in imported(tree, at_run_time=True):
            if item is not None and f"{module}.{item}" in trees:
                targets.add(f"{module}.{item}")  # from railroom.tui import timing
            elif module in trees:
                targets.add(module)
        graph[name] = targets
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    cycles = []
    for start in graph:
        if start in index:
            continue
        work = [(start, iter(sorted(graph[start])))]
        index[start] = low[start] = len(index)
        stack.append(start)
        on_stack.add(start)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = len(index)
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph[child]))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1 or node in graph[node]:
                    cycles.append(sorted(component))
    return cycles


def test_tui_imports_only_the_engine_api():
    assert engine_submodule_imports() == []


def test_no_tui_module_is_in_an_import_cycle():
    assert import_cycles() == []


def test_the_checks_see_a_submodule_import_and_a_circle(tmp_path):
    """The two checks above on a small tree that breaks both rules (they can fail)."""
    (tmp_path / "engine").mkdir()
    (tmp_path / "engine" / "kernel.py").write_text("")
    tui = tmp_path / "tui"
    (tui / "sub").mkdir(parents=True)
    (tui / "__init__.py").write_text("")
    (tui / "a.py").write_text("def f():\n    from railroom.tui.sub.b import g\n")
    (tui / "sub" / "b.py").write_text("from railroom.tui import a\nfrom railroom.engine import kernel\n")
    (tui / "c.py").write_text(
        "from railroom.engine.circuit.model import Chain\nfrom railroom.engine import Chain\n"
    )
    (tui / "d.py").write_text(
        "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from railroom.tui import e\n"
    )
    (tui / "e.py").write_text("from railroom.tui import d\n")  # d needs e for its types only: no circle
    assert engine_submodule_imports(tmp_path) == [
        "railroom.tui.c:1 imports railroom.engine.circuit.model",
        "railroom.tui.sub.b:2 imports the submodule railroom.engine.kernel",
    ]
    assert import_cycles(tmp_path) == [["railroom.tui.a", "railroom.tui.sub.b"]]


def test_the_engine_api_names_resolve_and_match_the_type_checkers_list():
    """Every exported name loads, and the TYPE_CHECKING imports in engine/__init__.py name the
    same objects (a name added to one list only would be untyped or missing at run time)."""
    import railroom.engine as api

    tree = ast.parse((ROOT / "engine" / "__init__.py").read_text(encoding="utf-8"))
    typed = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and getattr(node.test, "id", None) == "TYPE_CHECKING":
            for statement in node.body:
                assert isinstance(statement, ast.ImportFrom) and statement.module
                for alias in statement.names:
                    typed[alias.asname or alias.name] = (statement.module, alias.name)
    assert sorted(typed) == sorted(api.__all__)
    for name, (module, attribute) in typed.items():
        source = __import__(module, fromlist=[attribute])
        assert getattr(api, name) is getattr(source, attribute), name
