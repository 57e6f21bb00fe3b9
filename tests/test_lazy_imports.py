"""Start-up stays lean: a primitive-only check never loads trimesh, scipy or rich (DESIGN.md layers)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

PROBE = """
import runpy, sys
sys.argv = ["linkcheck", "--no-cache", sys.argv[1]]
try:
    runpy.run_module("linkcheck", run_name="__main__")
except SystemExit:
    pass
print("heavy:" + ",".join(m for m in ("trimesh", "scipy", "rich") if m in sys.modules))
"""


def test_primitive_only_run_imports_no_heavy_module():
    p = subprocess.run([sys.executable, "-c", PROBE, str(ROOT / "fixtures" / "demo" / "harvester.urdf")],
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 0, p.stderr
    assert p.stdout.strip().splitlines()[-1] == "heavy:"
