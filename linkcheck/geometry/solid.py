"""A unit-density solid with the points that bound it: what geometry hands to the checks."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from linkcheck.inertia import MassProperties, combine
from linkcheck.model import Pose, Shape


@dataclass(frozen=True)
class Solid:
    """Volume, centroid and tensor at density 1 kg/m^3 (``props.mass`` is the volume, m^3).

    ``points`` (N, 3) lie on the body's boundary; their convex hull is the body's
    convex hull (exactly for polyhedra, closely for curved primitives). Same frame as ``props``.
    """

    props: MassProperties
    points: np.ndarray

    @property
    def volume(self) -> float:
        return self.props.mass

    def transformed(self, pose: Pose) -> Solid:
        return Solid(self.props.transformed(pose.rotation, pose.translation), pose.apply(self.points))


def union(solids: list[Solid]) -> Solid:
    """Several bodies as one uniform-density solid; overlapping volume is counted twice."""
    return Solid(combine([s.props for s in solids]), np.vstack([s.points for s in solids]))


def primitive_solid(shape: Shape) -> Solid:
    """The Solid of a primitive shape in its own frame."""
    from linkcheck.geometry import primitives

    closed = primitives.mass_properties(shape.kind, shape.size)
    return Solid(
        MassProperties(closed.volume, closed.centroid, closed.inertia),
        primitives.boundary_points(shape.kind, shape.size),
    )
