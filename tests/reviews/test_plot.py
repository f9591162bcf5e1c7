"""`railroom plot CHAIN [-o FILE]` and `check --markdown --plots DIR`: the level picture.

A picture is checked for what can be checked without looking: the file is written, parses (SVG
with xml.etree, PNG by its signature and header, PNG specification, ISO/IEC 15948 section 5 and
11.2.2), holds one group per stage, names no web address to fetch, and the per-frequency spans
behind its band panels agree with a textbook first-order low-pass.
"""

import json
import re
import struct
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMOS = ROOT / "engine" / "demos"
NAMESPACES = re.compile(r'xmlns(:\w+)?="[^"]*"')  # namespace names, never fetched


def railroom(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "railroom.tui.cli", *args],
        capture_output=True,
        text=True,
        timeout=180,
        cwd=cwd,
        env={"PATH": "/usr/bin:/bin", "RAILROOM_PRESETS_HOME": str(cwd), "MPLCONFIGDIR": str(cwd / ".mpl")},
    )


def stage_count(demo: Path, cwd: Path) -> int:
    return len(json.loads(railroom("check", str(demo), "--json", cwd=cwd).stdout)["stages"])


@pytest.mark.parametrize(
    "demo, banded", [("pump_vibration.toml", {"stage-3-band"}), ("bridge_sensor.toml", {"stage-2-band"})]
)
def test_svg_has_one_group_per_stage_and_no_web_address(demo, banded, tmp_path):
    target = tmp_path / "picture.svg"
    done = railroom("plot", str(DEMOS / demo), "-o", str(target), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    assert str(target) in done.stdout
    text = target.read_text(encoding="utf-8")
    root = ET.fromstring(text)
    ids = [e.get("id") for e in root.iter() if (e.get("id") or "").startswith("stage-")]
    count = stage_count(DEMOS / demo, tmp_path)
    assert sorted(i for i in ids if not i.endswith("-band")) == sorted(
        f"stage-{n}" for n in range(1, count + 1)
    )
    # only the filters' own gain moves across the band (an RC and a Sallen-Key low-pass)
    assert {i for i in ids if i.endswith("-band")} == banded
    for gid in ids:
        group = next(e for e in root.iter() if e.get("id") == gid)
        assert len(list(group.iter())) > 2  # the group holds the stage's drawing
    assert not re.search(r"https?://", NAMESPACES.sub("", text))
    assert "@font-face" not in text and "<text" not in text  # text drawn as paths


def test_png_by_suffix(tmp_path):
    target = tmp_path / "pump.png"
    done = railroom("plot", str(DEMOS / "pump_vibration.toml"), "-o", str(target), cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    data = target.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948, 5.2)
    length, kind, width, height = struct.unpack(">I4sII", data[8:24])
    assert (length, kind) == (13, b"IHDR")
    assert width == 1000 and 400 < height < 2000  # 10 in at 100 dpi


def test_default_name_and_bad_suffix(tmp_path):
    done = railroom("plot", str(DEMOS / "bridge_sensor.toml"), cwd=tmp_path)
    assert done.returncode == 0 and (tmp_path / "bridge_sensor.svg").is_file()
    bad = railroom("plot", str(DEMOS / "bridge_sensor.toml"), "-o", "x.pdf", cwd=tmp_path)
    assert bad.returncode == 2 and "x.pdf" in bad.stderr and ".svg or .png" in bad.stderr
    assert not (tmp_path / "x.pdf").exists()
    missing = railroom("plot", str(tmp_path / "none.toml"), cwd=tmp_path)
    assert missing.returncode == 2 and "none.toml" in missing.stderr


def test_markdown_embeds_the_picture(tmp_path):
    done = railroom(
        "check", str(DEMOS / "pump_vibration.toml"), "--markdown", "--plots", "pics", cwd=tmp_path
    )
    assert done.returncode == 1, done.stderr
    found = re.search(r"!\[level picture of [^\]]*\]\(([^)]+)\)", done.stdout)
    assert found and found.group(1) == "pics/pump_vibration.svg"
    assert (tmp_path / "pics" / "pump_vibration.svg").is_file()
    assert done.stdout.index("## Level diagram") < done.stdout.index("## Level picture")
    alone = railroom("check", str(DEMOS / "pump_vibration.toml"), "--plots", "pics", cwd=tmp_path)
    assert alone.returncode == 2 and "--markdown" in alone.stderr


def test_check_does_not_import_matplotlib(tmp_path):
    code = (
        "import sys, contextlib, io\nfrom railroom.tui.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    main(['check', {str(DEMOS / 'pump_vibration.toml')!r}, '--json'])\n"
        "print('matplotlib' in sys.modules)"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, timeout=120, cwd=tmp_path
    )
    assert done.stdout.strip() == "False", done.stderr


def test_band_spans_follow_the_first_order_low_pass():
    """The anti-alias stage (r 1k, c 10n, 1 % default tolerance) after the x10 stage, loaded by
    the next stage's rin 20k to its virtual earth: the node's AC transfer is
    H = G1 / (G1 + GL + j 2 pi f C), G1 = 1/r, GL = 1/rin (nodal analysis at one node; for the
    unloaded case Horowitz & Hill, The Art of Electronics, 3rd ed., 1.7.1). The span's width falls
    from the bottom of the band to the top by 2 A (|H(10 Hz)| - |H(5 kHz)|), A = 200 mV times
    1 + 90k9/10k; within 3 % (the widths are corner extremes with 1 % parts)."""
    from railroom.engine import analyse, load_checked
    from railroom.engine.walks.levels import frequency_levels

    chain, library = load_checked(str(DEMOS / "pump_vibration.toml"))
    levels = frequency_levels(chain, library.parts)
    result = analyse(chain, library.parts)
    for stage, level in zip(result.stages, levels):  # the picture's spans are the check's
        if level is not None:
            assert (level.low.min(), level.high.max()) == pytest.approx(
                stage.measure.output, rel=1e-12, abs=1e-12
            )
    gain, rc = levels[1], levels[2]
    assert rc.freqs[-1] == pytest.approx(5e3) and rc.frequency_dependent
    assert not gain.frequency_dependent

    def magnitude(f: float) -> float:
        return (1 / 1e3) / abs(1 / 1e3 + 1 / 20e3 + 2j * np.pi * f * 10e-9)

    amplitude = 0.2 * (1 + 90.9e3 / 10e3)
    width = rc.high - rc.low
    expected = 2 * amplitude * (magnitude(rc.freqs[0]) - magnitude(rc.freqs[-1]))
    assert width[0] - width[-1] == pytest.approx(expected, rel=0.03)
    assert np.all(np.diff(rc.high) <= 1e-12)  # a low-pass: never rising with f


def test_new_picture_and_report_get_the_usual_file_mode(tmp_path):
    """Not the 0600 of the temporary file they are written through (CI jobs hand them on)."""
    import os

    mask = os.umask(0o022)
    os.umask(mask)
    picture, junit = tmp_path / "p.svg", tmp_path / "r.xml"
    railroom("plot", str(DEMOS / "bridge_sensor.toml"), "-o", str(picture), cwd=tmp_path)
    railroom("check", str(DEMOS / "bridge_sensor.toml"), "--junit", str(junit), cwd=tmp_path)
    for path in (picture, junit):
        assert path.stat().st_mode & 0o777 == 0o666 & ~mask
