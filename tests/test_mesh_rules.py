"""Mesh links get the same rules as primitive ones, with the mesh's exact hull where it matters.

Reference geometry: trimesh.creation.icosphere (a general-purpose library), whose vertices lie
on the sphere of the given radius; volume and inertia from trimesh's own mass_properties.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import trimesh

from linkcheck.formats.urdf import read_urdf
from linkcheck.runner import check_document
from linkcheck.settings import Settings


def rules(tmp_path: Path, com_x: float, tensor: np.ndarray | None = None, mass: float = 4.0) -> set[str]:
    ball = trimesh.creation.icosphere(subdivisions=4, radius=0.1)
    ball.export(tmp_path / "ball.stl")
    inertia = ball.moment_inertia * (mass / ball.volume) if tensor is None else tensor
    urdf = (f'<robot name="r"><link name="ball"><inertial><origin xyz="{com_x} 0 0"/><mass value="{mass}"/>'
            f'<inertia ixx="{inertia[0, 0]}" ixy="{inertia[0, 1]}" ixz="{inertia[0, 2]}" iyy="{inertia[1, 1]}" '
            f'iyz="{inertia[1, 2]}" izz="{inertia[2, 2]}"/></inertial>'
            '<collision><geometry><mesh filename="ball.stl"/></geometry></collision></link></robot>')
    doc = read_urdf(tmp_path / "r.urdf", urdf.encode())
    _, found = check_document(doc, Settings())
    return {f.rule for f in found}


def test_correct_mesh_link_is_clean(tmp_path):
    assert rules(tmp_path, 0.0) == set()


def test_com_near_the_surface_is_inside(tmp_path):
    # 95 mm from the centre of a 100 mm sphere: inside, though outside a coarse subset of its vertices
    found = rules(tmp_path, 0.095)
    assert "com-outside-geometry" not in found and "com-offset" in found


def test_com_beyond_the_surface_is_outside(tmp_path):
    assert "com-outside-geometry" in rules(tmp_path, 0.12)


@pytest.mark.parametrize("factor, expected", [(0.99, False), (1.05, True)])
def test_exceeds_geometry_uses_the_true_radius(tmp_path, factor, expected):
    # trace/2 <= m R^2 for any body inside a sphere of radius R (REFERENCES.md bound)
    m, r = 4.0, 0.1
    moment = factor * 1.01 * m * r * r * 2 / 3
    found = rules(tmp_path, 0.0, np.diag([moment] * 3), m)
    assert ("inertia-exceeds-geometry" in found) is expected


def _dae_box_at_y(tmp_path: Path, up_axis: str) -> Path:
    box = trimesh.creation.box(extents=(0.1, 0.1, 0.1))
    box.apply_translation((0.0, 0.2, 0.0))
    text = trimesh.exchange.dae.export_collada(box).decode()
    assert "<up_axis>" in text
    import re

    (tmp_path / "part.dae").write_text(re.sub(r"<up_axis>.*?</up_axis>", f"<up_axis>{up_axis}</up_axis>", text))
    return tmp_path / "part.dae"


@pytest.mark.parametrize("up_axis, noted", [("Y_UP", True), ("Z_UP", False)])
def test_up_axis_explains_a_com_off_the_mesh(tmp_path, up_axis, noted):
    # COLLADA 1.4 <up_axis> (spec, from memory): Y_UP means +y is up; a loader honouring it turns
    # +y onto +z, so the box centred at y = 0.2 sits at z = 0.2. ROS tools ignore up_axis (FORMATS.md §4).
    _dae_box_at_y(tmp_path, up_axis)
    m = 1.0
    i = m * (0.1**2 + 0.1**2) / 12  # handbook: cube
    urdf = (f'<robot name="r"><link name="part"><inertial><origin xyz="0 0 0.2"/><mass value="{m}"/>'
            f'<inertia ixx="{i}" ixy="0" ixz="0" iyy="{i}" iyz="0" izz="{i}"/></inertial>'
            '<collision><geometry><mesh filename="part.dae"/></geometry></collision></link></robot>')
    _, found = check_document(read_urdf(tmp_path / "r.urdf", urdf.encode()), Settings())
    rules = [f.rule for f in found]
    assert "com-outside-geometry" in rules
    assert ("geometry-note" in rules) is noted


# ---- the reach bound: every vertex is read only when the stated moments fall between the bounds

def _shapes() -> list[trimesh.Trimesh]:
    """General-purpose reference shapes (trimesh.creation), off-centre so the bound is not trivial."""
    shapes = [trimesh.creation.box((0.3, 0.1, 0.2)), trimesh.creation.cylinder(0.05, 0.4, sections=64),
              trimesh.creation.icosphere(subdivisions=3, radius=0.12), trimesh.creation.annulus(0.05, 0.1, 0.05, sections=48)]
    for k, mesh in enumerate(shapes):
        mesh.apply_translation((0.1 * k, -0.05 * k, 0.02))
    return shapes


def test_reach_bounds_every_vertex_from_above(tmp_path):
    from linkcheck.geometry.mesh import mesh_estimate
    from linkcheck.geometry.solid import union
    from linkcheck.model import Pose
    from scipy.spatial.transform import Rotation

    rng = np.random.default_rng(7)
    solids, vertices = [], []
    for k, mesh in enumerate(_shapes()):
        mesh.export(tmp_path / f"s{k}.stl")
        solid = mesh_estimate(f"s{k}.stl", tmp_path).solid
        # a single body about its bounding-box centre: the bound is the exact farthest vertex
        centre = (mesh.vertices.min(axis=0) + mesh.vertices.max(axis=0)) / 2
        exact = np.linalg.norm(mesh.vertices - centre, axis=1).max()  # brute force over trimesh's vertices
        assert solid.reach(centre) == pytest.approx(exact, rel=1e-6)  # STL stores float32
        pose = Pose(Rotation.random(random_state=k).as_matrix(), rng.normal(0, 0.2, 3))
        solids.append(solid.transformed(pose))
        vertices.append(pose.apply(mesh.vertices))
    together, every = union(solids), np.vstack(vertices)
    for c in rng.normal(0, 0.3, (50, 3)):
        assert together.reach(c) >= np.linalg.norm(every - c, axis=1).max() * (1 - 1e-6)


def test_far_beyond_the_bound_is_confirmed_without_reading_vertices(tmp_path, monkeypatch):
    from linkcheck.geometry import mesh_io

    monkeypatch.setattr(mesh_io, "mesh_vertices", lambda *a, **k: pytest.fail("the full vertex set was read"))
    # trace/2 <= m R^2 for any body inside a sphere of radius R (REFERENCES.md bound); 10x beyond it
    m, r = 4.0, 0.1
    ball = trimesh.creation.icosphere(subdivisions=4, radius=r)
    ball.export(tmp_path / "ball.stl")
    moment = 10 * m * r * r * 2 / 3
    urdf = (f'<robot name="r"><link name="ball"><inertial><mass value="{m}"/>'
            f'<inertia ixx="{moment}" ixy="0" ixz="0" iyy="{moment}" iyz="0" izz="{moment}"/></inertial>'
            '<collision><origin rpy="0.3 0.2 0.1" xyz="0.05 0 0"/><geometry><mesh filename="ball.stl"/></geometry></collision>'
            '</link></robot>')
    _, found = check_document(read_urdf(tmp_path / "r.urdf", urdf.encode()), Settings())
    (exceeds,) = [f for f in found if f.rule == "inertia-exceeds-geometry"]
    assert exceeds.severity == "error"
