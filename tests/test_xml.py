"""Safe parsing and exact positions of linkcheck.formats.xml.

Outside references: the XML 1.0 specification (well-formedness, comments,
line-end normalisation, the XML declaration only at the very start), and
plain byte searches of the test's own input for the expected offsets/lines.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from lxml import etree

from linkcheck.formats.xml import XmlError, parse_xml


def parse(data: bytes):
    return parse_xml(Path("t.xml"), data)


def line_of(data: bytes, needle: bytes) -> int:
    """1-based line of the first byte of ``needle``, counted by hand from the input."""
    return data[: data.index(needle)].count(b"\n") + 1


def test_start_line_of_multi_line_tag_is_where_it_begins() -> None:
    data = b'<robot>\n  <link name="a">\n    <inertia\n      ixx="1"\n      iyy="2"/>\n  </link>\n</robot>\n'
    xf = parse(data)
    inertia = xf.root.find("link/inertia")
    assert xf.line(inertia) == line_of(data, b"<inertia") == 3
    assert inertia.sourceline == 5  # lxml reports where the tag ends; the reason expat is used


@pytest.mark.parametrize("filler", [65534, 70001])
def test_lines_past_65535_are_exact(filler: int) -> None:
    data = b"<robot>\n" + b"<!-- c -->\n" * filler + b'<link name="far"/>\n</robot>\n'
    xf = parse(data)
    link = xf.root.find("link")
    assert xf.line(link) == filler + 2 == line_of(data, b"<link")


def test_spans_cover_exact_bytes() -> None:
    data = (
        b"\xef\xbb\xbf<robot>\r\n  <!-- <inertial> in a comment -->\r\n"
        b"  <link name=\"a\" note='x > y'>\r\n    <mass value=\"1\" />\r\n  </link>\r\n"
        b"  <link name=\"b\"/>\r\n</robot>"
    )
    xf = parse(data)
    a, b = xf.root.findall("link")
    mass = a.find("mass")
    s, e = xf.span(a)
    assert data[s:e] == data[data.index(b'<link name="a"') : data.index(b"</link>") + len(b"</link>")]
    s, e = xf.start_tag_span(a)
    assert data[s:e] == b"<link name=\"a\" note='x > y'>"
    assert data.__getitem__(slice(*xf.span(mass))) == b'<mass value="1" />'
    assert xf.is_empty_tag(mass) and xf.is_empty_tag(b) and not xf.is_empty_tag(a)
    assert data.__getitem__(slice(*xf.span(b))) == b'<link name="b"/>'
    assert xf.indent_of(mass) == "    " and xf.indent_of(a) == "  "
    assert xf.newline == "\r\n" and xf.encoding_ok
    assert xf.line(b) == 6
    comment = xf.root[0]
    assert comment.tag is etree.Comment and xf.line(comment) == 2


def test_tabs_indentation_and_lf() -> None:
    data = b'<robot>\n\t<link name="a">\n\t\t<visual/>\n\t</link>\n</robot>'
    xf = parse(data)
    assert xf.indent_of(xf.root.find("link/visual")) == "\t\t"
    assert xf.newline == "\n"


def test_only_real_elements_are_paired() -> None:
    data = b"<!-- top -->\n<robot><?pi x?><!-- a --><link/><![CDATA[ <b> ]]><joint/></robot>\n<!-- end -->"
    xf = parse(data)
    assert [e.tag for e in xf.elements()] == ["robot", "link", "joint"]
    assert data.__getitem__(slice(*xf.span(xf.root.find("joint")))) == b"<joint/>"


def test_bare_doctype_is_ignored() -> None:
    xf = parse(b"<!DOCTYPE robot>\n<robot/>")
    assert xf.root.tag == "robot" and xf.line(xf.root) == 2


def test_late_xml_declaration_is_read_with_a_note() -> None:
    data = b'<!-- generated -->\n<?xml version="1.0" encoding="UTF-8"?>\n<robot>\n  <link name="a"/>\n</robot>\n'
    xf = parse(data)
    assert xf.data == data
    assert xf.line(xf.root.find("link")) == 4
    assert [line for line, _ in xf.notes] == [2]
    assert data.__getitem__(slice(*xf.span(xf.root.find("link")))) == b'<link name="a"/>'


def test_not_utf8_is_flagged_not_spliceable() -> None:
    data = '<?xml version="1.0" encoding="UTF-16"?>\n<robot><link/></robot>'.encode("utf-16")
    xf = parse(data)
    assert not xf.encoding_ok and xf.line(xf.root.find("link")) == 2
    latin = b'<?xml version="1.0" encoding="ISO-8859-1"?>\n<robot name="\xe9"/>'
    xf = parse(latin)
    assert not xf.encoding_ok and xf.root.get("name") == "\u00e9"


def assert_one_line_refusal(data: bytes, secret: bytes | None = None) -> XmlError:
    with pytest.raises(XmlError) as info:
        parse(data)
    err = info.value
    assert "\n" not in err.message and err.message
    assert err.line is not None and err.line >= 1
    if secret is not None:
        assert secret.decode() not in err.message
    return err


BILLION_LAUGHS = b"""<?xml version="1.0"?>
<!DOCTYPE robot [
 <!ENTITY a "lollollollollollollollollollol">
 <!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;">
 <!ENTITY c "&b;&b;&b;&b;&b;&b;&b;&b;&b;&b;">
 <!ENTITY d "&c;&c;&c;&c;&c;&c;&c;&c;&c;&c;">
 <!ENTITY e "&d;&d;&d;&d;&d;&d;&d;&d;&d;&d;">
 <!ENTITY f "&e;&e;&e;&e;&e;&e;&e;&e;&e;&e;">
 <!ENTITY g "&f;&f;&f;&f;&f;&f;&f;&f;&f;&f;">
 <!ENTITY h "&g;&g;&g;&g;&g;&g;&g;&g;&g;&g;">
 <!ENTITY i "&h;&h;&h;&h;&h;&h;&h;&h;&h;&h;">
]>
<robot name="&i;"/>
"""


def test_billion_laughs_is_refused() -> None:
    err = assert_one_line_refusal(BILLION_LAUGHS)
    assert "unsafe" in err.message


def test_external_entity_never_read(tmp_path: Path) -> None:
    secret = tmp_path / "secret.txt"
    secret.write_bytes(b"TOPSECRET-42")
    data = (
        f'<?xml version="1.0"?>\n<!DOCTYPE robot [<!ENTITY x SYSTEM "file://{secret}">]>\n'
        f'<robot name="&x;"><link name="&x;"/></robot>\n'
    ).encode()
    err = assert_one_line_refusal(data, b"TOPSECRET-42")
    assert "unsafe" in err.message


def test_parameter_entity_refused(tmp_path: Path) -> None:
    dtd = tmp_path / "evil.dtd"
    dtd.write_bytes(b'<!ENTITY leak "TOPSECRET-43">')
    data = f'<!DOCTYPE robot [<!ENTITY % p SYSTEM "file://{dtd}"> %p;]>\n<robot>&leak;</robot>'.encode()
    assert_one_line_refusal(data, b"TOPSECRET-43")


def test_external_dtd_refused(tmp_path: Path) -> None:
    dtd = tmp_path / "x.dtd"
    dtd.write_bytes(b'<!ENTITY leak "TOPSECRET-44">')
    err = assert_one_line_refusal(f'<!DOCTYPE robot SYSTEM "file://{dtd}">\n<robot>&leak;</robot>'.encode(), b"TOPSECRET-44")
    assert "external" in err.message


@pytest.mark.parametrize(
    "data, line",
    [
        (b"<robot>\n<link>\n</robot>", 3),  # mismatched tag
        (b"<robot>\n\n&undefined;</robot>", 3),  # undefined entity without a DTD
        (b"<robot>\n<!-- a -- b -->\n</robot>", 2),  # '--' inside a comment (XML 1.0 sec. 2.5)
        (b"", 1),
        (b"<robot><xacro:if/></robot>", 1),  # unbound namespace prefix
        (b'<robot>\n  <link name="a" name="b"/>\n</robot>', 2),  # duplicate attribute
    ],
)
def test_malformed_is_one_line_with_line(data: bytes, line: int) -> None:
    err = assert_one_line_refusal(data)
    assert err.line == line


def test_unknown_declared_encoding_is_one_line() -> None:
    err = assert_one_line_refusal(b'<?xml version="1.0" encoding="no-such-codec"?>\n<robot/>')
    assert "no-such-codec" in err.message
