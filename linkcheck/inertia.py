"""Rigid-body mass properties: rotate, shift, combine, validate.

Pure numpy; imports nothing of the project. Units are SI (kg, m, kg m^2).
Tensors are tensor entries (ixy = -integral of x*y dm), as URDF and SDFormat use.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Relative tolerance of the tensor tests: eps = TENSOR_RTOL * trace.
TENSOR_RTOL = 1e-6


@dataclass(frozen=True)
class MassProperties:
    """Mass, centre of mass and the inertia tensor about the centre of mass.

    ``com`` is in the frame the object is expressed in; ``inertia`` is about
    ``com`` with that frame's axes. A unit-density solid is a MassProperties
    whose mass is its volume.
    """

    mass: float
    com: np.ndarray
    inertia: np.ndarray

    def transformed(self, rotation: np.ndarray, translation: np.ndarray) -> MassProperties:
        """Express in a parent frame where this frame has pose (rotation, translation)."""
        r = np.asarray(rotation, dtype=float)
        return MassProperties(
            self.mass,
            r @ np.asarray(self.com, dtype=float) + np.asarray(translation, dtype=float),
            rotate_tensor(self.inertia, r),
        )

    def scaled(self, factor: float) -> MassProperties:
        """Same shape, mass multiplied by ``factor`` (e.g. unit density -> kg)."""
        return MassProperties(self.mass * factor, self.com, self.inertia * factor)

    def with_mass(self, mass: float) -> MassProperties:
        """Same shape and COM, scaled to ``mass``."""
        return self.scaled(mass / self.mass)

    def about(self, point: np.ndarray) -> np.ndarray:
        """Inertia tensor about ``point`` (same axes), by the parallel axis theorem."""
        return shift_from_com(self.inertia, self.mass, np.asarray(point, dtype=float) - self.com)


def rpy_to_matrix(rpy: np.ndarray | tuple[float, float, float]) -> np.ndarray:
    """Rotation of fixed-axis roll, pitch, yaw: R = Rz(yaw) Ry(pitch) Rx(roll)."""
    r, p, y = (float(v) for v in rpy)
    cr, sr, cp, sp, cy, sy = np.cos(r), np.sin(r), np.cos(p), np.sin(p), np.cos(y), np.sin(y)
    return np.array(
        [
            [cy * cp, cy * sp * sr - sy * cr, cy * sp * cr + sy * sr],
            [sy * cp, sy * sp * sr + cy * cr, sy * sp * cr - cy * sr],
            [-sp, cp * sr, cp * cr],
        ]
    )


def matrix_to_rpy(rotation: np.ndarray) -> np.ndarray:
    """Inverse of :func:`rpy_to_matrix`, robust at pitch = +-90 degrees (yaw set to 0 there).

    Roll is read from what is left after undoing yaw and pitch, so a yaw made
    imprecise near the singularity is absorbed and the round trip stays exact.
    """
    r = np.asarray(rotation, dtype=float)
    c = np.hypot(r[0, 0], r[1, 0])
    pitch = float(np.arctan2(-r[2, 0], c))
    yaw = float(np.arctan2(r[1, 0], r[0, 0])) if c > 1e-15 else 0.0
    rest = rpy_to_matrix((0.0, pitch, yaw)).T @ r
    return np.array([float(np.arctan2(rest[2, 1], rest[1, 1])), pitch, yaw])


def quat_xyzw_to_matrix(q: np.ndarray | tuple[float, float, float, float]) -> np.ndarray:
    """Rotation matrix of a quaternion given as (x, y, z, w); normalised first."""
    x, y, z, w = np.asarray(q, dtype=float) / np.linalg.norm(q)
    return np.array(
        [
            [1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
            [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
            [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)],
        ]
    )


def rotate_tensor(inertia: np.ndarray, rotation: np.ndarray) -> np.ndarray:
    """Tensor given in frame C, expressed in frame L where C has orientation R: R I R^T."""
    r = np.asarray(rotation, dtype=float)
    out = r @ np.asarray(inertia, dtype=float) @ r.T
    return (out + out.T) / 2


def _steiner(mass: float, d: np.ndarray) -> np.ndarray:
    d = np.asarray(d, dtype=float)
    return mass * (np.dot(d, d) * np.eye(3) - np.outer(d, d))


def shift_from_com(inertia_com: np.ndarray, mass: float, d: np.ndarray) -> np.ndarray:
    """Parallel axis theorem: tensor about a point at offset ``d`` from the COM."""
    return np.asarray(inertia_com, dtype=float) + _steiner(mass, d)


def shift_to_com(inertia_point: np.ndarray, mass: float, d: np.ndarray) -> np.ndarray:
    """Undo the parallel axis theorem: tensor about the COM, given it about a point at offset ``d``."""
    return np.asarray(inertia_point, dtype=float) - _steiner(mass, d)


def combine(parts: list[MassProperties]) -> MassProperties:
    """One body from several, all expressed in the same frame (overlaps are summed)."""
    if not parts:
        raise ValueError("combine() needs at least one body")
    mass = sum(p.mass for p in parts)
    com = sum(p.mass * np.asarray(p.com, dtype=float) for p in parts) / mass
    inertia = sum(shift_from_com(p.inertia, p.mass, p.com - com) for p in parts)
    return MassProperties(mass, com, inertia)


def principal(inertia: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Principal moments (ascending) and axes (columns, right-handed) of a symmetric tensor."""
    sym = (np.asarray(inertia, dtype=float) + np.asarray(inertia, dtype=float).T) / 2
    moments, axes = np.linalg.eigh(sym)
    if np.linalg.det(axes) < 0:
        axes[:, 2] = -axes[:, 2]
    return moments, axes


def tolerance(inertia: np.ndarray, rtol: float = TENSOR_RTOL) -> float:
    """Absolute tolerance of the tensor tests: rtol x |trace|."""
    return rtol * abs(float(np.trace(inertia)))


def is_finite(inertia: np.ndarray) -> bool:
    return bool(np.all(np.isfinite(inertia)))


def is_symmetric(inertia: np.ndarray, rtol: float = TENSOR_RTOL) -> bool:
    i = np.asarray(inertia, dtype=float)
    return bool(np.max(np.abs(i - i.T)) <= tolerance(i, rtol))


def is_positive_definite(inertia: np.ndarray, rtol: float = TENSOR_RTOL, moments: np.ndarray | None = None) -> bool:
    """Smallest principal moment above eps (a rod with a zero moment is not).

    ``moments``: the tensor's principal moments, if already computed.
    """
    m = principal(inertia)[0] if moments is None else moments
    return bool(np.trace(inertia) > 0 and m[0] > tolerance(inertia, rtol))


def triangle_deficit(inertia: np.ndarray, moments: np.ndarray | None = None) -> float:
    """I3 - (I1 + I2) of the sorted principal moments; > eps breaks the triangle inequality."""
    m = principal(inertia)[0] if moments is None else moments
    return float(m[2] - m[0] - m[1])


def satisfies_triangle(inertia: np.ndarray, rtol: float = TENSOR_RTOL, moments: np.ndarray | None = None) -> bool:
    """I1 + I2 >= I3 - eps (a flat plate, I1 + I2 = I3, passes)."""
    return triangle_deficit(inertia, moments) <= tolerance(inertia, rtol)
