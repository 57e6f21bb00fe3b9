"""Rules no stated block may break, whatever the geometry: they always report."""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from linkcheck import inertia as mp
from linkcheck.checks import words
from linkcheck.checks.context import LinkContext
from linkcheck.model import Finding


def _finding(ctx: LinkContext, rule: str, severity: str, message: str, fixable: bool = True, **data: object) -> Finding:
    line = ctx.inertial.line if ctx.inertial is not None else ctx.line
    return Finding(rule, severity, f"link '{ctx.name}': {message}", ctx.name, line, fixable, dict(data))  # type: ignore[arg-type]


def is_massless_frame(ctx: LinkContext) -> bool:
    """mass 0 with a zero tensor and no geometry: an explicit massless frame, not an error."""
    s = ctx.stated
    return s is not None and s.mass == 0 and not np.any(s.inertia) and ctx.estimate is None and not ctx.link.bodies


def mass_not_positive(ctx: LinkContext) -> Iterator[Finding]:
    s = ctx.stated
    if s is None or s.mass > 0 or is_massless_frame(ctx):
        return
    what = "negative" if s.mass < 0 else "zero"
    yield _finding(
        ctx,
        "mass-not-positive",
        "error",
        f"mass is {words.num(s.mass)} kg ({what}): a link with geometry or inertia needs a positive mass; "
        "simulators drop or reject it",
        fixable=True,
        needs="density",
    )


def inertia_not_positive_definite(ctx: LinkContext) -> Iterator[Finding]:
    s = ctx.stated
    if s is None or is_massless_frame(ctx):
        return
    if not np.any(s.inertia):
        if s.mass > 0:
            yield _finding(ctx, "inertia-not-positive-definite", "error",
                           f"inertia tensor is all zero for a {words.kg(s.mass)} link: a body with mass "
                           "has positive moments about every axis")
        return
    moments = ctx.stated_moments
    if mp.is_positive_definite(s.inertia, ctx.settings.tensor_rtol, moments):
        return
    low = "negative" if moments[0] < 0 else "zero"
    yield _finding(
        ctx,
        "inertia-not-positive-definite",
        "error",
        f"principal moments {words.moments(moments)}: the smallest is {low}, so the tensor is not "
        "positive-definite and no rigid body has it",
        moments=moments.tolist(),
    )


def inertia_triangle_inequality(ctx: LinkContext) -> Iterator[Finding]:
    s = ctx.stated
    if s is None or not np.any(s.inertia):
        return
    moments = ctx.stated_moments
    if moments[0] <= 0 or mp.satisfies_triangle(s.inertia, ctx.settings.tensor_rtol, moments):
        return
    i = s.inertia
    deficit = mp.triangle_deficit(i, moments) / moments[2]
    if np.allclose(i - np.diag(np.diag(i)), 0, atol=mp.tolerance(i, ctx.settings.tensor_rtol)):
        order = np.argsort(np.diag(i))
        axis = ("ixx", "iyy", "izz")
        small = f"{axis[order[0]]} + {axis[order[1]]} < {axis[order[2]]}"
    else:
        small = "I1 + I2 < I3 (principal moments)"
    yield _finding(
        ctx,
        "inertia-triangle-inequality",
        "error",
        f"{small} by {words.percent(deficit)}: no rigid body has these moments {words.moments(moments)}",
        moments=moments.tolist(),
    )


def inertia_exceeds_geometry(ctx: LinkContext) -> Iterator[Finding]:
    s, e = ctx.stated, ctx.estimate
    if s is None or e is None or s.mass <= 0 or not np.any(s.inertia):
        return
    from linkcheck.geometry.hull import max_distance

    centre = (e.points.min(axis=0) + e.points.max(axis=0)) / 2
    half_trace = float(np.trace(s.inertia)) / 2
    factor = ctx.settings.exceeds_geometry_factor * s.mass
    radius = max_distance(e.points, centre)
    if half_trace > factor * radius**2 and e.approximate:
        # the cheap points may lie inside the body; its enclosing spheres bound the reach from
        # above, so every vertex is read only when the stated moments fall between the two bounds
        radius = e.reach(centre)
        if half_trace <= factor * radius**2:
            radius = max_distance(e.exact_points(), centre)
    bound = factor * radius**2
    if half_trace <= bound:
        return
    yield _finding(
        ctx,
        "inertia-exceeds-geometry",
        "error",
        f"moments too large for the geometry: (ixx + iyy + izz)/2 = {words.num(half_trace)} kg m², but no "
        f"{words.kg(s.mass)} body inside this {ctx.geometry_source or 'link'} geometry (every point within "
        f"{words.length(radius)} of its centre) can exceed {words.num(bound / ctx.settings.exceeds_geometry_factor)} kg m²",
        ratio=half_trace / bound,
    )


RULES = (mass_not_positive, inertia_not_positive_definite, inertia_triangle_inequality, inertia_exceeds_geometry)
