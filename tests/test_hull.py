"""Point-to-hull distance against scipy's qhull and closed-form distances."""

from __future__ import annotations

import math
import time

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy.spatial import ConvexHull, QhullError

from linkcheck.geometry.hull import bounding_box, distance_to_hull, max_distance


def _segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> float:
    ab = b - a
    t = np.clip((p - a) @ ab / (ab @ ab), 0.0, 1.0)
    return float(np.linalg.norm(a + t * ab - p))


def _triangle_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray) -> float:
    """Textbook point-triangle distance: the plane when the foot is inside, else the edges."""
    n = np.cross(b - a, c - a)
    n = n / np.linalg.norm(n)
    foot = p - ((p - a) @ n) * n
    if all(np.cross(y - x, foot - x) @ n >= 0 for x, y in ((a, b), (b, c), (c, a))):
        return float(abs((p - a) @ n))
    return min(_segment_distance(p, a, b), _segment_distance(p, b, c), _segment_distance(p, c, a))


def reference_distance(points: np.ndarray, p: np.ndarray) -> float:
    """scipy.spatial.ConvexHull (qhull): inside by the facet equations, outside by the
    nearest facet triangle (the nearest point of a polytope lies on its boundary)."""
    hull = ConvexHull(points)
    if np.all(hull.equations[:, :3] @ p + hull.equations[:, 3] <= 1e-12):
        return 0.0
    return min(_triangle_distance(p, *points[s]) for s in hull.simplices)


def qp_distance(points: np.ndarray, p: np.ndarray) -> float:
    """Brute-force QP: min |sum w_i x_i - p| over convex weights, by scipy.optimize.nnls
    with the sum-to-one row weighted heavily, then renormalised to a true hull point."""
    from scipy.optimize import nnls

    big = 1e4 * (1.0 + float(np.max(np.abs(points))))
    a = np.vstack([points.T, np.full(len(points), big)])
    w = nnls(a, np.append(p, big), maxiter=50 * len(points))[0]
    return float(np.linalg.norm(w @ points / w.sum() - p))


def box_distance(lo: np.ndarray, hi: np.ndarray, p: np.ndarray) -> float:
    """Closed form: the norm of the per-axis excess outside the box."""
    return float(np.linalg.norm(np.maximum(0.0, np.maximum(lo - p, p - hi))))


def test_random_clouds_against_qhull() -> None:
    rng = np.random.default_rng(7)
    for _ in range(200):
        scale = rng.uniform(0.001, 10.0)
        pts = rng.normal(size=(int(rng.integers(4, 60)), 3)) * scale + rng.normal(size=3) * scale
        p = pts.mean(axis=0) + rng.normal(size=3) * rng.uniform(0.0, 3.0) * scale
        d = distance_to_hull(pts, p)
        assert d == pytest.approx(reference_distance(pts, p), abs=1e-8 * scale)
        assert d == pytest.approx(qp_distance(pts, p), abs=1e-6 * scale)


def test_box_corners_against_closed_form() -> None:
    lo, hi = np.array([-0.1, 0.2, 1.0]), np.array([0.3, 0.5, 1.8])
    corners = np.array([[x, y, z] for x in (lo[0], hi[0]) for y in (lo[1], hi[1]) for z in (lo[2], hi[2])])
    rng = np.random.default_rng(3)
    for p in rng.uniform(-1.5, 2.5, size=(300, 3)):
        assert distance_to_hull(corners, p) == pytest.approx(box_distance(lo, hi, p), abs=1e-10)


def test_inside_and_surface_points_are_zero() -> None:
    cube = np.array([[x, y, z] for x in (0.0, 1.0) for y in (0.0, 1.0) for z in (0.0, 1.0)])
    for p in ([0.5, 0.5, 0.5], [0.0, 0.0, 0.0], [1.0, 0.5, 0.5], [0.999999, 0.2, 0.3]):
        assert distance_to_hull(cube, np.array(p)) == 0.0


def test_single_point() -> None:
    # Euclid: the distance to a point is the norm of the difference.
    pts = np.array([[1.0, 2.0, 3.0]])
    assert distance_to_hull(pts, np.array([1.0, 2.0, 7.0])) == pytest.approx(4.0)
    assert distance_to_hull(pts, np.array([1.0, 2.0, 3.0])) == 0.0
    assert distance_to_hull(np.repeat(pts, 10, axis=0), np.array([4.0, 6.0, 3.0])) == pytest.approx(5.0)


def test_collinear_points() -> None:
    # Closed form: distance to a segment (clamped projection).
    a, b = np.array([0.0, 0.0, 0.0]), np.array([1.0, 2.0, 3.0])
    line = a + np.linspace(0, 1, 40)[:, None] * (b - a)
    rng = np.random.default_rng(5)
    for p in rng.normal(size=(100, 3)) * 2:
        assert distance_to_hull(line, p) == pytest.approx(_segment_distance(p, a, b), abs=1e-10)
    assert distance_to_hull(line, (a + b) / 2) == 0.0


