"""Units: mesh sizes and implied densities that look like millimetres read as metres (or the reverse), and the scale that fixes them."""

from __future__ import annotations

from typing import Any

import numpy as np

from linkcheck.model import Finding
from linkcheck.settings import DEFAULT


#: Unit factors tried by the units hints: millimetres, centimetres, inches, and the reverse.
UNIT_FACTORS = (1e-3, 1e-2, 0.0254, 1e3)


def extent_finding(uri: str, points: np.ndarray, scale: tuple[float, ...], max_extent: float, min_extent: float) -> Finding | None:
    extent = float((points.max(axis=0) - points.min(axis=0)).max())
    if min_extent <= extent <= max_extent:
        return None
    large = extent > max_extent
    factor = _extent_factor(extent, min_extent, max_extent)
    kind = "larger than" if large else "smaller than"
    hint = "millimetres or other small units read as metres" if large else "a unit scale applied twice or a mesh in metres scaled as millimetres"
    head = f"mesh '{uri}' is {extent:.4g} m across after scale, {kind} {max_extent if large else min_extent:g} m"
    if factor is None:
        # no unit factor brings it into range: a hint would only move it to another absurd size
        return Finding(
            "mesh-units-suspect",
            "warning",
            f"{head}, and no unit factor (mm, cm, inch, or the reverse) brings it between {min_extent:g} and "
            f"{max_extent:g} m: check the mesh file and its scale",
            data={"uri": uri, "extent": extent, "factor": None, "scale": None},
        )
    return Finding(
        "mesh-units-suspect",
        "warning",
        f"{head} (looks like {hint}); scale=\"{_scale_text(scale, factor)}\" would make it {extent * factor:.4g} m",
        data={"uri": uri, "extent": extent, "factor": factor, "scale": [s * factor for s in scale]},
    )


def _extent_factor(extent: float, min_extent: float, max_extent: float) -> float | None:
    """The unit factor (shrinking a too-large mesh, growing a too-small one) that brings ``extent``
    into [min_extent, max_extent], or None when none does."""
    large = extent > max_extent
    for f in (UNIT_FACTORS if large else UNIT_FACTORS[::-1]):
        if (f < 1) == large and min_extent <= extent * f <= max_extent:
            return f
    return None


def _scale_text(scale: tuple[float, ...], factor: float) -> str:
    """The URDF ``scale`` attribute value with every factor multiplied by ``factor``."""
    return " ".join(f"{s * factor:.6g}" for s in scale)


def scale_problem(scale: tuple[float, ...]) -> str | None:
    """Why a mesh ``scale`` cannot be integrated in float64, or None.

    Besides zero and non-finite factors: a scale whose factors multiply to a volume factor that
    underflows (or overflows) float64, e.g. 1e-300 on every axis, leaves nothing to compute with.
    """
    if len(scale) != 3 or not all(np.isfinite(scale)) or any(s == 0 for s in scale):
        return f"scale {scale} must be three finite, non-zero numbers"
    volume_factor = abs(scale[0]) * abs(scale[1]) * abs(scale[2])
    if volume_factor < np.finfo(float).tiny or not np.isfinite(volume_factor):
        way = "underflows to 0" if volume_factor < np.finfo(float).tiny else "overflows"
        return (f"scale {scale} is unusable: its volume factor sx*sy*sz {way} in float64, so no volume or "
                "inertia can be computed; a unit scale is 0.001 (millimetres), 0.01 (centimetres) or 0.0254 (inches)")
    return None


#: How far outside the density range a unit-corrected density may stay when the stated tensor
#: confirms the factor (the tensor, not the density, is then the evidence; the mass may be off too).
DENSITY_SLACK = 10.0


#: What the mesh coordinates were, by unit factor: the words of the density-based hint.
UNIT_WORDS = {1e-3: "millimetres read as metres", 1e-2: "centimetres read as metres", 0.0254: "inches read as metres",
              1e3: "metres scaled as millimetres (a scale 0.001 too many)"}


def suggest_scale(
    volume: float,
    mass: float,
    density_range: tuple[float, float] = (DEFAULT.density_min, DEFAULT.density_max),
    *,
    inertia: np.ndarray | None = None,
    geometry_at: Any = None,
    tolerance: float = DEFAULT.units_tolerance,
    extent: float | None = None,
    extent_range: tuple[float, float] = (DEFAULT.mesh_min_extent, DEFAULT.mesh_max_extent),
) -> float | None:
    """A length factor (one of ``UNIT_FACTORS``) the mesh coordinates look off by, or None.

    Only when mass/volume lies outside ``density_range``. By the density alone (``inertia``
    None): the first factor f with mass/(volume f³) inside the range. With the stated tensor
    ``inertia`` (kg m², about the COM) and ``geometry_at(f)`` (the link geometry's unit-density
    MassProperties with its meshes scaled by f): the factor whose geometry, at the stated mass,
    has the stated tensor within ``tolerance`` (relative Frobenius) and whose implied density
    mass/volume(f) is inside the range widened by ``DENSITY_SLACK``. A tensor computed for the
    real part confirms the factor (its ratio to the mesh's is about f², at the mass as stated),
    where a density alone could be a filler mass on a real large or small part. ``extent``
    (the meshes' largest extent, m): when given, f x extent must lie inside ``extent_range``.
    """
    lo, hi = density_range
    if not (volume > 0 and mass > 0):
        return None
    if lo <= mass / volume <= hi:
        return None
    for f in UNIT_FACTORS:
        if extent is not None and not extent_range[0] <= extent * f <= extent_range[1]:
            continue
        if inertia is None or geometry_at is None:
            if lo <= mass / (volume * f**3) <= hi:
                return f
            continue
        geometry = geometry_at(f)
        if geometry is None or not geometry.mass > 0:
            continue
        if not lo / DENSITY_SLACK <= mass / geometry.mass <= hi * DENSITY_SLACK:
            continue
        expected = np.asarray(geometry.with_mass(mass).inertia, dtype=float)
        norm = float(np.linalg.norm(expected))
        if norm > 0 and float(np.linalg.norm(np.asarray(inertia, dtype=float) - expected)) <= tolerance * norm:
            return f
    return None
