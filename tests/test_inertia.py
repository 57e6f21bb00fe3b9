"""Rotations, parallel axes, combining and validity tests against scipy, mujoco and textbooks."""

from __future__ import annotations

import math

import mujoco
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from linkcheck.geometry.primitives import mass_properties
from linkcheck.inertia import (
    MassProperties,
    combine,
    is_finite,
    is_positive_definite,
    is_symmetric,
    matrix_to_rpy,
    principal,
    quat_xyzw_to_matrix,
    rotate_tensor,
    rpy_to_matrix,
    satisfies_triangle,
    shift_from_com,
    shift_to_com,
    triangle_deficit,
)

angles = st.floats(-math.pi, math.pi, allow_nan=False)
rpys = st.tuples(angles, angles, angles)
rotations = st.integers(0, 2**32 - 1).map(lambda seed: Rotation.random(random_state=seed).as_matrix())
offsets = st.tuples(*[st.floats(-2.0, 2.0)] * 3).map(np.array)
KINDS = {"box": 3, "sphere": 1, "cylinder": 2, "capsule": 2, "ellipsoid": 3, "cone": 2}


@st.composite
def primitive_bodies(draw: st.DrawFn) -> MassProperties:
    """A real solid: a random primitive with random size, orientation and position."""
    kind = draw(st.sampled_from(sorted(KINDS)))
    size = tuple(draw(st.floats(0.005, 2.0)) for _ in range(KINDS[kind]))
    cf = mass_properties(kind, size)
    body = MassProperties(cf.volume, cf.centroid, cf.inertia)
    return body.transformed(draw(rotations), draw(offsets)).scaled(draw(st.floats(1.0, 20000.0)))


def symmetric_close(a: np.ndarray, b: np.ndarray, rtol: float = 1e-9) -> bool:
    return bool(np.max(np.abs(a - b)) <= rtol * max(1e-300, np.max(np.abs(b))))


# --- rotations ----------------------------------------------------------------


@given(rpys)
def test_rpy_is_scipy_extrinsic_xyz(rpy: tuple[float, float, float]) -> None:
    # FORMATS.md 0: fixed axes X, then Y, then Z; scipy's lower-case "xyz" is extrinsic.
    np.testing.assert_allclose(rpy_to_matrix(rpy), Rotation.from_euler("xyz", rpy).as_matrix(), atol=1e-12)


@given(rpys)
def test_matrix_to_rpy_round_trip(rpy: tuple[float, float, float]) -> None:
    r = Rotation.from_euler("xyz", rpy).as_matrix()  # built by scipy, not by the code under test
    back = matrix_to_rpy(r)
    assert -math.pi / 2 <= back[1] <= math.pi / 2
    np.testing.assert_allclose(Rotation.from_euler("xyz", back).as_matrix(), r, atol=1e-13)


@pytest.mark.parametrize("gap", [0.0, 1e-15, 1e-12, 1e-10, 1e-9, 1e-7, 1e-4])
@pytest.mark.parametrize("side", [1.0, -1.0])
@pytest.mark.parametrize(("roll", "yaw"), [(0.0, 0.0), (0.4, -1.3), (-2.9, 2.2)])
def test_matrix_to_rpy_at_gimbal_lock(gap: float, side: float, roll: float, yaw: float) -> None:
    # At and near pitch = +-90 degrees (FORMATS.md 0: urdfdom switches branch there).
    r = Rotation.from_euler("xyz", (roll, side * (math.pi / 2 - gap), yaw)).as_matrix()
    back = matrix_to_rpy(r)
    assert np.all(np.isfinite(back))
    np.testing.assert_allclose(Rotation.from_euler("xyz", back).as_matrix(), r, atol=1e-13)


@given(st.tuples(*[st.floats(-1, 1)] * 4).filter(lambda q: np.linalg.norm(q) > 1e-3), st.floats(0.1, 10))
def test_quaternion_xyzw_matches_scipy(q: tuple[float, float, float, float], scale: float) -> None:
    # scipy's from_quat takes scalar-last (x, y, z, w), the URDF 1.1 quat_xyzw order.
    unnormalised = np.array(q) * scale
    np.testing.assert_allclose(quat_xyzw_to_matrix(unnormalised), Rotation.from_quat(q).as_matrix(), atol=1e-12)


# --- parallel axis --------------------------------------------------------------


