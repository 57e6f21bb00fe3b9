"""Splice new ``<inertial>`` values into the original bytes of an SDFormat file.

Only the text of ``<pose>``, ``<mass>`` and ``<ixx>``..``<izz>`` changes where
those exist; missing children (or a whole block) are inserted in the file's
own indentation and newline style. A pose written with ``degrees="true"`` or
``rotation_format="quat_xyzw"`` keeps its style. Everything else, including
``<fluid_added_mass>``, stays byte-identical.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from linkcheck.formats.frames import PoseError, parse_pose
from linkcheck.formats.numbers import ANGLE_ATOL, INERTIA_KEYS, InertialEdit, format_edit, prefer_existing
from linkcheck.formats.xml import XmlError, XmlFile, parse_xml

if TYPE_CHECKING:
    from linkcheck.model import Document

Splice = tuple[int, int, bytes]


def _local(el: Any) -> str:
    return el.tag.rsplit("}", 1)[-1] if isinstance(el.tag, str) else ""


def _child(el: Any, name: str) -> Any | None:
    return next((c for c in el if _local(c) == name), None)


def _elements(el: Any) -> list[Any]:
    return [c for c in el if isinstance(c.tag, str)]


def _indent_unit(xml: XmlFile) -> str:
    """The file's indentation step: the smallest positive indent difference between parent and child."""
    best: str | None = None
    for el in xml.elements()[:400]:
        kids = _elements(el)
        if not kids:
            continue
        outer, inner = xml.indent_of(el), xml.indent_of(kids[0])
        if inner.startswith(outer) and len(inner) > len(outer) and xml.line(kids[0]) != xml.line(el):
            step = inner[len(outer) :]
            if best is None or len(step) < len(best):
                best = step
    return best or "  "


class _Splicer:
    def __init__(self, xml: XmlFile) -> None:
        self.xml = xml
        self.data = xml.data
        self.nl = xml.newline
        self.unit = _indent_unit(xml)
        self.splices: list[Splice] = []

    def enc(self, text: str) -> bytes:
        return text.encode("utf-8")

    def child_indent(self, parent: Any) -> str:
        kids = _elements(parent)
        if kids and self.xml.line(kids[0]) != self.xml.line(parent):
            return self.xml.indent_of(kids[0])
        return self.xml.indent_of(parent) + self.unit

    def set_text(self, el: Any, text: str) -> None:
        """Replace an element's text (keeping surrounding whitespace), or fill an empty tag."""
        start, tag_end = self.xml.start_tag_span(el)
        if self.xml.is_empty_tag(el):
            head = self.data[start : tag_end - 2].rstrip()
            name = _local(el)
            self.splices.append((start, tag_end, head + b">" + self.enc(text) + self.enc(f"</{name}>")))
            return
        _, end = self.xml.span(el)
        close = self.data.rfind(b"</", tag_end, end)
        inner = self.data[tag_end:close]
        stripped = inner.strip()
        lead = len(inner) - len(inner.lstrip())
        if stripped:
            self.splices.append((tag_end + lead, tag_end + lead + len(stripped), self.enc(text)))
        else:
            self.splices.append((tag_end, close, self.enc(text)))

    def insert_children(self, parent: Any, lines: list[str], before: Any | None = None, after: Any | None = None) -> None:
        """Insert elements (already-formatted lines relative to the child indent) into ``parent``."""
        indent = self.child_indent(parent)
        p_start, p_end = self.xml.span(parent)
        if (before is not None or after is not None) and b"\n" not in self.data[p_start:p_end]:
            # a one-line element (<inertia><ixx>..</ixx><izz>..</izz></inertia>) stays on one line
            text = "".join(line.strip() for line in lines)
            at = self.xml.span(before)[0] if before is not None else self.xml.span(after)[1]
            self.splices.append((at, at, self.enc(text)))
            return
        if before is not None:
            text = "".join(line + self.nl + indent for line in self._indented(lines))
            self.splices.append((self.xml.span(before)[0], self.xml.span(before)[0], self.enc(text)))
            return
        if after is not None:
            text = "".join(self.nl + indent + line for line in self._indented(lines))
            end = self.xml.span(after)[1]
            self.splices.append((end, end, self.enc(text)))
            return
        # no element children: rebuild the element's content around the new lines
        start, tag_end = self.xml.start_tag_span(parent)
        outer = self.xml.indent_of(parent)
        body = "".join(self.nl + indent + line for line in self._indented(lines)) + self.nl + outer
        name = _local(parent)
        if self.xml.is_empty_tag(parent):
            head = self.data[start : tag_end - 2].rstrip()
            self.splices.append((start, tag_end, head + b">" + self.enc(body + f"</{name}>")))
            return
        _, end = self.xml.span(parent)
        close = self.data.rfind(b"</", tag_end, end)
        inner = self.data[tag_end:close]
        if inner.strip():
            self.splices.append((close, close, self.enc(body)))  # comments only: keep them
            return
        self.splices.append((tag_end, close, self.enc(body)))

    def _indented(self, lines: list[str]) -> list[str]:
        """Lines whose leading tabs mark nesting depth, with each tab made one indent unit."""
        return [self.unit * (len(line) - len(line.lstrip("\t"))) + line.lstrip("\t") for line in lines]

    def apply(self) -> bytes:
        out = self.data
        last = len(out) + 1
        order = sorted(range(len(self.splices)), key=lambda i: (self.splices[i][0], self.splices[i][1], i), reverse=True)
        for start, end, text in (self.splices[i] for i in order):
            if end > last:
                raise ValueError("internal: overlapping edits")
            out = out[:start] + text + out[end:]
            last = start
        return out


