"""Closed-form mass properties and bounding points of the primitive shapes.

numpy only, nothing of the project: this is the fast path taken by every link
without meshes. Axes as in URDF and SDFormat: cylinder, capsule and cone along
local z; the cone's frame sits at mid-height (SDFormat), so its centroid is at
z = -L/4. Formulas: handbook tables of mass moments of inertia of homogeneous
solids (see shared REFERENCES.md and FORMATS.md section 5).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

#: kind -> names of the size entries, in order.
SIZE_NAMES: dict[str, tuple[str, ...]] = {
    "box": ("x", "y", "z"),
    "sphere": ("radius",),
    "cylinder": ("radius", "length"),
    "capsule": ("radius", "length"),
    "ellipsoid": ("a", "b", "c"),
    "cone": ("radius", "length"),
}

#: Points on a rim; the polygon is scaled by 1/cos(pi/n) so it circumscribes the circle.
RIM_POINTS = 48
#: Longitudes and latitude bands of the sphere lattice (bands even, so the equator is a ring).
SPHERE_LONGITUDES = 32
SPHERE_BANDS = 16


class ClosedForm(NamedTuple):
    """Unit-density properties in the shape frame: volume (m^3), centroid (m), tensor about it."""

    volume: float
    centroid: np.ndarray
    inertia: np.ndarray


def check_size(kind: str, size: tuple[float, ...] | list[float]) -> tuple[float, ...]:
    """The size as floats, or ValueError saying which entry is wrong."""
    if kind not in SIZE_NAMES:
        raise ValueError(f"unknown primitive '{kind}' (expected one of {', '.join(SIZE_NAMES)})")
    names = SIZE_NAMES[kind]
    values = tuple(size)
    if len(values) != len(names):
        raise ValueError(
            f"{kind} needs {len(names)} size value{'s' if len(names) > 1 else ''} "
            f"({', '.join(names)}), got {len(values)}"
        )
    out = []
    for name, value in zip(names, values):
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise ValueError(f"{kind} {name} is {value!r}, expected a number") from None
        if not math.isfinite(v) or v <= 0:
            raise ValueError(f"{kind} {name} is {value!r}, expected a positive number")
        out.append(v)
    return tuple(out)


def mass_properties(kind: str, size: tuple[float, ...] | list[float]) -> ClosedForm:
    """Volume, centroid and unit-density tensor about the centroid, shape axes."""
    s = check_size(kind, size)
    centroid = np.zeros(3)
    if kind == "box":
        x, y, z = s
        v = x * y * z
        moments = (v * (y * y + z * z) / 12, v * (x * x + z * z) / 12, v * (x * x + y * y) / 12)
    elif kind == "sphere":
        (r,) = s
        v = 4 / 3 * math.pi * r**3
        moments = (0.4 * v * r * r,) * 3
    elif kind == "ellipsoid":
        a, b, c = s
        v = 4 / 3 * math.pi * a * b * c
        moments = (v * (b * b + c * c) / 5, v * (a * a + c * c) / 5, v * (a * a + b * b) / 5)
    elif kind == "cylinder":
        r, h = s
        v = math.pi * r * r * h
        side = v * (3 * r * r + h * h) / 12
        moments = (side, side, v * r * r / 2)
    elif kind == "capsule":
        r, h = s
        m_c = math.pi * r * r * h
        m_h = 2 / 3 * math.pi * r**3
        v = m_c + 2 * m_h
        # Each cap: 83/320 m r^2 about its own centroid, which sits 3r/8 beyond the cylinder end.
        side = m_c * (3 * r * r + h * h) / 12 + 2 * (83 / 320 * m_h * r * r + m_h * (h / 2 + 3 * r / 8) ** 2)
        moments = (side, side, m_c * r * r / 2 + 2 * 0.4 * m_h * r * r)
    else:  # cone
        r, h = s
        v = math.pi * r * r * h / 3
        side = 3 * v * (4 * r * r + h * h) / 80
        moments = (side, side, 0.3 * v * r * r)
        centroid = np.array([0.0, 0.0, -h / 4])
    return ClosedForm(float(v), centroid, np.diag(np.array(moments, dtype=float)))


def _rim(radius: float, z: float, n: int = RIM_POINTS) -> np.ndarray:
    """n points whose polygon circumscribes the circle of ``radius`` at height z."""
    t = 2 * math.pi * np.arange(n) / n
    rho = radius / math.cos(math.pi / n)
    return np.column_stack([rho * np.cos(t), rho * np.sin(t), np.full(n, z)])


def _unit_sphere_rings() -> list[np.ndarray]:
    """Latitude rings (south pole first) of a lattice whose hull contains the unit ball.

    All rings share the same longitudes, so the hull's faces are planar trapezoids
    perpendicular to a meridian plane; scaling the ring radii by 1/cos(pi/n) and the
    whole lattice by 1/cos(pi/2m) puts every face plane at distance >= 1.
    """
    n, m = SPHERE_LONGITUDES, SPHERE_BANDS
    grow = 1 / math.cos(math.pi / (2 * m))
    rings = [np.array([[0.0, 0.0, -grow]])]
    t = 2 * math.pi * np.arange(n) / n
    for k in range(1, m):
        lat = -math.pi / 2 + k * math.pi / m
        rho = grow * math.cos(lat) / math.cos(math.pi / n)
        rings.append(np.column_stack([rho * np.cos(t), rho * np.sin(t), np.full(n, grow * math.sin(lat))]))
    rings.append(np.array([[0.0, 0.0, grow]]))
    return rings


def boundary_points(kind: str, size: tuple[float, ...] | list[float]) -> np.ndarray:
    """(N, 3) points whose convex hull contains the shape and hugs it (N < 600).

    Exact corners for a box; for curved surfaces the polygons circumscribe, so a
    point of the shape is never outside the hull (at most ~1% too far out).
    """
    s = check_size(kind, size)
    if kind == "box":
        half = np.array(s) / 2
        signs = np.array([[i, j, k] for i in (-1, 1) for j in (-1, 1) for k in (-1, 1)], dtype=float)
        return signs * half
    if kind == "cylinder":
        r, h = s
        return np.vstack([_rim(r, -h / 2), _rim(r, h / 2)])
    if kind == "cone":
        r, h = s
        return np.vstack([_rim(r, -h / 2), [[0.0, 0.0, h / 2]]])
    rings = _unit_sphere_rings()
    if kind == "sphere":
        return np.vstack(rings) * s[0]
    if kind == "ellipsoid":
        return np.vstack(rings) * np.array(s)
    r, h = s
    mid = len(rings) // 2
    lower = np.vstack(rings[: mid + 1]) * r - [0.0, 0.0, h / 2]
    upper = np.vstack(rings[mid:]) * r + [0.0, 0.0, h / 2]
    return np.vstack([lower, upper])
