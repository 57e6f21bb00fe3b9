"""Read SDFormat (1.4-1.12) models and worlds into the format-neutral model.

Semantics per FORMATS.md §2: every pose is resolved through the frame graph
(``frames.py``) so collision and visual poses end up in their link frame;
missing ``<inertial>`` children and shape parameters take the defaults
simulators silently apply, and the reader says so in findings. Included models
are read for the whole-model picture into ``Document.included`` (read-only).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from linkcheck.formats.frames import MODEL_FRAME, WORLD, FrameError, FrameGraph, FrameId, PoseError, degrees_hint, parse_pose
from linkcheck.formats.numbers import MAX_MAGNITUDE, TOO_LARGE
from linkcheck.formats.sdf_include import find_include, parse_version
from linkcheck.formats.xml import XmlError, XmlFile, parse_xml, suppressions
from linkcheck.inertia import MassProperties
from linkcheck.model import NON_SOLID_SHAPES, Body, Document, Finding, Joint, Link, Pose, Shape, StatedInertial

#: Silent defaults of <inertial> children (sdf/1.x/inertial.sdf, FORMATS.md §2.4).
INERTIA_DEFAULTS = {"ixx": 1.0, "ixy": 0.0, "ixz": 0.0, "iyy": 1.0, "iyz": 0.0, "izz": 1.0}
MASS_DEFAULT = 1.0
MOMENTS = ("ixx", "iyy", "izz")

#: Shape parameters and their silent defaults (sdf/1.x/*_shape.sdf, FORMATS.md §2.7).
SHAPE_PARAMS: dict[str, tuple[tuple[str, tuple[float, ...]], ...]] = {
    "box": (("size", (1.0, 1.0, 1.0)),),
    "sphere": (("radius", (1.0,)),),
    "cylinder": (("radius", (1.0,)), ("length", (1.0,))),
    "capsule": (("radius", (0.5,)), ("length", (1.0,))),
    "cone": (("radius", (1.0,)), ("length", (1.0,))),
    "ellipsoid": (("radii", (1.0, 1.0, 1.0)),),
}
#: First protocol version that knows a shape (FORMATS.md §2.7).
SHAPE_SINCE = {"capsule": (1, 8), "ellipsoid": (1, 8), "cone": (1, 11)}
MAX_INCLUDE_DEPTH = 8



@dataclass
class SdfLinkHandle:
    """What the writer needs of a link: its element, the parsed file, what the simulator uses."""

    element: Any
    xml: XmlFile
    #: Mass properties the simulator will use (defaults filled in), link frame; None if malformed/auto.
    effective: MassProperties | None = None
    read_only: bool = False
    #: In a ``<static>true</static>`` model (or one nested in it): simulators never move it,
    #: so its mass properties are unused.
    static: bool = False


@dataclass
class _Ctx:
    """State of one read: the shared frame graph and the documents being filled."""

    graph: FrameGraph
    search: Any
    depth: int = 0
    seen: tuple[Path, ...] = ()
    naming_drop: int = 0  # leading scope entries left out of link names (1: single top-level model)
    pending_links: list[tuple[Document, Link, FrameId, list[tuple[Any, Body, FrameId, Pose, str | None]]]] = field(
        default_factory=list
    )
    pending_joints: list[tuple[Document, Any, XmlFile, tuple[str, ...], str, str, str, str]] = field(default_factory=list)


def _local(el: Any) -> str:
    tag = el.tag
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


def _children(el: Any, name: str) -> list[Any]:
    return [c for c in el if _local(c) == name]


def _child(el: Any, name: str) -> Any | None:
    for c in el:
        if _local(c) == name:
            return c
    return None


def _floats(words: list[str]) -> list[float]:
    """The words that parse as finite numbers (the rest are reported where they are parsed)."""
    out = []
    for w in words:
        try:
            v = float(w)
        except ValueError:
            continue
        if math.isfinite(v):
            out.append(v)
    return out


def _text(el: Any | None) -> str:
    return (el.text or "").strip() if el is not None else ""


class _Reader:
    """Reads one file's elements into a Document, sharing the frame graph of the whole read."""

    def __init__(self, ctx: _Ctx, doc: Document, xml: XmlFile, version: tuple[int, int], read_only: bool) -> None:
        self.ctx, self.doc, self.xml, self.version, self.read_only = ctx, doc, xml, version, read_only
        self.current: str | None = None  # the link being read: findings default to it

    # ---- findings

    def finding(self, rule: str, severity: str, message: str, el: Any = None, link: str | None = None, **kw: Any) -> None:
        line = self.xml.line(el) if el is not None else None
        link = link if link is not None else self.current
        self.doc.findings.append(Finding(rule, severity, message, link=link, line=line, **kw))  # type: ignore[arg-type]

    def malformed(self, message: str, el: Any, link: str | None = None) -> None:
        self.finding("value-malformed", "error", message, el, link)

    # ---- names and values

    def display(self, scope: tuple[str, ...], name: str) -> str:
        return "::".join(scope[self.ctx.naming_drop :] + (name,))

    def pose_of(self, el: Any, where: str) -> tuple[Pose, str | None, bool]:
        """(pose, relative_to, ok) of an element's <pose> child."""
        pel = _child(el, "pose")
        if pel is None:
            return Pose(), None, True
        rel = pel.get("relative_to")
        if rel is None and self.version < (1, 7):
            rel = pel.get("frame")  # 1.4-1.6 @frame, renamed to @relative_to by the 1.6->1.7 conversion
        words = (pel.text or "").split()
        plain = (pel.get("degrees") or "").strip().lower() not in ("true", "1") and not pel.get("rotation_format")
        hint = degrees_hint(_floats(words[3:6])) if plain and len(words) == 6 else None
        if hint:
            self.finding("value-malformed", "warning", f"{where}: {hint}; add degrees=\"true\" or write radians", pel)
        try:
            return parse_pose(pel.text, pel.get("degrees"), pel.get("rotation_format")), (rel or "").strip() or None, True
        except PoseError as exc:
            self.malformed(f"{where}: {exc}", pel)
            return Pose(), None, False

    def number(self, el: Any, where: str, positive: bool = False) -> float | None:
        word = _text(el)
        try:
            value = float(word)
        except ValueError:
            hint = " (decimal point, not comma)" if "," in word else ""
            self.malformed(f"{where} is '{word}': expected a number{hint}", el)
            return None
        if not math.isfinite(value):
            self.malformed(f"{where} is '{word}': expected a finite number", el)
            return None
        if abs(value) > MAX_MAGNITUDE:
            self.malformed(f"{where} is '{word}': {TOO_LARGE}", el)
            return None
        if positive and value <= 0:
            self.malformed(f"{where} is '{word}': expected a positive number", el)
            return None
        return value

    def vector(self, el: Any, where: str, n: int) -> tuple[float, ...] | None:
        words = _text(el).split()
        if len(words) != n:
            self.malformed(f"{where} is '{_text(el)}': expected {n} numbers", el)
            return None
        out = []
        for w in words:
            try:
                v = float(w)
            except ValueError:
                self.malformed(f"{where} is '{_text(el)}': '{w}' is not a number", el)
                return None
            if not math.isfinite(v):
                self.malformed(f"{where} is '{_text(el)}': expected finite numbers", el)
                return None
            if abs(v) > MAX_MAGNITUDE:
                self.malformed(f"{where} is '{_text(el)}': {TOO_LARGE}", el)
                return None
            out.append(v)
        return tuple(out)

    def unique(self, scope: tuple[str, ...], name: str, el: Any, what: str) -> bool:
        """Links, joints and frames share one namespace per model (sdf/1.8+ frame semantics)."""
        if not self.ctx.graph.has((scope, name)) and name not in ("world", MODEL_FRAME):
            return True
        self.malformed(f"{what} '{self.display(scope, name)}': the name is already used in {FrameGraph.describe_scope(scope)}: skipped", el)
        return False

    # ---- models

    def model(
        self, el: Any, scope: tuple[str, ...], pose_override: tuple[Pose, str | None] | None = None, static: bool = False,
        merged: bool = False,
    ) -> None:
        """A <model> (or the model of an included file) whose scope is ``scope``; see FrameGraph.add_model."""
        graph = self.ctx.graph
        static = static or _text(_child(el, "static")).lower() in ("true", "1")
        pose, rel, _ = self.pose_of(el, f"model '{'::'.join(scope)}' pose")
        if pose_override is not None:
            pose, rel = pose_override
        graph.add_model(scope, pose, rel, el.get("canonical_link"), el.get("placement_frame"), self.xml.line(el), merged)
        for child in el:
            kind = _local(child)
            if kind == "link":
                self.link(child, scope, static)
            elif kind == "joint":
                self.joint(child, scope)
            elif kind == "frame":
                self.frame(child, scope)
            elif kind == "model":
                name = child.get("name")
                if not name:
                    self.malformed(f"a nested <model> in {FrameGraph.describe_scope(scope)} has no name", child)
                    continue
                self.model(child, scope + (name,), static=static)
            elif kind == "include":
                self.include(child, scope)

    def frame(self, el: Any, scope: tuple[str, ...]) -> None:
        name = el.get("name")
        if not name:
            self.malformed(f"a <frame> in {FrameGraph.describe_scope(scope)} has no name", el)
            return
        if not self.unique(scope, name, el, "frame"):
            return
        pose, rel, _ = self.pose_of(el, f"frame '{self.display(scope, name)}' pose")
        self.ctx.graph.add_frame(scope, name, pose, rel, el.get("attached_to"), self.xml.line(el))

    def joint(self, el: Any, scope: tuple[str, ...]) -> None:
        name = el.get("name") or ""
        where = f"joint '{self.display(scope, name)}'"
        parent, child = _text(_child(el, "parent")), _text(_child(el, "child"))
        if not name or not parent or not child:
            what = "name" if not name else "<parent>" if not parent else "<child>"
            self.malformed(f"{where if name else 'a <joint>'} has no {what}", el)
            return
        if not self.unique(scope, name, el, "joint"):
            return
        pose, rel, _ = self.pose_of(el, f"{where} pose")
        self.ctx.graph.add_joint(scope, name, child, pose, rel, self.xml.line(el))
        self.ctx.pending_joints.append((self.doc, el, self.xml, scope, name, el.get("type") or "", parent, child))

    # ---- links

    def link(self, el: Any, scope: tuple[str, ...], static: bool = False) -> None:
        name = el.get("name")
        if not name:
            self.malformed(f"a <link> in {FrameGraph.describe_scope(scope)} has no name", el)
            return
        full = self.display(scope, name)
        if not self.unique(scope, name, el, "link"):
            return
        pose, rel, _ = self.pose_of(el, f"link '{full}' pose")
        self.ctx.graph.add_link(scope, name, pose, rel, self.xml.line(el))
        handle = SdfLinkHandle(el, self.xml, read_only=self.read_only, static=static)
        link = Link(full, self.xml.line(el), None, "absent", handle=handle)
        link.static = static  # Link.static (model.py); also on the handle
        self.current = full
        iel = _child(el, "inertial")
        if iel is not None:
            self.inertial(iel, link)
        elif not self.read_only:
            handle.effective = MassProperties(MASS_DEFAULT, np.zeros(3), np.eye(3))
        pending = []
        for body_el in el:
            role = _local(body_el)
            if role in ("collision", "visual"):
                item = self.body(body_el, role, link, scope)
                if item is not None:
                    pending.append(item)
        link.suppressions = self.suppressions(el)
        self.current = None
        self.doc.links.append(link)
        self.ctx.pending_links.append((self.doc, link, (scope, name), pending))

    def inertial(self, iel: Any, link: Link) -> None:
        name = link.name
        auto = (iel.get("auto") or "false").strip().lower() in ("true", "1")
        pose, _, ok = self.pose_of(iel, f"link '{name}': inertial pose")
        pel = _child(iel, "pose")
        if pel is not None and (pel.get("relative_to") or "").strip():
            self.finding(
                "value-malformed",
                "error" if self.version >= (1, 8) else "info",
                f"link '{name}': inertial pose relative_to='{pel.get('relative_to')}' is ignored; "
                "the inertial pose is always in the link frame",
                pel,
                name,
            )
        missing: list[str] = []
        mel = _child(iel, "mass")
        mass: float | None = MASS_DEFAULT
        if mel is None:
            missing.append("mass")
        else:
            mass = self.number(mel, f"link '{name}': mass")
            ok = ok and mass is not None
        tensor = dict(INERTIA_DEFAULTS)
        inel = _child(iel, "inertia")
        if inel is None:
            missing.append("inertia")
        else:
            for key in INERTIA_DEFAULTS:
                kel = _child(inel, key)
                if kel is None:
                    if INERTIA_DEFAULTS[key]:  # omitted products are 0, which is what their omission means
                        missing.append(key)
                    continue
                value = self.number(kel, f"link '{name}': inertia {key}")
                if value is None:
                    ok = False
                else:
                    tensor[key] = value
        density = None
        del_ = _child(iel, "density")
        if del_ is not None:
            density = self.number(del_, f"link '{name}': inertial density", positive=True)
        if not ok or mass is None:
            link.inertial_state = "malformed"
            return
        matrix = np.array(
            [
                [tensor["ixx"], tensor["ixy"], tensor["ixz"]],
                [tensor["ixy"], tensor["iyy"], tensor["iyz"]],
                [tensor["ixz"], tensor["iyz"], tensor["izz"]],
            ]
        )
        stated = StatedInertial(
            self.xml.line(iel), mass, pose.translation, pose.rotation, matrix, tuple(missing), auto, density
        )
        link.inertial, link.inertial_state = stated, "present"
        handle: SdfLinkHandle = link.handle
        if auto:
            given = [n for n, e in (("<pose>", pel), ("<inertia>", inel)) if e is not None]
            if given:
                self.finding(
                    "inertial-incomplete",
                    "info",
                    f"link '{name}': <inertial auto=\"true\"> with a stated {' and '.join(given)}: "
                    "they will be overwritten by the simulator's computed values",
                    iel,
                    name,
                )
            return
        handle.effective = stated.mass_properties()
        self.incomplete(iel, link, missing, tensor, mass)

    def incomplete(self, iel: Any, link: Link, missing: list[str], tensor: dict[str, float], mass: float) -> None:
        """inertial-incomplete: children whose silent defaults matter (mass, the moments)."""
        name = link.name
        parts = []
        if "mass" in missing:
            parts.append(("<inertial> has no <mass>", "mass = 1 kg"))
        if "inertia" in missing:
            parts.append(("<inertial> has no <inertia>", "ixx = iyy = izz = 1 kg m² (products 0)"))
        else:
            moments = [m for m in MOMENTS if m in missing]
            if moments:
                parts.append(
                    (f"<inertia> has no {', '.join(moments)}", ", ".join(f"{m} = 1" for m in moments) + " kg m²")
                )
        if not parts:
            return
        message = f"link '{name}': " + "; ".join(p[0] for p in parts) + ": simulators silently use " + "; ".join(
            p[1] for p in parts
        )
        self.finding(
            "inertial-incomplete",
            "warning",
            message,
            iel,
            name,
            fixable=True,
            data={"missing": list(missing), "mass": mass, "inertia": {k: tensor[k] for k in INERTIA_DEFAULTS}},
        )

    def body(self, el: Any, role: str, link: Link, scope: tuple[str, ...]) -> tuple[Any, Body, FrameId, Pose, str | None] | None:
        name = el.get("name")
        what = f"link '{link.name}': {role}" + (f" '{name}'" if name else "")
        pose, rel, pose_ok = self.pose_of(el, f"{what} pose")
        shape = self.geometry(el, what, link.name)
        density = None
        if role == "collision":
            del_ = _child(el, "density")
            if del_ is not None:
                density = self.number(del_, f"{what} density", positive=True)
        body = Body(role, self.xml.line(el), Pose(), shape if pose_ok else None, name, density)  # type: ignore[arg-type]
        return el, body, (scope, link.name.rsplit("::", 1)[-1]), pose, rel

    def geometry(self, el: Any, what: str, link: str) -> Shape | None:
        gel = _child(el, "geometry")
        kinds = [c for c in gel if isinstance(c.tag, str)] if gel is not None else []
        if not kinds:
            self.malformed(f"{what} has no shape in <geometry>", gel if gel is not None else el, link)
            return None
        sel = kinds[0]
        kind = _local(sel)
        since = SHAPE_SINCE.get(kind)
        if since and self.version < since:
            self.finding(
                "value-malformed",
                "warning",
                f"{what}: <{kind}> needs SDFormat {since[0]}.{since[1]}+, the file declares "
                f"{self.version[0]}.{self.version[1]}: older simulators skip it",
                sel,
                link,
            )
        if kind in NON_SOLID_SHAPES:
            self.finding("geometry-note", "info", f"{what}: {kind} carries no volume: skipped", sel, link)
            return Shape(kind)
        if kind == "mesh":
            return self.mesh(sel, what, link)
        if kind not in SHAPE_PARAMS:
            self.malformed(f"{what}: unknown shape <{kind}>", sel, link)
            return None
        size: list[float] = []
        for param, default in SHAPE_PARAMS[kind]:
            pel = _child(sel, param)
            if pel is None:
                self.finding(
                    "value-malformed",
                    "info",
                    f"{what}: <{kind}> has no <{param}>: simulators silently use {param} = "
                    + " ".join(f"{v:g}" for v in default),
                    sel,
                    link,
                    data={"param": param, "value": list(default)},
                )
                size.extend(default)
                continue
            value = self.vector(pel, f"{what}: {kind} {param}", len(default))
            if value is None:
                return None
            if any(v <= 0 for v in value):
                self.malformed(f"{what}: {kind} {param} is '{_text(pel)}': expected positive numbers", pel, link)
                return None
            size.extend(value)
        return Shape(kind, tuple(size))

    def mesh(self, sel: Any, what: str, link: str) -> Shape | None:
        uri = _text(_child(sel, "uri"))
        if not uri:
            self.malformed(f"{what}: <mesh> has no <uri>", sel, link)
            return None
        scale: tuple[float, ...] = (1.0, 1.0, 1.0)
        scel = _child(sel, "scale")
        if scel is not None:
            got = self.vector(scel, f"{what}: mesh scale", 3)
            if got is None:
                return None
            scale = got
        sub = _child(sel, "submesh")
        sub_name, center = None, False
        if sub is not None:
            sub_name = _text(_child(sub, "name")) or None
            center = _text(_child(sub, "center")).lower() in ("true", "1")
        base = self.doc.path.parent if self.doc.path else None
        return Shape("mesh", (), uri, scale, base, sub_name, center)  # type: ignore[arg-type]

    def suppressions(self, el: Any) -> list[tuple[str, int, str]]:
        return suppressions(self.xml, el)

    # ---- includes

    def include(self, el: Any, scope: tuple[str, ...]) -> None:
        uri = _text(_child(el, "uri"))
        if not uri:
            self.malformed(f"an <include> in {FrameGraph.describe_scope(scope)} has no <uri>", el)
            return
        target = find_include(uri, self.xml.path.parent, self.ctx.search)
        if target is None:
            self.finding(
                "geometry-note",
                "info",
                f"<include> '{uri}' not found (looked beside this file, in the model paths and in "
                "GZ_SIM_RESOURCE_PATH/SDF_PATH): its links are left out of the whole-model picture",
                el,
            )
            return
        if target in self.ctx.seen or self.ctx.depth >= MAX_INCLUDE_DEPTH:
            self.finding("geometry-note", "info", f"<include> '{uri}' includes itself: not followed", el)
            return
        try:
            data = target.read_bytes()
            sub_xml = parse_xml(target, data)
        except (OSError, XmlError) as exc:
            self.finding("geometry-note", "info", f"<include> '{uri}' ({target}) cannot be read: {exc}", el)
            return
        model_el = None
        if _local(sub_xml.root) == "sdf":
            models = _children(sub_xml.root, "model")
            model_el = models[0] if models else None
        if model_el is None:
            self.finding("geometry-note", "info", f"<include> '{uri}' ({target}) holds no <model>", el)
            return
        name = _text(_child(el, "name")) or model_el.get("name") or target.stem
        sub_doc = Document(target, "sdf", data, writable=False)
        version = parse_version(sub_xml.root.get("version")) or self.version
        reader = _Reader(self.ctx, sub_doc, sub_xml, version, True)
        override = None
        if _child(el, "pose") is not None:
            pose, rel, _ = self.pose_of(el, f"include '{uri}' pose")
            override = (pose, rel)
        placement = _text(_child(el, "placement_frame"))
        if placement:
            model_el.set("placement_frame", placement)
        chain = self.ctx.seen
        self.ctx.depth += 1
        self.ctx.seen = chain + (target,)
        reader.model(model_el, scope + (name,), override, static=_text(_child(el, "static")).lower() in ("true", "1"),
                     merged=(el.get("merge") or "").strip().lower() in ("true", "1"))
        self.ctx.depth -= 1
        self.ctx.seen = chain
        self.doc.included.append(sub_doc)