def _block_lines(texts: dict[str, str], pose: str | None) -> list[str]:
    """A full <inertial> block, nesting marked by leading tabs (one per unit)."""
    lines = ["<inertial>"]
    if pose is not None:
        lines.append(f"\t<pose>{pose}</pose>")
    lines.append(f"\t<mass>{texts['mass']}</mass>")
    lines += _inertia_lines(texts, depth=1)
    lines.append("</inertial>")
    return lines


def _inertia_lines(texts: dict[str, str], depth: int) -> list[str]:
    tab = "\t" * depth
    return [f"{tab}<inertia>", *(f"{tab}\t<{k}>{texts[k]}</{k}>" for k in INERTIA_KEYS), f"{tab}</inertia>"]


def _pose_text(edit: InertialEdit, texts: dict[str, str], pel: Any | None) -> str:
    """Pose text in the style of the existing <pose> (radians, degrees or quat_xyzw)."""
    if pel is not None and (pel.get("rotation_format") or "").strip() == "quat_xyzw":
        return f"{texts['xyz']} {texts['quat_xyzw']}"
    if pel is not None and (pel.get("degrees") or "").strip().lower() in ("true", "1"):
        from linkcheck.inertia import matrix_to_rpy

        rpy = np.degrees(matrix_to_rpy(np.asarray(edit.rotation, dtype=float)))
        return f"{texts['xyz']} " + " ".join(_degrees_text(a) for a in rpy)
    return f"{texts['xyz']} {texts['rpy']}"


def _degrees_text(angle: float) -> str:
    """An angle in degrees with the fewest decimals that keep it within ANGLE_ATOL radians."""
    atol = float(np.degrees(ANGLE_ATOL))
    for decimals in range(0, 15):
        text = f"{angle:.{decimals}f}"
        if abs(float(text) - angle) <= atol:
            return "0" if float(text) == 0 else text
    return repr(float(angle))


def _same_pose(pel: Any, edit: InertialEdit) -> bool:
    try:
        old = parse_pose(pel.text, pel.get("degrees"), pel.get("rotation_format"))
    except PoseError:
        return False
    return bool(np.allclose(old.translation, edit.com, rtol=0, atol=1e-12) and np.allclose(old.rotation, edit.rotation, atol=1e-12))


def _same_number(el: Any, value: str) -> bool:
    try:
        return float((el.text or "").strip()) == float(value)
    except ValueError:
        return False