def test_rod_about_its_end() -> None:
    # Textbook: slender rod, m L^2/12 about the centre and m L^2/3 about an end.
    m, length = 2.5, 1.4
    rod = np.diag([0.0, m * length**2 / 12, m * length**2 / 12])
    end = shift_from_com(rod, m, np.array([length / 2, 0.0, 0.0]))
    np.testing.assert_allclose(end, np.diag([0.0, m * length**2 / 3, m * length**2 / 3]), atol=1e-15)
    np.testing.assert_allclose(shift_to_com(end, m, np.array([length / 2, 0.0, 0.0])), rod, atol=1e-15)


def test_cylinder_about_a_diameter_of_its_end_face() -> None:
    # Handbook (Meriam & Kraige Table D/4, from memory): circular cylinder about a diameter of
    # an end face, m r^2/4 + m l^2/3.
    r, h = 0.1, 0.6
    cf = mass_properties("cylinder", (r, h))
    body = MassProperties(cf.volume, cf.centroid, cf.inertia)
    about_end = body.about(np.array([0.0, 0.0, -h / 2]))
    assert about_end[0, 0] == pytest.approx(cf.volume * (r * r / 4 + h * h / 3), rel=1e-12)
    assert about_end[2, 2] == pytest.approx(cf.volume * r * r / 2, rel=1e-12)


def test_products_of_an_offset_point_mass() -> None:
    # Definition of the tensor entries (FORMATS.md 0): ixy = -m x y for a point mass.
    m, d = 3.0, np.array([1.0, 2.0, -0.5])
    i = shift_from_com(np.zeros((3, 3)), m, d)
    assert i[0, 1] == pytest.approx(-m * d[0] * d[1])
    assert i[1, 2] == pytest.approx(-m * d[1] * d[2])
    assert i[0, 0] == pytest.approx(m * (d[1] ** 2 + d[2] ** 2))


# --- against mujoco -----------------------------------------------------------


def _mujoco_body(geoms: str, eulerseq: str = "XYZ") -> tuple[float, np.ndarray, np.ndarray]:
    """Compile one free body; return mass, COM and the full tensor about the COM."""
    xml = f"""<mujoco><compiler angle="radian" eulerseq="{eulerseq}" inertiafromgeom="true"/>
    <worldbody><body name="b"><freejoint/>{geoms}</body></worldbody></mujoco>"""
    model = mujoco.MjModel.from_xml_string(xml)
    w, x, y, z = model.body_iquat[1]  # mujoco quaternions are (w, x, y, z)
    axes = Rotation.from_quat([x, y, z, w]).as_matrix()
    return float(model.body_mass[1]), model.body_ipos[1].copy(), axes @ np.diag(model.body_inertia[1]) @ axes.T


def test_mujoco_euler_convention_for_one_rotated_box() -> None:
    # mujoco's eulerseq: upper-case axes are fixed (extrinsic), lower-case rotate with the frame.
    # The URDF rpy is fixed-axis x-y-z, so "XYZ"; checked here against the analytic R I R^T.
    rpy = (0.3, -0.7, 1.1)
    a, b, c = 0.2, 0.4, 0.6
    v = a * b * c
    handbook = np.diag([v * (b * b + c * c) / 12, v * (a * a + c * c) / 12, v * (a * a + b * b) / 12])
    r = Rotation.from_euler("xyz", rpy).as_matrix()
    geom = f'<geom type="box" size="{a / 2} {b / 2} {c / 2}" euler="{rpy[0]} {rpy[1]} {rpy[2]}" density="1"/>'
    mass, _, tensor = _mujoco_body(geom, "XYZ")
    assert mass == pytest.approx(v, rel=1e-12)
    assert symmetric_close(tensor, r @ handbook @ r.T, 1e-9)
    _, _, intrinsic = _mujoco_body(geom, "xyz")
    assert not symmetric_close(intrinsic, r @ handbook @ r.T, 1e-3)
    # The code under test reproduces the fixed-axis result.
    cf = mass_properties("box", (a, b, c))
    ours = MassProperties(cf.volume, cf.centroid, cf.inertia).transformed(rpy_to_matrix(rpy), np.zeros(3))
    assert symmetric_close(ours.inertia, tensor, 1e-9)


