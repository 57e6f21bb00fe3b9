"""Shared test fixtures: one invented description and one way to run the real command line."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

#: An invented one-link cart whose stated principal moments (1, 1, 3) break I1 + I2 >= I3, the
#: triangle inequality every rigid body's principal moments satisfy (handbook, from memory):
#: I1 + I2 - I3 = 2 * sum(m r_3^2) >= 0.
IMPOSSIBLE_CART_URDF = """<robot name="cart">
  <link name="base">
    <inertial><mass value="2"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="3"/></inertial>
    <collision><geometry><box size="0.1 0.2 0.3"/></geometry></collision>
  </link>
</robot>
"""


def write_impossible_cart(folder: Path) -> Path:
    """Write IMPOSSIBLE_CART_URDF as folder/cart.urdf (folder created) and return its path."""
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / "cart.urdf"
    path.write_text(IMPOSSIBLE_CART_URDF)
    return path


def run_linkcheck(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    """``python -m linkcheck ARGS`` in a fresh process, as a user or CI job runs it."""
    return subprocess.run([sys.executable, "-m", "linkcheck", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=120)