def _edit_link(sp: _Splicer, link_el: Any, edit: InertialEdit) -> None:
    texts = format_edit(edit)
    identity = bool(np.allclose(edit.com, 0, atol=0) and np.allclose(edit.rotation, np.eye(3), atol=0))
    iel = _child(link_el, "inertial")
    if iel is None:
        lines = _block_lines(texts, None if identity else f"{texts['xyz']} {texts['rpy']}")
        kids = _elements(link_el)
        pose = _child(link_el, "pose")
        if pose is not None:
            sp.insert_children(link_el, lines, after=pose)
        elif kids:
            sp.insert_children(link_el, lines, before=kids[0])
        else:
            sp.insert_children(link_el, lines)
        return
    if (iel.get("auto") or "").strip().lower() in ("true", "1"):
        raise ValueError("the link computes its inertia automatically (auto=\"true\"): stated values are not written")
    pel, mel, inel = _child(iel, "pose"), _child(iel, "mass"), _child(iel, "inertia")
    old = {"mass": mel.text if mel is not None else None}
    old.update({k: (_child(inel, k).text if inel is not None and _child(inel, k) is not None else None) for k in INERTIA_KEYS})
    texts = prefer_existing(edit, texts, old)
    kids = _elements(iel)
    if not kids:
        body = _block_lines(texts, None if identity else f"{texts['xyz']} {texts['rpy']}")[1:-1]
        sp.insert_children(iel, [line[1:] for line in body])
        return
    if pel is not None:
        if not _same_pose(pel, edit):
            sp.set_text(pel, _pose_text(edit, texts, pel))
    elif not identity:
        sp.insert_children(iel, [f"<pose>{texts['xyz']} {texts['rpy']}</pose>"], before=kids[0])
    if mel is not None:
        if not _same_number(mel, texts["mass"]):
            sp.set_text(mel, texts["mass"])
    else:
        anchor = pel
        if anchor is not None:
            sp.insert_children(iel, [f"<mass>{texts['mass']}</mass>"], after=anchor)
        else:
            sp.insert_children(iel, [f"<mass>{texts['mass']}</mass>"], before=kids[0])
    if inel is None:
        anchor = mel if mel is not None else pel
        lines = _inertia_lines(texts, depth=0)
        if anchor is not None:
            sp.insert_children(iel, lines, after=anchor)
        else:
            sp.insert_children(iel, lines, after=kids[-1])
        return
    present = [k for k in INERTIA_KEYS if _child(inel, k) is not None]
    for key in present:
        kel = _child(inel, key)
        if not _same_number(kel, texts[key]):
            sp.set_text(kel, texts[key])
    absent = [k for k in INERTIA_KEYS if k not in present]
    if not absent:
        return
    if not _elements(inel):
        sp.insert_children(inel, [f"<{k}>{texts[k]}</{k}>" for k in absent])
        return
    # keep the canonical order: each missing key after the closest present key before it
    for key in absent:
        idx = INERTIA_KEYS.index(key)
        before = [k for k in present if INERTIA_KEYS.index(k) < idx]
        if before:
            sp.insert_children(inel, [f"<{key}>{texts[key]}</{key}>"], after=_child(inel, before[-1]))
        else:
            sp.insert_children(inel, [f"<{key}>{texts[key]}</{key}>"], before=_elements(inel)[0])


def rewrite_sdf(doc: Document, changes: dict[str, InertialEdit]) -> bytes:
    """The file's bytes with the inertial blocks of ``changes`` (link name -> edit) spliced in.

    Raises ValueError for a link this file cannot rewrite (unknown, included, auto inertia).
    """
    if not changes:
        return doc.data
    xml: XmlFile | None = None
    sp: _Splicer | None = None
    for name, edit in changes.items():
        link = doc.link(name)
        handle = getattr(link, "handle", None) if link is not None else None
        if handle is None or getattr(handle, "read_only", False):
            raise ValueError(f"link '{name}' is not a link of {doc.path}")
        if xml is None:
            xml = handle.xml
            if xml.data != doc.data:
                xml = parse_xml(doc.path, doc.data)
            sp = _Splicer(xml)
        assert sp is not None
        element = handle.element if handle.xml is xml else _find_link(xml, link.line)
        try:
            _edit_link(sp, element, edit)
        except ValueError as exc:
            raise ValueError(f"link '{name}': {exc}") from None
    assert sp is not None
    new = sp.apply()
    try:
        parse_xml(doc.path, new)
    except XmlError as exc:
        raise ValueError(f"internal: the rewritten file would not parse ({exc})") from None
    return new


def _find_link(xml: XmlFile, line: int) -> Any:
    for el in xml.elements():
        if _local(el) == "link" and xml.line(el) == line:
            return el
    raise ValueError(f"no <link> at line {line}")

