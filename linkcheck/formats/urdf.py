"""URDF: read a file into the model, and splice new inertial blocks into its bytes.

Reading never raises for bad content: unreadable XML becomes an
``xml-malformed`` finding on a fatal Document, unparseable numbers become
``value-malformed`` findings. Writing changes only the bytes of inertial
elements (attribute values where the block exists, one inserted block where
it does not); everything else stays byte-identical.
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
from linkcheck.formats.numbers import INERTIA_KEYS, MAX_MAGNITUDE, TOO_LARGE, InertialEdit, format_edit, prefer_existing, tensor_of
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


# --------------------------------------------------------------------------- writer

_ATTR = re.compile(rb"""(\s+)([^\s=/>]+)(\s*=\s*)(["'])(.*?)\4""", re.S)


def _attributes(data: bytes, start: int, end: int) -> list[re.Match[bytes]]:
    """Attribute matches of the start tag data[start:end], in order."""
    name = re.compile(rb"<[^\s/>]+").match(data, start)
    pos = name.end() if name else start + 1
    out = []
    while True:
        m = _ATTR.match(data, pos, end)
        if not m:
            return out
        out.append(m)
        pos = m.end()


class _Splice:
    def __init__(self, xml: XmlFile) -> None:
        self.xml = xml
        self.edits: list[tuple[int, int, bytes]] = []
        self.nl = xml.newline.encode()

    def add(self, start: int, end: int, text: bytes) -> None:
        self.edits.append((start, end, text))

    def apply(self) -> bytes:
        out, last = [], 0
        data = self.xml.data
        for start, end, text in sorted(self.edits):
            if start < last:
                raise ValueError("overlapping edits")
            out += [data[last:start], text]
            last = end
        out.append(data[last:])
        return b"".join(out)

    def quote(self, el: Any) -> bytes:
        attrs = _attributes(self.xml.data, *self.xml.start_tag_span(el))
        return attrs[0].group(4) if attrs else b'"'

    def set_attributes(self, el: Any, values: dict[str, str], keep: set[str]) -> None:
        """Set attribute values inside el's start tag, keeping quotes; append missing ones."""
        data = self.xml.data
        start, end = self.xml.start_tag_span(el)
        attrs = _attributes(data, start, end)
        seen = {m.group(2).decode(): m for m in attrs}
        q = attrs[0].group(4) if attrs else self._default_quote
        sep = attrs[-1].group(1) if attrs and b"\n" in attrs[-1].group(1) else b" "
        missing = []
        for key, text in values.items():
            m = seen.get(key)
            if m is None:
                missing.append(sep + key.encode() + b"=" + q + text.encode() + q)
            elif key not in keep:
                self.add(m.start(5), m.end(5), text.encode())
        if missing:
            at = attrs[-1].end() if attrs else re.compile(rb"<[^\s/>]+").match(data, start).end()  # type: ignore[union-attr]
            self.add(at, at, b"".join(missing))

    _default_quote = b'"'


def _indent_unit(xml: XmlFile, link: Any) -> str:
    """One level of indentation as the file writes it (from the link's own indent or children)."""
    li = xml.indent_of(link)
    for kid in _elements(link):
        ki = xml.indent_of(kid)
        if len(ki) > len(li) and ki.startswith(li):
            return ki[len(li) :]
    root_i = xml.indent_of(xml.root)
    if len(li) > len(root_i) and li.startswith(root_i):
        return li[len(root_i) :]
    return "\t" if "\t" in li else "  "


def _starts_line(xml: XmlFile, el: Any) -> bool:
    start = xml.start_tag_span(el)[0]
    return not xml.data[xml.line_start(start) : start].strip()


def _keep_same(old: str | None, new: str, scale: float) -> bool:
    """True when the file's text already says the intended number (no byte needs to change)."""
    if old is None or not _NUMBER.match(old):
        return False
    return abs(float(old) - float(new)) <= 1e-12 * scale


def rewrite_urdf(doc: Document, changes: dict[str, InertialEdit]) -> bytes:
    """``doc.data`` with the inertial blocks of the named links replaced by ``changes``.

    Raises LinkcheckError when a link is unknown or may not be written (xacro values, not UTF-8).
    """
    from linkcheck.errors import LinkcheckError

    if not changes:
        return doc.data
    if doc.fatal:
        raise LinkcheckError(f"{doc.path}: cannot rewrite a file that could not be read")
    xml: XmlFile | None = None
    by_name = {k.name: k for k in doc.links}
    for name in changes:
        link = by_name.get(name)
        if link is None or not isinstance(link.handle, UrdfLinkHandle):
            raise LinkcheckError(f"{doc.path}: no link '{name}' to rewrite")
        if not link.handle.writable:
            raise LinkcheckError(f"{doc.path}:{link.line}: link '{name}' is not rewritten: {link.handle.reason}")
        xml = link.handle.xml
    assert xml is not None
    if xml.data != doc.data:
        raise LinkcheckError(f"{doc.path}: the document changed since it was read")
    splice = _Splice(xml)
    for name, edit in changes.items():
        handle: UrdfLinkHandle = by_name[name].handle
        texts = format_edit(edit)
        inertial = _child(handle.element, "inertial")
        if inertial is None:
            _insert_block(splice, handle.element, texts)
        else:
            _rewrite_block(splice, inertial, prefer_existing(edit, texts, _old_texts(inertial)), edit)
    out = splice.apply()
    try:
        parse_xml(doc.path, out)
    except XmlError as exc:  # pragma: no cover - a bug guard: never write a broken file
        raise LinkcheckError(f"{doc.path}: internal error, the rewritten file does not parse ({exc.message})") from None
    return out


def _old_texts(inertial: Any) -> dict[str, str | None]:
    """The block's current mass, COM and tensor texts (None where absent)."""
    origin, mass, inertia = (_child(inertial, t) for t in ("origin", "mass", "inertia"))
    old: dict[str, str | None] = {"mass": mass.get("value") if mass is not None else None,
                                  "xyz": origin.get("xyz") if origin is not None else None}
    old.update({k: inertia.get(k) if inertia is not None else None for k in INERTIA_KEYS})
    return old


def _rewrite_block(splice: _Splice, inertial: Any, texts: dict[str, str], edit: InertialEdit) -> None:
    xml = splice.xml
    if xml.is_empty_tag(inertial) or not _elements(inertial):
        unit = _indent_unit(xml, inertial.getparent())
        block = _block(xml.indent_of(inertial), unit, splice.quote(inertial.getparent()), splice.nl, texts)
        start, end = xml.span(inertial)
        splice.add(start, end, block[len(xml.indent_of(inertial)) :])
        return
    com_scale = float(np.max(np.abs(edit.com))) or 1.0
    origin = _child(inertial, "origin")
    if origin is not None:
        use_quat = origin.get("quat_xyzw") is not None and origin.get("rpy") is None
        values = {"xyz": texts["xyz"], ("quat_xyzw" if use_quat else "rpy"): texts["quat_xyzw" if use_quat else "rpy"]}
        values = {k: v for k, v in values.items() if origin.get(k) is not None or v != "0 0 0"}  # absent means 0 0 0
        keep = {k for k, v in values.items() if _same_vector(origin.get(k), v, com_scale if k == "xyz" else 1.0)}
        splice.set_attributes(origin, values, keep)
    elif texts["xyz"] != "0 0 0" or texts["rpy"] != "0 0 0":
        kids = _elements(inertial)
        q = splice.quote(kids[0]) if kids else splice.quote(inertial)
        tag = _tag("origin", {"xyz": texts["xyz"], "rpy": texts["rpy"]}, q)
        if kids and _starts_line(xml, kids[0]):
            at = xml.start_tag_span(kids[0])[0]
            splice.add(at, at, tag + splice.nl + xml.indent_of(kids[0]).encode())
        else:
            at = xml.start_tag_span(inertial)[1]
            unit = _indent_unit(xml, inertial.getparent())
            splice.add(at, at, splice.nl + (xml.indent_of(inertial) + unit).encode() + tag)
    mass = _child(inertial, "mass")
    if mass is not None:
        keep = {"value"} if _keep_same(mass.get("value"), texts["mass"], abs(edit.mass) or 1.0) else set()
        splice.set_attributes(mass, {"value": texts["mass"]}, keep)
    inertia = _child(inertial, "inertia")
    if inertia is not None:
        t = np.asarray(edit.inertia_frame, dtype=float)
        scale = float(np.max(np.abs(np.diag(t)))) or 1.0
        values = {k: texts[k] for k in INERTIA_KEYS}
        keep = {k for k in INERTIA_KEYS if _keep_same(inertia.get(k), texts[k], scale)}
        splice.set_attributes(inertia, values, keep)
    if mass is None or inertia is None:
        kids = _elements(inertial)
        last = kids[-1] if kids else None
        at = xml.span(last)[1] if last is not None else xml.start_tag_span(inertial)[1]
        indent = xml.indent_of(last) if last is not None else xml.indent_of(inertial) + _indent_unit(xml, inertial.getparent())
        q = splice.quote(last if last is not None else inertial)
        add = b""
        if mass is None:
            add += splice.nl + indent.encode() + _tag("mass", {"value": texts["mass"]}, q)
        if inertia is None:
            add += splice.nl + indent.encode() + _tag("inertia", {k: texts[k] for k in INERTIA_KEYS}, q)
        splice.add(at, at, add)


def _same_vector(old: str | None, new: str, scale: float) -> bool:
    if old is None:
        return False
    a, b = old.split(), new.split()
    return len(a) == len(b) and all(_keep_same(x, y, scale) for x, y in zip(a, b))


def _tag(name: str, values: dict[str, str], quote: bytes) -> bytes:
    attrs = b"".join(b" " + k.encode() + b"=" + quote + v.encode() + quote for k, v in values.items())
    return b"<" + name.encode() + attrs + b"/>"


def _block(child: str, unit: str, quote: bytes, nl: bytes, texts: dict[str, str]) -> bytes:
    inner = (child + unit).encode()
    return (
        child.encode() + b"<inertial>" + nl
        + inner + _tag("origin", {"xyz": texts["xyz"], "rpy": texts["rpy"]}, quote) + nl
        + inner + _tag("mass", {"value": texts["mass"]}, quote) + nl
        + inner + _tag("inertia", {k: texts[k] for k in INERTIA_KEYS}, quote) + nl
        + child.encode() + b"</inertial>"
    )


def _insert_block(splice: _Splice, link: Any, texts: dict[str, str]) -> None:
    """A new <inertial> as the first child of the link, in the file's indentation and newlines."""
    xml, nl, data = splice.xml, splice.nl, splice.xml.data
    unit = _indent_unit(xml, link)
    kids = _elements(link)
    own = xml.indent_of(link)
    child = xml.indent_of(kids[0]) if kids and _starts_line(xml, kids[0]) else own + unit
    block = _block(child, unit, splice.quote(link), nl, texts)
    start, tag_end = xml.start_tag_span(link)
    if xml.is_empty_tag(link):
        close = tag_end - 2
        while data[close - 1 : close] in (b" ", b"\t", b"\n", b"\r"):
            close -= 1
        splice.add(close, tag_end, b">" + nl + block + nl + own.encode() + b"</link>")
        return
    end = xml.span(link)[1]
    close = data.rfind(b"</", tag_end, end)
    if not data[tag_end:close].strip():
        splice.add(tag_end, close, nl + block + nl + own.encode())
    elif re.match(rb"[ \t]*[\r\n]", data[tag_end:close]):
        splice.add(tag_end, tag_end, nl + block)
    else:
        splice.add(tag_end, tag_end, nl + block + nl + child.encode())