COMPOSITES = [
    [
        ("box", (0.3, 0.1, 0.2), (0.1, -0.2, 0.05), (0.3, 0.2, -0.4)),
        ("cylinder", (0.05, 0.4), (-0.1, 0.1, 0.2), (1.2, -0.3, 0.7)),
        ("sphere", (0.08,), (0.0, 0.3, -0.1), (0.0, 0.0, 0.0)),
    ],
    [
        ("capsule", (0.04, 0.3), (0.2, 0.0, 0.0), (0.0, math.pi / 2, 0.0)),
        ("ellipsoid", (0.1, 0.05, 0.2), (-0.05, 0.02, 0.1), (-0.6, 0.1, 2.0)),
        ("box", (0.02, 0.5, 0.02), (0.0, -0.1, -0.3), (0.0, 0.0, 0.9)),
    ],
]


def _mujoco_geom(kind: str, size: tuple[float, ...], pos: tuple[float, ...], rpy: tuple[float, ...]) -> str:
    # mujoco sizes: box half-sides; cylinder/capsule (radius, half-length); ellipsoid radii.
    if kind == "box":
        half = [s / 2 for s in size]
    elif kind in ("cylinder", "capsule"):
        half = [size[0], size[1] / 2]
    else:
        half = list(size)
    fmt = lambda vals: " ".join(repr(float(x)) for x in vals)  # noqa: E731
    return f'<geom type="{kind}" size="{fmt(half)}" pos="{fmt(pos)}" euler="{fmt(rpy)}" density="1"/>'


@pytest.mark.parametrize("parts", COMPOSITES)
def test_composite_matches_mujoco(parts: list) -> None:
    mass, com, tensor = _mujoco_body("".join(_mujoco_geom(*p) for p in parts))
    bodies = []
    for kind, size, pos, rpy in parts:
        cf = mass_properties(kind, size)
        bodies.append(MassProperties(cf.volume, cf.centroid, cf.inertia).transformed(rpy_to_matrix(rpy), np.array(pos)))
    total = combine(bodies)
    assert total.mass == pytest.approx(mass, rel=1e-10)
    np.testing.assert_allclose(total.com, com, atol=1e-12)
    assert symmetric_close(total.inertia, tensor, 1e-8)
    model = mujoco.MjModel.from_xml_string(
        '<mujoco><compiler angle="radian" eulerseq="XYZ"/><worldbody><body><freejoint/>'
        + "".join(_mujoco_geom(*p) for p in parts)
        + "</body></worldbody></mujoco>"
    )
    np.testing.assert_allclose(principal(total.inertia)[0], np.sort(model.body_inertia[1]), rtol=1e-8)


# --- properties ----------------------------------------------------------------


@given(primitive_bodies(), rotations)
def test_rotation_round_trip_keeps_invariants(body: MassProperties, r: np.ndarray) -> None:
    rotated = rotate_tensor(body.inertia, r)
    assert symmetric_close(rotate_tensor(rotated, r.T), body.inertia)
    # Trace and eigenvalues are invariant under a change of axes (linear algebra).
    assert np.trace(rotated) == pytest.approx(np.trace(body.inertia), rel=1e-10)
    np.testing.assert_allclose(np.linalg.eigvalsh(rotated), np.linalg.eigvalsh(body.inertia), rtol=1e-8, atol=1e-12 * np.trace(body.inertia))


@given(primitive_bodies(), offsets)
def test_shift_round_trip(body: MassProperties, d: np.ndarray) -> None:
    there = shift_from_com(body.inertia, body.mass, d)
    assert symmetric_close(shift_to_com(there, body.mass, d), body.inertia, 1e-7)


@given(primitive_bodies(), offsets, st.tuples(*[st.floats(-1, 1)] * 3).filter(lambda n: np.linalg.norm(n) > 1e-3))
def test_com_is_the_minimum_over_parallel_axes(body: MassProperties, d: np.ndarray, n: tuple) -> None:
    # Steiner (REFERENCES.md): I_o = I_c + m(|d|^2 E - d d^T) and the added term is PSD.
    about_o = body.about(body.com + d)
    u = np.array(n) / np.linalg.norm(n)
    eps = 1e-9 * np.trace(about_o)
    assert np.trace(about_o) >= np.trace(body.inertia) - eps
    assert u @ about_o @ u >= u @ body.inertia @ u - eps


