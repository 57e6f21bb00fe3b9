"""Start-up cost of a hook run: linkcheck on a 50-link primitive-only URDF vs the import floor.

Both are whole processes timed in the same run, so the ratio is what counts
(the machine's load moves absolute numbers). Target: ratio <= 1.3, which needs
trimesh, scipy and rich to stay unimported on this path. Also prints the re-check of
the unchanged file, which the result cache answers without importing numpy or lxml.

    python benchmarks/startup.py [--runs 15]
"""

from __future__ import annotations

import argparse
import compileall
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

FLOOR = "import lxml.etree, numpy"


def make_urdf(n: int) -> str:
    links, joints = [], []
    for i in range(n):
        m, x, y, z = 1.0 + i % 5, 0.3, 0.08, 0.08
        ixx, iyy, izz = m * (y * y + z * z) / 12, m * (x * x + z * z) / 12, m * (x * x + y * y) / 12
        links.append(
            f'  <link name="l{i}">\n    <inertial><origin xyz="0.15 0 0"/><mass value="{m}"/>'
            f'<inertia ixx="{ixx:.6g}" ixy="0" ixz="0" iyy="{iyy:.6g}" iyz="0" izz="{izz:.6g}"/></inertial>\n'
            f'    <collision><origin xyz="0.15 0 0"/><geometry><box size="{x} {y} {z}"/></geometry></collision>\n  </link>\n')
        if i:
            joints.append(f'  <joint name="j{i}" type="revolute"><parent link="l{i - 1}"/><child link="l{i}"/>'
                          '<origin xyz="0.3 0 0"/><axis xyz="0 0 1"/><limit lower="-1" upper="1" effort="1" velocity="1"/></joint>\n')
    return '<robot name="bench">\n' + "".join(links) + "".join(joints) + "</robot>\n"


#: As users run it: byte-code cached (some shells set PYTHONDONTWRITEBYTECODE, which recompiles every run).
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def timed(cmd: list[str], runs: int) -> float:
    samples = []
    for _ in range(runs):
        t = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False, env=ENV)
        samples.append(time.perf_counter() - t)
    return statistics.median(samples)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=15)
    args = ap.parse_args()
    import linkcheck

    compileall.compile_dir(str(Path(linkcheck.__file__).parent), quiet=1)
    with tempfile.TemporaryDirectory() as tmp:
        urdf = Path(tmp) / "bench.urdf"
        urdf.write_text(make_urdf(50))
        check = [sys.executable, "-m", "linkcheck", "--no-cache", str(urdf)]
        probe = subprocess.run([sys.executable, "-c", "import sys, runpy; sys.argv=['linkcheck', '--no-cache', %r];"
                                "\ntry: runpy.run_module('linkcheck', run_name='__main__')\nexcept SystemExit: pass\n"
                                "print(sorted(m for m in ('trimesh', 'scipy', 'rich') if m in sys.modules))" % str(urdf)],
                               capture_output=True, text=True)
        timed(check, 2)  # warm the file cache
        floor = timed([sys.executable, "-c", FLOOR], args.runs)
        ours = timed(check, args.runs)
        # the hook's common case: the same unchanged file again, answered by the result cache
        recheck = [sys.executable, "-m", "linkcheck", str(urdf)]
        ENV["LINKCHECK_CACHE_DIR"] = str(Path(tmp) / "cache")
        timed(recheck, 1)  # stores the result
        again = timed(recheck, args.runs)
    print(f"floor  python -c '{FLOOR}': {floor * 1000:.0f} ms (median of {args.runs})")
    print(f"linkcheck on 50 primitive links: {ours * 1000:.0f} ms")
    print(f"ratio: {ours / floor:.2f}x (target <= 1.3x)")
    print(f"re-check of the unchanged file (result cache): {again * 1000:.0f} ms, {again / floor:.2f}x the floor")
    print(f"heavy modules imported: {probe.stdout.strip().splitlines()[-1] if probe.stdout.strip() else probe.stderr[-200:]}")


if __name__ == "__main__":
    main()
