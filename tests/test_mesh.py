"""Mesh loading, exact integration and repair, checked against outside references.

References named beside each check: trimesh's ``Trimesh.mass_properties`` (reference library),
mujoco's exact mesh inertia (physics engine), handbook closed forms (the "list of moments of
inertia" table of a physics handbook, from memory: box m(b²+c²)/12, cylinder m(3r²+h²)/12 and
mr²/2, sphere 2mr²/5), elementary polygon geometry (area of a regular n-gon inscribed in a
circle of radius r is (n/2) r² sin(2π/n)), and the formats' own specs (binary STL layout,
COLLADA <unit meter>).
"""

from __future__ import annotations

import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest
import trimesh

from linkcheck.geometry.mesh import mesh_estimate
from linkcheck.geometry.units import suggest_scale
from linkcheck.geometry.resolve import SearchPaths

NO_ENV = SearchPaths(env={})


def write_binary_stl(path: Path, tris: np.ndarray, header: bytes = b"\0" * 80) -> Path:
    """Binary STL per its published layout: 80-byte header, uint32 count, 50-byte records."""
    tris = np.asarray(tris, dtype="<f4").reshape(-1, 3, 3)
    rec = np.zeros(len(tris), dtype=[("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("attr", "<u2")])
    rec["v"] = tris
    path.write_bytes(header[:80].ljust(80, b"\0") + np.uint32(len(tris)).tobytes() + rec.tobytes())
    return path


def f32_mesh(mesh: trimesh.Trimesh) -> trimesh.Trimesh:
    """The triangle soup a binary STL actually stores (float32 corners), for like-for-like references."""
    tris = mesh.triangles.astype(np.float32).astype(np.float64)
    return trimesh.Trimesh(vertices=tris.reshape(-1, 3), faces=np.arange(len(tris) * 3).reshape(-1, 3), process=False)


def estimate(path: Path, scale=(1.0, 1.0, 1.0)):
    return mesh_estimate(path.name, path.parent, scale, NO_ENV, None)


def assert_matches_trimesh(est, ref: trimesh.Trimesh, rtol: float = 1e-9) -> None:
    props = est.solid.props
    assert props.mass == pytest.approx(ref.volume, rel=rtol)
    scale = np.linalg.norm(ref.extents)
    assert np.allclose(props.com, ref.center_mass, rtol=0, atol=rtol * scale)
    # trimesh.moment_inertia: about the centre of mass, mesh axes, tensor entries (-∫xy)
    assert np.allclose(props.inertia, ref.moment_inertia, rtol=0, atol=rtol * np.abs(ref.moment_inertia).max())


SHAPES = {
    "box": lambda: trimesh.creation.box((0.3, 0.5, 0.7)),
    "cylinder": lambda: trimesh.creation.cylinder(radius=0.1, height=0.4, sections=64),
    "icosphere": lambda: trimesh.creation.icosphere(subdivisions=3, radius=0.25),
    "annulus": lambda: trimesh.creation.annulus(r_min=0.05, r_max=0.12, height=0.2, sections=48),
}


@pytest.mark.parametrize("name", sorted(SHAPES))
def test_integral_matches_trimesh(tmp_path: Path, name: str) -> None:
    mesh = SHAPES[name]()
    # an off-origin, rotated pose, so products of inertia and the COM are all non-trivial
    transform = trimesh.transformations.euler_matrix(0.3, -0.7, 1.1)
    transform[:3, 3] = (0.4, -1.2, 2.5)
    mesh.apply_transform(transform)
    est = estimate(write_binary_stl(tmp_path / f"{name}.stl", mesh.triangles))
    assert est.trusted and not est.findings
    assert_matches_trimesh(est, f32_mesh(mesh))


def test_box_matches_handbook_exactly(tmp_path: Path) -> None:
    a, b, c = 0.5, 0.25, 2.0  # binary fractions: exact in float32
    est = estimate(write_binary_stl(tmp_path / "box.stl", trimesh.creation.box((a, b, c)).triangles))
    v = a * b * c
    # handbook table: box Ixx = m(b²+c²)/12 ...
    expected = np.diag([v * (b * b + c * c) / 12, v * (a * a + c * c) / 12, v * (a * a + b * b) / 12])
    assert est.solid.volume == pytest.approx(v, rel=1e-12)
    assert np.allclose(est.solid.props.inertia, expected, rtol=0, atol=1e-12 * expected.max())


def test_cylinder_within_tessellation_bound(tmp_path: Path) -> None:
    r, h, n = 0.1, 0.4, 128
    est = estimate(write_binary_stl(tmp_path / "cyl.stl", trimesh.creation.cylinder(radius=r, height=h, sections=n).triangles))
    # the mesh is the prism over a regular n-gon inscribed in the circle: area (n/2) r² sin(2π/n)
    assert est.solid.volume == pytest.approx(0.5 * n * r * r * np.sin(2 * np.pi / n) * h, rel=1e-6)
    v = np.pi * r * r * h
    deficit = 1 - np.cos(np.pi / n)  # radial deficit of an inscribed polygon's edge midpoints
    ixx, izz = v * (3 * r * r + h * h) / 12, v * r * r / 2  # handbook cylinder
    inertia = est.solid.props.inertia
    assert izz * (1 - 4 * deficit) <= inertia[2, 2] <= izz
    assert ixx * (1 - 4 * deficit) <= inertia[0, 0] <= ixx
    assert abs(inertia[0, 0] - inertia[1, 1]) <= 1e-6 * ixx


def test_sphere_between_inscribed_and_circumscribed(tmp_path: Path) -> None:
    r = 0.3
    mesh = trimesh.creation.icosphere(subdivisions=4, radius=r)
    est = estimate(write_binary_stl(tmp_path / "s.stl", mesh.triangles))
    # all vertices on the sphere, so the solid lies between the sphere of radius r and the one
    # tangent to its nearest face plane: both bounds from the handbook sphere (V = 4/3 π r³, I = 2/5 m r²)
    normals = mesh.face_normals
    r_in = float(np.min(np.einsum("ij,ij->i", normals, mesh.triangles[:, 0])))
    for rr, cmp in ((r_in, np.greater_equal), (r, np.less_equal)):
        v = 4 / 3 * np.pi * rr**3
        assert cmp(est.solid.volume, v * (1 - 1e-6) if cmp is np.greater_equal else v * (1 + 1e-6))
        assert np.all(cmp(np.linalg.eigvalsh(est.solid.props.inertia), 0.4 * v * rr * rr * (1 - 1e-6 if cmp is np.greater_equal else 1 + 1e-6)))


def test_matches_mujoco_exact_mesh_inertia(tmp_path: Path) -> None:
    mujoco = pytest.importorskip("mujoco")
    mesh = trimesh.creation.torus(major_radius=0.2, minor_radius=0.05, major_sections=48, minor_sections=24)
    mesh.apply_transform(trimesh.transformations.euler_matrix(0.2, 0.4, 0.6))
    mesh.apply_translation((0.1, 0.2, 0.3))
    path = write_binary_stl(tmp_path / "torus.stl", mesh.triangles)
    xml = f"""<mujoco><compiler meshdir="{tmp_path}"/>
      <asset><mesh name="t" file="torus.stl" inertia="exact"/></asset>
      <worldbody><body><freejoint/><geom type="mesh" mesh="t" density="1"/></body></worldbody></mujoco>"""
    model = mujoco.MjModel.from_xml_string(xml)
    est = estimate(path)
    # mujoco reports the body's mass (= volume at density 1) and principal moments
    assert est.solid.volume == pytest.approx(model.body_mass[1], rel=1e-6)
    ours = np.sort(np.linalg.eigvalsh(est.solid.props.inertia))
    assert np.allclose(ours, np.sort(model.body_inertia[1]), rtol=1e-6)


def test_far_from_origin_keeps_precision(tmp_path: Path) -> None:
    mesh = trimesh.creation.torus(major_radius=0.13, minor_radius=0.04, major_sections=64, minor_sections=32)
    near = tmp_path / "near.obj"
    far = tmp_path / "far.obj"
    near.write_text(trimesh.exchange.obj.export_obj(mesh, digits=17))
    moved = mesh.copy()
    moved.apply_translation((1e5, -1e5, 0.0))
    far.write_text(trimesh.exchange.obj.export_obj(moved, digits=17))
    a, b = estimate(near), estimate(far)
    # the central inertia tensor does not depend on where the body sits (translation invariance);
    # the reference is trimesh on the mesh at the origin, where it is accurate (LIBRARIES.md §1.3)
    assert_matches_trimesh(a, mesh, rtol=1e-9)
    assert np.allclose(b.solid.props.inertia, mesh.moment_inertia, rtol=0, atol=1e-8 * np.abs(mesh.moment_inertia).max())
    assert np.allclose(b.solid.props.com, mesh.center_mass + (1e5, -1e5, 0.0), rtol=0, atol=1e-9)


# --------------------------------------------------------------------------- loaders


def test_ascii_stl_and_upper_case_extension(tmp_path: Path) -> None:
    mesh = trimesh.creation.icosphere(subdivisions=2, radius=0.2)
    path = tmp_path / "BALL.STL"
    path.write_text(trimesh.exchange.stl.export_stl_ascii(mesh))
    est = estimate(path)
    ref = trimesh.load_mesh(path, process=False)  # trimesh's own ASCII STL reader as the reference
    assert_matches_trimesh(est, ref)


def test_binary_stl_whose_header_starts_with_solid(tmp_path: Path) -> None:
    # binary is told by 84 + 50 n == size, not by the first word (Bourke's STL notes)
    mesh = trimesh.creation.box((1, 2, 3))
    est = estimate(write_binary_stl(tmp_path / "solid.stl", mesh.triangles, header=b"solid exported by a CAD tool"))
    assert est.solid.volume == pytest.approx(6.0, rel=1e-12)


def test_obj_with_quads(tmp_path: Path) -> None:
    path = tmp_path / "cube.obj"
    # a unit cube written with quads, as many exporters do; trimesh triangulates
    path.write_text(textwrap.dedent("""\
        v 0 0 0
        v 1 0 0
        v 1 1 0
        v 0 1 0
        v 0 0 1
        v 1 0 1
        v 1 1 1
        v 0 1 1
        f 1 4 3 2
        f 5 6 7 8
        f 1 2 6 5
        f 2 3 7 6
        f 3 4 8 7
        f 4 1 5 8
        """))
    est = estimate(path)
    assert est.solid.volume == pytest.approx(1.0, rel=1e-12)
    assert np.allclose(est.solid.props.com, 0.5)
    assert np.allclose(est.solid.props.inertia, np.eye(3) / 6)  # handbook cube: m(1+1)/12


def test_ply(tmp_path: Path) -> None:
    mesh = trimesh.creation.cylinder(radius=0.2, height=0.3, sections=32)
    path = tmp_path / "c.ply"
    path.write_bytes(trimesh.exchange.ply.export_ply(mesh))
    assert_matches_trimesh(estimate(path), trimesh.load_mesh(path, process=False))  # same float32 file


def test_glb_scene_transforms_are_baked(tmp_path: Path) -> None:
    scene = trimesh.Scene()
    box = trimesh.creation.box((1, 1, 1))
    for x in (0.0, 2.0, 4.0):
        scene.add_geometry(box, transform=trimesh.transformations.translation_matrix((x, 1.0, 0.0)))
    path = tmp_path / "three.glb"
    path.write_bytes(scene.export(file_type="glb"))
    est = estimate(path)
    # three unit cubes: volume 3, centroid at their mean position
    assert est.solid.volume == pytest.approx(3.0, rel=1e-9)
    assert np.allclose(est.solid.props.com, (2.0, 1.0, 0.0))
    ref = trimesh.util.concatenate([box.copy().apply_translation((x, 1.0, 0.0)) for x in (0.0, 2.0, 4.0)])
    assert_matches_trimesh(est, ref, rtol=1e-6)  # GLB stores float32


DAE = """<?xml version="1.0" encoding="utf-8"?>
<COLLADA xmlns="http://www.collada.org/2005/11/COLLADASchema" version="1.4.1">
  <asset><unit name="{name}" meter="{meter}"/><up_axis>{up}</up_axis></asset>
  <library_geometries><geometry id="g"><mesh>
    <source id="p"><float_array id="pa" count="24">{coords}</float_array>
      <technique_common><accessor source="#pa" count="8" stride="3">
        <param name="X" type="float"/><param name="Y" type="float"/><param name="Z" type="float"/>
      </accessor></technique_common></source>
    <vertices id="v"><input semantic="POSITION" source="#p"/></vertices>
    <triangles count="12"><input semantic="VERTEX" source="#v" offset="0"/>
      <p>0 2 1 0 3 2 4 5 6 4 6 7 0 1 5 0 5 4 1 2 6 1 6 5 2 3 7 2 7 6 3 0 4 3 4 7</p></triangles>
  </mesh></geometry></library_geometries>
  <library_visual_scenes><visual_scene id="s"><node id="n">
    <instance_geometry url="#g"/></node></visual_scene></library_visual_scenes>
  <scene><instance_visual_scene url="#s"/></scene>
</COLLADA>
"""


def box_dae(path: Path, size: tuple[float, float, float], meter: float, up: str = "Z_UP") -> Path:
    x, y, z = size
    corners = [(0, 0, 0), (x, 0, 0), (x, y, 0), (0, y, 0), (0, 0, z), (x, 0, z), (x, y, z), (0, y, z)]
    coords = " ".join(f"{c:g}" for p in corners for c in p)
    path.write_text(DAE.format(name="unit", meter=meter, up=up, coords=coords))
    return path


def test_dae_unit_is_applied(tmp_path: Path) -> None:
    pytest.importorskip("collada")
    # COLLADA 1.4 <unit meter="0.001">: coordinates are millimetres
    est = estimate(box_dae(tmp_path / "mm.DAE", (100, 200, 300), 0.001))
    assert est.solid.volume == pytest.approx(0.1 * 0.2 * 0.3, rel=1e-9)
    assert est.trusted
    ext = est.solid.points.max(axis=0) - est.solid.points.min(axis=0)
    assert np.allclose(ext, (0.1, 0.2, 0.3))


def test_dae_up_axis_is_ignored(tmp_path: Path) -> None:
    pytest.importorskip("collada")
    # ROS viewers and Gazebo drop the up-axis rotation (FORMATS.md §4): Y_UP must not rotate the box
    z = estimate(box_dae(tmp_path / "z.dae", (1, 2, 3), 1.0, "Z_UP"))
    y = estimate(box_dae(tmp_path / "y.dae", (1, 2, 3), 1.0, "Y_UP"))
    assert np.allclose(z.solid.props.inertia, y.solid.props.inertia)
    assert np.allclose(y.solid.props.com, (0.5, 1.0, 1.5))


# --------------------------------------------------------------------------- scale


def test_non_uniform_scale(tmp_path: Path) -> None:
    mesh = trimesh.creation.icosphere(subdivisions=2, radius=0.5)
    mesh.apply_translation((0.3, 0.1, -0.2))
    path = write_binary_stl(tmp_path / "e.stl", mesh.triangles)
    est = estimate(path, (2.0, 3.0, 0.5))
    ref = f32_mesh(mesh)
    ref.apply_transform(np.diag([2.0, 3.0, 0.5, 1.0]))  # scale about the mesh origin (rviz semantics)
    assert_matches_trimesh(est, ref)


def test_mirrored_scale_keeps_positive_volume(tmp_path: Path) -> None:
    mesh = trimesh.creation.box((1, 2, 3))
    mesh.apply_translation((1.0, 0.5, 0.25))
    mesh.apply_transform(trimesh.transformations.euler_matrix(0.1, 0.2, 0.3))
    path = write_binary_stl(tmp_path / "m.stl", mesh.triangles)
    est = estimate(path, (-1.0, 1.0, 1.0))
    ref = f32_mesh(mesh)
    # trimesh.apply_transform re-winds faces on a negative determinant (LIBRARIES.md §1.2)
    ref.apply_transform(np.diag([-1.0, 1.0, 1.0, 1.0]))
    assert ref.volume > 0
    assert not any(f.rule == "mesh-inside-out" for f in est.findings)
    assert_matches_trimesh(est, ref)


# --------------------------------------------------------------------------- repair and honesty


def rules(est) -> list[str]:
    return [f.rule for f in est.findings]


def test_cube_with_a_face_removed_uses_the_hull_as_upper_bound(tmp_path: Path) -> None:
    cube = trimesh.creation.box((1, 1, 1))
    cube.apply_translation((3.0, 0.0, 0.0))  # open meshes give origin-dependent garbage: move it away
    est = estimate(write_binary_stl(tmp_path / "open.stl", cube.triangles[2:]))
    assert rules(est) == ["mesh-not-watertight"]
    finding = est.findings[0]
    assert finding.severity == "warning" and "upper bound" in finding.message
    assert "4 open edges" in finding.message  # one square face removed: its 4 rim edges are open
    assert est.upper_bound
    hull = cube.convex_hull  # trimesh/qhull hull of the same points as the reference
    assert est.solid.volume == pytest.approx(hull.volume, rel=1e-9)
    assert np.allclose(est.solid.props.inertia, hull.moment_inertia, atol=1e-9)


def test_inverted_cube_is_flipped_and_reported(tmp_path: Path) -> None:
    cube = trimesh.creation.box((1, 2, 3))
    ref = cube.copy()
    cube.invert()
    est = estimate(write_binary_stl(tmp_path / "inv.stl", cube.triangles))
    assert rules(est) == ["mesh-inside-out"]
    assert est.findings[0].severity == "info"
    assert est.trusted
    assert_matches_trimesh(est, ref)


def test_partly_flipped_winding_is_reoriented(tmp_path: Path) -> None:
    sphere = trimesh.creation.icosphere(subdivisions=3, radius=1.0)
    tris = sphere.triangles.copy()
    tris[::7] = tris[::7][:, [0, 2, 1]]
    est = estimate(write_binary_stl(tmp_path / "mixed.stl", tris))
    assert rules(est) == ["mesh-inside-out"]
    assert f"{len(tris[::7])} of {len(tris)}" in est.findings[0].message
    assert_matches_trimesh(est, f32_mesh(sphere))


def test_millimetre_mesh_is_suspect_and_untrusted(tmp_path: Path) -> None:
    box = trimesh.creation.box((120.0, 40.0, 30.0))  # a 12 cm part exported in millimetres
    est = estimate(write_binary_stl(tmp_path / "mm.stl", box.triangles))
    assert rules(est) == ["mesh-units-suspect"]
    assert not est.trusted
    assert 'scale="0.001 0.001 0.001"' in est.findings[0].message
    fixed = estimate(tmp_path / "mm.stl", (0.001, 0.001, 0.001))
    assert fixed.trusted and not fixed.findings


def test_metre_mesh_scaled_as_millimetres_is_suspect(tmp_path: Path) -> None:
    box = trimesh.creation.box((0.4, 0.3, 0.2))
    est = estimate(write_binary_stl(tmp_path / "m.stl", box.triangles), (0.001, 0.001, 0.001))
    assert rules(est) == ["mesh-units-suspect"] and not est.trusted
    assert 'scale="1 1 1"' in est.findings[0].message


def test_suggest_scale_from_density() -> None:
    # a 1 kg part whose mesh was read in mm as metres: volume 1e9 too large
    assert suggest_scale(volume=0.5e-3 * 1e9, mass=1.0) == pytest.approx(1e-3)
    assert suggest_scale(volume=0.5e-3, mass=1.0) is None  # 2000 kg/m³ is plausible
    assert suggest_scale(volume=0.5e-12, mass=1.0) == pytest.approx(1e3)


@pytest.mark.parametrize(
    "content, reason",
    [
        (b"\0" * 80 + b"\0\0\0\0", "no triangles"),
        (b"\0" * 80 + np.uint32(10).tobytes() + b"\0" * 100, "truncated"),
        (b"garbage", "not an STL"),
        (b"solid x\nfacet normal 0 0 1\nouter loop\nvertex 0 0 zero\nvertex 1 0 0\nvertex 0 1 0\nendloop\nendfacet\nendsolid\n", "not a number"),
    ],
)
def test_broken_stl_is_unavailable(tmp_path: Path, content: bytes, reason: str) -> None:
    path = tmp_path / "bad.stl"
    path.write_bytes(content)
    est = estimate(path)
    assert est.solid is None and not est.trusted
    assert rules(est) == ["mesh-unavailable"]
    assert reason in est.findings[0].message and est.findings[0].severity == "error"


def test_flat_mesh_is_unavailable(tmp_path: Path) -> None:
    tris = np.array([[[0, 0, 0], [1, 0, 0], [0, 1, 0]], [[1, 0, 0], [1, 1, 0], [0, 1, 0]]], dtype=float)
    est = estimate(write_binary_stl(tmp_path / "flat.stl", tris))
    assert rules(est) == ["mesh-unavailable"] and "flat" in est.findings[0].message


def test_nan_vertices_are_unavailable(tmp_path: Path) -> None:
    tris = trimesh.creation.box((1, 1, 1)).triangles.copy()
    tris[3, 1, 2] = np.nan
    est = estimate(write_binary_stl(tmp_path / "nan.stl", tris))
    assert rules(est) == ["mesh-unavailable"] and "non-finite" in est.findings[0].message


@pytest.mark.parametrize("name", ["bad.glb", "bad.obj", "bad.dae", "bad.ply"])
def test_corrupt_files_of_other_formats_are_unavailable(tmp_path: Path, name: str) -> None:
    path = tmp_path / name
    path.write_bytes(b"\x00\x01 this is not a mesh \xff" * 3)
    est = estimate(path)
    assert est.solid is None and rules(est) == ["mesh-unavailable"]


def test_unsupported_extension_and_missing_file(tmp_path: Path) -> None:
    (tmp_path / "a.3ds").write_bytes(b"x")
    assert "unsupported mesh format" in estimate(tmp_path / "a.3ds").findings[0].message
    missing = mesh_estimate("meshes/none.stl", tmp_path, (1, 1, 1), NO_ENV, None)
    assert rules(missing) == ["mesh-unavailable"] and "none.stl" in missing.findings[0].message


def test_zero_scale_is_unavailable(tmp_path: Path) -> None:
    path = write_binary_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)).triangles)
    assert rules(estimate(path, (1.0, 0.0, 1.0))) == ["mesh-unavailable"]