def _fatal(path: Path, data: bytes, message: str, line: int | None = None) -> Document:
    doc = Document(path, "sdf", data, fatal=True, writable=False)
    doc.findings.append(Finding("xml-malformed", "error", message, line=line))
    return doc


def read_sdf(path: Path, data: bytes | None = None, search: Any = None) -> Document:
    """Read an SDFormat file; bad content becomes findings on the Document, never an exception."""
    path = Path(path)
    if data is None:
        try:
            data = path.read_bytes()
        except OSError as exc:
            return _fatal(path, b"", f"cannot read {path}: {exc.strerror or exc}")
    try:
        xml = parse_xml(path, data)
    except XmlError as exc:
        return _fatal(path, data, exc.message, exc.line)
    if _local(xml.root) != "sdf":
        return _fatal(path, data, f"not an SDFormat file: the root element is <{_local(xml.root)}>, expected <sdf>", 1)
    doc = Document(path, "sdf", data, writable=xml.encoding_ok)
    for line, note in xml.notes:
        doc.findings.append(Finding("xml-malformed", "info", note, line=line))
    version = parse_version(xml.root.get("version"))
    if version is None:
        doc.findings.append(
            Finding(
                "value-malformed",
                "warning",
                f"<sdf version='{xml.root.get('version') or ''}'> is not a version like 1.9: read as 1.12",
                line=xml.line(xml.root),
            )
        )
        version = (1, 12)
    ctx = _Ctx(FrameGraph(), search, seen=(path.resolve(),))
    top: list[tuple[Any, tuple[str, ...]]] = []
    worlds = _children(xml.root, "world")
    for m in _children(xml.root, "model"):
        top.append((m, ()))
    for w in worlds:
        for m in _children(w, "model"):
            top.append((m, ()))
    top_names = [m.get("name") or "" for m, _ in top]
    includes_at_top = sum(len(_children(w, "include")) for w in worlds)
    ctx.naming_drop = ctx.graph.drop = 1 if len(top) == 1 and includes_at_top == 0 else 0
    reader = _Reader(ctx, doc, xml, version, False)
    if not top and not includes_at_top:
        doc.findings.append(Finding("xml-malformed", "info", "no <model> in this SDFormat file: nothing to check", line=1))
    for w in worlds:
        for child in w:
            kind = _local(child)
            if kind == "frame":
                reader.frame(child, ())
            elif kind == "include":
                reader.include(child, ())
    for (m, _), name in zip(top, top_names):
        if not name:
            reader.malformed("a <model> has no name", m)
            continue
        reader.model(m, (name,))
    _resolve_pending(ctx)
    return doc