@settings(max_examples=150)
@given(st.lists(primitive_bodies(), min_size=1, max_size=4))
def test_every_real_composite_is_physical(bodies: list[MassProperties]) -> None:
    # REFERENCES.md: a real body's tensor is symmetric, positive-definite and meets I1 + I2 >= I3.
    total = combine(bodies)
    assert is_finite(total.inertia) and is_symmetric(total.inertia)
    assert is_positive_definite(total.inertia)
    assert satisfies_triangle(total.inertia)
    assert total.mass == pytest.approx(sum(b.mass for b in bodies))


@given(primitive_bodies())
def test_principal_axes_right_handed_and_reconstruct(body: MassProperties) -> None:
    moments, axes = principal(body.inertia)
    assert np.all(np.diff(moments) >= 0)
    assert np.linalg.det(axes) == pytest.approx(1.0, abs=1e-9)
    np.testing.assert_allclose(axes.T @ axes, np.eye(3), atol=1e-9)
    assert symmetric_close(axes @ np.diag(moments) @ axes.T, body.inertia, 1e-9)


@given(primitive_bodies(), rotations, offsets)
def test_transformed_then_inverse_is_identity(body: MassProperties, r: np.ndarray, t: np.ndarray) -> None:
    back = body.transformed(r, t).transformed(r.T, -r.T @ t)
    assert back.mass == body.mass
    np.testing.assert_allclose(back.com, body.com, atol=1e-12)
    assert symmetric_close(back.inertia, body.inertia, 1e-9)


# --- edge cases of the validity tests (DESIGN.md: eps = 1e-6 x trace) ------------


def test_flat_plate_passes() -> None:
    # Handbook: thin rectangular plate a x b, Ixx = m b^2/12, Iyy = m a^2/12, Izz = m(a^2+b^2)/12;
    # it meets the triangle inequality with equality (REFERENCES.md: a lamina).
    m, a, b = 1.0, 0.3, 0.7
    plate = np.diag([m * b * b / 12, m * a * a / 12, m * (a * a + b * b) / 12])
    assert is_positive_definite(plate) and satisfies_triangle(plate)
    assert abs(triangle_deficit(plate)) < 1e-15


def test_thin_rod_is_not_positive_definite() -> None:
    # A line of mass has a zero moment about its own axis (REFERENCES.md).
    rod = np.diag([1.0 / 12, 1.0 / 12, 0.0])
    assert not is_positive_definite(rod)
    assert satisfies_triangle(rod)


def test_moments_1_1_5_break_the_triangle_inequality() -> None:
    # FORMATS.md 0: libsdformat rejects principal moments (1, 1, 5).
    assert not satisfies_triangle(np.diag([1.0, 1.0, 5.0]))
    assert triangle_deficit(np.diag([1.0, 1.0, 5.0])) == pytest.approx(3.0)


def test_triangle_tolerance_is_relative_to_trace() -> None:
    # DESIGN.md: holds when I1 + I2 >= I3 - eps, eps = 1e-6 trace (trace = 4 here).
    assert satisfies_triangle(np.diag([1.0, 1.0, 2.0 + 3e-6]))
    assert not satisfies_triangle(np.diag([1.0, 1.0, 2.0 + 5e-6]))
    r = Rotation.from_euler("xyz", (0.4, 0.5, 0.6)).as_matrix()
    assert not satisfies_triangle(r @ np.diag([1.0, 1.0, 2.0 + 5e-6]) @ r.T)


def test_negative_and_broken_tensors() -> None:
    assert not is_positive_definite(-np.eye(3))
    assert not is_positive_definite(np.diag([1.0, 1.0, -0.1]))
    assert not is_symmetric(np.array([[1.0, 0.5, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]]))
    assert not is_finite(np.diag([1.0, float("nan"), 1.0]))


def test_combine_needs_a_body() -> None:
    with pytest.raises(ValueError):
        combine([])


def test_scaled_and_with_mass() -> None:
    # Uniform density: mass and tensor scale together, the COM does not.
    cf = mass_properties("box", (1.0, 2.0, 3.0))
    body = MassProperties(cf.volume, cf.centroid, cf.inertia)
    heavy = body.with_mass(12.0)
    assert heavy.mass == pytest.approx(12.0)
    assert heavy.inertia[0, 0] == pytest.approx(12.0 * (4 + 9) / 12)