def test_folder_name_note_becomes_an_info_finding(tmp_path: Path) -> None:
    pkg = tmp_path / "repo" / "my_robot"
    (tmp_path / "repo" / ".git").mkdir(parents=True)
    (pkg / "meshes").mkdir(parents=True)
    (pkg / "package.xml").write_text("<package><name>my_robot_description</name></package>")
    write_binary_stl(pkg / "meshes" / "b.stl", trimesh.creation.box((0.1, 0.1, 0.1)).triangles)
    est = mesh_estimate("package://my_robot/meshes/b.stl", pkg / "urdf", (1, 1, 1), NO_ENV, None)
    assert est.trusted and [(f.rule, f.severity) for f in est.findings] == [("geometry-note", "info")]


def test_binary_stl_path_imports_neither_trimesh_nor_scipy(tmp_path: Path) -> None:
    path = write_binary_stl(tmp_path / "b.stl", trimesh.creation.icosphere(subdivisions=2).triangles)
    code = textwrap.dedent(f"""
        import sys
        from linkcheck.geometry.mesh import mesh_estimate
        from linkcheck.geometry.cache import MeshCache
        est = mesh_estimate({str(path.name)!r}, {str(path.parent)!r}, (1, 1, 1), None, MeshCache({str(tmp_path / 'c')!r}))
        assert est.trusted, est
        bad = [m for m in ("trimesh", "scipy") if m in sys.modules]
        print(",".join(bad))
        """)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_hollow_body_keeps_its_cavity(tmp_path: Path) -> None:
    outer = trimesh.creation.icosphere(subdivisions=3, radius=1.0)
    inner = trimesh.creation.icosphere(subdivisions=3, radius=0.5)
    inner.invert()  # a cavity: its surface faces inward, into the hole
    shell = trimesh.util.concatenate([outer, inner])
    est = estimate(write_binary_stl(tmp_path / "shell.stl", shell.triangles))
    assert est.trusted and not est.findings
    assert_matches_trimesh(est, f32_mesh(shell))  # trimesh: volume = outer - inner


