"""URDF writer: splice new inertial blocks into a file's original bytes.

Only the bytes of inertial elements change: attribute values where the block exists (each keeping
its quote character), one inserted block at the link's indentation where it does not. Everything
else in the file stays byte-identical.
"""

from __future__ import annotations

import re
from typing import Any

import numpy as np

from linkcheck.formats.numbers import INERTIA_KEYS, InertialEdit, format_edit, prefer_existing
from linkcheck.formats.urdf import _NUMBER, UrdfLinkHandle, _child, _elements
from linkcheck.formats.xml import XmlError, XmlFile, parse_xml
from linkcheck.model import Document

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
