"""Exact integrals of a triangle surface, and whether they can belong to a solid.

The divergence theorem over signed tetrahedra, in float64, with coordinates shifted to a
reference point first (the bounding-box centre) so meshes far from their origin keep full
precision. The closure residuals (Σ p×q and Σ (p+q)⊗(p×q) over edges vanish on a closed,
consistently wound surface) are the cheap topology test every mesh gets, and they make the
integrals independent of the reference point.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from linkcheck.inertia import MassProperties, principal, satisfies_triangle, tolerance


#: Loader names by lower-case extension; the loader is part of the cache key.
#: Relative size of the closure residuals below which a surface counts as closed.
CLOSURE_TOL = 1e-7


@dataclass(frozen=True)
class Integral:
    volume: float
    com: np.ndarray  # absolute
    second: np.ndarray  # covariance about the com, ∫ r r^T dV
    area: float  # twice the total area
    closure: float  # relative closure residual (0 for a closed, consistently wound surface)


def integrate(cols: np.ndarray, origin: np.ndarray, radius: float) -> Integral:
    """Signed-tetrahedron integrals over corners ``cols[k, j, i]`` (coordinate k of corner j of
    triangle i, float64, already shifted by ``origin``); ``radius`` bounds |corner|."""
    a, b, c = cols[:, 0], cols[:, 1], cols[:, 2]
    ab, bc, ca = _cross(a, b), _cross(b, c), _cross(c, a)
    d = np.einsum("ij,ij->j", a, bc)
    vol = float(d.sum()) / 6.0
    s = a + b + c
    first = (s @ d) / 24.0
    cov = sum(np.einsum("ij,kj->ik", x * d, x) for x in (a, b, c, s)) / 120.0
    normals = ab + bc + ca
    area2 = float(np.sqrt(np.einsum("ij,ij->j", normals, normals)).sum())
    moment = sum(np.einsum("ij,kj->ik", p + q, pq) for p, q, pq in ((a, b, ab), (b, c, bc), (c, a, ca)))
    scale = max(area2, 1e-300)
    lever = scale * max(radius, 1e-300)  # underflows to 0 for coordinates below ~1e-150 m: no closure to judge
    closure = max(float(np.linalg.norm(normals.sum(axis=1))) / scale,
                  float(np.linalg.norm(moment)) / lever if lever > 0 else float("inf"))
    if vol != 0.0:
        com_local = first / vol
        second = cov - vol * np.outer(com_local, com_local)
    else:
        com_local = np.zeros(3)
        second = cov
    return Integral(vol, com_local + origin, second, area2, closure)


def _cross(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    out = np.empty_like(u)
    tmp = np.empty_like(u[0])
    for k, (i, j) in enumerate(((1, 2), (2, 0), (0, 1))):
        np.multiply(u[i], v[j], out=out[k])
        np.multiply(u[j], v[i], out=tmp)
        out[k] -= tmp
    return out


def to_columns(tris: np.ndarray) -> np.ndarray:
    """(n, 3, 3) corners -> contiguous float64 (3 coordinates, 3 corners, n): every later pass is a straight sweep."""
    return np.ascontiguousarray(np.asarray(tris).transpose(2, 1, 0), dtype=np.float64)


def integral_props(it: Integral, sign: float = 1.0) -> MassProperties:
    second = it.second * sign
    inertia = np.trace(second) * np.eye(3) - second
    return MassProperties(it.volume * sign, it.com.copy(), 0.5 * (inertia + inertia.T))


def encloses_no_volume(it: Integral, radius: float) -> bool:
    return abs(it.volume) <= 1e-9 * it.area * radius


def why_impossible(it: Integral, lo: np.ndarray, hi: np.ndarray) -> str | None:
    """Why the integral of a closed surface cannot be a solid of positive density (None: it can).

    A solid's centroid lies in its bounding box and its central inertia has no negative principal
    moment and obeys I3 <= I1 + I2 (tolerances of inertia.py). A surface that is closed but holds
    bodies wound inside-out beside right ones passes the closure test and usually fails this one.
    """
    props = integral_props(it, -1.0 if it.volume < 0 else 1.0)
    slack = 1e-6 * float(np.linalg.norm(hi - lo))
    if np.any(props.com < lo - slack) or np.any(props.com > hi + slack):
        return f"centre of mass {format_vector(props.com)} m outside the bounding box"
    moments = principal(props.inertia)[0]
    if np.trace(props.inertia) <= 0 or moments[0] < -tolerance(props.inertia):
        return f"principal moments {format_vector(moments)} m^5 include a negative one"
    if not satisfies_triangle(props.inertia, moments=moments):
        return f"principal moments {format_vector(moments)} m^5 break the triangle inequality"
    return None


def faces_out_at_extremes(cols: np.ndarray, extremes: np.ndarray) -> bool:
    """False if the surface faces inward at a vertex extreme along an axis (cheap; every mesh).

    ``extremes`` are the flat corner indices (``cols.reshape(3, -1)``) of the smallest and largest
    x, y and z. The whole surface lies on one side of the plane through such a vertex v, so on a
    closed surface wound outward the triangles around v (its umbrella) add up to an area vector
    pointing out of that side, and so does every triangle lying in that plane. A body inverted at
    the outside of the mesh fails one of the two even when the whole integral is still a possible
    solid; the second also sees one inverted body among equal ones in a row.
    """
    n = cols.shape[2]
    flat = cols.reshape(3, -1)
    for k in range(3):
        i, j = (k + 1) % 3, (k + 2) % 3
        fk, fi, fj = flat[k], flat[i], flat[j]

        def normal(tri: np.ndarray) -> np.ndarray:  # component k of the triangles' area vectors
            ai, bi, ci = fi[tri], fi[tri + n], fi[tri + 2 * n]
            aj, bj, cj = fj[tri], fj[tri + n], fj[tri + 2 * n]
            return (bi - ai) * (cj - aj) - (bj - aj) * (ci - ai)

        for side, at in ((-1.0, extremes[2 * k]), (1.0, extremes[2 * k + 1])):
            v = fk[at]
            corner = np.flatnonzero(fk == v)  # every corner in the plane
            if side * normal(corner[(fi[corner] == fi[at]) & (fj[corner] == fj[at])] % n).sum() < 0:
                return False  # the umbrella around v faces inward
            first = corner[corner < n]  # a triangle lying in the plane has its first corner there too
            if np.any(side * normal(first[(fk[first + n] == v) & (fk[first + 2 * n] == v)]) < 0):
                return False  # a triangle in the plane faces into the mesh
    return True


def winding_dips_below_zero(cols: np.ndarray, com: np.ndarray, extent: np.ndarray) -> bool:
    """True if, along one line through (next to) the centroid, some stretch lies inside the
    surface a negative number of times: a body or core inverted inside the mesh (cheap; every mesh).

    The line runs along the longest axis. Crossings are counted with the sign of the surface
    normal; a line that meets an edge or vertex exactly, or does not leave as often as it enters,
    proves nothing and gives False. A stretch inside two outward surfaces (a part embedded in
    another, or a cavity wound outward) is not flagged: which of the two was meant is unknown.
    """
    k = int(np.argmax(extent))
    i, j = (k + 1) % 3, (k + 2) % 3
    # slightly off the centroid: symmetric meshes have edges and vertices right on their axes
    pi = com[i] + 0.000618034 * extent[i]
    pj = com[j] + 0.000414214 * extent[j]
    ci, cj, ck = cols[i], cols[j], cols[k]
    a, b, c = ci[0] > pi, ci[1] > pi, ci[2] > pi
    b ^= a
    c ^= a
    b |= c
    hit = np.flatnonzero(b)  # triangles reaching across the plane x_i = pi
    u = np.take(ci, hit, axis=1) - pi
    v = np.take(cj, hit, axis=1) - pj
    across = ((v > 0).any(axis=0)) & ((v < 0).any(axis=0))
    hit, u, v = hit[across], u[:, across], v[:, across]
    e = u * v[[1, 2, 0]] - u[[1, 2, 0]] * v  # e[0]: (p, a, b), e[1]: (p, b, c), e[2]: (p, c, a)
    pos, neg = (e > 0).all(axis=0), (e < 0).all(axis=0)
    if np.any(~pos & ~neg & ~((e > 0).any(axis=0) & (e < 0).any(axis=0))):
        return False  # the line meets an edge or a vertex: the count is not to be trusted
    inside = pos | neg
    e, hit = e[:, inside], hit[inside]
    area = e.sum(axis=0)  # the normal's k component
    t = np.einsum("ij,ij->j", np.take(ck, hit, axis=1), e[[1, 2, 0]]) / area  # barycentric: a's weight is e[1]
    step = -np.sign(area)  # a normal along +k: leaving the solid while moving along +k
    order = np.argsort(t, kind="stable")
    t, depth = t[order], np.cumsum(step[order])
    if len(depth) == 0 or depth[-1] != 0:
        return False
    last = np.r_[t[1:] != t[:-1], True]  # coincident crossings (touching bodies) count together
    return bool(depth[last].min() < 0)


def winding_numbers(tris: np.ndarray, points: np.ndarray, chunk: int = 1 << 18) -> np.ndarray:
    """Generalised winding number of the triangles ``tris`` (m, 3, 3) at ``points`` (k, 3): the
    sum of the solid angles the triangles subtend, over 4π. Ω of one triangle with corners a, b, c
    relative to the point is 2 atan2(a·(b×c), |a||b||c| + (a·b)|c| + (a·c)|b| + (b·c)|a|). On a
    closed surface it is +1 inside if wound outward, -1 if wound inward, 0 outside, for any
    triangulation; near ±0.5 for a point on the surface. ``chunk`` bounds the point-triangle
    pairs held at once (about 20 float64 arrays of that size)."""
    tris = np.asarray(tris, dtype=np.float64)
    points = np.asarray(points, dtype=np.float64)
    out = np.zeros(len(points))
    corners = [np.ascontiguousarray(tris[:, c].T) for c in range(3)]  # (3, m) each
    m = len(tris)
    if m == 0 or len(points) == 0:
        return out
    rows = max(1, chunk // m)
    cols_per = max(1, min(m, chunk))
    for s in range(0, len(points), rows):
        p = points[s:s + rows]
        for t0 in range(0, m, cols_per):
            a, b, c = (x[:, None, t0:t0 + cols_per] - p.T[:, :, None] for x in corners)  # (3, k, m)
            la, lb, lc = (np.sqrt(np.einsum("i...,i...->...", x, x)) for x in (a, b, c))
            det = np.einsum("i...,i...->...", a, _cross(b, c))
            den = (la * lb * lc + np.einsum("i...,i...->...", a, b) * lc
                   + np.einsum("i...,i...->...", a, c) * lb + np.einsum("i...,i...->...", b, c) * la)
            out[s:s + rows] += np.arctan2(det, den).sum(axis=1)
    return out / (2 * np.pi)


def format_vector(v: np.ndarray) -> str:
    return "(" + ", ".join(f"{x:.4g}" for x in v) + ")"
