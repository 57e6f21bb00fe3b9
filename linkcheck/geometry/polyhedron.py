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


def format_vector(v: np.ndarray) -> str:
    return "(" + ", ".join(f"{x:.4g}" for x in v) + ")"
