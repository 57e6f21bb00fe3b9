"""Closed-form primitives against handbook tables, trimesh meshes and convex geometry.

Handbook = the table "Properties of homogeneous solids" inside the cover of a
university engineering-dynamics textbook (Meriam & Kraige, Dynamics, Table D/4),
recalled from memory; each entry is written out below in the form the table
gives it, not copied from the code under test.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import trimesh
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull

from linkcheck.geometry.primitives import boundary_points, mass_properties

pi = math.pi


def moments(kind: str, size: tuple[float, ...]) -> np.ndarray:
    return np.diag(mass_properties(kind, size).inertia)


# --- handbook table ----------------------------------------------------------


def test_box_matches_handbook_parallelepiped() -> None:
    a, b, c = 0.2, 0.5, 1.3
    m = a * b * c  # handbook: rectangular parallelepiped, m = rho abc
    cf = mass_properties("box", (a, b, c))
    assert cf.volume == pytest.approx(m, rel=1e-14)
    # handbook: Ixx = m(b^2 + c^2)/12 etc.
    np.testing.assert_allclose(moments("box", (a, b, c)), [m * (b * b + c * c) / 12, m * (a * a + c * c) / 12, m * (a * a + b * b) / 12], rtol=1e-13)
    np.testing.assert_array_equal(cf.centroid, np.zeros(3))
    np.testing.assert_array_equal(cf.inertia, np.diag(np.diag(cf.inertia)))


def test_sphere_matches_handbook() -> None:
    r = 0.37
    m = 4 / 3 * pi * r**3  # handbook: sphere
    assert mass_properties("sphere", (r,)).volume == pytest.approx(m, rel=1e-14)
    np.testing.assert_allclose(moments("sphere", (r,)), [2 / 5 * m * r * r] * 3, rtol=1e-13)


def test_cylinder_matches_handbook() -> None:
    r, h = 0.12, 0.9
    m = pi * r * r * h  # handbook: circular cylinder
    assert mass_properties("cylinder", (r, h)).volume == pytest.approx(m, rel=1e-14)
    # handbook: Ixx = Iyy = m r^2/4 + m l^2/12, Izz = m r^2/2
    side = m * r * r / 4 + m * h * h / 12
    np.testing.assert_allclose(moments("cylinder", (r, h)), [side, side, m * r * r / 2], rtol=1e-13)


def test_ellipsoid_matches_handbook() -> None:
    a, b, c = 0.3, 0.2, 0.1
    m = 4 / 3 * pi * a * b * c  # handbook: ellipsoid
    assert mass_properties("ellipsoid", (a, b, c)).volume == pytest.approx(m, rel=1e-14)
    # handbook: Ixx = m(b^2 + c^2)/5 etc.
    np.testing.assert_allclose(moments("ellipsoid", (a, b, c)), [m * (b * b + c * c) / 5, m * (a * a + c * c) / 5, m * (a * a + b * b) / 5], rtol=1e-13)


def test_cone_matches_handbook_about_apex() -> None:
    r, h = 0.25, 0.7
    m = pi * r * r * h / 3  # handbook: right-circular cone
    cf = mass_properties("cone", (r, h))
    assert cf.volume == pytest.approx(m, rel=1e-14)
    # handbook: centroid 3h/4 from the apex; the SDFormat frame is at mid-height with the
    # apex at +h/2 (FORMATS.md 2.7), so the centroid is at z = h/2 - 3h/4 = -h/4.
    np.testing.assert_allclose(cf.centroid, [0.0, 0.0, h / 2 - 3 * h / 4], atol=1e-15)
    # handbook: about the apex, transverse 3/5 m (r^2/4 + h^2); shift to the centroid by 3h/4.
    transverse = 3 / 5 * m * (r * r / 4 + h * h) - m * (3 * h / 4) ** 2
    np.testing.assert_allclose(moments("cone", (r, h)), [transverse, transverse, 3 / 10 * m * r * r], rtol=1e-12)


def test_capsule_is_cylinder_plus_two_handbook_hemispheres() -> None:
    # FORMATS.md 2.7 (SDFormat capsule_shape.sdf): length = cylindrical part, caps add r each end.
    r, length = 0.1, 0.4
    m_c = pi * r * r * length
    m_h = 2 / 3 * pi * r**3  # handbook: hemisphere
    cf = mass_properties("capsule", (r, length))
    assert cf.volume == pytest.approx(m_c + 2 * m_h, rel=1e-14)
    # handbook hemisphere: 2/5 m r^2 about any diameter of the flat face, centroid 3r/8 from it.
    # Move the flat-face value to the centroid, then to the capsule centre (L/2 + 3r/8 away).
    cap_centroid = 2 / 5 * m_h * r * r - m_h * (3 * r / 8) ** 2
    cap = cap_centroid + m_h * (length / 2 + 3 * r / 8) ** 2
    side = m_c * r * r / 4 + m_c * length**2 / 12 + 2 * cap
    axial = m_c * r * r / 2 + 2 * (2 / 5 * m_h * r * r)
    np.testing.assert_allclose(moments("capsule", (r, length)), [side, side, axial], rtol=1e-12)


def test_ellipsoid_with_equal_axes_is_the_sphere() -> None:
    # Definition: an ellipsoid with a = b = c = r is the sphere of radius r.
    e = mass_properties("ellipsoid", (0.4, 0.4, 0.4))
    s = mass_properties("sphere", (0.4,))
    assert e.volume == pytest.approx(s.volume, rel=1e-14)
    np.testing.assert_allclose(e.inertia, s.inertia, rtol=1e-13)


def test_capsule_tends_to_sphere_and_cylinder() -> None:
    # Limits of the definition: no cylindrical part -> sphere; tiny radius -> slender rod m L^2/12.
    sphere = mass_properties("sphere", (0.3,))
    stub = mass_properties("capsule", (0.3, 1e-12))
    np.testing.assert_allclose(stub.inertia, sphere.inertia, rtol=1e-9)
    rod = mass_properties("capsule", (1e-5, 2.0))
    assert rod.inertia[0, 0] == pytest.approx(rod.volume * 2.0**2 / 12, rel=1e-4)


# --- trimesh meshes -----------------------------------------------------------


def test_box_against_trimesh() -> None:
    # trimesh integrates the box mesh exactly (divergence theorem), so only rounding is left.
    size = (0.3, 0.05, 0.8)
    mesh = trimesh.creation.box(extents=size)
    cf = mass_properties("box", size)
    assert cf.volume == pytest.approx(mesh.volume, rel=1e-12)
    np.testing.assert_allclose(cf.inertia, mesh.moment_inertia, rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("sections", [16, 64, 256])
def test_cylinder_against_trimesh_prism(sections: int) -> None:
    # A trimesh cylinder is a prism on the inscribed regular n-gon. Its area is a_n = n/(2 pi)
    # sin(2 pi/n) times the circle's; its polar moment per area is R^2 (1 + 2 cos^2(pi/n))/6
    # (regular polygon, standard area-moment tables), against R^2/2 for the disc.
    r, h = 0.2, 0.7
    n = sections
    mesh = trimesh.creation.cylinder(radius=r, height=h, sections=n)
    cf = mass_properties("cylinder", (r, h))
    a_n = n / (2 * pi) * math.sin(2 * pi / n)
    polar = (1 + 2 * math.cos(pi / n) ** 2) / 6 / (1 / 2)
    assert mesh.volume / cf.volume == pytest.approx(a_n, rel=1e-10)
    izz = mesh.moment_inertia[2, 2] / cf.inertia[2, 2]
    assert izz == pytest.approx(a_n * polar, rel=1e-10)
    # Transverse: m (J/(2A) + h^2/12) for the prism against m (r^2/4 + h^2/12).
    prism_side = a_n * (polar * r * r / 4 + h * h / 12)
    assert mesh.moment_inertia[0, 0] / cf.inertia[0, 0] == pytest.approx(prism_side / (r * r / 4 + h * h / 12), rel=1e-10)


def _inscribed_scale(mesh: trimesh.Trimesh, support, origin: np.ndarray) -> float:
    """Largest lambda with (lambda x shape about origin) inside the mesh's convex polytope.

    The mesh's vertices lie on the convex shape, so mesh is inside the shape; the
    polytope {n_i . x <= b_i} holds the scaled shape when lambda h(n_i) <= b_i - n_i . origin.
    """
    normals = mesh.face_normals
    offsets = np.einsum("ij,ij->i", normals, mesh.triangles[:, 0]) - normals @ origin
    return float(np.min(offsets / np.array([support(n) for n in normals])))


def _assert_bracketed(mesh_value: float, closed_value: float, lam: float, power: int) -> None:
    """mesh is inside the shape and holds the lambda-scaled copy: lam^p C <= M <= C."""
    assert mesh_value <= closed_value * (1 + 1e-12)
    assert mesh_value >= lam**power * closed_value * (1 - 1e-12)


def test_sphere_against_trimesh_icosphere() -> None:
    # Support function of a ball: h(n) = r (convex geometry). Volume scales as lambda^3,
    # second moments about the centre as lambda^5, and both grow with the set.
    r = 0.5
    mesh = trimesh.creation.icosphere(subdivisions=4, radius=r)
    lam = _inscribed_scale(mesh, lambda n: r, np.zeros(3))
    assert 0.99 < lam < 1
    cf = mass_properties("sphere", (r,))
    _assert_bracketed(mesh.volume, cf.volume, lam, 3)
    for i in range(3):
        _assert_bracketed(mesh.moment_inertia[i, i], cf.inertia[i, i], lam, 5)


def test_capsule_against_trimesh() -> None:
    # trimesh's capsule height is the distance between the cap centres (its z extent is
    # height + 2r), the same convention as SDFormat's length (FORMATS.md 2.7).
    r, length = 0.15, 0.5
    mesh = trimesh.creation.capsule(height=length, radius=r, count=[48, 48])
    assert mesh.extents[2] == pytest.approx(length + 2 * r, rel=1e-12)
    # Support function of a capsule (segment + ball): h(n) = r + L/2 |n_z|.
    lam = _inscribed_scale(mesh, lambda n: r + length / 2 * abs(n[2]), np.zeros(3))
    assert 0.99 < lam < 1
    cf = mass_properties("capsule", (r, length))
    _assert_bracketed(mesh.volume, cf.volume, lam, 3)
    for i in range(3):
        _assert_bracketed(mesh.moment_inertia[i, i], cf.inertia[i, i], lam, 5)


def test_cone_against_trimesh() -> None:
    # trimesh's cone has its base at z = 0 and apex at z = h. Any pyramid's centroid lies a
    # quarter of the height above the base (handbook), so the tessellation does not move it.
    r, h = 0.3, 0.8
    mesh = trimesh.creation.cone(radius=r, height=h, sections=128)
    cf = mass_properties("cone", (r, h))
    base = np.array([0.0, 0.0, -h / 2])  # FORMATS.md 2.7: base at -L/2 in the SDFormat frame
    assert mesh.center_mass[2] == pytest.approx(cf.centroid[2] - base[2], rel=1e-12)
    assert mesh.center_mass[2] == pytest.approx(h / 4, rel=1e-12)
    # Scale about the centroid (interior, and the mesh's own centroid too): second moments
    # about that fixed point grow with the set and scale as lambda^5.
    def h_cone(n: np.ndarray) -> float:
        return max(n[2] * 3 * h / 4, -n[2] * h / 4 + r * math.hypot(n[0], n[1]))

    lam = _inscribed_scale(mesh, h_cone, np.array([0.0, 0.0, h / 4]))
    assert 0.99 < lam < 1
    _assert_bracketed(mesh.volume, cf.volume, lam, 3)
    for i in range(3):
        _assert_bracketed(mesh.moment_inertia[i, i], cf.inertia[i, i], lam, 5)


# --- boundary points --------------------------------------------------------

SUPPORT = {
    # Support functions h(n) = max over the shape of n . x (convex geometry, definition).
    "box": lambda s, n: float(np.abs(n) @ np.array(s) / 2),
    "sphere": lambda s, n: s[0],
    "ellipsoid": lambda s, n: float(np.linalg.norm(np.array(s) * n)),
    "cylinder": lambda s, n: s[0] * math.hypot(n[0], n[1]) + s[1] / 2 * abs(n[2]),
    "capsule": lambda s, n: s[0] + s[1] / 2 * abs(n[2]),
    "cone": lambda s, n: max(s[1] / 2 * n[2], -s[1] / 2 * n[2] + s[0] * math.hypot(n[0], n[1])),
}

SHAPES = [
    ("box", (0.2, 0.4, 1.0)),
    ("sphere", (0.3,)),
    ("ellipsoid", (0.5, 0.1, 0.2)),
    ("cylinder", (0.05, 0.6)),
    ("capsule", (0.2, 0.3)),
    ("cone", (0.4, 0.2)),
]


@pytest.mark.parametrize(("kind", "size"), SHAPES)
def test_boundary_points_hull_contains_and_hugs_the_shape(kind: str, size: tuple[float, ...]) -> None:
    pts = boundary_points(kind, size)
    assert pts.shape[1] == 3 and len(pts) < 600
    hull = ConvexHull(pts)  # scipy / qhull
    # Contains: every facet's offset is at least the shape's support in that direction.
    for eq in hull.equations:
        n, b = eq[:3], -eq[3]
        assert SUPPORT[kind](size, n) <= b * (1 + 1e-9) + 1e-12
    # Hugs: the hull is at most a few percent larger than the shape.
    assert 1 - 1e-9 <= hull.volume / mass_properties(kind, size).volume < 1.03


def test_box_points_are_the_corners() -> None:
    pts = boundary_points("box", (2.0, 4.0, 6.0))
    corners = {(x, y, z) for x in (-1.0, 1.0) for y in (-2.0, 2.0) for z in (-3.0, 3.0)}
    assert {tuple(p) for p in pts} == corners and len(pts) == 8


def test_cone_points_span_base_to_apex() -> None:
    # FORMATS.md 2.7: base at z = -L/2, apex at z = +L/2.
    pts = boundary_points("cone", (0.1, 0.8))
    assert pts[:, 2].min() == pytest.approx(-0.4) and pts[:, 2].max() == pytest.approx(0.4)
    assert np.sum(np.isclose(pts[:, 2], 0.4)) == 1


@settings(max_examples=40, deadline=None)
@given(
    st.sampled_from([k for k, _ in SHAPES]),
    st.lists(st.floats(0.01, 3.0), min_size=3, max_size=3),
)
def test_random_boundary_points_contain_the_shape(kind: str, raw: list[float]) -> None:
    size = tuple(raw[: len(dict(SHAPES)[kind])])
    hull = ConvexHull(boundary_points(kind, size))
    offsets = -hull.equations[:, 3]
    support = np.array([SUPPORT[kind](size, eq[:3]) for eq in hull.equations])
    assert np.all(support <= offsets * (1 + 1e-9) + 1e-12)


# --- bad sizes ----------------------------------------------------------------


@pytest.mark.parametrize(
    ("kind", "size", "words"),
    [
        ("box", (1.0, 2.0), "3 size values"),
        ("sphere", (0.0,), "radius"),
        ("cylinder", (0.1, -1.0), "length"),
        ("capsule", (float("nan"), 1.0), "radius"),
        ("cone", (1.0,), "2 size values"),
        ("ellipsoid", (1.0, 1.0, float("inf")), "c"),
        ("box", ("a", 1.0, 1.0), "expected a number"),
        ("torus", (1.0, 2.0), "unknown primitive"),
    ],
)
def test_bad_sizes_raise_readable_errors(kind: str, size: tuple, words: str) -> None:
    for fn in (mass_properties, boundary_points):
        with pytest.raises(ValueError) as err:
            fn(kind, size)
        assert words in str(err.value) and kind in str(err.value)
        assert "\n" not in str(err.value)
