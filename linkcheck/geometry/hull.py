"""Convex-hull queries on point sets without building the hull.

numpy only (no scipy: start-up time matters). The distance from a point to the
convex hull of a point set is found with the Gilbert-Johnson-Keerthi algorithm,
whose only access to the set is the support function argmax(points @ d), so
flat, collinear and single-point sets need no special case.
"""

from __future__ import annotations

import math
from itertools import combinations

import numpy as np

#: Stop when the distance is known to within this fraction of the set's size.
RTOL = 1e-9
#: Iteration cap; a polytope converges in far fewer steps, a dense curved set in tens.
MAX_ITERATIONS = 200

#: For k = 1..4 simplex points, every non-empty subset of their indices.
_SUBSETS: dict[int, list[tuple[int, ...]]] = {
    k: [c for s in range(1, k + 1) for c in combinations(range(k), s)] for k in range(1, 5)
}


def _as_points(points: np.ndarray) -> np.ndarray:
    pts = np.asarray(points, dtype=float)
    if pts.ndim != 2 or pts.shape[1] != 3 or len(pts) == 0:
        raise ValueError(f"expected a non-empty (N, 3) array of points, got shape {pts.shape}")
    return pts


def _columns(points: np.ndarray) -> np.ndarray:
    """(3, N) contiguous copy: per-axis reductions on it are ~10x faster than on (N, 3)."""
    return np.ascontiguousarray(_as_points(points).T)


def bounding_box(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Axis-aligned bounds (lo, hi) of the points."""
    cols = _columns(points)
    return cols.min(axis=1), cols.max(axis=1)


def max_distance(points: np.ndarray, p: np.ndarray) -> float:
    """Largest distance from ``p`` to a point of the set (= to its convex hull)."""
    pts = _as_points(points)
    q = np.asarray(p, dtype=float).reshape(3)
    x, y, z = pts[:, 0] - q[0], pts[:, 1] - q[1], pts[:, 2] - q[2]
    return float(np.sqrt(np.max(x * x + y * y + z * z)))


Vec = tuple[float, float, float]


def _dot(a: Vec, b: Vec) -> float:
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _det3(m: list[list[float]]) -> float:
    return (
        m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1])
        - m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0])
        + m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0])
    )


def _solve(gram: list[list[float]], rhs: list[float]) -> list[float] | None:
    """Cramer's rule on the 1-3 sized Gram system, or None when the face is degenerate.

    A degenerate face (collinear triangle, flat tetrahedron) is the union of its
    own faces, which are tried separately, so skipping it loses nothing.
    Plain floats: numpy's per-call overhead dominates at this size.
    """
    n = len(rhs)
    scale = 1.0
    for i in range(n):
        scale *= gram[i][i]
    if n == 1:
        det = gram[0][0]
    elif n == 2:
        det = gram[0][0] * gram[1][1] - gram[0][1] * gram[1][0]
    else:
        det = _det3(gram)
    if not det > 1e-12 * scale:
        return None
    if n == 1:
        return [rhs[0] / det]
    if n == 2:
        return [
            (rhs[0] * gram[1][1] - rhs[1] * gram[0][1]) / det,
            (gram[0][0] * rhs[1] - gram[1][0] * rhs[0]) / det,
        ]
    out = []
    for col in range(3):
        m = [[rhs[r] if c == col else gram[r][c] for c in range(3)] for r in range(3)]
        out.append(_det3(m) / det)
    return out


def _closest_in_simplex(simplex: list[Vec], newest_only: bool = False) -> tuple[Vec, tuple[int, ...]]:
    """Point of the simplex nearest the origin and the indices of the face holding it.

    Tries every face (Johnson's sub-simplex test done exhaustively): a face whose
    affine projection of the origin has non-negative barycentric weights yields a
    point of the simplex, and the nearest such point is the answer. Smaller faces
    win ties, so the kept simplex stays minimal. ``newest_only`` tries only the
    faces holding the last point, which in exact arithmetic holds the answer.
    """
    last = len(simplex) - 1
    best_d2 = math.inf
    best_point = simplex[0]
    best_face: tuple[int, ...] = (0,)
    for face in _SUBSETS[len(simplex)]:
        if newest_only and face[-1] != last:
            continue
        base = simplex[face[0]]
        if len(face) == 1:
            point = base
        else:
            edges = [tuple(q - b for q, b in zip(simplex[i], base)) for i in face[1:]]
            gram = [[_dot(e, f) for f in edges] for e in edges]
            weights = _solve(gram, [-_dot(e, base) for e in edges])
            if weights is None or min(weights) < 0 or sum(weights) > 1:
                continue
            point = tuple(base[k] + sum(w * e[k] for w, e in zip(weights, edges)) for k in range(3))
        d2 = _dot(point, point)
        if d2 < best_d2 * (1 - 1e-12):
            best_d2, best_point, best_face = d2, point, face
    return best_point, best_face


def distance_to_hull(points: np.ndarray, p: np.ndarray) -> float:
    """Euclidean distance from ``p`` to the convex hull of ``points``; 0.0 inside or on it.

    Accurate to RTOL x the set's bounding-box diagonal. A query point with a nan
    or inf coordinate is not inside anything: inf. Non-finite points raise ValueError.
    """
    pts = _as_points(points)
    p = np.asarray(p, dtype=float).reshape(3)
    cols = np.ascontiguousarray(pts.T)
    lo, hi = cols.min(axis=1), cols.max(axis=1)
    if not (np.all(np.isfinite(lo)) and np.all(np.isfinite(hi))):
        raise ValueError("points must be finite (got nan or inf)")
    if not np.all(np.isfinite(p)):
        return math.inf
    # Coordinates carry rounding of their own size, so far-off sets get a looser floor.
    size = max(float(np.linalg.norm(hi - lo)), 1e-6 * float(np.max(np.abs(np.concatenate([lo, hi, p])))))
    if size == 0.0:
        return float(np.linalg.norm(pts[0] - p))
    tol = RTOL * size

    def support(d: Vec) -> Vec:
        """Vertex of (hull - p) furthest along d."""
        q = pts[int(np.argmax(np.asarray(d) @ cols))]
        return (float(q[0] - p[0]), float(q[1] - p[1]), float(q[2] - p[2]))

    c = (lo + hi) / 2 - p
    v = support((-float(c[0]), -float(c[1]), -float(c[2])))
    simplex = [v]
    for _ in range(MAX_ITERATIONS):
        dist = math.sqrt(_dot(v, v))
        if dist <= tol:
            return 0.0
        w = support((-v[0], -v[1], -v[2]))
        # dist - (v.w)/dist bounds how far the true distance lies below |v|.
        if dist * dist - _dot(v, w) <= tol * dist:
            return dist
        if any(max(abs(a - b) for a, b in zip(s, w)) <= tol for s in simplex):
            return dist
        candidates = [*simplex, w]
        new, face = _closest_in_simplex(candidates, newest_only=True)
        if _dot(new, new) >= dist * dist:
            # Rounding misled the shortcut: search every face, and stop if that cannot improve.
            new, face = _closest_in_simplex(candidates)
            if _dot(new, new) >= dist * dist:
                return dist
        v = new
        simplex = [candidates[i] for i in face]
    return math.sqrt(_dot(v, v))