def test_two_bodies_with_flipped_faces_in_one_are_reoriented_per_body(tmp_path: Path) -> None:
    a = trimesh.creation.icosphere(subdivisions=2, radius=0.3)
    b = trimesh.creation.icosphere(subdivisions=2, radius=0.2).apply_translation((1.0, 0, 0))
    b_tris = b.triangles.copy()
    b_tris[:-5] = b_tris[:-5][:, [0, 2, 1]]  # most of b inverted, five faces right
    tris = np.concatenate([a.triangles, b_tris])
    est = estimate(write_binary_stl(tmp_path / "two.stl", tris))
    assert rules(est) == ["mesh-inside-out"]
    assert_matches_trimesh(est, f32_mesh(trimesh.util.concatenate([a, b])))


def cubes(*placed: tuple[float, float, bool]) -> tuple[np.ndarray, trimesh.Trimesh]:
    """Separate cubes (edge, x of centre, wound inside-out?) as one soup, and the same cubes all wound outward."""
    right, stored = [], []
    for edge, x, inverted in placed:
        cube = trimesh.creation.box((edge, edge, edge))
        cube.apply_translation((x, 0.0, 0.0))
        right.append(cube.copy())
        if inverted:
            cube.invert()
        stored.append(cube)
    return trimesh.util.concatenate(stored).triangles, trimesh.util.concatenate(right)


