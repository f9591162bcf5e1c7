"""Run in a venv with a plain install (no test extras): every method and distribution works, and a
check loads nothing it does not need (no interface, plotting, scipy, sympy or test tools)."""
import contextlib
import io
import shutil
import sys
import tempfile
from pathlib import Path

from railroom.tui.cli import main

root = Path(__file__).resolve().parents[1]
chains = [root / "tests" / "chains" / "bridge_mc_normal.toml", root / "tests" / "chains" / "filters_rss.toml",
          root / "engine" / "demos" / "pump_vibration.toml"]
scratch = tempfile.mkdtemp(prefix="railroom-plain-")
for chain in chains:
    for method in ("corners", "rss", "montecarlo"):
        for distribution in ("uniform", "normal"):
            text = chain.read_text(encoding="utf-8")
            if "distribution" not in text:
                text = text.replace("[conditions]\n", f'[conditions]\ndistribution = "{distribution}"\n', 1)
            else:
                text = text.replace('distribution = "normal"', f'distribution = "{distribution}"')
            path = Path(scratch) / f"{chain.stem}-{distribution}.toml"
            path.write_text(text, encoding="utf-8")
            out = io.StringIO()
            with contextlib.redirect_stdout(out):
                code = main(["check", str(path), "--method", method, "--samples", "2000", "--json"])
            if code not in (0, 1):
                sys.exit(f"plain install: check {chain.name} --method {method} ({distribution}) exited {code}")
shutil.rmtree(scratch)
loaded = sorted(m for m in ("textual", "scipy", "sympy", "pytest", "hypothesis", "matplotlib")
                if m in sys.modules)
if loaded:
    sys.exit(f"plain install: railroom check loaded {loaded}")
print("plain install: every method and distribution runs; no interface, plotting, scipy, sympy or test "
      "module loaded")
