"""A unit-density solid with the points that bound it: what geometry hands to the checks."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from linkcheck.inertia import MassProperties, combine
from linkcheck.model import Pose, Shape


@dataclass(frozen=True)
class Solid:
    """Volume, centroid and tensor at density 1 kg/m^3 (``props.mass`` is the volume, m^3).

    ``points`` (N, 3) lie on the body's boundary; their convex hull is the body's
    convex hull (exactly for polyhedra, closely for curved primitives). Same frame as ``props``.
    For a large mesh they are a cheap subset whose hull lies inside the true one; ``refine``
    then returns every hull vertex (costly, so rules call :meth:`exact_points` only to confirm
    a point that looks outside).
    """

    props: MassProperties
    points: np.ndarray
    refine: Callable[[], np.ndarray] | None = field(default=None, compare=False, repr=False)
    #: (k, 4) spheres (centre x, y, z, radius), one per body, that together hold every point of the
    #: solid: an upper bound on its reach that needs no vertex beyond ``points`` (see :meth:`reach`).
    spheres: np.ndarray | None = field(default=None, compare=False, repr=False)

    @property
    def volume(self) -> float:
        return self.props.mass

    @property
    def approximate(self) -> bool:
        """True when ``points`` may lie inside the true hull (see ``exact_points``)."""
        return self.refine is not None

    def exact_points(self) -> np.ndarray:
        return self.refine() if self.refine is not None else self.points

    def reach(self, centre: np.ndarray) -> float:
        """An upper bound on the largest distance from ``centre`` to the solid (inf when unknown).

        Exact for one body about its bounding-box centre; never below the true value.
        """
        if self.spheres is None:
            return math.inf
        return float((np.linalg.norm(self.spheres[:, :3] - centre, axis=1) + self.spheres[:, 3]).max())

    def transformed(self, pose: Pose) -> Solid:
        refine = None
        if self.refine is not None:
            inner = self.refine
            refine = once(lambda: pose.apply(inner()))
        spheres = None
        if self.spheres is not None:
            spheres = np.column_stack((pose.apply(self.spheres[:, :3]), self.spheres[:, 3]))
        return Solid(self.props.transformed(pose.rotation, pose.translation), pose.apply(self.points), refine, spheres)


def once(make: Callable[[], np.ndarray]) -> Callable[[], np.ndarray]:
    return lru_cache(maxsize=1)(make)


def union(solids: list[Solid]) -> Solid:
    """Several bodies as one uniform-density solid; overlapping volume is counted twice."""
    refine = None
    if any(s.refine is not None for s in solids):
        refine = once(lambda: np.vstack([s.exact_points() for s in solids]))
    spheres = None
    if all(s.spheres is not None for s in solids):
        spheres = np.vstack([s.spheres for s in solids])
    return Solid(combine([s.props for s in solids]), np.vstack([s.points for s in solids]), refine, spheres)


def enclosing_sphere(points: np.ndarray) -> np.ndarray:
    """(1, 4): the bounding-box centre of ``points`` and their largest distance from it.

    It holds every vertex of a body when ``points`` include the body's extreme vertices along the
    axes and its farthest vertex from that centre: true of every point set, and of the cheap
    subset a mesh keeps (``geometry.mesh._extreme_points``).
    """
    centre = 0.5 * (points.min(axis=0) + points.max(axis=0))
    return np.append(centre, np.sqrt(((points - centre) ** 2).sum(axis=1).max()))[None, :]


def primitive_solid(shape: Shape) -> Solid:
    """The Solid of a primitive shape in its own frame."""
    from linkcheck.geometry import primitives

    closed = primitives.mass_properties(shape.kind, shape.size)
    points = primitives.boundary_points(shape.kind, shape.size)
    return Solid(MassProperties(closed.volume, closed.centroid, closed.inertia), points, spheres=enclosing_sphere(points))
