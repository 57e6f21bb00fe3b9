"""SDFormat poses and the frame graph that places every frame of a model.

Pure (no XML): ``sdf.py`` feeds the graph from elements, then asks for poses.
Semantics per FORMATS.md §2.2-2.3: a pose (t, R) of frame C in frame P maps
``p_P = R p_C + t``; ``relative_to`` names a frame of the same scope, or of a
nested scope with ``a::b::frame``; the default frame depends on the element.
Every frame is resolved into the root (world) frame of the file; relative
poses are differences of those.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from linkcheck.formats.numbers import MAX_MAGNITUDE, TOO_LARGE
from linkcheck.inertia import quat_xyzw_to_matrix, rpy_to_matrix
from linkcheck.model import Pose

#: A frame: (scope, name). Scope is the tuple of model names from the root;
#: a model's own frame is (its scope, "__model__"); the root frame is ((), "world").
FrameId = tuple[tuple[str, ...], str]

MODEL_FRAME = "__model__"
WORLD: FrameId = ((), "world")


class PoseError(ValueError):
    """A pose string that does not parse (value-malformed)."""


class FrameError(ValueError):
    """A frame reference that cannot be resolved: unknown name or a cycle (value-malformed)."""


def _numbers(text: str) -> list[float]:
    out = []
    for word in text.split():
        try:
            value = float(word)
        except ValueError:
            hint = " (decimal point, not comma)" if "," in word else ""
            raise PoseError(f"pose value '{word}' is not a number{hint}") from None
        if not math.isfinite(value):
            raise PoseError(f"pose value '{word}' is not finite")
        if abs(value) > MAX_MAGNITUDE:
            raise PoseError(f"pose value '{word}': {TOO_LARGE}")
        out.append(value)
    return out


def parse_pose(text: str | None, degrees: str | None = None, rotation_format: str | None = None) -> Pose:
    """A ``<pose>`` text: six numbers (rpy), or seven with ``rotation_format="quat_xyzw"``.

    Empty text is the identity. ``degrees="true"`` reads the angles in degrees
    (an error with quaternions), as sdf/1.9+/pose.sdf defines.
    """
    fmt = (rotation_format or "euler_rpy").strip()
    deg = (degrees or "false").strip().lower()
    if deg not in ("true", "false", "1", "0"):
        raise PoseError(f"pose attribute degrees='{degrees}' must be true or false")
    in_degrees = deg in ("true", "1")
    if fmt not in ("euler_rpy", "quat_xyzw"):
        raise PoseError(f"pose rotation_format='{rotation_format}' must be euler_rpy or quat_xyzw")
    values = _numbers(text or "")
    if not values:
        return Pose()
    if fmt == "quat_xyzw":
        if in_degrees:
            raise PoseError("pose with rotation_format='quat_xyzw' cannot have degrees='true'")
        if len(values) != 7:
            raise PoseError(f"pose with rotation_format='quat_xyzw' needs 7 numbers, got {len(values)}")
        q = np.array(values[3:])
        if np.linalg.norm(q) == 0:
            raise PoseError("pose quaternion is zero")
        return Pose(quat_xyzw_to_matrix(q), np.array(values[:3]))
    if len(values) != 6:
        raise PoseError(f"pose needs 6 numbers (x y z roll pitch yaw), got {len(values)}")
    rpy = np.radians(values[3:]) if in_degrees else np.array(values[3:])
    return Pose(rpy_to_matrix(rpy), np.array(values[:3]))


@dataclass
class _Frame:
    kind: str  # world | model | link | joint | frame
    pose: Pose
    relative_to: str | None  # raw name in the frame's scope; None: the element default
    attached_to: str | None = None  # raw name (frames: attached_to; joints: child)
    line: int | None = None


@dataclass
class _Scope:
    canonical: str | None = None
    placement: str | None = None  # @placement_frame: the inner frame the model pose places
    links: list[str] = field(default_factory=list)
    models: list[str] = field(default_factory=list)
    #: nested models included with merge="true" (SDFormat 1.9+): their frames are named as this scope's own
    merged: list[str] = field(default_factory=list)


class FrameGraph:
    """Frames of one file: a root (world) scope and nested model scopes.

    Add scopes and frames in any order (references may point forward), then
    query :meth:`world_pose`, :meth:`pose_of`, :meth:`attached_link`.
    Unresolvable references raise :class:`FrameError` with a one-line message.
    """

    def __init__(self) -> None:
        self._scopes: dict[tuple[str, ...], _Scope] = {(): _Scope()}
        self._frames: dict[FrameId, _Frame] = {WORLD: _Frame("world", Pose(), None)}
        self._world_cache: dict[FrameId, Pose] = {}
        self._link_cache: dict[FrameId, FrameId] = {}
        #: Leading scope entries left out of frame names in messages (1 for a single top-level model).
        self.drop = 0

    # ---- building

    def add_model(
        self,
        scope: tuple[str, ...],
        pose: Pose,
        relative_to: str | None = None,
        canonical_link: str | None = None,
        placement_frame: str | None = None,
        line: int | None = None,
        merged: bool = False,
    ) -> None:
        """A model whose scope is ``scope`` (its last entry is its name), posed in its parent scope.

        ``merged``: an <include merge="true">; the parent scope also finds its frames by their bare names.
        """
        parent = scope[:-1]
        self._scopes.setdefault(parent, _Scope()).models.append(scope[-1])
        if merged:
            self._scopes[parent].merged.append(scope[-1])
        self._scopes[scope] = _Scope(canonical_link or None, placement_frame or None)
        self._frames[(scope, MODEL_FRAME)] = _Frame("model", pose, relative_to or None, line=line)

    def add_link(self, scope: tuple[str, ...], name: str, pose: Pose, relative_to: str | None = None, line: int | None = None) -> None:
        self._scopes[scope].links.append(name)
        self._frames[(scope, name)] = _Frame("link", pose, relative_to or None, line=line)

    def add_joint(
        self, scope: tuple[str, ...], name: str, child: str, pose: Pose, relative_to: str | None = None, line: int | None = None
    ) -> None:
        self._frames[(scope, name)] = _Frame("joint", pose, relative_to or None, child, line)

    def add_frame(
        self,
        scope: tuple[str, ...],
        name: str,
        pose: Pose,
        relative_to: str | None = None,
        attached_to: str | None = None,
        line: int | None = None,
    ) -> None:
        self._frames[(scope, name)] = _Frame("frame", pose, relative_to or None, attached_to or None, line)

    def has(self, frame: FrameId) -> bool:
        return frame in self._frames

    # ---- names

    def lookup(self, scope: tuple[str, ...], ref: str) -> FrameId:
        """The frame ``ref`` names from inside ``scope`` (``a::b::name`` walks into nested models)."""
        parts = ref.split("::")
        where = scope
        for part in parts[:-1]:
            if part not in self._scopes.get(where, _Scope()).models:
                raise FrameError(f"frame '{ref}' not found: no nested model '{part}' in {self.describe_scope(where)}")
            where = where + (part,)
        last = parts[-1]
        if last == MODEL_FRAME:
            return (where, MODEL_FRAME)
        if where == () and last == "world":
            return WORLD
        if last in self._scopes.get(where, _Scope()).models:
            return (where + (last,), MODEL_FRAME)
        if (where, last) in self._frames and last != "world":
            return (where, last)
        for inner in self._scopes.get(where, _Scope()).merged:
            try:
                return self.lookup(where + (inner,), last)
            except FrameError:
                pass
        raise FrameError(f"frame '{ref}' not found in {self.describe_scope(scope)}")

    @staticmethod
    def describe_scope(scope: tuple[str, ...]) -> str:
        return f"model '{'::'.join(scope)}'" if scope else "the world"

    def describe(self, frame: FrameId) -> str:
        """A frame's name as the file's user reads it (leading scopes dropped as for link names)."""
        scope, name = frame
        if name == MODEL_FRAME:
            return "::".join(scope) or "world"
        return "::".join(scope[self.drop :] + (name,))

    # ---- poses

    def _parent_of(self, frame: FrameId) -> FrameId:
        """The frame a frame's pose is expressed in, per the element defaults (FORMATS.md §2.3)."""
        scope, name = frame
        node = self._frames[frame]
        if node.kind == "model":
            parent_scope = scope[:-1]
            if node.relative_to:
                return self.lookup(parent_scope, node.relative_to)
            return (parent_scope, MODEL_FRAME) if parent_scope else WORLD
        if node.relative_to:
            return self.lookup(scope, node.relative_to)
        if node.kind == "link":
            return (scope, MODEL_FRAME)
        if node.kind == "joint":
            if not node.attached_to:
                raise FrameError(f"joint '{self.describe(frame)}' has no child")
            return self.lookup(scope, node.attached_to)
        # explicit <frame>: its attached_to frame, default the model frame
        return self.lookup(scope, node.attached_to) if node.attached_to else (scope, MODEL_FRAME)

    def _local_pose(self, frame: FrameId) -> Pose:
        """The pose as stated, with a model's @placement_frame folded in."""
        node = self._frames[frame]
        if node.kind == "model":
            scope = frame[0]
            placement = self._scopes[scope].placement
            if placement:
                inner = self.lookup(scope, placement)
                # stated pose places the inner frame: X_PM = X_PF * inverse(X_MF)
                return node.pose.compose(self._pose_in_model(inner, frame).inverse())
        return node.pose

    def _pose_in_model(self, frame: FrameId, model: FrameId) -> Pose:
        """Pose of a frame of a model's scope in that model's frame, without the model's own pose."""
        pose = Pose()
        seen: list[FrameId] = []
        current = frame
        while current != model:
            if current in seen or current == WORLD:
                raise FrameError(f"placement frame '{self.describe(frame)}' cannot be resolved inside {self.describe(model)}")
            seen.append(current)
            pose = self._local_pose(current).compose(pose)
            current = self._parent_of(current)
        return pose

    def world_pose(self, frame: FrameId) -> Pose:
        """Pose of ``frame`` in the root frame of the file."""
        if frame == WORLD:
            return Pose()
        if frame in self._world_cache:
            return self._world_cache[frame]
        chain: list[FrameId] = []
        current = frame
        while current != WORLD and current not in self._world_cache:
            if current in chain:
                loop = " -> ".join(self.describe(f) for f in chain[chain.index(current):] + [current])
                raise FrameError(f"frame '{self.describe(current)}' has a cycle of relative_to references: {loop}")
            if current not in self._frames:
                raise FrameError(f"frame '{self.describe(current)}' not found")
            chain.append(current)
            current = self._parent_of(current)
        base = self._world_cache.get(current, Pose())
        for f in reversed(chain):
            base = base.compose(self._local_pose(f))
            self._world_cache[f] = base
        return self._world_cache[frame]

    def pose_of(self, frame: FrameId, in_frame: FrameId) -> Pose:
        """Pose of ``frame`` expressed in ``in_frame``."""
        return self.world_pose(in_frame).inverse().compose(self.world_pose(frame))

    def resolve(self, scope: tuple[str, ...], pose: Pose, relative_to: str | None, default: FrameId) -> Pose:
        """World pose of a non-frame element (collision, visual) posed relative_to a name of ``scope``."""
        base = self.lookup(scope, relative_to) if relative_to else default
        return self.world_pose(base).compose(pose)

    # ---- attachment

    def attached_link(self, frame: FrameId) -> FrameId:
        """The link a frame is rigidly attached to (model frames: their canonical link)."""
        if frame in self._link_cache:
            return self._link_cache[frame]
        seen: list[FrameId] = []
        current = frame
        while True:
            if current in seen:
                loop = " -> ".join(self.describe(f) for f in seen[seen.index(current):] + [current])
                raise FrameError(f"frame '{self.describe(current)}' has a cycle of attached_to references: {loop}")
            seen.append(current)
            if current == WORLD:
                raise FrameError(f"frame '{self.describe(frame)}' is attached to the world, not a link")
            node = self._frames.get(current)
            if node is None:
                raise FrameError(f"frame '{self.describe(current)}' not found")
            scope = current[0]
            if node.kind == "link":
                break
            if node.kind == "model":
                current = self._canonical(scope)
            elif node.kind == "joint":
                current = self.lookup(scope, node.attached_to or "")
            else:
                current = self.lookup(scope, node.attached_to) if node.attached_to else (scope, MODEL_FRAME)
        for f in seen:
            self._link_cache[f] = current
        return current

    def _canonical(self, scope: tuple[str, ...]) -> FrameId:
        info = self._scopes[scope]
        if info.canonical:
            return self.lookup(scope, info.canonical)
        if info.links:
            return (scope, info.links[0])
        if info.models:
            return (scope + (info.models[0],), MODEL_FRAME)
        raise FrameError(f"{self.describe_scope(scope)} has no link to attach its frame to")


def degrees_hint(angles: "list[float] | tuple[float, ...] | np.ndarray") -> str | None:
    """A reason when roll/pitch/yaw look like degrees written where radians are expected.

    Angles beyond 2π (with a little slack for rounding) are almost always degrees: 90 read as
    radians is a 116° turn the author never meant.
    """
    big = [float(a) for a in angles if abs(float(a)) > 2 * math.pi + 0.01]
    if not big:
        return None
    shown = ", ".join(f"{a:g}" for a in big)
    return f"angle {shown} is larger than 2π: it looks like degrees, but the angles are read as radians"