def test_flat_point_set() -> None:
    # A square plate in z = 0: distance is |z| above it, the box formula with zero thickness.
    rng = np.random.default_rng(11)
    plate = np.column_stack([rng.uniform(0, 1, 200), rng.uniform(0, 1, 200), np.zeros(200)])
    plate = np.vstack([plate, [[0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0]]])
    lo, hi = np.array([0.0, 0.0, 0.0]), np.array([1.0, 1.0, 0.0])
    for p in rng.uniform(-1, 2, size=(200, 3)):
        assert distance_to_hull(plate, p) == pytest.approx(box_distance(lo, hi, p), abs=1e-10)
    assert distance_to_hull(plate, np.array([0.3, 0.6, 0.0])) == 0.0


def test_far_from_origin_small_set() -> None:
    # A millimetre cube a kilometre away: the tolerance follows the set, not the origin.
    cube = np.array([[x, y, z] for x in (0.0, 1e-3) for y in (0.0, 1e-3) for z in (0.0, 1e-3)]) + 1000.0
    p = np.array([1000.0 + 2e-3, 1000.0 + 0.5e-3, 1000.0 + 0.5e-3])
    assert distance_to_hull(cube, p) == pytest.approx(1e-3, rel=1e-6)
    assert distance_to_hull(cube, cube.mean(axis=0)) == 0.0


def test_dense_sphere_is_fast_and_right() -> None:
    # Points on the unit sphere: hull distance of an outside point tends to |p| - 1 (from
    # above, by at most the inscribed polytope's gap); inside points are at 0.
    rng = np.random.default_rng(1)
    pts = rng.normal(size=(100_000, 3))
    pts /= np.linalg.norm(pts, axis=1)[:, None]
    queries = [np.array([3.0, 0.0, 0.0]), np.array([1.2, 1.2, -0.5]), np.array([0.1, 0.2, 0.3]), np.array([1.001, 0.0, 0.0])]
    results = [distance_to_hull(pts, q) for q in queries]
    timings = []
    for _ in range(3):  # best of three: the machine is shared
        start = time.perf_counter()
        for q in queries:
            distance_to_hull(pts, q)
        timings.append((time.perf_counter() - start) / len(queries))
    elapsed = min(timings)
    for q, d in zip(queries, results):
        expected = max(0.0, float(np.linalg.norm(q)) - 1)
        assert expected <= d + 1e-9 <= expected + 0.01
    assert elapsed < 0.05  # a few ms each on the project's 2-core machine; generous for CI load


points_strategy = arrays(
    np.float64,
    st.tuples(st.integers(1, 30), st.just(3)),
    elements=st.floats(-10, 10, allow_nan=False, width=64),
)


@settings(max_examples=150, deadline=None)
@given(points_strategy, arrays(np.float64, (3,), elements=st.floats(-20, 20)))
def test_hypothesis_against_qhull(points: np.ndarray, p: np.ndarray) -> None:
    d = distance_to_hull(points, p)
    assert d >= 0.0
    # Upper bound for any set: the nearest of the points themselves.
    assert d <= float(np.min(np.linalg.norm(points - p, axis=1))) + 1e-9
    try:
        hull = ConvexHull(points)
    except QhullError:  # qhull refuses flat, collinear or tiny sets; the bound above still ran
        return
    if hull.volume < 1e-6:
        return
    assert d == pytest.approx(reference_distance(points, p), abs=1e-7)


@settings(max_examples=100, deadline=None)
@given(points_strategy, arrays(np.float64, (3,), elements=st.floats(-20, 20)))
def test_hypothesis_max_distance_and_bounds(points: np.ndarray, p: np.ndarray) -> None:
    # Definitions: the largest point distance and the per-axis extremes.
    assert max_distance(points, p) == pytest.approx(max(math.dist(q, p) for q in points), rel=1e-12)
    lo, hi = bounding_box(points)
    np.testing.assert_array_equal(lo, [min(q[i] for q in points) for i in range(3)])
    np.testing.assert_array_equal(hi, [max(q[i] for q in points) for i in range(3)])


@pytest.mark.parametrize("bad", [np.zeros((0, 3)), np.zeros((4, 2)), np.zeros(3)])
def test_bad_point_arrays_raise(bad: np.ndarray) -> None:
    for call in (lambda: distance_to_hull(bad, np.zeros(3)), lambda: max_distance(bad, np.zeros(3)), lambda: bounding_box(bad)):
        with pytest.raises(ValueError, match="points"):
            call()


def test_non_finite_input() -> None:
    cube = np.eye(3)
    with pytest.raises(ValueError, match="finite"):
        distance_to_hull(np.vstack([cube, [np.nan, 0, 0]]), np.zeros(3))
    assert distance_to_hull(cube, np.array([np.inf, 0, 0])) == math.inf
    assert distance_to_hull(cube, np.array([0, np.nan, 0])) == math.inf