def handbook_cubes(placed: list[tuple[float, float]]) -> tuple[float, float, np.ndarray]:
    """Volume, x of the COM and central inertia of solid cubes centred on the x axis: handbook cube
    I = m a²/6 about its centre, moved to the common COM by the parallel axis theorem."""
    masses = np.array([a**3 for a, _ in placed])
    xs = np.array([x for _, x in placed])
    com = float(masses @ xs / masses.sum())
    own = float(sum(m * a * a / 6 for m, (a, _) in zip(masses, placed)))
    steiner = float(masses @ (xs - com) ** 2)
    return float(masses.sum()), com, np.diag([own, own + steiner, own + steiner])


@pytest.mark.parametrize(
    "placed",
    [
        [(0.125, 0.0, False), (0.125, 1.0, True)],  # equal cubes: the signed volume cancels to ~0
        [(0.125, 0.0, False), (0.0625, 0.5, True)],  # the smaller one inverted: negative moments
        [(0.125, 0.0, True), (0.0625, 0.5, False), (0.25, -1.0, False)],
    ],
)
def test_separate_inverted_body_among_right_ones_is_flipped(tmp_path: Path, placed) -> None:
    tris, right = cubes(*placed)
    est = estimate(write_binary_stl(tmp_path / "bodies.stl", tris))
    assert rules(est) == ["mesh-inside-out"] and est.trusted
    assert f"1 of {len(placed)} bodies was wound inside-out" in est.findings[0].message
    # trimesh's mass_properties of the same cubes all wound outward (edges and offsets exact in float32)
    assert_matches_trimesh(est, right, rtol=1e-9)
    volume, com_x, inertia = handbook_cubes([(a, x) for a, x, _ in placed])
    assert est.solid.volume == pytest.approx(volume, rel=1e-9)
    assert np.allclose(est.solid.props.com, (com_x, 0, 0), rtol=0, atol=1e-9)
    assert np.allclose(est.solid.props.inertia, inertia, rtol=0, atol=1e-9 * inertia.max())


