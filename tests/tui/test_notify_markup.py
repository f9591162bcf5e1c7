"""Every notification whose words are not one fixed string is shown as text (markup=False): a
file name, part id or message holding "[b]" or "[/]" must appear as typed, never be read as
Rich markup (nor fail as broken markup)."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def unmarked_notifications(root: Path = ROOT) -> list[str]:
    found = []
    for path in sorted((root / "tui").rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if not (isinstance(node, ast.Call) and getattr(node.func, "attr", None) == "notify"):
                continue
            message = node.args[0] if node.args else None
            if isinstance(message, ast.Constant) and isinstance(message.value, str):
                continue  # fixed words of our own
            markup = next((k.value for k in node.keywords if k.arg == "markup"), None)
            if not (isinstance(markup, ast.Constant) and markup.value is False):
                found.append(f"{path.relative_to(root)}:{node.lineno}")
    return found


def test_every_notification_of_changing_words_is_plain_text():
    assert unmarked_notifications() == []


def test_the_check_sees_a_notification_with_markup(tmp_path):
    (tmp_path / "tui").mkdir()
    (tmp_path / "tui" / "x.py").write_text(
        'app.notify("fixed")\napp.notify(f"saved {name}")\napp.notify(text, markup=False)\n'
    )
    assert unmarked_notifications(tmp_path) == ["tui/x.py:2"]
