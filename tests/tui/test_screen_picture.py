"""Key i saves the screen as an SVG that names no web font and no address to fetch."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

SIZE = (80, 24)
SVG_NAMESPACE = 'xmlns="http://www.w3.org/2000/svg"'  # a namespace name, never fetched


async def test_screen_picture_fetches_no_web_font(make_app, two_stage, tmp_path, monkeypatch):
    folder = tmp_path / "pictures"
    folder.mkdir()
    monkeypatch.chdir(folder)
    app = make_app(two_stage)
    async with app.run_test(size=SIZE) as pilot:
        raw = app.export_screenshot()
        await pilot.press("i")
        await pilot.pause()
    saved = list(folder.glob("*.svg"))
    assert len(saved) == 1
    text = saved[0].read_text(encoding="utf-8")
    # Textual's own export names a web font (what this guards against) ...
    assert re.search(r"https?://", raw.replace(SVG_NAMESPACE, ""))
    # ... the saved picture names none, and is still a well-formed SVG with the screen's text
    assert not re.search(r"https?://", text.replace(SVG_NAMESPACE, "")), text[:2000]
    assert "@font-face" not in text and "monospace" in text
    root = ET.fromstring(text)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    shown = "".join(root.itertext()).replace("\xa0", " ")
    assert "buffer" in shown and "gain two" in shown