def test_inverted_body_beside_a_hollow_one_is_flipped_and_the_cavity_kept(tmp_path: Path) -> None:
    outer = trimesh.creation.box((1.0, 1.0, 1.0))
    cavity = trimesh.creation.box((0.5, 0.5, 0.5))
    cavity.invert()  # faces into the hole: stays a hole
    apart = trimesh.creation.box((0.75, 0.75, 0.75))
    apart.apply_translation((3.0, 0.0, 0.0))
    right = trimesh.util.concatenate([outer, cavity, apart.copy()])
    apart.invert()
    est = estimate(write_binary_stl(tmp_path / "hollow_and_inv.stl", trimesh.util.concatenate([outer, cavity, apart]).triangles))
    assert rules(est) == ["mesh-inside-out"] and "1 of 3 bodies was" in est.findings[0].message
    assert_matches_trimesh(est, right, rtol=1e-9)  # trimesh: volume = outer - cavity + apart
    assert est.solid.volume == pytest.approx(1.0 - 0.125 + 0.75**3, rel=1e-12)  # handbook cube volumes


def test_hollow_body_never_pays_for_the_topology_pass(tmp_path: Path, monkeypatch) -> None:
    import linkcheck.geometry.mesh_repair as repair_module

    def forbidden(*_):
        raise AssertionError("topology pass run on a mesh whose cheap integral is a possible solid")

    monkeypatch.setattr(repair_module, "topology", forbidden)
    outer = trimesh.creation.box((1.0, 0.5, 0.25))
    cavity = trimesh.creation.icosphere(subdivisions=2, radius=0.1)
    cavity.apply_translation((0.3, 0.1, 0.0))  # off-centre: COM and products of inertia move
    cavity.invert()
    shell = trimesh.util.concatenate([outer, cavity])
    est = estimate(write_binary_stl(tmp_path / "hollow.stl", shell.triangles))
    assert est.trusted and not est.findings
    assert_matches_trimesh(est, f32_mesh(shell))  # trimesh on the hollow mesh: cavity subtracted


