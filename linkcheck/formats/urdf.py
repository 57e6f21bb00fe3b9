"""URDF reader: a file into the model. The writer is formats/urdf_write.py.

Reading never raises for bad content: unreadable XML becomes an
``xml-malformed`` finding on a fatal Document, unparseable numbers become
``value-malformed`` findings.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from lxml import etree

from linkcheck import inertia as inr
from linkcheck.formats.numbers import INERTIA_KEYS, MAX_MAGNITUDE, TOO_LARGE, tensor_of
from linkcheck.formats.frames import degrees_hint
from linkcheck.formats.xml import XmlError, XmlFile, parse_xml, suppressions
from linkcheck.model import Body, Document, Finding, Joint, Link, Pose, Shape, StatedInertial

XACRO_NOTE = "value is a xacro expression; expand the file to check it"
LEFTOVER_NOTE = ("an unexpanded xacro expression in a file with no xacro definitions: URDF parsers cannot read it "
                 "(expand the .xacro source with xacro, or write the value out)")
_NUMBER = re.compile(r"\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*\Z")
_EXPRESSION = re.compile(r"\$[{(]")
_SHAPE_ATTRS = {"box": ("size",), "cylinder": ("radius", "length"), "sphere": ("radius",), "capsule": ("radius", "length")}


@dataclass
class UrdfLinkHandle:
    """What the writer needs of a link: its element, the parsed file, and whether it may write."""

    xml: XmlFile
    element: Any
    writable: bool = True
    reason: str = ""


class _Bad(Exception):
    """A value of the current element cannot be used; the finding is already recorded."""


class _Reader:
    def __init__(self, path: Path, xml: XmlFile, doc: Document) -> None:
        self.path, self.xml, self.doc = path, xml, doc
        self.link = ""
        self.expression = False
        # a xacro source (by name or by its xacro elements) is checked as far as it goes; an expanded
        # description has no xacro elements left, so a ${...} in it is a value no consumer can read
        self.xacro_source = path.suffix.lower() == ".xacro" or any(_is_xacro(e) for e in xml.root.iter())

    # --- findings
    def _who(self) -> str:
        return f"link '{self.link}': " if self.link else ""

    def malformed(self, el: Any, text: str) -> None:
        self.doc.findings.append(
            Finding("value-malformed", "error", self._who() + text, link=self.link or None, line=self.xml.line(el))
        )

    def expression_found(self, el: Any, what: str, raw: str) -> None:
        self.expression = True
        self.doc.findings.append(
            Finding(
                "value-malformed",
                "info" if self.xacro_source else "error",
                f"{self._who()}{what} is '{raw}': {XACRO_NOTE if self.xacro_source else LEFTOVER_NOTE}",
                link=self.link or None,
                line=self.xml.line(el),
                data={"xacro": True},
            )
        )

    # --- values
    def numbers(self, el: Any, attr: str, what: str, count: int, default: str | None = None) -> list[float]:
        raw = el.get(attr)
        if raw is None:
            if default is not None:
                raw = default
            else:
                self.malformed(el, f"{what} is missing — expected {_expect(count)}")
                raise _Bad
        if _EXPRESSION.search(raw):
            self.expression_found(el, what, raw)
            raise _Bad
        parts = raw.split()
        if count == 1 and len(parts) > 1 and "," not in raw:
            self.malformed(el, f"{what} is '{raw}' — expected a single number")
            raise _Bad
        if count > 1 and len(parts) != count and all(_NUMBER.match(p) for p in parts):
            self.malformed(el, f"{what} is '{raw}' — expected {count} numbers, got {len(parts)}")
            raise _Bad
        values = []
        for part in parts if count > 1 else [raw]:
            if not _NUMBER.match(part):
                self.malformed(el, f"{what} is '{raw}' — {_why(part, count)}")
                raise _Bad
            values.append(float(part))
        if not all(math.isfinite(v) for v in values):
            self.malformed(el, f"{what} is '{raw}' — expected a finite number")
            raise _Bad
        if any(abs(v) > MAX_MAGNITUDE for v in values):
            self.malformed(el, f"{what} is '{raw}' — {TOO_LARGE}")
            raise _Bad
        return values

    def pose(self, parent: Any, what: str) -> Pose:
        origin = _child(parent, "origin")
        if origin is None:
            return Pose()
        xyz = np.array(self.numbers(origin, "xyz", f"{what} origin xyz", 3, "0 0 0"))
        if origin.get("quat_xyzw") is not None:
            if origin.get("rpy") is not None:
                self.malformed(origin, f"{what} origin gives both rpy and quat_xyzw — expected one of them")
                raise _Bad
            q = self.numbers(origin, "quat_xyzw", f"{what} origin quat_xyzw", 4)
            if np.linalg.norm(q) < 1e-12:
                self.malformed(origin, f"{what} origin quat_xyzw is '{origin.get('quat_xyzw')}' — expected a non-zero quaternion")
                raise _Bad
            return Pose(inr.quat_xyzw_to_matrix(q), xyz)
        rpy = self.numbers(origin, "rpy", f"{what} origin rpy", 3, "0 0 0")
        hint = degrees_hint(rpy)
        if hint:
            self.doc.findings.append(Finding("value-malformed", "warning", f"{self._who()}{what} origin rpy: {hint} "
                                             "(URDF rpy is in radians)", link=self.link or None, line=self.xml.line(origin)))
        return Pose(inr.rpy_to_matrix(rpy), xyz)

    # --- elements
    def inertial(self, el: Any) -> StatedInertial:
        pose = self.pose(el, "inertial")
        mass_el = _child(el, "mass")
        if mass_el is None:
            self.malformed(el, "inertial has no <mass> — expected <mass value=\"...\"/>")
            raise _Bad
        mass = self.numbers(mass_el, "value", "mass value", 1)[0]
        inertia_el = _child(el, "inertia")
        if inertia_el is None:
            self.malformed(el, "inertial has no <inertia> — expected <inertia ixx=... izz=.../>")
            raise _Bad
        values, bad = {}, False
        for key in INERTIA_KEYS:
            try:
                values[key] = self.numbers(inertia_el, key, f"inertia {key}", 1)[0]
            except _Bad:
                bad = True
        if bad:
            raise _Bad
        return StatedInertial(self.xml.line(el), mass, pose.translation, pose.rotation, tensor_of(values))

    def shape(self, geometry: Any, role: str) -> Shape:
        kids = _elements(geometry)
        if not kids:
            self.malformed(geometry, f"{role} geometry is empty — expected a box, cylinder, sphere, capsule or mesh")
            raise _Bad
        el = kids[0]
        kind = _local(el)
        base = self.path.parent
        if kind == "mesh":
            uri = el.get("filename")
            if uri is None or not uri.strip():
                self.malformed(el, f"{role} mesh has no filename — expected a mesh file name")
                raise _Bad
            if _EXPRESSION.search(uri):
                self.expression_found(el, f"{role} mesh filename", uri)
                raise _Bad
            scale = self.numbers(el, "scale", f"{role} mesh scale", 3, "1 1 1")
            if any(s == 0 for s in scale):
                self.malformed(el, f"{role} mesh scale is '{el.get('scale')}' — expected non-zero factors")
                raise _Bad
            return Shape("mesh", uri=uri.strip(), scale=(scale[0], scale[1], scale[2]), base_dir=base)
        if kind not in _SHAPE_ATTRS:
            self.malformed(el, f"{role} geometry <{kind}> is not a URDF shape — expected box, cylinder, sphere, capsule or mesh")
            raise _Bad
        size: list[float] = []
        for attr in _SHAPE_ATTRS[kind]:
            vals = self.numbers(el, attr, f"{role} {kind} {attr}", 3 if attr == "size" else 1)
            if any(v <= 0 for v in vals):
                self.malformed(el, f"{role} {kind} {attr} is '{el.get(attr)}' — expected positive numbers")
                raise _Bad
            size += vals
        return Shape(kind, size=tuple(size), base_dir=base)

    def body(self, el: Any, role: str) -> Body:
        name = el.get("name")
        try:
            pose = self.pose(el, role)
        except _Bad:
            return Body(role, self.xml.line(el), Pose(), None, name)  # type: ignore[arg-type]
        geometry = _child(el, "geometry")
        if geometry is None:
            self.malformed(el, f"{role} has no <geometry> — expected one")
            return Body(role, self.xml.line(el), pose, None, name)  # type: ignore[arg-type]
        try:
            shape: Shape | None = self.shape(geometry, role)
        except _Bad:
            shape = None
        return Body(role, self.xml.line(el), pose, shape, name)  # type: ignore[arg-type]

    def read_link(self, el: Any) -> Link:
        self.link = el.get("name") or ""
        self.expression = False
        line = self.xml.line(el)
        if not self.link:
            self.doc.findings.append(
                Finding("value-malformed", "error", "a <link> has no name — expected name=\"...\"", line=line)
            )
            self.link = f"(unnamed link at line {line})"
        elif _EXPRESSION.search(self.link):
            self.expression_found(el, "link name", self.link)
        inertial_el = _child(el, "inertial")
        extra = [k for k in _elements(el) if k.tag == "inertial"][1:]
        if extra:
            self.doc.findings.append(Finding(
                "value-malformed", "warning",
                f"link '{self.link}' has {len(extra) + 1} <inertial> blocks: URDF parsers read only the first, "
                "silently; remove the others", self.link, self.xml.line(extra[0]), data={"duplicate": True}))
        stated, state = None, "absent"
        if inertial_el is not None:
            try:
                stated, state = self.inertial(inertial_el), "present"
            except _Bad:
                state = "malformed"
        bodies = [self.body(kid, _local(kid)) for kid in _elements(el) if _local(kid) in ("collision", "visual")]
        xacro_el = next((e for e in el.iter() if _is_xacro(e)), None)
        if xacro_el is not None and not self.expression:
            self.expression_found(xacro_el, "content", f"<xacro:{_local(xacro_el)}>")
        if xacro_el is not None and state == "absent":
            state = "malformed"  # a macro may well write the block: unknown, not missing
        link = Link(self.link, line, stated, state, bodies)  # type: ignore[arg-type]
        link.suppressions = self.suppressions(el)
        writable = self.xml.encoding_ok and not self.expression
        reason = "" if writable else ("the file is not UTF-8" if not self.xml.encoding_ok else XACRO_NOTE)
        link.handle = UrdfLinkHandle(self.xml, el, writable, reason)
        self.link = ""
        return link

    def suppressions(self, el: Any) -> list[tuple[str, int, str]]:
        return suppressions(self.xml, el)

    def read_joint(self, el: Any) -> Joint | None:
        name = el.get("name") or ""
        parent, child = _child(el, "parent"), _child(el, "child")
        p = parent.get("link") if parent is not None else None
        c = child.get("link") if child is not None else None
        if not p or not c:
            self.malformed(el, f"joint '{name}' has no {'parent' if not p else 'child'} link — expected <{'parent' if not p else 'child'} link=\"...\"/>")
            return None
        try:
            pose = self.pose(el, f"joint '{name}'")
        except _Bad:
            pose = Pose()
        return Joint(name, el.get("type") or "", p, c, self.xml.line(el), pose)


def _expect(count: int) -> str:
    return "a number" if count == 1 else f"{count} numbers"


def _why(part: str, count: int) -> str:
    want = "a number" if count == 1 else f"{count} numbers"
    if re.fullmatch(r"\s*[+-]?\d+,\d+\s*", part):
        return f"expected {want} (decimal point, not comma)"
    if "," in part:
        return f"expected {want} separated by spaces (decimal point, not comma)"
    if not part.strip():
        return f"expected {want}, got nothing"
    if part.strip().lower().lstrip("+-") in ("nan", "inf", "infinity"):
        return "expected a finite number"
    return f"expected {want}"


def _local(el: Any) -> str:
    return etree.QName(el).localname if isinstance(el.tag, str) else ""


def _is_xacro(el: Any) -> bool:
    return isinstance(el.tag, str) and "xacro" in (etree.QName(el).namespace or "")


def _elements(el: Any) -> list[Any]:
    return [k for k in el if isinstance(k.tag, str)]


def _child(el: Any, name: str) -> Any:
    """The first child element of that name, as urdfdom reads it."""
    return next((k for k in el if isinstance(k.tag, str) and k.tag == name), None)


def _drop_default_namespace(root: Any) -> None:
    """<robot xmlns="..."> is read as plain URDF, as the usual C++ parsers (which ignore namespaces) do."""
    ns = etree.QName(root).namespace if isinstance(root.tag, str) else None
    if not ns or "xacro" in ns:
        return
    for el in root.iter():
        if isinstance(el.tag, str) and etree.QName(el).namespace == ns:
            el.tag = etree.QName(el).localname


def _fatal(doc: Document, message: str, line: int | None) -> Document:
    doc.fatal = True
    doc.writable = False
    doc.findings.append(Finding("xml-malformed", "error", message, line=line))
    return doc


def read_urdf(path: Path, data: bytes | None = None) -> Document:
    """Read a URDF file (or its bytes) into a Document; bad content becomes findings."""
    path = Path(path)
    if data is None:
        try:
            data = path.read_bytes()
        except OSError as exc:
            return _fatal(Document(path, "urdf", b""), f"cannot read the file: {exc.strerror or exc}", None)
    doc = Document(path, "urdf", data)
    try:
        xml = parse_xml(path, data)
    except XmlError as exc:
        text = exc.message if "unsafe" in exc.message else f"not well-formed XML: {exc.message}"
        return _fatal(doc, text, exc.line)
    for line, note in xml.notes:
        doc.findings.append(Finding("xml-malformed", "info", note, line=line))
    root = xml.root
    _drop_default_namespace(root)
    if _local(root) != "robot" or etree.QName(root).namespace:
        return _fatal(doc, f"the root element is <{root.tag}>, expected <robot> (not a URDF description)", xml.line(root))
    doc.writable = xml.encoding_ok
    reader = _Reader(path, xml, doc)
    for el in _elements(root):
        if el.tag == "link":
            doc.links.append(reader.read_link(el))
        elif el.tag == "joint":
            joint = reader.read_joint(el)
            if joint is not None:
                doc.joints.append(joint)
    return doc


from linkcheck.formats.urdf_write import rewrite_urdf  # noqa: E402,F401  (re-exported: the format's writer)
