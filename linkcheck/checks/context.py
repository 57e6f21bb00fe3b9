"""What a rule sees of one link: the stated block, the geometry estimate, the tree around it."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np

from linkcheck.geometry.solid import Solid
from linkcheck.inertia import MassProperties, principal
from linkcheck.model import Joint, Link, StatedInertial
from linkcheck.settings import Settings


@dataclass(frozen=True)
class LinkContext:
    """One link (or one fixed-joint group judged as a rigid body) ready for the rules.

    ``estimate`` is the link's geometry at unit density in the link frame, or None
    with ``estimate_reason``; ``geometry_source`` says whether collision or visual
    bodies were used. ``stated`` is the inertial block in the link frame.
    """

    path: Path
    format: str
    link: Link
    settings: Settings
    inertial: StatedInertial | None = None
    stated: MassProperties | None = None
    estimate: Solid | None = None
    geometry_source: str | None = None
    estimate_reason: str | None = None
    parent_joint: Joint | None = None
    subtree_mass: float = 0.0
    #: Names of the links merged into this context when judged as one rigid body.
    group: tuple[str, ...] = ()
    #: The bodies that went into ``estimate``, each with its own volume (m^3), for per-body densities.
    volumes: tuple = ()

    @property
    def name(self) -> str:
        return self.link.name

    @property
    def line(self) -> int:
        return self.link.line

    @property
    def diagonal(self) -> float:
        """L: diagonal of the link-frame bounding box of the geometry (m)."""
        if self.estimate is None:
            return 0.0
        pts = self.estimate.points
        return float(np.linalg.norm(pts.max(axis=0) - pts.min(axis=0)))

    @cached_property
    def stated_moments(self) -> np.ndarray | None:
        """Principal moments of the stated tensor, ascending (computed once for all rules)."""
        return None if self.stated is None else principal(self.stated.inertia)[0]

    @cached_property
    def estimated(self) -> MassProperties | None:
        """The estimate scaled to the stated mass (None without both)."""
        if self.stated is None or not self.stated.mass > 0:
            return None
        return self.estimate_at_mass(self.stated.mass)

    @cached_property
    def computed_density(self) -> float | None:
        """kg/m³ behind the reported estimate: stated mass over volume, else a configured density."""
        if self.estimate is None or self.estimate.volume <= 0:
            return None
        if self.stated is not None and self.stated.mass > 0:
            return float(self.stated.mass) / self.estimate.volume
        density = self.settings.for_link(self.name).density or self.settings.default_density
        return float(density) if density else None

    @cached_property
    def computed(self) -> MassProperties | None:
        """The uniform-density estimate at ``computed_density`` (None without one)."""
        rho = self.computed_density
        return None if rho is None else self.estimate.props.scaled(rho)  # type: ignore[union-attr]

    def estimate_at_mass(self, mass: float) -> MassProperties | None:
        """The uniform-density estimate scaled to ``mass`` kg."""
        if self.estimate is None or self.estimate.volume <= 0:
            return None
        return self.estimate.props.with_mass(mass)
