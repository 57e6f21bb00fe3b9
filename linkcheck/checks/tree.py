"""Rules about a link's place in the tree: missing blocks and massless moving links."""

from __future__ import annotations

from collections.abc import Iterator

from linkcheck.checks.context import LinkContext
from linkcheck.model import Finding


def _has_geometry(ctx: LinkContext) -> bool:
    return any(b.shape is not None for b in ctx.link.bodies)


def inertial_missing(ctx: LinkContext) -> Iterator[Finding]:
    if ctx.link.inertial_state != "absent":
        return
    moved = ctx.parent_joint is not None and ctx.parent_joint.movable and ctx.subtree_mass <= 0
    if ctx.format == "sdf":
        if not _has_geometry(ctx) and not moved:
            return
        use = "simulators silently use 1 kg and diag(1, 1, 1) kg m², far off for most links"
    else:
        if not _has_geometry(ctx):
            return
        use = "the link is massless to simulators and dynamics libraries"
        if moved:
            use += f", and it is moved by {ctx.parent_joint.type} joint '{ctx.parent_joint.name}', so simulators drop it"  # type: ignore[union-attr]
    what = "geometry" if _has_geometry(ctx) else "no geometry"
    yield Finding("inertial-missing", "warning", f"link '{ctx.name}' has {what} but no inertial block: {use}",
                  ctx.name, ctx.line, True)


def massless_moving_link(ctx: LinkContext) -> Iterator[Finding]:
    joint = ctx.parent_joint
    if joint is None or not joint.movable or ctx.subtree_mass > 0:
        return
    if ctx.link.inertial_state == "absent" and (_has_geometry(ctx) or ctx.format == "sdf"):
        return  # inertial-missing already says it, with the joint
    if ctx.link.inertial_state == "malformed":
        return
    yield Finding(
        "massless-moving-link",
        "warning",
        f"link '{ctx.name}' is moved by {joint.type} joint '{joint.name}' but neither it nor the links it "
        "carries have mass: simulators drop massless moving links with their subtree; give it a small "
        "mass and inertia, or make the joint fixed",
        ctx.name,
        ctx.line,
        True,
    )


RULES = (inertial_missing, massless_moving_link)
