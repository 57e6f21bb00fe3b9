"""Fixing from the command line, as a user runs it on the shipped fixtures.

Expected values: handbook table of homogeneous solids (box m(b²+c²)/12, recalled from memory)
and the parallel axis theorem for the demo's shoulder (d = 0.06 m along z); byte-level
comparisons use difflib from the standard library.
"""

from __future__ import annotations

import difflib
import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linkcheck", "--no-cache", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=120)


@pytest.fixture()
def work(tmp_path: Path) -> Path:
    shutil.copytree(ROOT / "fixtures" / "demo", tmp_path / "demo")
    shutil.copytree(ROOT / "fixtures" / "sdf", tmp_path / "sdf")
    return tmp_path


def changed_lines(old: bytes, new: bytes) -> list[str]:
    a, b = old.decode().splitlines(), new.decode().splitlines()
    return [line for line in difflib.unified_diff(a, b, lineterm="", n=0)
            if line[:1] in "+-" and not line.startswith(("+++", "---"))]


def inside_inertial(text: str, changed: list[str]) -> bool:
    """Every changed line is a line of an <inertial> block."""
    inertial_lines = set()
    inside = False
    for line in text.splitlines():
        if "<inertial" in line:
            inside = True
        if inside:
            inertial_lines.add(line.strip())
        if "</inertial>" in line:
            inside = False
    return all(c[1:].strip() in inertial_lines for c in changed)


def test_diff_writes_nothing_and_exits_1(work):
    before = (work / "demo" / "harvester.urdf").read_bytes()
    p = run("--diff", "demo/harvester.urdf", cwd=work)
    assert p.returncode == 1
    assert (work / "demo" / "harvester.urdf").read_bytes() == before
    assert "+      <inertia ixx=" in p.stdout and "\x1b[" not in p.stdout


def test_diff_on_a_clean_file_exits_0(work):
    p = run("--diff", "demo/harvester_clean.urdf", cwd=work)
    assert p.returncode == 0, p.stdout
    assert "---" not in p.stdout


def test_fix_touches_only_inertial_lines_and_is_idempotent(work):
    for name in ("demo/harvester.urdf", "sdf/orchard_gimbal/model.sdf"):
        path = work / name
        before = path.read_bytes()
        first = run("--fix", name, cwd=work)
        assert first.returncode == 1 and "caution:" in first.stdout
        after = path.read_bytes()
        changed = changed_lines(before, after)
        assert changed
        assert inside_inertial(after.decode(), [c for c in changed if c.startswith("+")])
        assert inside_inertial(before.decode(), [c for c in changed if c.startswith("-")])
        run("--fix", name, cwd=work)
        assert path.read_bytes() == after  # a second fix changes nothing


def test_after_fix_only_unfixable_findings_remain(work):
    run("--fix", "demo/harvester.urdf", cwd=work)
    p = run("--format", "json", "demo/harvester.urdf", cwd=work)
    left = {(f["link"], f["rule"]) for f in json.loads(p.stdout)["files"][0]["findings"]}
    # mass in grams is the user's to correct; the other two need --fill-missing (and geometry)
    assert left == {("gripper_palm", "density-implausible"), ("camera_mount", "inertial-missing"),
                    ("tool_flange", "massless-moving-link")}


def test_fixed_values_match_the_handbook(work):
    run("--fix", "demo/harvester.urdf", cwd=work)
    links = {k["name"]: k for k in json.loads(run("--format", "json", "demo/harvester.urdf", cwd=work).stdout)["files"][0]["links"]}
    # lift column: 8 kg box 0.12 x 0.12 x 1.0 m (handbook), placeholder replaced
    m, x, y, z = 8.0, 0.12, 0.12, 1.0
    assert links["lift_column"]["stated"]["inertia"][0][0] == pytest.approx(m * (y * y + z * z) / 12, rel=1e-8)
    assert links["lift_column"]["stated"]["inertia"][2][2] == pytest.approx(m * (x * x + y * y) / 12, rel=1e-8)
    # shoulder: the user's 0.016 about the origin, minus m d² = 2.5 x 0.06² = 0.009 (parallel axis theorem)
    assert links["shoulder"]["stated"]["inertia"][0][0] == pytest.approx(0.016 - 2.5 * 0.06**2, rel=1e-9)


def test_fill_missing_without_a_mass_source_refuses_clearly(work):
    before = (work / "demo" / "harvester.urdf").read_bytes()
    p = run("--fill-missing", "--diff", "demo/harvester.urdf", cwd=work)
    assert "camera_mount" in p.stdout and "--density" in p.stdout and "not fixed" in p.stdout
    assert (work / "demo" / "harvester.urdf").read_bytes() == before


def test_fill_missing_with_density_adds_a_block(work):
    p = run("--fill-missing", "--density", "1200", "demo/harvester.urdf", cwd=work)
    assert p.returncode == 1
    links = {k["name"]: k for k in json.loads(run("--format", "json", "demo/harvester.urdf", cwd=work).stdout)["files"][0]["links"]}
    # camera mount box 0.05 x 0.09 x 0.03 m at 1200 kg/m³: 0.162 kg (arithmetic)
    assert links["camera_mount"]["stated"]["mass"] == pytest.approx(1200 * 0.05 * 0.09 * 0.03)


def test_fix_with_machine_output_still_cautions_on_stderr(work):
    p = run("--fix", "--format", "json", "demo/harvester.urdf", cwd=work)
    json.loads(p.stdout)  # stdout stays one JSON document
    assert "uniform density" in p.stderr and "hardware" in p.stderr


def test_diff_headers_of_an_absolute_path(work):
    p = run("--diff", str(work / "demo" / "harvester.urdf"), cwd=ROOT)
    assert f"--- a/{str(work).lstrip('/')}/demo/harvester.urdf" in p.stdout
