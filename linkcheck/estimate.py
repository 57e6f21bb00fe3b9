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
from linkcheck.inertia import MassProperties, combine
from linkcheck.model import NON_SOLID_SHAPES, Body, Finding, Link, Pose
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
        if result.solid is not None and stated_mass and stated_mass > 0:
            result = self._mesh_units(link, result, stated_mass)
        return result

    def _mesh_units(self, link: Link, result: LinkEstimate, mass: float) -> LinkEstimate:
        """A mesh of plausible size in the wrong units: its density and the stated tensor both say so.

        The stated mass over the mesh volume is off by about f³ for a unit factor f, and the stated
        tensor is that of the geometry with its meshes scaled by f, at the stated mass: the block
        was computed for the real part and the mesh is what is off. Then ``mesh-units-suspect``
        names the scale, and the estimate is not used (as for a mesh of implausible extent), so no
        rule blames the tensor or the mass and no fix rewrites the block from the wrong mesh.
        """
        meshes = [b for b, _ in result.volumes if b.shape is not None and b.shape.kind == "mesh"]
        inertial = link.inertial
        solid = result.solid
        if not meshes or inertial is None or inertial.auto or solid is None or not np.isfinite(mass):
            return result
        tensor = inertial.mass_properties().inertia
        if not (np.all(np.isfinite(tensor)) and np.trace(tensor) > 0):
            return result
        from linkcheck.geometry.units import suggest_scale

        own = {id(b): self._meshes[_mesh_key(b.shape)].solid for b in meshes}
        extent = max(float((s.points.max(axis=0) - s.points.min(axis=0)).max()) for s in own.values())
        settings = self.settings

        def geometry_at(f: float) -> MassProperties:
            parts = []
            for body, _ in result.volumes:
                base = _scaled_props(own[id(body)].props, f) if id(body) in own else primitive_solid(body.shape).props
                parts.append(base.transformed(body.pose.rotation, body.pose.translation))
            return combine(parts)

        factor = suggest_scale(solid.volume, mass, (settings.density_min, settings.density_max), inertia=tensor,
                               geometry_at=geometry_at, tolerance=settings.units_tolerance, extent=extent,
                               extent_range=(settings.mesh_min_extent, settings.mesh_max_extent))
        if factor is None:
            return result
        notes = tuple(_units_note(link, body, factor, mass, solid.volume, geometry_at(factor).mass, tensor,
                                  solid.props.with_mass(mass).inertia, settings) for body in meshes)
        uris = ", ".join(f"'{b.shape.uri}'" for b in meshes)  # type: ignore[union-attr]
        reason = f"mesh {uris} looks scaled in the wrong units (see mesh-units-suspect), so its estimate is not used"
        return LinkEstimate(None, result.source, reason, result.findings + notes)

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


def _scaled_props(props: MassProperties, f: float) -> MassProperties:
    """A unit-density solid with its coordinates multiplied by ``f`` about its frame's origin."""
    return MassProperties(props.mass * f**3, np.asarray(props.com, dtype=float) * f, np.asarray(props.inertia, dtype=float) * f**5)


def _units_note(link: Link, body: Body, factor: float, mass: float, volume: float, volume_at: float,
                tensor: np.ndarray, estimated: np.ndarray, settings: Settings) -> Finding:
    """The mesh-units-suspect finding of one mesh of ``link`` whose coordinates look off by ``factor``."""
    from linkcheck.checks import words
    from linkcheck.geometry.units import UNIT_WORDS

    shape = body.shape
    assert shape is not None
    lo, hi = settings.density_min, settings.density_max
    scale = [s * factor for s in shape.scale]
    text = " ".join(f"{s:.6g}" for s in scale)
    rho, rho_at = mass / volume, mass / volume_at
    ratio = float(np.trace(tensor) / np.trace(estimated))
    if lo <= rho_at <= hi:
        after = f"a plausible {words.num(rho_at)} kg/m³"
    else:
        side = "above" if rho_at > hi else "below"
        after = (f"{words.num(rho_at)} kg/m³, still {side} the plausible {words.num(lo)}–{words.num(hi)}: "
                 "check the mass as well")
    return Finding(
        "mesh-units-suspect",
        "warning",
        f"link '{link.name}': mesh '{shape.uri}' looks like {UNIT_WORDS.get(factor, 'the wrong unit')}: "
        f"{words.kg(mass)} in its {words.num(volume * 1e6)} cm³ is {words.num(rho)} kg/m³, and the stated tensor "
        f"({words.num(ratio)}x the mesh's) is that of the geometry scaled by {factor:g} at the stated mass; "
        f"scale=\"{text}\" makes the density {after}. Until the scale is fixed the link's estimate is not used",
        link.name,
        body.line,
        data={"uri": shape.uri, "factor": factor, "scale": scale, "density": rho, "scaled_density": rho_at},
    )


def _mesh_key(shape: Any) -> tuple:
    return (shape.uri, str(shape.base_dir), tuple(shape.scale), shape.submesh, shape.center)


def _solid_bodies(link: Link, role: str) -> list[Body]:
    return [b for b in link.bodies_of(role) if b.shape is None or b.shape.kind not in NON_SOLID_SHAPES]
