"""Mesh speed benchmark: whole processes on a 20-link URDF over ~1.3 M triangles of binary STL.

    python benchmarks/mesh.py [--runs 5] [--keep DIR]

Compares, as separate processes on the same files in the same run:
  floor    a script that only reads each STL with numpy and integrates it (no checks at all)
  trimesh  what a user would script: trimesh.load_mesh + mass_properties per mesh
  cold     linkcheck with the caches bypassed (--no-cache)
  first    linkcheck with the caches on but empty (hashes and writes entries)
  warm     linkcheck re-checking the unchanged model (the result cache answers)
  edited   linkcheck after an edit to the description: the result cache misses, the mesh cache hits
Targets (issue 3): cold <= 1.5x floor, trimesh/cold >= 5, cold/warm >= 10, peak memory of the
cold run under ~3x the meshes' float64 size. Prints medians and the ratios.
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import textwrap
import time
from pathlib import Path

#: The command that checks a description: the real CLI, as a user runs it.
LINKCHECK = [sys.executable, "-m", "linkcheck", "--format", "json", "--fail-on", "never"]

FLOOR = '''
import sys
from pathlib import Path
import numpy as np
from lxml import etree
urdf = Path(sys.argv[1])
REC = np.dtype([("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("attr", "<u2")])
total = 0.0
for mesh in etree.parse(str(urdf)).iter("mesh"):
    data = (urdf.parent / mesh.get("filename")).read_bytes()
    n = int(np.frombuffer(data, "<u4", 1, 80)[0]); assert 84 + 50 * n == len(data)
    tris = np.frombuffer(data, REC, n, 84)["v"]
    t = tris.astype(np.float64); o = t.reshape(-1, 3).mean(0)
    a, b, c = t[:, 0] - o, t[:, 1] - o, t[:, 2] - o
    d = np.einsum("ij,ij->i", a, np.cross(b, c))
    V = d.sum() / 6; s = a + b + c; com = d @ s / (24 * V)
    C = sum((d[:, None] * x).T @ x for x in (a, b, c, s)) / 120 - V * np.outer(com, com)
    inertia = np.trace(C) * np.eye(3) - C
    total += V
print(f"{total:.12g}")
'''

TRIMESH = '''
import sys
from pathlib import Path
import trimesh
from lxml import etree
urdf = Path(sys.argv[1])
total = 0.0
for mesh in etree.parse(str(urdf)).iter("mesh"):
    m = trimesh.load_mesh(urdf.parent / mesh.get("filename"))
    props = m.mass_properties
    total += props["volume"]
print(f"{total:.12g}")
'''


def write_stl(path: Path, tris) -> None:
    import numpy as np

    rec = np.zeros(len(tris), dtype=[("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("attr", "<u2")])
    rec["v"] = tris
    path.write_bytes(b"benchmark mesh".ljust(80, b"\0") + np.uint32(len(tris)).tobytes() + rec.tobytes())


def make_model(folder: Path) -> tuple[Path, int]:
    """20 links of generated shapes (tori, spheres, cylinders), about 1.3 M triangles in all."""
    import numpy as np
    import trimesh

    shapes = []
    for i in range(2):
        shapes.append(trimesh.creation.torus(0.2, 0.05, major_sections=500, minor_sections=250 + 10 * i))
    for i in range(4):
        shapes.append(trimesh.creation.torus(0.1 + 0.01 * i, 0.03, major_sections=400, minor_sections=62))
    for i in range(14):
        if i % 2:
            shapes.append(trimesh.creation.icosphere(subdivisions=6, radius=0.05 + 0.01 * i))  # 81 920 faces
        else:
            shapes.append(trimesh.creation.cylinder(radius=0.04, height=0.3, sections=2000 + 100 * i))
    (folder / "meshes").mkdir(parents=True, exist_ok=True)
    links, joints, total = [], [], 0
    for i, mesh in enumerate(shapes):
        mesh.apply_translation((0.01 * i, 0.0, 0.02 * i))
        write_stl(folder / "meshes" / f"part{i:02d}.stl", mesh.triangles.astype(np.float32))
        total += len(mesh.faces)
        links.append(textwrap.dedent(f"""\
            <link name="link{i:02d}">
              <inertial><origin xyz="{0.01 * i:g} 0 {0.02 * i:g}"/><mass value="1.0"/><inertia ixx="0.01" ixy="0" ixz="0" iyy="0.01" iyz="0" izz="0.01"/></inertial>
              <collision><geometry><mesh filename="meshes/part{i:02d}.stl"/></geometry></collision>
            </link>"""))
        if i:
            joints.append(f'<joint name="j{i:02d}" type="revolute"><parent link="link{i - 1:02d}"/><child link="link{i:02d}"/>'
                          f'<axis xyz="0 0 1"/><limit lower="-1" upper="1" effort="1" velocity="1"/></joint>')
    urdf = folder / "bench.urdf"
    urdf.write_text('<?xml version="1.0"?>\n<robot name="bench">\n' + "\n".join(links + joints) + "\n</robot>\n")
    return urdf, total


def timed(cmd: list[str], env: dict[str, str]) -> tuple[float, int, str]:
    """Wall time (s), peak RSS (bytes) and stdout of one whole process."""
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    out, err = proc.stdout.read(), proc.stderr.read()
    _, status, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - start
    proc.returncode = os.waitstatus_to_exitcode(status)
    if proc.returncode != 0:
        raise SystemExit(f"{' '.join(cmd)} failed: {err.decode(errors='replace')[-2000:]}")
    return elapsed, usage.ru_maxrss * 1024, _volume(out.decode().strip())


def _volume(out: str) -> str:
    """Total mesh volume printed by a script, or summed from linkcheck's JSON report."""
    if not out.startswith("{"):
        return out
    import json

    links = json.loads(out)["files"][0]["links"]
    return f"{sum(k['computed']['volume'] for k in links if k['computed']):.12g}"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--keep", type=Path, help="build the model in this folder and keep it")
    ap.add_argument("--make", type=Path, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.make:
        print(make_model(args.make)[1])
        return 0
    folder = args.keep or Path(tempfile.mkdtemp(prefix="linkcheck-bench-"))
    for old in folder.glob("cache*"):  # a kept folder from an earlier run: every run starts cold
        shutil.rmtree(old)
    # built in a child process: a parent that grew large would inflate every child's peak RSS
    made = subprocess.run([sys.executable, __file__, "--make", str(folder)], check=True, capture_output=True, text=True)
    urdf, triangles = folder / "bench.urdf", int(made.stdout.split()[-1])
    scripts = {}
    for name, text in (("floor", FLOOR), ("trimesh", TRIMESH)):
        scripts[name] = folder / f"bench_{name}.py"
        scripts[name].write_text(text)
    linkcheck = LINKCHECK
    env = {**os.environ, "LINKCHECK_CACHE_DIR": str(folder / "cache")}
    commands = {
        "floor": [sys.executable, str(scripts["floor"]), str(urdf)],
        "trimesh": [sys.executable, str(scripts["trimesh"]), str(urdf)],
        "cold": [*linkcheck, str(urdf), "--no-cache"],
        "warm": [*linkcheck, str(urdf)],
        "baseline": [sys.executable, "-c", "import numpy, lxml.etree, linkcheck.geometry.mesh"],
    }
    edited = folder / "bench_edited.urdf"
    timed(commands["warm"], env)  # prime the caches
    time.sleep(2.5)  # past the caches' racy window for the fresh meshes, as on any real second run
    timed(commands["warm"], env)
    results: dict[str, list[tuple[float, int, str]]] = {k: [] for k in commands}
    results["first"] = []
    results["edited"] = []
    for run in range(args.runs):
        for name, cmd in commands.items():  # interleaved, so machine load hits all alike
            results[name].append(timed(cmd, env))
        edited.write_text(urdf.read_text().replace("<robot", f"<!-- edit {run} -->\n<robot", 1))
        results["edited"].append(timed([*linkcheck, str(edited)], env))
        # a first run with the cache on but empty: hashing and writing entries included
        results["first"].append(timed(commands["warm"], {**env, "LINKCHECK_CACHE_DIR": str(folder / f"cache-first-{run}")}))
    med = {k: statistics.median(r[0] for r in v) for k, v in results.items()}
    peak = {k: max(r[1] for r in v) for k, v in results.items()}
    volumes = {k: float(v[0][2]) for k, v in results.items() if k != "baseline"}
    f64 = triangles * 9 * 8
    print(f"model: 20 links, {triangles} triangles, {sum(p.stat().st_size for p in (folder / 'meshes').iterdir()) / 1e6:.1f} MB of STL; "
          f"float64 size {f64 / 1e6:.1f} MB; {args.runs} runs, medians")
    for k in ("floor", "trimesh", "cold", "first", "warm", "edited", "baseline"):
        print(f"  {k:9s} {med[k] * 1000:8.0f} ms   peak RSS {peak[k] / 1e6:7.1f} MB")
    spread = max(abs(v / volumes["floor"] - 1) for v in volumes.values())
    print(f"  total volume agrees across all paths to {spread:.1e} relative")
    extra = peak["cold"] - peak["baseline"]
    print(f"cold / floor      = {med['cold'] / med['floor']:.2f}   (target <= 1.5; first run with an empty cache: {med['first'] / med['floor']:.2f})")
    print(f"trimesh / cold    = {med['trimesh'] / med['cold']:.2f}   (target >= 5)")
    print(f"cold / warm       = {med['cold'] / med['warm']:.2f}   (target >= 10; unchanged model, result cache)")
    print(f"cold / edited     = {med['cold'] / med['edited']:.2f}   (description edited: mesh cache only; beyond start-up "
          f"cold {(med['cold'] - med['baseline']) * 1000:.0f} ms, edited {(med['edited'] - med['baseline']) * 1000:.0f} ms; "
          f"start-up = python + numpy + lxml + linkcheck imports, {med['baseline'] * 1000:.0f} ms)")
    print(f"peak memory (cold) = {peak['cold'] / f64:.2f}x the meshes' float64 size "
          f"({extra / f64:.2f}x above the bare interpreter)   (target < ~3)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
