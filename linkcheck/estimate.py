"""A link's uniform-density estimate: its bodies combined into one solid in the link frame.

Collision bodies first, visual ones when a link has none (or when the
collision proxy is far too small for the stated mass); the report says which.
Mesh loading is imported only when a link has a mesh.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from linkcheck.geometry.solid import Solid, once, primitive_solid, union
from linkcheck.model import NON_SOLID_SHAPES, Body, Finding, Link, Pose
from linkcheck.mesh_units import units_verdict
from linkcheck.settings import Settings


@dataclass(frozen=True)
class LinkEstimate:
    solid: Solid | None
    source: str | None = None  # "collision" | "visual"
    reason: str | None = None  # why there is no solid
    findings: tuple[Finding, ...] = ()
    #: The estimate with every COLLADA mesh turned by its <up_axis>, which ROS tools and the
    #: estimate ignore; set only when some mesh declares a non-Z up axis (names it in ``up_axis``).
    up_axis_solid: Solid | None = None
    up_axis: str | None = None
    #: Each body that went into ``solid``, with its own volume (m^3).
    volumes: tuple[tuple[Body, float], ...] = ()


@dataclass
class Estimator:
    """Estimates links, remembering each mesh once per run (a robot reuses its meshes)."""

    settings: Settings
    search: Any = None  # geometry.resolve.SearchPaths
    cache: Any = None  # geometry.cache.MeshCache | None
    _meshes: dict[tuple, Any] = field(default_factory=dict)

    def link(self, link: Link, stated_mass: float | None) -> LinkEstimate:
        first, second = ("visual", "collision") if self.settings.geometry == "visual" else ("collision", "visual")
        role = first if _solid_bodies(link, first) else second
        result = self._estimate(link, role)
        if role == "collision" and result.solid is not None and stated_mass and _solid_bodies(link, "visual"):
            result = self._maybe_prefer_visual(link, result, stated_mass)
        if stated_mass and stated_mass > 0 and np.isfinite(stated_mass):
            if result.solid is not None:
                result = self._mesh_units(link, result, stated_mass)
            else:
                result = self._extent_units(link, result, stated_mass)
        return result

    def _mesh_units(self, link: Link, result: LinkEstimate, mass: float) -> LinkEstimate:
        """A mesh of plausible size in the wrong units: the density, and the stated tensor or COM, say so.

        The stated mass over the volume is off by about f³ for a unit factor f, and the stated block
        fits the geometry with the mesh (all meshes, or one of several) scaled by f (see
        ``units.decide_scale``). Then ``mesh-units-suspect`` names the scale, and the estimate is not
        used (as for a mesh of implausible extent), so no rule blames the tensor or the mass and no
        fix rewrites the block from the wrongly scaled mesh. When only the density speaks (the
        tensor is a filler, impossible or missing) the finding says the mass may be what is wrong.
        """
        meshes = [b for b, _ in result.volumes if b.shape is not None and b.shape.kind == "mesh"]
        if not meshes or link.inertial is None or link.inertial.auto or result.solid is None:
            return result
        is_mesh = {id(b) for b in meshes}
        parts = []
        for body, _ in result.volumes:
            mesh = self._meshes.get(_mesh_key(body.shape)) if id(body) in is_mesh else None
            parts.append((body, mesh.solid if mesh is not None else primitive_solid(body.shape)))
        # all meshes in one unit, else one mesh of several (the largest first)
        largest = sorted(((b, v) for b, v in result.volumes if id(b) in is_mesh), key=lambda bv: -bv[1])
        options = [meshes] + ([[b] for b, _ in largest] if len(meshes) > 1 else [])
        found = units_verdict(link, parts, options, mass, False, self.settings)
        if found is None:
            return result
        notes, chosen, untrusted_mass = found
        uris = ", ".join(f"'{b.shape.uri}'" for b in chosen)  # type: ignore[union-attr]
        why = ", or the mass is wrong" if untrusted_mass else ""
        reason = f"mesh {uris} looks scaled in the wrong units{why} (see mesh-units-suspect), so the link's estimate is not used"
        return LinkEstimate(None, result.source, reason, result.findings + notes)

    def _extent_units(self, link: Link, result: LinkEstimate, mass: float) -> LinkEstimate:
        """A mesh of implausible size: let the stated mass, tensor and COM choose its unit factor.

        The mesh's own finding knows only its size, and suggests the first factor that brings it
        into range (0.001 for anything over 5 m). A 200 mm part in inches reads 7.874 m; its stated
        block fits 0.0254, not 0.001. The finding is replaced when the block says more.
        """
        if result.source is None or link.inertial is None or link.inertial.auto:
            return result
        parts, suspects = [], []
        for body in link.bodies_of(result.source):
            if body.shape is None:
                return result
            if body.shape.kind in NON_SOLID_SHAPES:
                continue
            solid, _, _ = self._body_solid(body)
            if solid is None and body.shape.kind == "mesh":
                mesh = self._meshes[_mesh_key(body.shape)]
                if mesh.solid is None:
                    return result  # unreadable, not merely of implausible size
                solid = mesh.solid
                suspects.append(body)
            if solid is None:
                return result
            parts.append((body, solid))
        if not suspects:
            return result
        found = units_verdict(link, parts, [suspects], mass, True, self.settings)
        if found is None:
            return result
        uris = {b.shape.uri for b in suspects}  # type: ignore[union-attr]
        kept = tuple(f for f in result.findings
                     if not (f.rule == "mesh-units-suspect" and (f.data or {}).get("uri") in uris))
        return replace(result, findings=kept + found[0])

    def _maybe_prefer_visual(self, link: Link, collision: LinkEstimate, mass: float) -> LinkEstimate:
        """A collision proxy far smaller than the visual geometry gives absurd densities: use the visual."""
        if mass / collision.solid.volume <= self.settings.density_max:  # type: ignore[union-attr]
            return collision
        visual = self._estimate(link, "visual")
        if visual.solid is None or visual.solid.volume < 10 * collision.solid.volume:  # type: ignore[union-attr]
            return collision
        if not self.settings.density_min <= mass / visual.solid.volume <= self.settings.density_max:
            return collision
        ratio = visual.solid.volume / collision.solid.volume  # type: ignore[union-attr]
        note = Finding(
            "geometry-note",
            "info",
            f"link '{link.name}': the collision geometry is {ratio:.0f}x smaller in volume than the visual "
            "geometry, too small for the stated mass: the estimate uses the visual geometry",
            link.name,
            link.line,
        )
        return replace(visual, findings=collision.findings + visual.findings + (note,))

    def _estimate(self, link: Link, role: str) -> LinkEstimate:
        solids: list[Solid] = []
        turned: list[Solid] = []
        volumes: list[tuple[Body, float]] = []
        axes: set[str] = set()
        notes: list[Finding] = []
        for body in link.bodies_of(role):
            if body.shape is None:
                return LinkEstimate(None, role, f"a {role} geometry could not be read (see the finding at its line)", tuple(notes))
            if body.shape.kind in NON_SOLID_SHAPES:
                continue  # no volume: the reader has said so where it read the shape
            solid, found, why = self._body_solid(body)
            notes.extend(replace(f, link=link.name, line=body.line,
                                 message=f.message if f.message.startswith("link '") else f"link '{link.name}': {f.message}")
                         for f in found)
            if solid is None:
                return LinkEstimate(None, role, why, tuple(notes))
            solids.append(solid.transformed(body.pose))
            volumes.append((body, solid.volume))
            up = self._up_axis(body)
            turned.append(solid.transformed(body.pose.compose(Pose(up[1]))) if up else solids[-1])
            axes |= {up[0]} if up else set()
        if not solids:
            return LinkEstimate(None, None, "the link has no geometry with volume", tuple(notes))
        alternative = union(turned) if axes else None
        return LinkEstimate(union(solids), role, None, tuple(notes), alternative, ", ".join(sorted(axes)) or None,
                            tuple(volumes))

    def _up_axis(self, body: Body) -> tuple[str, np.ndarray] | None:
        """(up_axis, rotation) of a COLLADA mesh body whose up axis is not +z, else None."""
        shape = body.shape
        if shape is None or shape.kind != "mesh":
            return None
        result = self._meshes.get(_mesh_key(shape))
        axis = getattr(result, "up_axis", None)
        if axis not in ("X_UP", "Y_UP"):
            return None
        from linkcheck.geometry.mesh_io import up_axis_rotation

        return axis, up_axis_rotation(axis)

    def _body_solid(self, body: Body) -> tuple[Solid | None, list[Finding], str | None]:
        shape = body.shape
        assert shape is not None
        if shape.kind != "mesh":
            try:
                return primitive_solid(shape), [], None
            except ValueError as exc:
                return None, [Finding("value-malformed", "error", f"{shape.kind} {exc}")], f"its {shape.kind} is malformed"
        key = _mesh_key(shape)
        if key not in self._meshes:
            self._meshes[key] = self._mesh(shape)
        result = self._meshes[key]
        if result.solid is None or not result.trusted:
            return None, list(result.findings), f"mesh '{shape.uri}' cannot be used for the estimate"
        return result.solid, list(result.findings), None

    def _mesh(self, shape: Any) -> Any:
        from linkcheck.geometry.mesh import mesh_estimate
        from linkcheck.geometry.mesh_io import mesh_vertices

        result = mesh_estimate(shape.uri or "", shape.base_dir, shape.scale, self.search, self.cache,
                               max_extent=self.settings.mesh_max_extent, min_extent=self.settings.mesh_min_extent,
                               submesh=shape.submesh, center=shape.center)
        if result.solid is None or result.path is None:
            return result
        cheap = result.solid.points

        def hull() -> np.ndarray:
            exact = mesh_vertices(result.path, shape.scale, shape.submesh, shape.center)
            return cheap if exact is None else exact

        return replace(result, solid=replace(result.solid, refine=once(hull)))


#: SDFormat's density when neither the collision nor the link gives one (FORMATS.md §2.5).
SDF_DEFAULT_DENSITY = 1000.0


def density_mass(volumes: tuple[tuple[Body, float], ...], link_density: float | None) -> tuple[float, tuple[float, ...]]:
    """Σ ρ_i V_i over the bodies, ρ by SDF precedence: collision <density> > link <inertial><density> > 1000.

    Returns the mass and the distinct densities used.
    """
    default = link_density if link_density else SDF_DEFAULT_DENSITY
    rhos = [b.density if b.density is not None else default for b, _ in volumes]
    return sum(r * v for r, (_, v) in zip(rhos, volumes)), tuple(sorted(set(rhos)))


def _mesh_key(shape: Any) -> tuple:
    return (shape.uri, str(shape.base_dir), tuple(shape.scale), shape.submesh, shape.center)


def _solid_bodies(link: Link, role: str) -> list[Body]:
    return [b for b in link.bodies_of(role) if b.shape is None or b.shape.kind not in NON_SOLID_SHAPES]
