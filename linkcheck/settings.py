"""Every tunable number of the rules, with the defaults DESIGN.md calibrated.

``config.py`` fills a Settings from pyproject.toml / linkcheck.toml and the
command line; checks read it through their LinkContext.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fnmatch import fnmatchcase
from typing import Any, NamedTuple


@dataclass(frozen=True)
class LinkOverride:
    """Per-link settings matched by a glob on the link name."""

    pattern: str
    ignore: tuple[str, ...] = ()
    density: float | None = None  # kg/m^3
    mass: float | None = None  # kg


class LinkSettings(NamedTuple):
    """What the ``[[links]]`` sections matching one link say."""

    ignore: tuple[str, ...]
    density: float | None
    mass: float | None


@dataclass(frozen=True)
class Settings:
    # --- rule selection and severities
    fail_on: str = "warning"  # error | warning | info | never
    select: tuple[str, ...] = ()  # empty: all rules
    ignore: tuple[str, ...] = ()
    severity: dict[str, str] = field(default_factory=dict)  # rule -> error|warning|info
    # --- tensor tests
    tensor_rtol: float = 1e-6  # eps = tensor_rtol x trace
    exceeds_geometry_factor: float = 1.01  # trace/2 > factor m R^2
    # --- centre of mass (fractions of L, the bounding-box diagonal)
    com_outside_tolerance: float = 0.01
    com_offset_warn: float = 0.25
    com_offset_info: float = 0.10
    # --- inertia-mismatch (scale s = tr ratio, shape q)
    mismatch_scale_warn: float = 3.0
    mismatch_scale_info: float = 1.5
    mismatch_shape_warn: float = 0.5
    mismatch_shape_info: float = 0.2
    # --- diagnoses
    units_tolerance: float = 0.25
    reference_point_tolerance: float = 0.1
    reference_point_matters: float = 0.3
    product_sign_matters: float = 0.1
    placeholder_equal_tolerance: float = 0.01
    placeholder_anisotropy: float = 1.5
    # --- density
    density_min: float = 50.0
    density_max: float = 25000.0
    default_density: float | None = None  # kg/m^3, used by --fill-missing
    # --- meshes
    mesh_max_extent: float = 5.0  # m
    mesh_min_extent: float = 0.001  # m
    # --- geometry and paths
    geometry: str = "collision"  # collision (visual only when a link has none) | visual
    package_paths: dict[str, str] = field(default_factory=dict)  # package name -> folder
    model_paths: tuple[str, ...] = ()
    links: tuple[LinkOverride, ...] = ()

    def for_link(self, link_name: str) -> LinkSettings:
        """Merge the [[links]] sections whose glob matches ``link_name`` (case-sensitive).

        Ignored rules add up over all matching sections; for density and mass the last
        matching section that sets one wins, so specific patterns go after general ones.
        """
        ignore: dict[str, None] = {}
        density = mass = None
        for override in self.links:
            if fnmatchcase(link_name, override.pattern):
                ignore.update(dict.fromkeys(override.ignore))
                density = override.density if override.density is not None else density
                mass = override.mass if override.mass is not None else mass
        return LinkSettings(tuple(ignore), density, mass)

    def replace(self, **changes: Any) -> Settings:
        from dataclasses import replace

        return replace(self, **changes)


DEFAULT = Settings()
