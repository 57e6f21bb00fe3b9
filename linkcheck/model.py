"""The format-neutral robot model the readers produce and everything above them uses.

Readers in ``formats/`` fill these records from URDF or SDFormat; nothing above
``formats/`` touches XML. All poses and vectors are SI, in the frame named.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np

from linkcheck.inertia import MassProperties, rotate_tensor

Severity = Literal["error", "warning", "info"]

#: Shapes that carry volume, and those that never do (skipped with an info finding).
SOLID_SHAPES = ("box", "cylinder", "sphere", "capsule", "ellipsoid", "cone", "mesh")
NON_SOLID_SHAPES = ("plane", "heightmap", "polyline", "image", "empty")


@dataclass(frozen=True)
class Pose:
    """Pose of a child frame C in a parent frame P: p_P = rotation @ p_C + translation."""

    rotation: np.ndarray = field(default_factory=lambda: np.eye(3))
    translation: np.ndarray = field(default_factory=lambda: np.zeros(3))

    def compose(self, child: Pose) -> Pose:
        """self * child: the pose of child's frame in self's parent frame."""
        return Pose(self.rotation @ child.rotation, self.rotation @ child.translation + self.translation)

    def inverse(self) -> Pose:
        rt = self.rotation.T
        return Pose(rt, -rt @ self.translation)

    def apply(self, points: np.ndarray) -> np.ndarray:
        """Map (3,) or (N, 3) points from the child frame to the parent frame."""
        return np.asarray(points, dtype=float) @ self.rotation.T + self.translation

    @property
    def is_identity(self) -> bool:
        return bool(np.allclose(self.rotation, np.eye(3)) and np.allclose(self.translation, 0))


@dataclass(frozen=True)
class Shape:
    """One geometry element in its own frame.

    ``size`` by kind: box (x, y, z) full sides; sphere (r,); cylinder, capsule,
    cone (radius, length) with the axis along z (capsule length = cylindrical
    part; cone frame at mid-height); ellipsoid (a, b, c) semi-axes. A mesh has
    ``uri``, ``scale`` and ``base_dir`` (folder of the file that named it, for
    relative URIs); SDF meshes may name a ``submesh`` and ``center`` it.
    """

    kind: str
    size: tuple[float, ...] = ()
    uri: str | None = None
    scale: tuple[float, float, float] = (1.0, 1.0, 1.0)
    base_dir: Path | None = None
    submesh: str | None = None
    center: bool = False


@dataclass(frozen=True)
class Body:
    """A collision or visual element of a link, posed in the link frame."""

    role: Literal["collision", "visual"]
    line: int
    pose: Pose
    shape: Shape | None  # None: the geometry was malformed (a finding says why)
    name: str | None = None
    density: float | None = None  # SDF <collision><density>, kg/m^3


@dataclass(frozen=True)
class StatedInertial:
    """An inertial block as written in the file.

    ``inertia_frame`` is the tensor as written: about the COM, in the axes of
    the inertial frame, whose orientation in the link frame is ``rotation``.
    ``missing`` lists children absent from the file whose defaults filled in
    (SDF: mass, inertia, ixx/iyy/izz; omitted products are 0 and not listed).
    ``auto`` is SDF ``<inertial auto="true">``.
    """

    line: int
    mass: float
    com: np.ndarray
    rotation: np.ndarray
    inertia_frame: np.ndarray
    missing: tuple[str, ...] = ()
    auto: bool = False
    density: float | None = None  # SDF <inertial><density>

    def mass_properties(self) -> MassProperties:
        """The block in the link frame: tensor about the COM with link-frame axes."""
        return MassProperties(self.mass, np.asarray(self.com, dtype=float), rotate_tensor(self.inertia_frame, self.rotation))

    @property
    def frame_rotated(self) -> bool:
        return not np.allclose(self.rotation, np.eye(3))


@dataclass
class Link:
    """A link: name (scoped ``outer::inner::link`` in nested SDF models), line of its start tag."""

    name: str
    line: int
    inertial: StatedInertial | None
    #: "present", "absent", or "malformed" (a value-malformed finding was recorded).
    inertial_state: Literal["present", "absent", "malformed"]
    bodies: list[Body] = field(default_factory=list)
    #: Rules silenced by inline comments: (rule, line of the comment, reason).
    suppressions: list[tuple[str, int, str]] = field(default_factory=list)
    #: Opaque to everything but the reader/writer of its format (XML element, spans...).
    handle: Any = None
    #: In an SDF ``<static>`` model: never moved by a simulator, so its inertia is unused.
    static: bool = False

    def bodies_of(self, role: str) -> list[Body]:
        return [b for b in self.bodies if b.role == role]


@dataclass(frozen=True)
class Joint:
    """A joint: ``pose`` is the child link frame in the parent link frame at zero configuration."""

    name: str
    type: str
    parent: str
    child: str
    line: int
    pose: Pose = field(default_factory=Pose)

    @property
    def movable(self) -> bool:
        return self.type != "fixed"


@dataclass(frozen=True)
class Finding:
    """One diagnosis: data, never formatted for a terminal."""

    rule: str
    severity: Severity
    message: str
    link: str | None = None
    line: int | None = None
    fixable: bool = False
    #: Rule-specific numbers a fix or a reporter may use (e.g. {"power": 3}).
    data: dict[str, Any] = field(default_factory=dict, compare=False)


@dataclass
class Document:
    """A description file read into the model. ``data`` is the original bytes, for splicing."""

    path: Path
    format: Literal["urdf", "sdf", "xacro"]
    data: bytes
    links: list[Link] = field(default_factory=list)
    joints: list[Joint] = field(default_factory=list)
    #: Findings of the reader (xml-malformed, value-malformed, infos).
    findings: list[Finding] = field(default_factory=list)
    #: True when the file could not be read as a description at all (xml-malformed).
    fatal: bool = False
    #: Whether the writer may rewrite this file (UTF-8/ASCII, not xacro-generated values...).
    writable: bool = True
    #: SDF <include>d models, each read from its own file: for the whole-model picture only
    #: (tree, total mass). Read-only: their links are not this file's to check or fix.
    included: list[Document] = field(default_factory=list)

    def link(self, name: str) -> Link | None:
        return next((k for k in self.links if k.name == name), None)
