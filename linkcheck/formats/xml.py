"""Safe XML parsing with exact source positions, for reading and for splicing.

lxml gives the tree; a stdlib expat pass over the same bytes gives the exact
line and byte offset of every element and comment (lxml's ``sourceline`` is
the line where a start tag *ends*, and is one too high past line 65,535).
The two are paired by document order. Documents with a DOCTYPE that declares
anything or names an external DTD are refused before any entity could be
read: robot descriptions never need one.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from xml.parsers import expat

from lxml import etree


class XmlError(Exception):
    """A file that cannot be read as safe, well-formed XML; ``message`` is one line."""

    def __init__(self, message: str, line: int | None = None) -> None:
        super().__init__(message)
        self.message = " ".join(str(message).split())
        self.line = line

    def __str__(self) -> str:
        return self.message


_SAFE_ENCODINGS = {"utf-8", "utf8", "us-ascii", "ascii"}
_BOMS = (
    (b"\xef\xbb\xbf", "utf-8"),
    (b"\xff\xfe\x00\x00", "utf-32"),
    (b"\x00\x00\xfe\xff", "utf-32"),
    (b"\xff\xfe", "utf-16"),
    (b"\xfe\xff", "utf-16"),
)
_DECL = re.compile(rb"<\?xml\s[^>]*?\?>")
_DECL_ENCODING = re.compile(rb"""encoding\s*=\s*(["'])([A-Za-z0-9._-]+)\1""")
_LEADING_JUNK = re.compile(rb"(?:\s+|<!--.*?-->)+", re.S)

_UNSAFE_DTD = "document type declarations with entities are refused (unsafe XML)"
_EXTERNAL_DTD = "document type declarations naming an external DTD are refused (unsafe XML)"


@dataclass
class _Pos:
    line: int
    start: int  # offset of '<'
    end: int  # offset after the element's last byte
    tag_end: int  # offset after the start tag's '>'
    empty: bool


@dataclass
class XmlFile:
    """A parsed XML file: the lxml tree plus exact positions of its elements in ``data``."""

    path: Path
    data: bytes
    root: Any  # lxml.etree._Element
    newline: str = "\n"
    encoding_ok: bool = True
    notes: list[tuple[int, str]] = field(default_factory=list)
    _pos: dict[Any, _Pos] = field(default_factory=dict, repr=False)
    _keep: list[Any] = field(default_factory=list, repr=False)

    def _p(self, el: Any) -> _Pos:
        try:
            return self._pos[el]
        except KeyError:
            raise KeyError(f"element {el!r} is not part of {self.path}") from None

    def line(self, el: Any) -> int:
        """Line (1-based) where the element's start tag (or the comment) begins."""
        return self._p(el).line

    def span(self, el: Any) -> tuple[int, int]:
        """Byte offsets [start, end) of the whole element (or comment) in ``data``."""
        p = self._p(el)
        return p.start, p.end

    def start_tag_span(self, el: Any) -> tuple[int, int]:
        """Byte offsets [offset of '<', offset after '>') of the start tag."""
        p = self._p(el)
        return p.start, p.tag_end

    def is_empty_tag(self, el: Any) -> bool:
        """True for an empty-element tag ``<x .../>``."""
        return self._p(el).empty

    def line_start(self, offset: int) -> int:
        """Offset of the first byte of the line holding ``offset``."""
        cut = max(self.data.rfind(b"\n", 0, offset), self.data.rfind(b"\r", 0, offset))
        return cut + 1

    def indent_of(self, el: Any) -> str:
        """The whitespace that starts the line of the element's start tag."""
        start = self._p(el).start
        head = self.data[self.line_start(start) : start]
        m = re.match(rb"[ \t]*", head)
        return m.group(0).decode("ascii") if m else ""

    def elements(self) -> list[Any]:
        """All real elements (no comments or PIs) in document order."""
        return [e for e in self._keep if isinstance(e.tag, str)]


_TAG = re.compile(rb"""<[^>"']*(?:(?:"[^"]*"|'[^']*')[^>"']*)*>""")


def _tag_end(data: bytes, start: int) -> int:
    """Offset after the '>' closing the tag that begins at ``start`` ('>' may sit inside quotes)."""
    m = _TAG.match(data, start)
    return m.end() if m else len(data)


def _detect_encoding(data: bytes) -> tuple[str | None, bool]:
    """(declared or BOM encoding, whether byte-level splicing is safe)."""
    for bom, name in _BOMS:
        if data.startswith(bom):
            return name, name == "utf-8"
    m = _DECL.search(data[:512])
    if m:
        enc = _DECL_ENCODING.search(m.group(0))
        if enc:
            name = enc.group(2).decode("ascii").lower()
            return name, name in _SAFE_ENCODINGS
    if data[:2] in (b"\x00<", b"<\x00"):
        return "utf-16", False
    return None, True


def _line_of(data: bytes, offset: int) -> int:
    return data.count(b"\n", 0, offset) + 1 + _lone_cr(data, offset)


def _lone_cr(data: bytes, offset: int) -> int:
    head = data[:offset]
    return head.count(b"\r") - head.count(b"\r\n")


def _fix_late_declaration(data: bytes, notes: list[tuple[int, str]]) -> bytes:
    """Blank an XML declaration that follows leading comments (common, and read by C++ parsers).

    The bytes are replaced by spaces of the same length so every offset and line stays.
    """
    bom = b"\xef\xbb\xbf" if data.startswith(b"\xef\xbb\xbf") else b""
    pos = len(bom)
    m = _LEADING_JUNK.match(data, pos)
    if not m or m.end() == pos:
        return data
    d = _DECL.match(data, m.end())
    if not d:
        return data
    notes.append(
        (
            _line_of(data, d.start()),
            "the XML declaration is not at the start of the file (after a comment or blank space); read it anyway",
        )
    )
    return data[: d.start()] + b" " * (d.end() - d.start()) + data[d.end() :]


class _Refused(Exception):
    def __init__(self, message: str) -> None:
        self.message = message


def _expat_pass(data: bytes, encoding: str | None) -> tuple[list[tuple[str, _Pos]], list[tuple[str, _Pos]]]:
    """Positions of every element and comment, in document order."""
    parser = expat.ParserCreate(encoding)
    parser.SetParamEntityParsing(expat.XML_PARAM_ENTITY_PARSING_NEVER)
    elements: list[tuple[str, _Pos]] = []
    comments: list[tuple[str, _Pos]] = []
    stack: list[_Pos] = []
    ascii_compatible = encoding is None or encoding.lower() not in ("utf-16", "utf-32", "utf-16le", "utf-16be")

    def doctype(name: str, system_id: str | None, public_id: str | None, has_internal_subset: int) -> None:
        if has_internal_subset:
            raise _Refused(_UNSAFE_DTD)
        if system_id or public_id:
            raise _Refused(_EXTERNAL_DTD)

    def refuse(*_args: object) -> None:
        raise _Refused(_UNSAFE_DTD)

    def start(name: str, _attrs: object) -> None:
        s = parser.CurrentByteIndex
        tag_end = _tag_end(data, s) if ascii_compatible else s
        empty = ascii_compatible and data[tag_end - 2 : tag_end] == b"/>"
        p = _Pos(parser.CurrentLineNumber, s, tag_end, tag_end, empty)
        elements.append((name, p))
        stack.append(p)

    def end(_name: str) -> None:
        p = stack.pop()
        if not p.empty:
            i = parser.CurrentByteIndex
            p.end = _tag_end(data, i) if ascii_compatible else i

    def comment(text: str) -> None:
        s = parser.CurrentByteIndex
        e = data.find(b"-->", s)
        comments.append((text, _Pos(parser.CurrentLineNumber, s, e + 3 if e >= 0 else s, e + 3, False)))

    parser.StartDoctypeDeclHandler = doctype
    parser.EntityDeclHandler = refuse
    parser.AttlistDeclHandler = refuse
    parser.ElementDeclHandler = refuse
    parser.ExternalEntityRefHandler = lambda *a: 0
    parser.StartElementHandler = start
    parser.EndElementHandler = end
    parser.CommentHandler = comment
    try:
        parser.Parse(data, True)
    except _Refused as exc:
        raise XmlError(exc.message, parser.CurrentLineNumber) from None
    except expat.ExpatError as exc:
        raise XmlError(expat.ErrorString(exc.code) or "not well-formed", exc.lineno) from None
    except (LookupError, ValueError) as exc:
        raise XmlError(f"cannot decode the file: {exc}", 1) from None
    return elements, comments


def _parser(encoding: str | None = None) -> etree.XMLParser:
    return etree.XMLParser(
        encoding=encoding,
        resolve_entities=False,
        no_network=True,
        load_dtd=False,
        huge_tree=False,
        strip_cdata=False,
        remove_blank_text=False,
        remove_comments=False,
        remove_pis=False,
    )


def _local(name: str) -> str:
    return name.rsplit(":", 1)[-1].rsplit("}", 1)[-1]


def parse_xml(path: Path, data: bytes) -> XmlFile:
    """Parse ``data`` (the bytes of ``path``) safely; raises XmlError with a one-line reason."""
    notes: list[tuple[int, str]] = []
    encoding, encoding_ok = _detect_encoding(data)
    src = _fix_late_declaration(data, notes)
    expat_encoding = encoding if (encoding and src is not data and not data.startswith(b"\xef\xbb\xbf")) else None
    positions, comment_positions = _expat_pass(src, expat_encoding)

    try:
        root = etree.fromstring(src, _parser(expat_encoding))
    except etree.XMLSyntaxError as exc:
        line = exc.position[0] if getattr(exc, "position", None) else getattr(exc, "lineno", None)
        msg = exc.msg if getattr(exc, "msg", None) else str(exc)
        msg = re.sub(r",? line \d+, column \d+\s*$", "", msg)
        raise XmlError(msg, line) from None
    except (LookupError, ValueError) as exc:
        raise XmlError(f"cannot decode the file: {exc}", 1) from None
    if root is None:
        raise XmlError("no root element")

    xf = XmlFile(path=path, data=data, root=root, notes=notes, encoding_ok=encoding_ok)
    first_nl = data.find(b"\n")
    xf.newline = "\r\n" if first_nl > 0 and data[first_nl - 1 : first_nl] == b"\r" else "\n"

    elements = [e for e in root.iter() if isinstance(e.tag, str)]
    if len(elements) != len(positions):
        raise XmlError(f"internal: {len(elements)} elements but {len(positions)} positions")
    for el, (name, pos) in zip(elements, positions):
        if _local(name) != etree.QName(el).localname:
            raise XmlError(f"internal: element order mismatch at line {pos.line}", pos.line)
        xf._pos[el] = pos

    lx_comments = (
        [c for c in reversed(list(root.itersiblings(preceding=True))) if c.tag is etree.Comment]
        + list(root.iter(etree.Comment))
        + [c for c in root.itersiblings() if c.tag is etree.Comment]
    )
    if len(lx_comments) == len(comment_positions):
        for c, (_text, pos) in zip(lx_comments, comment_positions):
            xf._pos[c] = pos
    xf._keep = elements + lx_comments
    return xf


#: ``<!-- linkcheck: allow RULE[, RULE] - reason -->``; the reason follows " -", ":", ";", an en or
#: em dash, or "because" (a double dash is not allowed inside XML comments, XML 1.0 §2.5).
SUPPRESSION = re.compile(
    r"\s*linkcheck\s*:\s*allow\s+([a-z0-9]+(?:-[a-z0-9]+)*(?:\s*,\s*[a-z0-9]+(?:-[a-z0-9]+)*)*)"
    r"(?:\s*(?:\s-|[:;\u2013\u2014]|because)\s*(.*?))?\s*\Z",
    re.S | re.I,
)


def suppressions(xml: XmlFile, el: Any) -> list[tuple[str, int, str]]:
    """Inline suppressions of one element: comments inside it, or right before it (rule, line, reason)."""
    from lxml import etree

    before = []
    prev = el.getprevious()
    while prev is not None and prev.tag is etree.Comment:
        before.insert(0, prev)
        if (prev.tail or "").strip():
            break
        prev = prev.getprevious()
    out = []
    for c in before + [c for c in el.iter() if c.tag is etree.Comment]:
        m = SUPPRESSION.match(c.text or "")
        if not m:
            continue
        try:
            line = xml.line(c)
        except KeyError:
            line = xml.line(el)
        out.extend((rule.strip().lower(), line, (m.group(2) or "").strip()) for rule in m.group(1).split(","))
    return out