def _link_name(ctx: _Ctx, frame: FrameId) -> str:
    if frame == WORLD:
        return "world"
    scope, name = frame
    return "::".join(scope[ctx.naming_drop :] + (name,))


def _resolve_pending(ctx: _Ctx) -> None:
    """Second pass, once every frame is known: body poses into link frames, joint poses."""
    graph = ctx.graph
    for doc, link, frame, bodies in ctx.pending_links:
        xml = link.handle.xml
        try:
            link_world = graph.world_pose(frame)
        except FrameError as exc:
            doc.findings.append(Finding("value-malformed", "error", f"link '{link.name}': {exc}", link.name, link.line))
            link_world = None
        for el, body, _, pose, rel in bodies:
            shape = body.shape
            local = Pose()
            if link_world is None:
                shape = None
            else:
                try:
                    local = link_world.inverse().compose(graph.resolve(frame[0], pose, rel, frame))
                except FrameError as exc:
                    doc.findings.append(
                        Finding("value-malformed", "error", f"link '{link.name}': {body.role} pose: {exc}", link.name, xml.line(el))
                    )
                    shape = None
            link.bodies.append(Body(body.role, body.line, _clean(local), shape, body.name, body.density))
    for doc, el, xml, scope, name, jtype, parent, child in ctx.pending_joints:
        display = "::".join(scope[ctx.naming_drop :] + (name,))
        try:
            child_link = graph.attached_link(graph.lookup(scope, child))
            if parent == "world":
                parent_link: FrameId = WORLD
            else:
                parent_link = graph.attached_link(graph.lookup(scope, parent))
            pose = graph.pose_of(child_link, parent_link)
            graph.world_pose((scope, name))
        except FrameError as exc:
            doc.findings.append(Finding("value-malformed", "error", f"joint '{display}': {exc}", line=xml.line(el)))
            continue
        doc.joints.append(Joint(display, jtype, _link_name(ctx, parent_link), _link_name(ctx, child_link), xml.line(el), _clean(pose)))


def _clean(pose: Pose) -> Pose:
    """Round off composition noise (1e-17) so identities stay identities."""
    r = np.where(np.abs(pose.rotation) < 1e-15, 0.0, pose.rotation)
    t = np.where(np.abs(pose.translation) < 1e-15, 0.0, pose.translation)
    return Pose(r, t)


from linkcheck.formats.sdf_write import rewrite_sdf  # noqa: E402  (re-exported: the format's writer)

__all__ = ["read_sdf", "rewrite_sdf", "find_include", "SdfLinkHandle", "MODEL_FRAME"]