@pytest.mark.parametrize("hollow", [False, True])
def test_all_bodies_inverted_are_flipped_as_a_whole(tmp_path: Path, hollow: bool) -> None:
    if hollow:  # everything inside-out, the cavity too: flipping the whole keeps it a cavity
        cavity = trimesh.creation.icosphere(subdivisions=2, radius=0.2)
        cavity.invert()
        right = trimesh.util.concatenate([trimesh.creation.box((1, 1, 1)), cavity])
    else:
        _, right = cubes((0.125, 0.0, False), (0.25, 1.0, False))
    tris = right.triangles[:, [0, 2, 1]]
    est = estimate(write_binary_stl(tmp_path / "all.stl", tris))
    assert rules(est) == ["mesh-inside-out"] and "the surface is wound inward" in est.findings[0].message
    assert_matches_trimesh(est, f32_mesh(right), rtol=1e-9)  # trimesh on the outward-wound mesh


def ring_and_box_in_its_hole() -> tuple[np.ndarray, trimesh.Trimesh]:
    """A ring with an inward box in its hole (inside the ring's bounding box, but not inside the
    ring), and the same two wound outward."""
    ring = trimesh.creation.annulus(r_min=0.3, r_max=0.35, height=0.1, sections=64)
    inner = trimesh.creation.box((0.4, 0.4, 0.1))
    right = trimesh.util.concatenate([ring, inner.copy()])
    inner.invert()
    return trimesh.util.concatenate([ring, inner]).triangles, right


def test_body_in_a_rings_hole_is_no_cavity(tmp_path: Path) -> None:
    tris, right = ring_and_box_in_its_hole()
    est = estimate(write_binary_stl(tmp_path / "ring.stl", tris))
    assert rules(est) == ["mesh-inside-out"] and "1 of 2 bodies was" in est.findings[0].message
    assert_matches_trimesh(est, f32_mesh(right))  # trimesh: ring + box, both outward


def test_undecidable_bodies_give_no_estimate(tmp_path: Path, monkeypatch) -> None:
    import linkcheck.geometry.mesh_repair as repair_module

    # no budget for the exact test: the boxes decide, the box in the hole counts as a cavity, and
    # box minus ring has a negative moment of inertia, so there is no estimate rather than a wrong one
    monkeypatch.setattr(repair_module, "NESTING_BUDGET", 0)
    tris, _ = ring_and_box_in_its_hole()
    est = estimate(write_binary_stl(tmp_path / "ring.stl", tris))
    assert est.solid is None and not est.trusted
    assert rules(est) == ["mesh-unavailable"] and "cannot be decided" in est.findings[0].message
    assert "solid angles" in est.findings[0].message  # says why the boxes decided


@pytest.mark.parametrize(
    "placed",
    [
        [(0.25, 0.0, False), (0.0625, 0.5, True)],  # a small one inverted: the integral is still a possible solid
        [(0.25, 0.0, False), (0.03125, 1.0, True)],  # a small one far away
        [(0.125, -0.5, False), (0.125, 0.0, True), (0.125, 0.5, False)],  # the middle of a row
        [(0.25, 0.0, True), (0.0625, 0.5, False)],  # mostly inverted: flipping the whole would invert the small one
    ],
)
def test_inverted_body_the_integral_does_not_betray_is_flipped(tmp_path: Path, placed) -> None:
    tris, right = cubes(*placed)
    est = estimate(write_binary_stl(tmp_path / "bodies.stl", tris))
    assert rules(est) == ["mesh-inside-out"] and est.trusted
    assert f"1 of {len(placed)} bodies was wound inside-out" in est.findings[0].message
    assert_matches_trimesh(est, right, rtol=1e-9)  # trimesh on the same cubes all wound outward
    volume, com_x, inertia = handbook_cubes([(a, x) for a, x, _ in placed])  # handbook cube + parallel axes
    assert est.solid.volume == pytest.approx(volume, rel=1e-9)
    assert np.allclose(est.solid.props.com, (com_x, 0, 0), rtol=0, atol=1e-9)
    assert np.allclose(est.solid.props.inertia, inertia, rtol=0, atol=1e-9 * inertia.max())


def test_inverted_body_off_the_centre_line_is_seen_at_the_extremes(tmp_path: Path) -> None:
    # diagonal from the big cube: the line through the centroid misses it; its vertices are the
    # mesh's largest x and y, and the triangles around them face inward
    big = trimesh.creation.box((0.25, 0.25, 0.25))
    small = trimesh.creation.box((0.0625, 0.0625, 0.0625)).apply_translation((0.375, 0.375, 0.0))
    right = trimesh.util.concatenate([big, small.copy()])
    est = estimate(write_binary_stl(tmp_path / "diag.stl", trimesh.util.concatenate([big, small.invert()]).triangles))
    assert rules(est) == ["mesh-inside-out"] and "1 of 2 bodies was" in est.findings[0].message
    assert_matches_trimesh(est, right, rtol=1e-9)  # trimesh on both cubes wound outward


def nested_boxes(*inverted: str, far: bool = False) -> tuple[np.ndarray, trimesh.Trimesh]:
    """A box with a cavity holding a smaller box (an island), as stored with the named shells
    wound the wrong way (``far``: plus a separate inverted cube), and as wound right."""
    shells = {"outer": trimesh.creation.box((1.0, 0.5, 0.25)), "cavity": trimesh.creation.box((0.5, 0.25, 0.125)),
              "core": trimesh.creation.box((0.25, 0.125, 0.0625))}
    shells["core"].apply_translation((0.0625, 0.0, 0.0))  # off-centre: the COM moves
    shells["cavity"].invert()  # a cavity faces into its hole
    if far:
        shells["far"] = trimesh.creation.box((0.125, 0.125, 0.125)).apply_translation((2.0, 0.0, 0.0))
    right = trimesh.util.concatenate([m.copy() for m in shells.values()])
    for name in (*inverted, *(["far"] if far else [])):
        shells[name].invert()
    return trimesh.util.concatenate(list(shells.values())).triangles, right


