"""Every package folder ships: pyproject's package list matches the folders on disk.

setuptools installs only the packages listed in [tool.setuptools] packages; a folder added to
engine/ or tui/ but left out of the list works in an editable install and is missing from a
plain one (`pip install .`), so the check is made here rather than found by a user.
"""

from __future__ import annotations

import sys
from pathlib import Path

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[2]


def _config():
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]


def _folders() -> dict[str, Path]:
    """dotted package name -> folder, for every folder under a mapped root that holds Python."""
    config = _config()
    found = {}
    for name, folder in config["package-dir"].items():
        root = ROOT / folder
        for sub in [root, *sorted(p for p in root.rglob("*") if p.is_dir())]:
            rel = sub.relative_to(root)
            if "__pycache__" in rel.parts or not any(sub.glob("*.py")):
                continue
            dotted = ".".join((name, *rel.parts))
            # a folder that is itself mapped elsewhere (engine/_package is "railroom") is its own root
            if any(sub == ROOT / other and other != folder for other in config["package-dir"].values()):
                continue
            found[dotted] = sub
    return found


def test_every_folder_with_python_is_a_listed_package():
    listed = set(_config()["packages"])
    folders = _folders()
    missing = sorted(set(folders) - listed)
    assert missing == [], f"folders with Python that would not install: {missing}"
    assert all((folder / "__init__.py").is_file() for folder in folders.values())


def test_every_listed_package_is_a_folder_with_an_init():
    folders = _folders()
    absent = sorted(set(_config()["packages"]) - set(folders))
    assert absent == []
    assert {"railroom.engine.walks", "railroom.engine.verdict", "railroom.engine.circuit.blocks"} <= set(
        folders
    )


def test_every_engine_folder_says_what_it_holds_in_one_line():
    for dotted, folder in _folders().items():
        if not dotted.startswith("railroom.engine."):
            continue
        text = (folder / "__init__.py").read_text(encoding="utf-8")
        assert text.startswith('"""'), dotted
        first = text[3:].split("\n", 1)[0]
        assert first.strip() and len(first) <= 110, dotted
