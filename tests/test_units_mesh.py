"""A mesh in the wrong units whose extents still look plausible: the density and the tensor tell.

References: the handbook formula of a solid cuboid, I_xx = m (b² + c²)/12 (and cyclic), for every
stated and expected tensor, moved between points by the parallel axis theorem
I_o = I_c + m (|d|² E − d dᵀ); trimesh.creation.box (a general-purpose library) for the meshes, so
the mesh volume is the box's a·b·c; unit factors: 1 in = 0.0254 m exactly (the international
inch), 1 cm = 0.01 m, 1 mm = 0.001 m.
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


# --- the stated tensor cannot confirm, the stated block in grams, several meshes, meshes over 5 m

INCH, CM, MM = 0.0254, 0.01, 0.001  # exact unit factors
STEEL, ALUMINIUM = 7850.0, 2700.0


def corner_box_stl(folder: Path, name: str, extents: tuple[float, float, float]) -> str:
    """trimesh.creation.box moved so that the box spans [0, a] x [0, b] x [0, c] (centroid a/2, b/2, c/2)."""
    box = trimesh.creation.box(extents=extents)
    box.apply_translation(np.asarray(extents, dtype=float) / 2)
    box.export(folder / name)
    return name


def block(meshes: list[str], mass: float, com, tensor: np.ndarray) -> str:
    """A URDF link with the full stated tensor and one collision per mesh."""
    t = np.asarray(tensor, dtype=float)
    entries = " ".join(f'{n}="{float(t[i, j])!r}"' for n, i, j in
                       (("ixx", 0, 0), ("ixy", 0, 1), ("ixz", 0, 2), ("iyy", 1, 1), ("iyz", 1, 2), ("izz", 2, 2)))
    cols = "".join(f'    <collision><geometry><mesh filename="{m}"/></geometry></collision>\n' for m in meshes)
    xyz = " ".join(f"{float(v)!r}" for v in com)
    return (f'<robot name="r">\n  <link name="part">\n    <inertial>\n      <origin xyz="{xyz}" rpy="0 0 0"/>\n'
            f'      <mass value="{float(mass)!r}"/>\n      <inertia {entries}/>\n    </inertial>\n{cols}  </link>\n</robot>\n')


def steiner(parts: list[tuple[float, np.ndarray, np.ndarray]]) -> tuple[float, np.ndarray, np.ndarray]:
    """(mass, COM, tensor about the COM) of bodies given as (mass, centroid, tensor about the centroid)."""
    total = sum(m for m, _, _ in parts)
    com = sum(m * np.asarray(c, dtype=float) for m, c, _ in parts) / total
    tensor = np.zeros((3, 3))
    for m, c, i in parts:
        d = np.asarray(c, dtype=float) - com
        tensor += i + m * (d @ d * np.eye(3) - np.outer(d, d))
    return total, com, tensor


def diff_hunks(tmp_path: Path, text: str) -> str:
    (tmp_path / "r.urdf").write_text(text)
    p = run("--diff", "r.urdf", cwd=tmp_path)
    return "\n".join(line for line in p.stdout.splitlines() if line[:1] in "+-" and line[:3] not in ("+++", "---"))


#: The 4 x 3 x 2 mm steel part, exported in millimetres with its corner at the origin (4 m across).
PIN_M = (0.004, 0.003, 0.002)
PIN_MM = (4.0, 3.0, 2.0)
PIN_MASS = STEEL * float(np.prod(PIN_M))  # 1.884e-4 kg


@pytest.mark.parametrize("tensor", [
    np.eye(3) * 1e-9,  # equal moments: a filler
    np.diag([1e-9, 1e-9, 5e-9]),  # triangle inequality broken: no physical body
    np.zeros((3, 3)),  # nothing stated
])
def test_millimetre_part_whose_tensor_cannot_tell_is_mesh_units_suspect(tmp_path, tensor):
    mesh = corner_box_stl(tmp_path, "pin.stl", PIN_MM)
    com = np.asarray(PIN_M) / 2  # the real part's centroid
    text = block([mesh], PIN_MASS, com, tensor)
    found = findings(tmp_path, text)
    rules = {f.rule for f in found}
    assert "mesh-units-suspect" in rules and "estimate-unavailable" in rules
    assert not rules & {"density-implausible", "com-offset", "inertia-placeholder", "inertia-mismatch"}
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(MM) and units.data["evidence"] == "density"
    assert 'scale="0.001 0.001 0.001"' in units.message and "or the mass is wrong" in units.message
    assert units.data["scaled_density"] == pytest.approx(STEEL, rel=1e-6)  # the real part's steel
    hunks = diff_hunks(tmp_path, text)
    assert "<inertia" not in hunks and "<origin" not in hunks  # no COM or tensor from the 4 m mesh


def test_centred_millimetre_part_with_a_filler_tensor_by_the_density_alone(tmp_path):
    # centred mesh, COM at the origin: the COM cannot tell either, the density alone names the scale
    mesh = box_stl(tmp_path, "part.stl", PART_MM)
    mass = 0.00012  # 7500 kg/m³ over the real 4 x 4 x 1 mm
    found = findings(tmp_path, urdf(mesh, mass, np.eye(3) * 1e-9))
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(MM) and units.data["evidence"] == "density"
    assert "density-implausible" not in {f.rule for f in found}


def test_round_filler_mass_with_a_filler_tensor_stays_density_implausible(tmp_path):
    # a real 0.5 x 0.4 x 0.3 m part with 1e-4 kg: at 0.01 the density would be 1667 kg/m³, but a
    # sub-gram power of ten with a filler tensor and no COM behind the scale is a filler, not a unit
    mesh = box_stl(tmp_path, "case.stl", (0.5, 0.4, 0.3))
    found = findings(tmp_path, urdf(mesh, 1e-4, np.eye(3) * 1e-9))
    rules = {f.rule for f in found}
    assert "density-implausible" in rules and "inertia-placeholder" in rules
    assert "mesh-units-suspect" not in rules and "estimate-unavailable" not in rules


def test_filler_mass_no_unit_factor_explains_stays_density_implausible(tmp_path):
    # a real 4 m beam (0.16 m³) with 4.8e-6 kg: 3e-5 kg/m³, and f³ x that is plausible for no
    # factor (mm 3e4, cm 30, inch 1.8 kg/m³): the filler is named, nothing is rescaled
    dims = (4.0, 0.2, 0.2)
    mesh = box_stl(tmp_path, "beam.stl", dims)
    found = findings(tmp_path, urdf(mesh, 4.8e-6, np.eye(3) * 1e-9))
    rules = {f.rule for f in found}
    assert "density-implausible" in rules and "mesh-units-suspect" not in rules
    (density,) = [f for f in found if f.rule == "density-implausible"]
    assert density.data["density"] == pytest.approx(4.8e-6 / np.prod(dims), rel=1e-6)


def test_unscaled_mesh_a_thousand_times_too_small_blames_no_scale(tmp_path):
    # a 2 x 1 x 0.5 m part whose mesh reads 2 mm across with no scale attribute at all
    dims = (2.0, 1.0, 0.5)
    mesh = box_stl(tmp_path, "arm.stl", tuple(x * MM for x in dims))
    mass = ALUMINIUM * float(np.prod(dims))
    (units,) = [f for f in findings(tmp_path, urdf(mesh, mass, cuboid(mass, *dims))) if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(1e3) and 'scale="1000 1000 1000"' in units.message
    assert "a scale 0.001 too many" not in units.message


def test_real_three_metre_beam_with_a_correct_block_is_clean(tmp_path):
    dims = (3.0, 0.2, 0.2)
    mesh = box_stl(tmp_path, "beam.stl", dims)
    mass = ALUMINIUM * float(np.prod(dims))
    assert findings(tmp_path, urdf(mesh, mass, cuboid(mass, *dims))) == []


def test_real_four_millimetre_part_in_metres_with_a_correct_block_is_clean(tmp_path):
    mesh = box_stl(tmp_path, "part.stl", PART_M)
    mass = STEEL * float(np.prod(PART_M))
    assert findings(tmp_path, urdf(mesh, mass, cuboid(mass, *PART_M))) == []


def test_block_in_grams_on_a_millimetre_mesh_is_named_and_not_rescaled(tmp_path):
    # mass 0.1884 is the part's 0.1884 g written as kg; the tensor is the real part's at that mass
    mesh = corner_box_stl(tmp_path, "pin.stl", PIN_MM)
    grams = PIN_MASS * 1e3
    text = block([mesh], grams, np.asarray(PIN_M) / 2, cuboid(grams, *PIN_M))
    found = findings(tmp_path, text)
    rules = {f.rule for f in found}
    assert "mesh-units-suspect" in rules
    assert not rules & {"inertia-units-suspect", "density-implausible", "com-offset", "inertia-mismatch"}
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(MM) and units.data["evidence"] == "tensor"
    assert units.data["mass_factor"] == pytest.approx(1e-3)
    assert "grams given as kilograms" in units.message and 'scale="0.001 0.001 0.001"' in units.message
    assert units.data["scaled_density"] == pytest.approx(STEEL * 1e3, rel=1e-6)
    assert "<inertia" not in diff_hunks(tmp_path, text)  # was: the tensor multiplied by 1e6


def test_one_millimetre_mesh_beside_a_metre_mesh_is_named_alone(tmp_path):
    plate_dims = (0.2, 0.1, 0.05)
    plate = box_stl(tmp_path, "plate.stl", plate_dims)  # metres, centred at the origin
    pin = corner_box_stl(tmp_path, "pin.stl", PIN_MM)  # millimetres read as metres
    plate_mass = ALUMINIUM * float(np.prod(plate_dims))
    mass, com, tensor = steiner([(plate_mass, np.zeros(3), cuboid(plate_mass, *plate_dims)),
                                 (PIN_MASS, np.asarray(PIN_M) / 2, cuboid(PIN_MASS, *PIN_M))])
    text = block([plate, pin], mass, com, tensor)
    found = findings(tmp_path, text)
    rules = sorted(f.rule for f in found)
    assert rules == ["estimate-unavailable", "mesh-units-suspect"]  # no tonnes, mismatch or com-offset
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["uri"] == "pin.stl" and units.data["factor"] == pytest.approx(MM)
    assert units.data["evidence"] == "tensor" and units.line == 9  # the pin's <collision> line
    assert units.data["scaled_density"] == pytest.approx(mass / (np.prod(plate_dims) + np.prod(PIN_M)), rel=1e-6)
    hunks = diff_hunks(tmp_path, text)
    assert "<inertia" not in hunks and "<origin" not in hunks


def _over_five_metres(tmp_path: Path, real: tuple[float, float, float], unit: float, density: float):
    """A real part of ``real`` metres exported in ``unit`` (read as metres), with its correct block."""
    mesh = box_stl(tmp_path, "big.stl", tuple(x / unit for x in real))
    mass = density * float(np.prod(real))
    return mesh, mass


@pytest.mark.parametrize("real, unit, density", [
    ((0.2, 0.1, 0.05), INCH, ALUMINIUM),  # 200 mm in inches: 7.874 m across
    ((0.6, 0.3, 0.2), CM, STEEL),  # 600 mm in centimetres: 60 m across
])
def test_mesh_over_five_metres_gets_the_unit_its_block_fits(tmp_path, real, unit, density):
    mesh, mass = _over_five_metres(tmp_path, real, unit, density)
    found = findings(tmp_path, urdf(mesh, mass, cuboid(mass, *real)))
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(unit) and units.data["evidence"] == "tensor"
    text = " ".join(f"{unit:.6g}" for _ in range(3))
    assert f'scale="{text}"' in units.message and "0.001 0.001" not in units.message
    assert units.data["extent"] == pytest.approx(max(real) / unit, rel=1e-6)
    assert units.data["scaled_density"] == pytest.approx(density, rel=1e-6)
    assert "estimate-unavailable" in {f.rule for f in found}


def test_mesh_over_five_metres_by_the_density_alone_lists_what_else_fits(tmp_path):
    # 600 mm of steel in centimetres with the identity for a tensor: 7850 kg/m³ at 0.01, and the
    # density allows inches as well (7850 x (0.01/0.0254)³ = 479 kg/m³); millimetres give 7.85e6
    mesh, mass = _over_five_metres(tmp_path, (0.6, 0.3, 0.2), CM, STEEL)
    (units,) = [f for f in findings(tmp_path, urdf(mesh, mass, np.eye(3))) if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(CM) and units.data["evidence"] == "density"
    assert units.data["alternatives"] == [pytest.approx(INCH)]
    assert "or the mass is wrong" in units.message


def test_mesh_over_five_metres_keeps_the_extent_only_hint_when_nothing_else_is_known(tmp_path):
    mesh, _ = _over_five_metres(tmp_path, (0.6, 0.3, 0.2), CM, STEEL)
    est = mesh_estimate(mesh, tmp_path)  # no link, no mass: the size alone
    (units,) = [f for f in est.findings if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(MM) and 'scale="0.001 0.001 0.001"' in units.message
    # a filler block no factor makes plausible: still the size alone
    found = findings(tmp_path, urdf(mesh, 1e-3, np.eye(3) * 1e-9))
    (units,) = [f for f in found if f.rule == "mesh-units-suspect"]
    assert units.data["factor"] == pytest.approx(MM) and "evidence" not in units.data


def test_both_paths_ask_the_one_decision_function(tmp_path, monkeypatch):
    from linkcheck.geometry import units

    calls: list[dict] = []
    real = units.decide_scale

    def spy(*args, **kwargs):
        calls.append(kwargs)
        return real(*args, **kwargs)

    monkeypatch.setattr(units, "decide_scale", spy)
    mesh, mass = _over_five_metres(tmp_path, (0.2, 0.1, 0.05), INCH, ALUMINIUM)
    mesh_estimate(mesh, tmp_path)  # the extent path (no mass)
    assert len(calls) == 1 and calls[0].get("inertia") is None
    (units_found,) = [f for f in findings(tmp_path, urdf(mesh, mass, cuboid(mass, 0.2, 0.1, 0.05)))
                      if f.rule == "mesh-units-suspect"]
    assert any(c.get("inertia") is not None for c in calls[1:])  # the link path, with the stated block
    assert units_found.data["factor"] == pytest.approx(INCH)