@pytest.mark.parametrize("inverted, far", [(("outer",), False), (("core",), False), (("cavity",), True)])
def test_nested_shells_are_oriented_by_depth(tmp_path: Path, inverted, far: bool) -> None:
    # outer (depth 0) faces out, the cavity (inside one surface) in, the core (inside two) out;
    # a cavity wound outward is seen once something routes the mesh to the topology pass
    tris, right = nested_boxes(*inverted, far=far)
    est = estimate(write_binary_stl(tmp_path / "nested.stl", tris))
    bodies = 4 if far else 3
    assert rules(est) == ["mesh-inside-out"]
    assert f"{len(inverted) + far} of {bodies} bodies" in est.findings[0].message
    assert_matches_trimesh(est, right, rtol=1e-9)  # trimesh: outer - cavity + core (+ far)
    volume = 0.125 - 0.015625 + 0.001953125 + (0.125**3 if far else 0.0)  # handbook box volumes
    assert est.solid.volume == pytest.approx(volume, rel=1e-12)


def test_hollow_body_with_its_outside_inverted(tmp_path: Path) -> None:
    # outside wound inward, cavity right: the total is negative, but flipping it all would make
    # the cavity solid (volume outer + cavity instead of outer - cavity)
    outer = trimesh.creation.icosphere(subdivisions=3, radius=1.0)
    cavity = trimesh.creation.icosphere(subdivisions=3, radius=0.5)
    cavity.invert()
    right = trimesh.util.concatenate([outer, cavity])
    est = estimate(write_binary_stl(tmp_path / "shell.stl", trimesh.util.concatenate([outer.copy().invert(), cavity]).triangles))
    assert rules(est) == ["mesh-inside-out"] and "1 of 2 bodies was" in est.findings[0].message
    assert_matches_trimesh(est, f32_mesh(right))  # trimesh: outer - cavity


def test_disc_in_a_torus_hole_is_a_body(tmp_path: Path) -> None:
    torus = trimesh.creation.torus(major_radius=0.2, minor_radius=0.04, major_sections=64, minor_sections=32)
    disc = trimesh.creation.cylinder(radius=0.1, height=0.06, sections=48)  # clear of the torus (inner radius 0.16)
    right = trimesh.util.concatenate([torus, disc.copy()])
    disc.invert()
    est = estimate(write_binary_stl(tmp_path / "torus.stl", trimesh.util.concatenate([torus, disc]).triangles))
    assert rules(est) == ["mesh-inside-out"] and "1 of 2 bodies was" in est.findings[0].message
    assert_matches_trimesh(est, f32_mesh(right))  # trimesh: torus + disc, not torus - disc


def test_nesting_falls_back_to_boxes_beyond_the_budget(tmp_path: Path, monkeypatch) -> None:
    import linkcheck.geometry.mesh_repair as repair_module

    monkeypatch.setattr(repair_module, "NESTING_BUDGET", 0)
    tris, right = nested_boxes("outer")  # nested boxes: here the bounding boxes tell the truth
    est = estimate(write_binary_stl(tmp_path / "nested.stl", tris))
    assert rules(est) == ["mesh-inside-out"] and "judged by bounding boxes" in est.findings[0].message
    assert est.findings[0].data["nesting"] == "bounding boxes"
    assert_matches_trimesh(est, right, rtol=1e-9)


@pytest.mark.parametrize("name", ["row", "cylinder", "torus_and_disc", "nested"])
def test_right_meshes_never_pay_for_the_topology_pass(tmp_path: Path, monkeypatch, name: str) -> None:
    import linkcheck.geometry.mesh_repair as repair_module

    def forbidden(*_):
        raise AssertionError("topology pass run on a mesh wound right")

    monkeypatch.setattr(repair_module, "topology", forbidden)
    if name == "row":  # equal cubes: every extreme plane holds several bodies' faces
        mesh = cubes((0.125, -0.5, False), (0.125, 0.0, False), (0.125, 0.5, False))[1]
    elif name == "cylinder":  # a fan of cap triangles in each end plane
        mesh = trimesh.creation.cylinder(radius=0.1, height=0.3, sections=200)
    elif name == "torus_and_disc":
        mesh = trimesh.util.concatenate([trimesh.creation.torus(0.2, 0.04, major_sections=64, minor_sections=32),
                                         trimesh.creation.cylinder(radius=0.1, height=0.06, sections=48)])
    else:
        mesh = nested_boxes()[1]
    est = estimate(write_binary_stl(tmp_path / f"{name}.stl", mesh.triangles))
    assert est.trusted and not est.findings
    assert_matches_trimesh(est, f32_mesh(mesh))


def test_winding_number_of_a_cube() -> None:
    from linkcheck.geometry.polyhedron import winding_numbers

    cube = trimesh.creation.box((1.0, 1.0, 1.0))
    points = np.array([[0.0, 0.0, 0.0], [0.2, -0.3, 0.1], [2.0, 0.0, 0.0], [0.5, 0.0, 0.0]])
    # solid angle of a closed surface: 4π from inside, 0 from outside (Gauss), 2π from a face's middle
    assert np.allclose(winding_numbers(cube.triangles, points), [1.0, 1.0, 0.0, 0.5], atol=1e-12)
    assert np.allclose(winding_numbers(cube.triangles[:, [0, 2, 1]], points), [-1.0, -1.0, 0.0, -0.5], atol=1e-12)
    assert np.allclose(winding_numbers(cube.triangles, points, chunk=5), [1.0, 1.0, 0.0, 0.5], atol=1e-12)  # chunked


def test_open_box_with_two_opposite_faces_missing(tmp_path: Path) -> None:
    # the area vectors of the two holes cancel; the weighted edge sums do not
    cube = trimesh.creation.box((1, 1, 1))
    keep = np.abs(cube.face_normals[:, 2]) < 0.5
    est = estimate(write_binary_stl(tmp_path / "tube.stl", cube.triangles[keep]))
    assert rules(est) == ["mesh-not-watertight"] and "8 open edges" in est.findings[0].message
    assert est.solid.volume == pytest.approx(1.0)  # hull of a box's sides is the box


