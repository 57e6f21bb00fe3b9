"""Units: mesh sizes and implied densities that look like millimetres read as metres (or the reverse), and the scale that fixes them."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from linkcheck.model import Finding
from linkcheck.settings import DEFAULT


#: Unit factors tried by the units hints: millimetres, centimetres, inches, and the reverse.
UNIT_FACTORS = (1e-3, 1e-2, 0.0254, 1e3)


def span(points: np.ndarray) -> float:
    """The largest extent of a point set along the axes, m."""
    return float((points.max(axis=0) - points.min(axis=0)).max())


def extent_finding(uri: str, points: np.ndarray, scale: tuple[float, ...], max_extent: float, min_extent: float) -> Finding | None:
    extent = span(points)
    if min_extent <= extent <= max_extent:
        return None
    large = extent > max_extent
    verdict = decide_scale(extent=extent, extent_range=(min_extent, max_extent))  # nothing known but the size
    factor = None if verdict is None else verdict.factor
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


#: Mass units a tensor-confirmed length factor may leave the stated mass off by: the plausible mass
#: is the stated one times 1e-3 (grams given as kilograms) or 1e3 (tonnes given as kilograms).
MASS_FACTORS = (1e-3, 1e3)

#: The stated COM is a geometry's centroid when it lies within this fraction of the geometry's
#: radius of gyration sqrt(tr I / m) from it (for a box about 10% of its diagonal).
COM_TOLERANCE = 0.25


@dataclass(frozen=True)
class ScaleVerdict:
    """A unit factor the mesh coordinates look off by, and what says so (see ``decide_scale``)."""

    factor: float
    #: "extent": the mesh size alone; "tensor": the stated tensor is that of the geometry scaled by
    #: ``factor`` at the stated mass; "density": only the stated mass over the volume (the tensor
    #: cannot tell), so the mass may be what is wrong instead.
    evidence: str
    density: float | None = None  # stated mass / volume of the geometry scaled by ``factor``, kg/m³
    mass_factor: float = 1.0  # the stated mass times this is plausible at ``factor`` (1e-3: grams as kg)
    com: bool = False  # the stated COM is the scaled geometry's centroid, not the geometry's as it stands
    alternatives: tuple[float, ...] = ()  # other factors the same evidence allows

    @property
    def strength(self) -> int:
        """Ranks verdicts: tensor > density backed by the COM > density alone > extent alone."""
        return {"extent": 0, "density": 1 + self.com, "tensor": 3}[self.evidence]


def filler_mass(mass: float) -> bool:
    """A sub-gram power of ten (1e-3, 1e-5 kg ...): the filler models carry, not a weighed part."""
    if not 0 < mass <= 1e-3:
        return False
    exponent = math.log10(mass)
    return abs(exponent - round(exponent)) < 1e-9


def decide_scale(
    volume: float | None = None,
    mass: float | None = None,
    density_range: tuple[float, float] = (DEFAULT.density_min, DEFAULT.density_max),
    *,
    inertia: np.ndarray | None = None,
    com: np.ndarray | None = None,
    geometry_at: Any = None,
    tolerance: float = DEFAULT.units_tolerance,
    extent: float | Sequence[float] | None = None,
    extent_range: tuple[float, float] = (DEFAULT.mesh_min_extent, DEFAULT.mesh_max_extent),
    size_tolerance: float = DEFAULT.mismatch_scale_warn,
) -> ScaleVerdict | None:
    """The unit factor (one of ``UNIT_FACTORS``) the mesh coordinates look off by, or None.

    The one decision for a mesh of implausible size and for one of plausible size with an
    implausible density. ``extent``: the suspect meshes' largest extents (m); a factor must bring
    every one inside ``extent_range``. ``volume``/``mass``: the link's volume as it stands (m³)
    and stated mass; ``geometry_at(f)``: the link geometry's unit-density MassProperties with the
    suspect meshes scaled by f (then ``volume`` may be None); ``inertia``/``com``: the stated
    tensor (kg m², about the COM; None when it cannot tell: a filler, impossible, missing) and COM.

    - Nothing but the size known (no mass), or the density plausible as it stands: a mesh of
      implausible size gets the first factor that brings it into range (shrinking or growing),
      "extent"; one of plausible size gets None.
    - The stated tensor is that of the geometry scaled by f at the stated mass (relative Frobenius
      within ``tolerance``): "tensor", when mass/volume(f) lies inside the density range widened by
      ``DENSITY_SLACK``, or does so with the mass in grams or tonnes (``mass_factor``). A tensor
      computed for the real part confirms the factor where a density alone could be a filler.
    - The stated tensor has the size of the geometry as it stands (trace ratio within
      ``size_tolerance``): the part is real, None (a mesh of implausible size still gets "extent").
    - Otherwise the density: the factors with mass/volume(f) inside the range, "density"; the
      first whose scaled centroid is the stated COM (when the geometry's as it stands is not),
      else the first, the others as ``alternatives``. A sub-gram power-of-ten mass with no COM
      behind the factor is a filler, not evidence. A factor whose centroid the stated COM
      contradicts (it is the centroid as it stands) is never chosen.
    """
    lo, hi = density_range
    spans = [] if extent is None else [float(e) for e in np.atleast_1d(extent)]

    def in_range(f: float) -> bool:
        return all(extent_range[0] <= e * f <= extent_range[1] for e in spans)

    candidates = [f for f in UNIT_FACTORS if in_range(f)]
    outside = not in_range(1.0)

    def by_extent() -> ScaleVerdict | None:
        if not outside:
            return None
        large = max(spans) > extent_range[1]
        for f in (UNIT_FACTORS if large else UNIT_FACTORS[::-1]):
            if (f < 1) == large and f in candidates:
                return ScaleVerdict(f, "extent")
        return None

    memo: dict[float, Any] = {}

    def at(f: float) -> Any:
        if f not in memo:
            g = geometry_at(f) if geometry_at is not None else None
            memo[f] = g if g is not None and g.mass > 0 else None
        return memo[f]

    def volume_at(f: float) -> float | None:
        if geometry_at is None:
            return volume * f**3 if volume else None
        g = at(f)
        return None if g is None else float(g.mass)

    base = volume if volume is not None else volume_at(1.0)
    if mass is None or not (np.isfinite(mass) and mass > 0) or not base or not base > 0:
        return by_extent()
    if lo <= mass / base <= hi:
        return by_extent()

    def centred(f: float) -> bool | None:
        g = at(f)
        if com is None or g is None or not np.all(np.isfinite(com)):
            return None
        radius = math.sqrt(max(float(np.trace(g.inertia)) / float(g.mass), 0.0))
        return float(np.linalg.norm(np.asarray(com, dtype=float) - g.com)) <= COM_TOLERANCE * radius

    as_is = centred(1.0)

    def com_for(f: float) -> bool:
        return as_is is False and centred(f) is True

    def com_against(f: float) -> bool:
        return as_is is True and centred(f) is False

    if inertia is not None and geometry_at is not None:
        stated = np.asarray(inertia, dtype=float)
        for f in candidates:
            g = at(f)
            if g is None or com_against(f):
                continue
            expected = np.asarray(g.with_mass(mass).inertia, dtype=float)
            norm = float(np.linalg.norm(expected))
            if not (norm > 0 and float(np.linalg.norm(stated - expected)) <= tolerance * norm):
                continue
            rho = mass / float(g.mass)
            for k in (1.0, *MASS_FACTORS):
                if lo / DENSITY_SLACK <= rho * k <= hi * DENSITY_SLACK:
                    return ScaleVerdict(f, "tensor", rho, k, com_for(f))
        g1 = at(1.0)
        if not outside and g1 is not None:
            ratio = float(np.trace(stated)) / float(np.trace(g1.with_mass(mass).inertia))
            if 1 / size_tolerance <= ratio <= size_tolerance:
                return None  # the tensor was computed for the mesh as it stands: a real part

    plausible = [f for f in candidates
                 if (v := volume_at(f)) and lo <= mass / v <= hi and not com_against(f)]
    backed = [f for f in plausible if com_for(f)]
    if not plausible or (not backed and filler_mass(mass)):
        return by_extent()
    f = (backed or plausible)[0]
    return ScaleVerdict(f, "density", mass / volume_at(f), 1.0, bool(backed),  # type: ignore[operator]
                        tuple(x for x in plausible if x != f))


def suggest_scale(
    volume: float,
    mass: float,
    density_range: tuple[float, float] = (DEFAULT.density_min, DEFAULT.density_max),
    **evidence: Any,
) -> float | None:
    """The factor of ``decide_scale`` (same arguments), or None."""
    verdict = decide_scale(volume, mass, density_range, **evidence)
    return None if verdict is None else verdict.factor
