"""The interface's screen picture (key i) as an SVG that fetches nothing from the network.

Textual's screenshot (rich's SVG export) names a web font: `@font-face` rules whose `src` lists
font files on a public CDN, which a browser opening the picture would fetch. Here those rules and
the generator comment (a web address) go, and the text asks for monospace fonts installed on the
viewer's machine. The only address left is the SVG namespace, which is a name, never fetched.
"""

from __future__ import annotations

import re
from pathlib import Path

from railroom.engine import write_atomic

FONT_FACE = re.compile(r"@font-face\s*\{[^{}]*\}\s*", re.S)
WEB_COMMENT = re.compile(r"<!--[^>]*?https?://.*?-->\s*", re.S)
WEB_URL = re.compile(r"url\(\s*[\"']?https?://[^)]*\)\s*,?\s*")
LOCAL_MONOSPACE = "'DejaVu Sans Mono', Menlo, Consolas, 'Liberation Mono', monospace"


def without_web_fonts(svg: str) -> str:
    svg = FONT_FACE.sub("", svg)
    svg = WEB_COMMENT.sub("", svg)
    svg = WEB_URL.sub("", svg)
    return re.sub(r"font-family:\s*Fira Code,\s*monospace", f"font-family: {LOCAL_MONOSPACE}", svg)


def save_screen_picture(app, folder: str | Path) -> str:
    """Write the current screen as an SVG into `folder` (a name with the date and time)."""
    from textual._files import generate_datetime_filename

    path = Path(folder).expanduser() / generate_datetime_filename(app.title, ".svg")
    write_atomic(path, without_web_fonts(app.export_screenshot()))
    return str(path)
