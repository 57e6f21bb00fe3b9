"""Rules that compare the stated block with the uniform-density estimate of the link's geometry.

Each diagnosis that explains a discrepancy (placeholder, units, product sign,
reference point) replaces the generic inertia-mismatch; com-outside-geometry
replaces com-offset (see ``PRECEDENCE``).
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from linkcheck import inertia as mp
from linkcheck.checks import words
from linkcheck.checks.context import LinkContext
from linkcheck.checks.physical import _finding
from linkcheck.model import Finding

#: rule -> the rules it replaces on the same link.
PRECEDENCE = {
    "inertia-not-positive-definite": ("inertia-mismatch",),
    "inertia-triangle-inequality": ("inertia-mismatch",),
    "inertia-exceeds-geometry": ("inertia-mismatch",),
    "inertia-placeholder": ("inertia-mismatch",),
    "inertia-units-suspect": ("inertia-mismatch",),
    "inertia-product-sign": ("inertia-mismatch",),
    "inertia-wrong-reference-point": ("inertia-mismatch",),
    "com-outside-geometry": ("com-offset",),
}

UNIT_POWERS = (3, -3, 6, -6, 9, -9)
UNIT_WORDS = {
    3: "as if given in g·m² (or kg·mm²/1000) instead of kg·m²",
    -3: "as if the mass were in tonnes, or the tensor in kg·m² x 1000",
    6: "as if given in kg·mm² instead of kg·m²",
    -6: "as if converted from kg·m² to kg·mm² in the wrong direction",
    9: "as if given in g·mm² instead of kg·m²",
    -9: "as if converted from g·mm² in the wrong direction",
}


def _rel(a: np.ndarray, b: np.ndarray) -> float:
    """|a - b|_F / |b|_F."""
    nb = float(np.linalg.norm(b))
    return float(np.linalg.norm(a - b)) / nb if nb > 0 else np.inf


def _comparable(ctx: LinkContext) -> bool:
    s = ctx.stated
    return s is not None and s.mass > 0 and ctx.estimate is not None and ctx.estimate.volume > 0


def _estimated(ctx: LinkContext) -> np.ndarray:
    return ctx.estimated.inertia  # type: ignore[union-attr]


def _products(i: np.ndarray) -> np.ndarray:
    return i - np.diag(np.diag(i))


def inertia_placeholder(ctx: LinkContext) -> Iterator[Finding]:
    s = ctx.stated
    if s is None or s.mass <= 0:
        return
    i = s.inertia
    # an inertial origin with rpy turns a filler into link axes with rounding noise (~1e-20) in every entry
    noise = ctx.settings.tensor_rtol * abs(float(np.trace(i)))
    if np.allclose(i, np.eye(3), rtol=0, atol=noise):
        sdf = ctx.format == "sdf" and s.mass == 1.0
        what = "mass 1 kg and diag(1, 1, 1) kg m², the values simulators fill in" if sdf else "the identity, diag(1, 1, 1) kg m²"
        hint = f"; the geometry gives {words.tensor(_estimated(ctx))}" if _comparable(ctx) else ""
        yield _finding(ctx, "inertia-placeholder", "warning", f"stated block is {what}: a filler, not a measurement{hint}")
        return
    if not _comparable(ctx):
        return
    d = np.diag(i)
    tol = ctx.settings.placeholder_equal_tolerance
    if np.max(np.abs(_products(i))) > noise or d.min() <= 0 or d.max() > d.min() * (1 + tol):
        return
    est = mp.principal(_estimated(ctx))[0]
    if est[0] <= 0 or est[2] / est[0] <= ctx.settings.placeholder_anisotropy:
        return
    yield _finding(
        ctx,
        "inertia-placeholder",
        "warning",
        f"stated moments are all {words.num(d.mean())} kg m² (a sphere's), but the geometry is "
        f"{words.num(est[2] / est[0], 2)}x stiffer about one axis than another: looks like a filler value; "
        f"the geometry gives {words.tensor(_estimated(ctx))}",
        anisotropy=float(est[2] / est[0]),
    )


def inertia_units_suspect(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    i, est = ctx.stated.inertia, _estimated(ctx)  # type: ignore[union-attr]
    for power in UNIT_POWERS:
        scaled = est * 10.0**power
        if _rel(i, scaled) <= ctx.settings.units_tolerance:
            ratio = np.trace(i) / np.trace(est)
            yield _finding(
                ctx,
                "inertia-units-suspect",
                "warning",
                f"stated tensor is {words.num(ratio)}x the geometry's, close to 10^{power}: "
                f"{UNIT_WORDS[power]}",
                power=power,
            )
            return


def inertia_wrong_reference_point(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    s = ctx.stated
    est = ctx.estimated
    at_origin = est.about(np.zeros(3))  # type: ignore[union-attr]
    if _rel(at_origin, est.inertia) <= ctx.settings.reference_point_matters:  # type: ignore[union-attr]
        return
    if _rel(s.inertia, at_origin) > ctx.settings.reference_point_tolerance:  # type: ignore[union-attr]
        return
    yield _finding(
        ctx,
        "inertia-wrong-reference-point",
        "warning",
        "stated tensor equals the geometry's inertia about the link origin, not about the centre of mass "
        f"({words.length(float(np.linalg.norm(est.com)))} away): it looks like the parallel axis shift was "  # type: ignore[union-attr]
        "applied twice or not undone",
    )


def inertia_product_sign(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    est = _estimated(ctx)
    if np.linalg.norm(_products(est)) <= ctx.settings.product_sign_matters * np.linalg.norm(est):
        return
    flipped = est - 2 * _products(est)
    if _rel(ctx.stated.inertia, flipped) > ctx.settings.reference_point_tolerance:  # type: ignore[union-attr]
        return
    yield _finding(
        ctx,
        "inertia-product-sign",
        "warning",
        "stated products of inertia have the opposite sign of the geometry's: CAD tools report products "
        "as +∫xy dm, URDF and SDFormat want the tensor entry −∫xy dm",
    )


def inertia_mismatch(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx) or not np.any(ctx.stated.inertia):  # type: ignore[union-attr]
        return
    i, est = ctx.stated.inertia, _estimated(ctx)  # type: ignore[union-attr]
    if not np.trace(i) > 0:
        return  # no proportions to compare; inertia-not-positive-definite reports such a tensor
    scale = float(np.trace(i) / np.trace(est))
    shape = _rel(i / np.trace(i), est / np.trace(est))
    cfg = ctx.settings
    if scale > cfg.mismatch_scale_warn or scale < 1 / cfg.mismatch_scale_warn or shape > cfg.mismatch_shape_warn:
        severity = "warning"
    elif scale > cfg.mismatch_scale_info or scale < 1 / cfg.mismatch_scale_info or shape > cfg.mismatch_shape_info:
        severity = "info"
    else:
        return
    parts = []
    if not (1 / cfg.mismatch_scale_info <= scale <= cfg.mismatch_scale_info):
        parts.append(f"moments are {words.num(scale, 2)}x those of a uniform body of this shape and mass")
    if shape > cfg.mismatch_shape_info:
        if _rel(mp.principal(i)[0], mp.principal(est)[0]) <= cfg.reference_point_tolerance:
            parts.append("the moments are the geometry's principal moments, but about other axes: the tensor "
                         "looks written in the shape's own axes (e.g. a cylinder's axis as z) while the geometry "
                         "is rotated, or rotated twice; give it in link axes, or the inertial origin the same rpy")
        else:
            parts.append(f"their proportions differ by {words.percent(shape)} (swapped axes or a different shape?)")
    yield _finding(
        ctx,
        "inertia-mismatch",
        severity,
        "; ".join(parts) + f"; stated {words.tensor(i)}, geometry gives {words.tensor(est)} "
        f"({ctx.geometry_source}, uniform density)",
        scale=scale,
        shape=shape,
    )


def com_outside_geometry(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    from linkcheck.geometry.hull import distance_to_hull

    com = ctx.stated.com  # type: ignore[union-attr]
    est = ctx.estimate
    gap = distance_to_hull(est.points, com)  # type: ignore[union-attr]
    size = ctx.diagonal
    if gap > ctx.settings.com_outside_tolerance * size and est.approximate:  # type: ignore[union-attr]
        gap = distance_to_hull(est.exact_points(), com)  # type: ignore[union-attr]
    if gap <= ctx.settings.com_outside_tolerance * size:
        return
    yield _finding(
        ctx,
        "com-outside-geometry",
        "warning",
        f"stated centre of mass lies {words.length(gap)} outside the {ctx.geometry_source} geometry "
        f"(link is {words.length(size)} across): no mass distribution inside the body has it",
        distance=gap,
    )


def com_offset(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    est = ctx.estimate.props.com  # type: ignore[union-attr]
    dist = float(np.linalg.norm(ctx.stated.com - est))  # type: ignore[union-attr]
    size = ctx.diagonal
    if size <= 0:
        return
    if dist > ctx.settings.com_offset_warn * size:
        severity = "warning"
    elif dist > ctx.settings.com_offset_info * size:
        severity = "info"
    else:
        return
    yield _finding(
        ctx,
        "com-offset",
        severity,
        f"stated centre of mass is {words.length(dist)} from the geometric centroid (link is "
        f"{words.length(size)} across); the {ctx.geometry_source} geometry puts it at "
        f"({', '.join(words.num(v if abs(v) > 1e-9 * size else 0.0) for v in est)}) m",
        distance=dist,
        fraction=dist / size,
    )


def density_implausible(ctx: LinkContext) -> Iterator[Finding]:
    if not _comparable(ctx):
        return
    mass, volume = ctx.stated.mass, ctx.estimate.volume  # type: ignore[union-attr]
    rho = mass / volume
    lo, hi = ctx.settings.density_min, ctx.settings.density_max
    if lo <= rho <= hi:
        return
    meshes = [b for b in ctx.link.bodies if b.shape is not None and b.shape.kind == "mesh"]
    unscaled = not any(tuple(b.shape.scale) != (1.0, 1.0, 1.0) for b in meshes)  # type: ignore[union-attr]
    reason = _density_reason(rho, mass, ctx.diagonal, lo, hi, unscaled, bool(meshes))
    fits = _tensor_fits_mass(ctx, rho, lo, hi)
    if fits is not None:
        unit = {-3: "grams given as kilograms", 3: "tonnes given as kilograms"}.get(round(np.log10(fits / mass)), "the wrong unit")
        reason = f"the stated tensor fits a mass of {words.kg(fits)}: the mass looks like {unit}"
    yield _finding(
        ctx,
        "density-implausible",
        "warning",
        f"{words.kg(mass)} in {words.num(volume * 1e6)} cm³ of {ctx.geometry_source} geometry is "
        f"{words.num(rho)} kg/m³ (plausible: {words.num(lo)}–{words.num(hi)}): {reason}",
        fixable=False,
        density=rho,
        tensor_fits_mass=fits,
    )


def _tensor_fits_mass(ctx: LinkContext, rho: float, lo: float, hi: float) -> float | None:
    """A mass off by a power of 1000 while the tensor is right: the mass, not the tensor, is wrong."""
    est = _estimated(ctx)
    for power in UNIT_POWERS:
        if lo <= rho * 10.0**power <= hi and _rel(ctx.stated.inertia, est * 10.0**power) <= ctx.settings.units_tolerance:  # type: ignore[union-attr]
            return ctx.stated.mass * 10.0**power  # type: ignore[union-attr]
    return None


def _density_reason(rho: float, mass: float, size: float, lo: float, hi: float, unscaled: bool = True,
                    meshes: bool = True) -> str:
    """The likely cause, named instead of blaming the density (``unscaled``: no mesh of the link has a
    scale; ``meshes``: the link has a mesh at all)."""
    from linkcheck.geometry.units import filler_mass

    typical = 1000.0
    power = round(float(np.log10(rho / typical)) / 3) * 3
    if rho > hi:
        if power >= 9 or size < 0.01:
            # too small a geometry: a unit scale too many (a metre mesh given 0.001), never a missing one
            if not meshes or unscaled:
                return "the geometry looks far too small: a tiny collision proxy" + (", or a mesh in the wrong units" if meshes else "")
            return "the geometry looks far too small: check the mesh scale (a metre mesh given 0.001?), or a tiny collision proxy"
        if power >= 3:
            return "the mass looks like grams given as kilograms, or the geometry is a small proxy of the real part"
        return "heavier than tungsten: check the mass and that the geometry is the whole part"
    if mass < 1e-3:
        if filler_mass(mass) or not meshes:
            return f"the mass ({words.kg(mass)}) looks like a sub-gram filler value"
        return f"a sub-gram mass ({words.kg(mass)}) on geometry this large: a filler value, or a mesh in the wrong units"
    if power <= -9 or size > 10:
        if not meshes:
            return "the geometry looks far too large: a collision proxy much larger than the part"
        if unscaled:
            return "the geometry looks far too large: a millimetre mesh without scale 0.001, or a proxy much larger than the part"
        return "the geometry looks far too large: check the mesh scale, or a proxy much larger than the part"
    if power <= -3:
        return "the mass looks like kilograms given as tonnes, or the geometry is much larger than the part"
    return "lighter than foam: a filler mass, or a hollow part modelled as solid"


RULES = (
    inertia_placeholder,
    inertia_units_suspect,
    inertia_wrong_reference_point,
    inertia_product_sign,
    inertia_mismatch,
    com_outside_geometry,
    com_offset,
    density_implausible,
)
