"""Link-level unit checks: a mesh whose scale looks off, judged by the link's stated block.

geometry/units.py decides the factor from numbers (density, tensor, COM, extents); this module
builds the options (all meshes of a link scaled together, or one of several), weighs the stated
tensor as evidence, and words the ``mesh-units-suspect`` finding the estimator reports.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from linkcheck.geometry.solid import Solid
from linkcheck.geometry import units
from linkcheck.inertia import MassProperties, combine
from linkcheck.model import Body, Finding, Link
from linkcheck.settings import Settings


def units_verdict(link: Link, parts: list[tuple[Body, Solid]], options: list[list[Body]], mass: float,
                  extent_flagged: bool, settings: Settings) -> tuple[tuple[Finding, ...], list[Body], bool] | None:
    """The mesh-units-suspect findings of the best-supported option (meshes scaled together), or None.

    ``parts``: every solid body of the link with its unit-density solid in its own frame. A
    verdict from the size alone is no news (the mesh's own finding says it). An option that
    scales only some of the meshes needs more than the density: the stated tensor, or the
    stated COM at the scaled centroid. Returns (findings, the chosen meshes, whether the mass
    may be what is wrong instead).
    """
    stated = link.inertial.mass_properties()  # type: ignore[union-attr]
    tensor, tensor_words = tensor_evidence(stated.inertia, settings)
    meshes = sum(1 for b, _ in parts if b.shape is not None and b.shape.kind == "mesh")
    volume = sum(float(s.props.mass) for _, s in parts)  # unit density: mass is volume
    best = None
    for option in options:
        ids = {id(b) for b in option}

        def geometry_at(f: float, ids: set[int] = ids) -> MassProperties:
            return combine([(scaled_props(s.props, f) if id(b) in ids else s.props)
                            .transformed(b.pose.rotation, b.pose.translation) for b, s in parts])

        spans = [units.span(s.points) for b, s in parts if id(b) in ids]
        verdict = units.decide_scale(volume, mass, (settings.density_min, settings.density_max), inertia=tensor,
                               com=stated.com, geometry_at=geometry_at, tolerance=settings.units_tolerance,
                               extent=spans, extent_range=(settings.mesh_min_extent, settings.mesh_max_extent),
                               size_tolerance=settings.mismatch_scale_warn)
        if verdict is None or verdict.evidence == "extent" or (len(option) < meshes and verdict.strength < 2):
            continue
        if best is None or verdict.strength > best[0].strength:
            best = (verdict, option, geometry_at)
    if best is None:
        return None
    verdict, option, geometry_at = best
    as_is = geometry_at(1.0)
    several = len(parts) > 1
    notes = tuple(units_note(link, body, verdict, mass, as_is, stated.inertia, tensor_words, settings,
                              units.span(solid.points) if extent_flagged else None, several)
                  for body, solid in parts if id(body) in {id(b) for b in option})
    return notes, option, verdict.evidence == "density"


def scaled_props(props: MassProperties, f: float) -> MassProperties:
    """A unit-density solid with its coordinates multiplied by ``f`` about its frame's origin."""
    return MassProperties(props.mass * f**3, np.asarray(props.com, dtype=float) * f, np.asarray(props.inertia, dtype=float) * f**5)


def tensor_evidence(tensor: np.ndarray, settings: Settings) -> tuple[np.ndarray | None, str]:
    """(the stated tensor, or None when it cannot confirm a unit factor; words on why it cannot).

    Zero, non-finite, the identity, or not a physical tensor (a principal moment <= eps, or the
    triangle inequality broken) carry no size. A tensor that can tell may still fit no factor:
    then the words say so (equal moments: a filler).
    """
    from linkcheck.inertia import principal

    t = np.asarray(tensor, dtype=float)
    if not np.all(np.isfinite(t)) or not np.trace(t) > 0:
        return None, "it is zero or missing"
    eps = settings.tensor_rtol * float(np.trace(t))
    if np.allclose(t, np.eye(3), rtol=0, atol=eps):
        return None, "it is the identity, a filler"
    moments = principal(t)[0]
    if moments[0] <= eps or moments[0] + moments[1] < moments[2] - eps:
        return None, "it is not a physical tensor"
    d = np.diag(t)
    if np.max(np.abs(t - np.diag(d))) <= eps and d.max() <= d.min() * (1 + settings.placeholder_equal_tolerance):
        return t, "its moments are all equal, a filler"
    return t, "it fits the geometry neither as it stands nor scaled"


def units_note(link: Link, body: Body, verdict: Any, mass: float, as_is: MassProperties, tensor: np.ndarray,
                tensor_words: str, settings: Settings, span: float | None, several: bool) -> Finding:
    """The mesh-units-suspect finding of one mesh of ``link`` whose coordinates look off by ``verdict.factor``.

    ``as_is``: the link geometry at unit density as it stands; ``span``: the mesh's extent when it
    is of implausible size (its own finding is replaced), else None.
    """
    from linkcheck.checks import words

    shape = body.shape
    assert shape is not None
    lo, hi = settings.density_min, settings.density_max
    factor = verdict.factor
    scale = [s * factor for s in shape.scale]
    text = " ".join(f"{s:.6g}" for s in scale)
    volume = float(as_is.mass)
    rho, rho_at = mass / volume, float(verdict.density)
    unit = units.UNIT_WORDS.get(factor, "the wrong unit")
    if factor > 1 and all(abs(s) >= 1 for s in shape.scale):
        unit = f"coordinates {factor:g}x too small (converted from millimetres the wrong way)"  # no scale to blame
    head = f"link '{link.name}': mesh '{shape.uri}'"
    resize = ""
    if span is not None:
        limit = settings.mesh_max_extent if span > settings.mesh_max_extent else settings.mesh_min_extent
        head += f" is {span:.4g} m across after scale, {'larger' if span > limit else 'smaller'} than {limit:g} m, and"
        resize = f"it {span * factor:.4g} m across and "
    what = "this mesh" if several else "the mesh"
    whose = "the link's" if several else "its"
    density = (f"{words.kg(mass)} in {words.num(volume * 1e6)} cm³ of {whose} geometry "
               f"is {words.num(rho)} kg/m³")
    com = "; the stated centre of mass is the centroid of the scaled geometry" if verdict.com else ""
    others = list(verdict.alternatives)
    if verdict.evidence == "tensor":
        ratio = float(np.trace(tensor) / np.trace(as_is.with_mass(mass).inertia))
        if verdict.mass_factor != 1.0:
            mf = verdict.mass_factor
            mass_unit = "grams given as kilograms" if mf < 1 else "tonnes given as kilograms"
            off = f"{1 / mf:g}x too dense" if mf < 1 else f"{mf:g}x too light"
            after = (f"{words.num(rho_at)} kg/m³, {off}: the mass, and the "
                     f"tensor with it, also look like {mass_unit} ({words.kg(mass * verdict.mass_factor)} would be "
                     f"{words.num(rho_at * verdict.mass_factor)} kg/m³)")
        elif lo <= rho_at <= hi:
            after = f"a plausible {words.num(rho_at)} kg/m³"
        else:
            side = "above" if rho_at > hi else "below"
            after = (f"{words.num(rho_at)} kg/m³, still {side} the plausible {words.num(lo)}–{words.num(hi)}: "
                     "check the mass as well")
        message = (f"{head} looks like {unit}: {density}, and the stated tensor ({words.num(ratio)}x the geometry's) "
                   f"is that of the geometry with {what} scaled by {factor:g} at the stated mass{com}; "
                   f"scale=\"{text}\" makes {resize}the density {after}. Until the scale is fixed the link's "
                   "estimate is not used")
    else:
        alt = ("; the density alone allows " + ", ".join(f"{f:g} ({units.UNIT_WORDS.get(f, 'another unit')})" for f in others)
               + " as well" if others else "")
        message = (f"{head} looks like {unit}, or the mass is wrong: {density}; scale=\"{text}\" makes {resize}"
                   f"the density a plausible {words.num(rho_at)} kg/m³{com}, and the stated tensor cannot tell ({tensor_words}){alt}. "
                   "Fix the scale, or the mass if the mesh is right; until then the link's estimate is not used")
    return Finding(
        "mesh-units-suspect",
        "warning",
        message,
        link.name,
        body.line,
        data={"uri": shape.uri, "factor": factor, "scale": scale, "density": rho, "scaled_density": rho_at,
              "evidence": verdict.evidence, "mass_factor": verdict.mass_factor, "alternatives": list(others),
              **({"extent": span} if span is not None else {})},
    )
