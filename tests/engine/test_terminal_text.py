"""Text that reaches a terminal (issue 12 item 10): a file name standing in for the title, titles,
names, paths and messages are shown with what a terminal would act on as visible escapes; the
Markdown report makes no link of a bare address and passes no HTML entity through."""

from __future__ import annotations

import json
import re

import pytest
from command_line import X10_CHAIN
from command_line import railroom

# Characters a terminal acts on or that change what is shown without being seen: C0 (newline
# aside), DEL, C1 (ECMA-48), U+2028/2029 (Unicode line and paragraph separators), zero-width and
# direction marks (U+200B..U+200F), embeddings and overrides (U+202A..U+202E), isolates
# (U+2066..U+2069), the zero-width no-break space U+FEFF (Unicode TR9 and the Unicode standard, 23.2).
RAW = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u2028\u2029\u200b-\u200f\u202a-\u202e\u2066-\u2069\ufeff]")
HOSTILE_NAME = "\x1b]52;c;aGVsbG8=\x07\x1b[2J\u2028\u202eevil\u200b"
CHAIN = X10_CHAIN


@pytest.fixture
def hostile_chain(tmp_path):
    path = tmp_path / f"{HOSTILE_NAME}.toml"
    path.write_text(CHAIN, encoding="utf-8")
    return path


SHOWN = r"\x1b]52;c;aGVsbG8=\x07\x1b[2J\u2028\u202eevil\u200b"


@pytest.mark.parametrize("form", [(), ("--json",), ("--markdown",)])
def test_a_file_name_standing_in_for_the_title_is_shown_escaped(hostile_chain, home, form):
    done = railroom("check", str(hostile_chain), *form, home=home)
    assert done.returncode == 0, done.stderr
    assert not RAW.search(done.stdout) and not RAW.search(done.stderr), repr(done.stdout[:300])
    if form == ("--json",):
        assert json.loads(done.stdout)["title"] == SHOWN
    elif form == ():
        assert done.stdout.startswith(SHOWN)


def test_the_batch_summary_and_its_json_show_names_escaped(hostile_chain, home, tmp_path):
    other = tmp_path / "plain.toml"
    other.write_text(CHAIN, encoding="utf-8")
    for form in ((), ("--json",)):
        done = railroom("check", str(hostile_chain), str(other), *form, home=home)
        assert done.returncode == 0, done.stderr
        assert not RAW.search(done.stdout) and not RAW.search(done.stderr), repr(done.stdout)


def test_invisible_marks_in_a_title_are_refused_and_shown(tmp_path, home):
    path = tmp_path / "board.toml"
    path.write_text('title = "pump\\u200b\\u2028stand"\n' + CHAIN, encoding="utf-8")
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    assert f"{path}:1: title:" in done.stderr and r"\u200b" in done.stderr
    assert not RAW.search(done.stderr), repr(done.stderr)


def test_an_error_about_a_hostile_file_name_is_escaped(tmp_path, home):
    path = tmp_path / f"{HOSTILE_NAME}.toml"
    path.write_text(CHAIN.replace('rf = "90k 1%"', 'rf = "lots"'), encoding="utf-8")
    done = railroom("check", str(path), home=home)
    assert done.returncode == 2
    assert SHOWN in done.stderr and not RAW.search(done.stderr), repr(done.stderr)


def test_presets_list_and_show_escape_folder_and_file_names(tmp_path, home):
    from railroom.engine.formats.presets import shipped_folder

    folder = tmp_path / f"lab{HOSTILE_NAME}"
    folder.mkdir()
    shipped = (shipped_folder() / "generic.toml").read_text(encoding="utf-8")
    (folder / f"{HOSTILE_NAME}.toml").write_text(shipped, encoding="utf-8")
    (folder / "bad.toml").write_text("[part.x]\nsupply = 1\n", encoding="utf-8")
    for args in (("list",), ("show", "generic-fast")):
        done = railroom("presets", *args, "--presets", str(folder), home=home)
        assert done.returncode == 0, done.stderr
        assert SHOWN in done.stdout
        assert not RAW.search(done.stdout) and not RAW.search(done.stderr), repr(done.stdout)


def test_markdown_makes_no_link_of_a_bare_address_and_escapes_entities(tmp_path, home):
    path = tmp_path / "board.toml"
    path.write_text(
        'title = "see https://evil.example/x and www.evil.example or a@evil.example"\n'
        + CHAIN.replace("[[stage]]\n", '[[stage]]\nname = "gain &#x202E; &amp; x"\n'),
        encoding="utf-8",
    )
    done = railroom("check", str(path), "--markdown", home=home)
    assert done.returncode == 0, done.stderr
    heading = done.stdout.splitlines()[0]
    # GFM spec 0.29, 6.9: text inside a code span is never an autolink.
    assert heading == (
        "# Rail headroom review: see `https://evil.example/x` and `www.evil.example` or `a@evil.example`"
    )
    # CommonMark 0.30, 2.4: a backslash-escaped & starts no entity reference; inside the
    # level diagram's fenced code block (4.5) text is literal anyway.
    assert r"gain \&#x202E; \&amp; x" in done.stdout
    fence = re.search(r"^(`{3,})text$", done.stdout, re.MULTILINE)[1]
    outside_code = done.stdout.split(fence)[0] + done.stdout.split(fence)[-1]
    assert re.search(r"(?<!\\)&", outside_code) is None


def test_a_problem_reads_as_text_whatever_its_file_name():
    from railroom.engine.circuit.model import Problem

    problem = Problem(f"/boards/{HOSTILE_NAME}.toml", 3, "stage.1.rf", "expected a resistance")
    assert str(problem) == f"/boards/{SHOWN}.toml:3: stage.1.rf: expected a resistance"
