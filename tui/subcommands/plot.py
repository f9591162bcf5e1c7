"""`railroom plot CHAIN [-o FILE.svg|FILE.png]`: the level picture (engine/reports/picture.py).

matplotlib is imported only on this path (and by `check --markdown --plots DIR`). Exit status:
0 when the picture is written, 2 when the chain cannot be read or the file cannot be written.
"""

from __future__ import annotations

import warnings
from pathlib import Path

from railroom.engine import visible
from railroom.tui.subcommands.common import CheckRefused, report_refusal
from railroom.tui.subcommands.exit_codes import GO, INPUT_ERROR


def picture_path(chain: str, output: str | None) -> Path:
    return Path(output) if output else Path(Path(chain).stem + ".svg")


def draw(path: str, presets: tuple[str, ...], target: Path, result=None) -> Path:
    """Load (and, without `result`, analyse) the chain, then write its picture; CheckRefused
    with located lines when it cannot."""
    from railroom.engine import PICTURE_SUFFIXES as SUFFIXES
    from railroom.engine import InputError, analyse, load_checked, write_picture

    if target.suffix.lower() not in SUFFIXES:
        raise CheckRefused(
            [
                f"{target}: a picture is written as .svg or .png "
                f"(by the suffix), got {target.suffix or 'no suffix'!r}"
            ]
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            chain, library = load_checked(path, presets)
            if result is None:
                result = analyse(chain, library.parts)
            return write_picture(result, library.parts, target)
    except InputError as err:
        raise CheckRefused([str(p) for p in err.problems]) from None
    except OSError as err:
        raise CheckRefused([f"{target}: cannot be written: {err.strerror or err}"]) from None


def run_plot(args) -> int:

    target = picture_path(args.chain, args.output)
    try:
        written = draw(args.chain, tuple(args.presets), target)
    except CheckRefused as err:
        report_refusal(err)
        return INPUT_ERROR
    print(f"picture written: {visible(str(written), 500)}")
    return GO


def markdown_with_picture(markdown: str, path: str, args, result) -> str:
    """`check --markdown --plots DIR`: DIR/<chain name>.svg written and embedded."""
    folder = Path(args.plots)
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise CheckRefused([f"--plots {args.plots}: cannot be made: {err.strerror or err}"]) from None
    written = draw(path, tuple(args.presets), folder / (Path(path).stem + ".svg"), result)
    from railroom.engine import embed_in_markdown

    return embed_in_markdown(markdown, str(written), result.chain.title)