def test_gltf_with_external_buffer(tmp_path: Path) -> None:
    box = trimesh.creation.box((0.5, 1.0, 2.0))
    files = trimesh.Scene(box).export(file_type="gltf")  # {"model.gltf": ..., "gltf_buffer_*.bin": ...}
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    gltf = next(tmp_path / n for n in files if n.endswith(".gltf"))
    est = estimate(gltf)
    assert est.solid.volume == pytest.approx(1.0, rel=1e-6)
    assert np.allclose(est.solid.props.inertia, box.moment_inertia, rtol=1e-6)


FIXTURES = Path(__file__).resolve().parent.parent / "fixtures" / "meshes"


@pytest.mark.parametrize(
    "name, scale, expected_rules",
    [
        ("bracket.stl", 1.0, []),
        ("bracket_ascii.stl", 1.0, []),
        ("bracket.obj", 1.0, []),
        ("bracket_mm.dae", 1.0, []),
        ("bracket_mm.STL", 0.001, []),
        ("bracket_inverted.stl", 1.0, ["mesh-inside-out"]),
    ],
)
def test_fixture_bracket_volume(name: str, scale: float, expected_rules: list[str]) -> None:
    est = mesh_estimate(name, FIXTURES, (scale,) * 3, NO_ENV, None)
    assert rules(est) == expected_rules
    # the L profile is two rectangles, 0.08 x 0.01 and 0.01 x 0.03 m, extruded 0.05 m
    assert est.solid.volume == pytest.approx((0.08 * 0.01 + 0.01 * 0.03) * 0.05, rel=1e-6)
    ref = trimesh.load_mesh(FIXTURES / "bracket.obj", process=False)
    assert np.allclose(est.solid.props.inertia, ref.moment_inertia, rtol=1e-5, atol=1e-12)


def test_fixture_glb_pair_and_open_bracket() -> None:
    pair = mesh_estimate("pair.glb", FIXTURES, (1, 1, 1), NO_ENV, None)
    assert pair.solid.volume == pytest.approx(2 * 5.5e-5, rel=1e-6) and not pair.findings
    ref = trimesh.load_scene(FIXTURES / "pair.glb").to_mesh()  # trimesh bakes the node transforms too
    assert np.allclose(pair.solid.props.com, ref.center_mass, atol=1e-7)
    open_ = mesh_estimate("bracket_open.stl", FIXTURES, (1, 1, 1), NO_ENV, None)
    assert rules(open_) == ["mesh-not-watertight"] and open_.upper_bound
    assert open_.solid.volume > 5.5e-5  # the hull of an L is larger than the L


def test_mesh_vertices_hold_the_whole_hull(tmp_path: Path) -> None:
    from linkcheck.geometry.mesh_io import mesh_vertices

    sphere = trimesh.creation.icosphere(subdivisions=3, radius=0.4)
    path = write_binary_stl(tmp_path / "s.stl", sphere.triangles)
    verts = mesh_vertices(path, (1.0, 2.0, 1.0))
    # trimesh's (qhull) hull of the scaled mesh: every one of its vertices is among ours
    ref = f32_mesh(sphere).apply_transform(np.diag([1.0, 2.0, 1.0, 1.0])).convex_hull
    ours = {tuple(np.round(p, 6)) for p in verts}
    assert all(tuple(np.round(p, 6)) in ours for p in ref.vertices)
    cheap = estimate(path, (1.0, 2.0, 1.0)).solid.points
    assert all(tuple(np.round(p, 6)) in ours for p in cheap)


def test_dae_reports_its_up_axis(tmp_path: Path) -> None:
    pytest.importorskip("collada")
    from linkcheck.geometry.mesh_io import up_axis_rotation

    est = estimate(box_dae(tmp_path / "y.dae", (1, 2, 3), 1.0, "Y_UP"))
    assert est.up_axis == "Y_UP"
    rot = up_axis_rotation(est.up_axis)
    assert np.allclose(rot @ (0, 1, 0), (0, 0, 1)) and np.isclose(np.linalg.det(rot), 1.0)  # proper rotation, y -> z
    assert estimate(write_binary_stl(tmp_path / "b.stl", trimesh.creation.box((1, 1, 1)).triangles)).up_axis is None


def test_submesh_selects_one_part_and_centers_it(tmp_path: Path) -> None:
    scene = trimesh.Scene()
    scene.add_geometry(trimesh.creation.box((1, 1, 1)), geom_name="small", node_name="small",
                       transform=trimesh.transformations.translation_matrix((5.0, 0, 0)))
    scene.add_geometry(trimesh.creation.box((2, 2, 2)), geom_name="big", node_name="big")
    path = tmp_path / "parts.glb"
    path.write_bytes(scene.export(file_type="glb"))
    whole = estimate(path)
    assert whole.solid.volume == pytest.approx(9.0, rel=1e-6)
    small = mesh_estimate(path.name, tmp_path, (1, 1, 1), NO_ENV, None, submesh="small")
    assert small.solid.volume == pytest.approx(1.0, rel=1e-6)
    assert np.allclose(small.solid.props.com, (5.0, 0, 0), atol=1e-6)
    # SDFormat <submesh><center>true</center>: Gazebo moves the part's box centre to the origin
    centred = mesh_estimate(path.name, tmp_path, (1, 1, 1), NO_ENV, None, submesh="small", center=True)
    assert np.allclose(centred.solid.props.com, 0, atol=1e-6)
    missing = mesh_estimate(path.name, tmp_path, (1, 1, 1), NO_ENV, None, submesh="nope")
    assert rules(missing) == ["mesh-unavailable"] and "big" in missing.findings[0].message


def test_coordinates_too_small_for_float64_products_are_refused_in_words(tmp_path: Path) -> None:
    # a 1e-160 m cube: its area (1e-320) and volume (1e-480) are below float64's range (IEEE 754, ~2.2e-308)
    box = trimesh.creation.box((1e-160, 1e-160, 1e-160))
    (tmp_path / "speck.obj").write_text(trimesh.exchange.obj.export_obj(box, digits=200))
    est = mesh_estimate("speck.obj", tmp_path)
    assert est.solid is None
    (finding,) = [f for f in est.findings if f.rule == "mesh-unavailable"]
    assert "Error" not in finding.message  # a reason in words, not an exception's name
