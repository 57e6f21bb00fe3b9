"""A mesh in the wrong units whose extents still look plausible: the density and the tensor tell.

References: the handbook formula of a solid cuboid, I_xx = m (b² + c²)/12 (and cyclic), for every
stated and expected tensor; trimesh.creation.box (a general-purpose library) for the meshes, so
the mesh volume is the box's a·b·c.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import trimesh

from linkcheck.fix import FixOptions
from linkcheck.formats.urdf import read_urdf
from linkcheck.geometry.mesh import mesh_estimate
from linkcheck.geometry.units import suggest_scale
from linkcheck.inertia import MassProperties
from linkcheck.runner import RunOptions, check_document, run_file
from linkcheck.settings import Settings

#: A small part, 4 x 4 x 1 mm; exported in millimetres it reads as 4 m x 4 m x 1 m (under 5 m).
PART_MM = (4.0, 4.0, 1.0)
PART_M = (0.004, 0.004, 0.001)


def cuboid(mass: float, a: float, b: float, c: float) -> np.ndarray:
    """Handbook: solid cuboid of sides a, b, c about its centre."""
    return np.diag([mass * (b * b + c * c) / 12, mass * (a * a + c * c) / 12, mass * (a * a + b * b) / 12])


def box_stl(folder: Path, name: str, extents: tuple[float, float, float]) -> str:
    trimesh.creation.box(extents=extents).export(folder / name)
    return name


def urdf(mesh: str, mass: float, tensor: np.ndarray, scale: str | None = None) -> str:
    sc = f' scale="{scale}"' if scale else ""
    return (f'<robot name="r">\n  <link name="part">\n    <inertial>\n      <origin xyz="0 0 0" rpy="0 0 0"/>\n'
            f'      <mass value="{float(mass)!r}"/>\n'
            f'      <inertia ixx="{float(tensor[0, 0])!r}" ixy="0" ixz="0" iyy="{float(tensor[1, 1])!r}" iyz="0" '
            f'izz="{float(tensor[2, 2])!r}"/>\n'
            f'    </inertial>\n    <collision><geometry><mesh filename="{mesh}"{sc}/></geometry></collision>\n'
            '  </link>\n</robot>\n')


def findings(folder: Path, text: str) -> list:
    path = folder / "r.urdf"
    path.write_text(text)
    return check_document(read_urdf(path, text.encode()), Settings())[1]


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linkcheck", "--no-cache", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=120)


@pytest.mark.parametrize("mass", [0.00012, 0.002])  # steel-like 7500 kg/m³, and 2 g (denser than any metal even once scaled)
def test_small_millimetre_part_is_mesh_units_suspect(tmp_path, mass):
    mesh = box_stl(tmp_path, "part.stl", PART_MM)
    found = findings(tmp_path, urdf(mesh, mass, cuboid(mass, *PART_M)))
    rules = sorted(f.rule for f in found)
    assert rules == ["estimate-unavailable", "mesh-units-suspect"]  # no tensor or mass blamed
    units = next(f for f in found if f.rule == "mesh-units-suspect")
    assert 'scale="0.001 0.001 0.001"' in units.message
    assert units.data["factor"] == pytest.approx(1e-3)
    # the density the message promises is the stated mass over the real part's volume a·b·c
    assert units.data["scaled_density"] == pytest.approx(mass / np.prod(PART_M), rel=1e-6)
    assert units.data["density"] == pytest.approx(mass / np.prod(PART_MM), rel=1e-6)


def test_diff_and_fix_leave_the_block_of_a_millimetre_mesh_alone(tmp_path):
    mesh = box_stl(tmp_path, "part.stl", PART_MM)
    path = tmp_path / "r.urdf"
    path.write_text(urdf(mesh, 0.002, cuboid(0.002, *PART_M)))
    before = path.read_bytes()
    p = run("--diff", "r.urdf", cwd=tmp_path)
    assert "mesh-units-suspect" in p.stdout
    assert "<inertia" not in p.stdout  # no hunk: nothing would be rewritten
    assert "inertia-units-suspect" not in p.stdout and "density-implausible" not in p.stdout
    p = run("--fix", "r.urdf", cwd=tmp_path)
    assert path.read_bytes() == before and "fixed r.urdf" not in p.stdout + p.stderr


def test_with_the_scale_attribute_the_part_is_clean(tmp_path):
    mesh = box_stl(tmp_path, "part.stl", PART_MM)
    mass = 0.00012
    assert findings(tmp_path, urdf(mesh, mass, cuboid(mass, *PART_M), "0.001 0.001 0.001")) == []


def test_metre_mesh_scaled_as_millimetres_in_plausible_extents(tmp_path):
    # a 2 x 1 x 0.5 m part whose mesh is in metres but given scale 0.001: 2 mm across, not too small
    dims = (2.0, 1.0, 0.5)
    mesh = box_stl(tmp_path, "arm.stl", dims)
    mass = 2000.0 * np.prod(dims)
    found = findings(tmp_path, urdf(mesh, mass, cuboid(mass, *dims), "0.001 0.001 0.001"))
    assert sorted(f.rule for f in found) == ["estimate-unavailable", "mesh-units-suspect"]
    units = next(f for f in found if f.rule == "mesh-units-suspect")
    assert 'scale="1 1 1"' in units.message
    assert units.data["scaled_density"] == pytest.approx(2000.0, rel=1e-6)


def test_real_large_link_with_a_filler_mass_is_still_density_implausible(tmp_path):
    # a real 4 m beam; the tensor is right for the beam at the filler mass, so the mesh is not off
    dims = (4.0, 0.2, 0.2)
    mesh = box_stl(tmp_path, "beam.stl", dims)
    found = findings(tmp_path, urdf(mesh, 0.001, cuboid(0.001, *dims)))
    rules = {f.rule for f in found}
    assert "density-implausible" in rules
    assert "mesh-units-suspect" not in rules and "estimate-unavailable" not in rules


def test_kg_mm2_tensor_with_a_correct_mesh_is_inertia_units_suspect(tmp_path):
    dims = (0.2, 0.1, 0.05)
    mesh = box_stl(tmp_path, "plate.stl", dims)
    mass = 2.0
    right = cuboid(mass, *dims)
    text = urdf(mesh, mass, right * 1e-6)  # converted to kg·mm² the wrong way round
    found = findings(tmp_path, text)
    rules = {f.rule for f in found}
    assert "inertia-units-suspect" in rules and "mesh-units-suspect" not in rules
    result = run_file(tmp_path / "r.urdf", Settings(), RunOptions(fix=FixOptions()))
    assert result.new_data is not None
    fixed = read_urdf(tmp_path / "r.urdf", result.new_data).links[0].inertial.mass_properties()
    np.testing.assert_allclose(fixed.inertia, right, rtol=1e-5, atol=1e-12)


def test_tiny_mesh_gets_no_scale_that_leaves_it_absurd(tmp_path):
    box_stl(tmp_path, "dust.stl", (4e-21, 4e-21, 1e-21))
    est = mesh_estimate("dust.stl", tmp_path)
    units = [f for f in est.findings if f.rule == "mesh-units-suspect"]
    assert len(units) == 1 and not est.trusted
    assert 'scale="' not in units[0].message and "no unit factor" in units[0].message
    # a 0.5 mm mesh is still told which scale fixes it: x1000 is 0.5 m
    box_stl(tmp_path, "half.stl", (5e-4, 5e-4, 5e-4))
    est = mesh_estimate("half.stl", tmp_path)
    assert 'scale="1000 1000 1000"' in next(f for f in est.findings if f.rule == "mesh-units-suspect").message


def test_underflowing_scale_is_a_clear_mesh_unavailable(tmp_path):
    box_stl(tmp_path, "part.stl", PART_MM)
    est = mesh_estimate("part.stl", tmp_path, (1e-300, 1e-300, 1e-300))
    assert est.solid is None and [f.rule for f in est.findings] == ["mesh-unavailable"]
    message = est.findings[0].message
    assert "underflows" in message and "Error" not in message


def test_suggest_scale_needs_the_tensor_to_confirm_the_factor():
    # geometry_at(f): the mm box with its coordinates scaled by f, at unit density (handbook cuboid)
    def geometry_at(f: float) -> MassProperties:
        sides = [s * f for s in PART_MM]
        volume = float(np.prod(sides))
        return MassProperties(volume, np.zeros(3), cuboid(volume, *sides))

    mass = 0.00012
    volume = float(np.prod(PART_MM))
    assert suggest_scale(volume, mass, inertia=cuboid(mass, *PART_M), geometry_at=geometry_at) == pytest.approx(1e-3)
    # the tensor of the 4 m body as it stands: a filler mass on a real large part, no unit factor
    assert suggest_scale(volume, mass, inertia=cuboid(mass, *PART_MM), geometry_at=geometry_at) is None
    # the factor must also bring the extents into the plausible range
    assert suggest_scale(volume, mass, inertia=cuboid(mass, *PART_M), geometry_at=geometry_at,
                         extent=4e-3) is None


def test_density_reason_does_not_ask_for_a_scale_the_mesh_already_has(tmp_path):
    # the part is the real 4 x 4 x 1 mm once scaled; the 2 kg mass is what is absurd (1.25e8 kg/m³)
    mesh = box_stl(tmp_path, "part.stl", PART_MM)
    found = findings(tmp_path, urdf(mesh, 2.0, cuboid(2.0, *PART_M), scale="0.001 0.001 0.001"))
    (density,) = [f for f in found if f.rule == "density-implausible"]
    assert density.data["density"] == pytest.approx(2.0 / np.prod(PART_M), rel=1e-6)  # mass / (a·b·c)
    assert "without scale 0.001" not in density.message and "check the mesh scale" in density.message
