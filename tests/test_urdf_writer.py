"""The URDF splicing writer and the number formatting it uses.

Outside references: difflib (stdlib) for "only inertial lines changed";
scipy.spatial.transform.Rotation for rotated inertial frames; the handbook
tables of moments of inertia of homogeneous solids (thin disc about a
diameter m r^2/4 and its axis m r^2/2; slender rod m L^2/12), from memory;
the perpendicular axis theorem (lamina: I1 + I2 = I3) for the disc.
"""

from __future__ import annotations

import difflib
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from linkcheck import inertia as inr
from linkcheck.errors import LinkcheckError
from linkcheck.formats.numbers import InertialEdit, format_edit, format_number, rpy_text
from linkcheck.formats.urdf import read_urdf, rewrite_urdf

PATH = Path("/work/robot.urdf")


def edit(mass=1.25, com=(0.01, 0.0, -0.02), rpy=(0.0, 0.0, 0.0), moments=(0.011, 0.022, 0.031)) -> InertialEdit:
    return InertialEdit(mass, np.array(com, float), Rotation.from_euler("xyz", rpy).as_matrix(), np.diag(moments))


def changed_lines(before: bytes, after: bytes) -> list[str]:
    """Lines removed or added, by difflib (stdlib), on the raw text keeping line ends."""
    a = before.decode("utf-8-sig").splitlines(keepends=True)
    b = after.decode("utf-8-sig").splitlines(keepends=True)
    return [d for d in difflib.ndiff(a, b) if d[:2] in ("- ", "+ ")]


def check_written(before: bytes, changes: dict[str, InertialEdit]) -> bytes:
    """Rewrite, then check the invariants every rewrite must hold; returns the new bytes."""
    doc = read_urdf(PATH, before)
    assert not doc.fatal
    after = rewrite_urdf(doc, changes)
    again = read_urdf(PATH, after)
    assert not again.fatal and not [f for f in again.findings if f.severity == "error"]
    # same links, joints, geometry
    assert [(k.name, len(k.bodies)) for k in again.links] == [(k.name, len(k.bodies)) for k in doc.links]
    assert [(j.name, j.parent, j.child, j.line) for j in again.joints] == [
        (j.name, j.parent, j.child, j.line + _shift(doc, after, before, j.line)) for j in doc.joints
    ]
    # the written values are the intended ones within 1e-9 (link-frame tensor compared)
    for name, e in changes.items():
        st = again.link(name).inertial
        assert st is not None
        assert abs(st.mass - e.mass) <= 1e-9 * e.mass
        np.testing.assert_allclose(st.com, e.com, rtol=0, atol=1e-9 * max(1.0, np.abs(e.com).max()))
        want = e.rotation @ e.inertia_frame @ e.rotation.T
        np.testing.assert_allclose(st.mass_properties().inertia, want, rtol=0, atol=1e-9 * np.trace(want))
    # idempotent: the same edit on the rewritten file changes nothing
    assert rewrite_urdf(again, changes) == after
    return after


def _shift(doc, after: bytes, before: bytes, line: int) -> int:
    """Lines inserted before ``line`` (fills add lines); counted from difflib opcodes."""
    a = before.splitlines()
    b = after.splitlines()
    shift = 0
    for tag, i1, i2, j1, j2 in difflib.SequenceMatcher(a=a, b=b, autojunk=False).get_opcodes():
        if tag != "equal" and i1 < line:
            shift += (j2 - j1) - (i2 - i1)
    return shift


BASE = """<?xml version="1.0" encoding="utf-8"?>
<!-- test bench arm, invented -->
<robot name="bench">
  <link name="shoulder">
    <!-- <inertial> words inside a comment -->
    <inertial>
      <!-- measured on the scale -->
      <origin xyz="0 0 0.1" rpy="0 0 0"/>
      <mass value="1"/>
      <inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/>
    </inertial>
    <collision>
      <geometry><box size="0.1 0.2 0.3"/></geometry>
    </collision>
  </link>
  <link name="elbow">
    <visual>
      <geometry><cylinder radius="0.02" length="0.3"/></geometry>
    </visual>
  </link>
  <joint name="j1" type="revolute">
    <parent link="shoulder"/><child link="elbow"/>
    <limit lower="-1" upper="1" effort="10" velocity="1"/>
  </joint>
</robot>
"""


def variants() -> dict[str, bytes]:
    lf = BASE.encode()
    return {
        "lf": lf,
        "crlf": BASE.replace("\n", "\r\n").encode(),
        "tabs": BASE.replace("  ", "\t").encode(),
        "single-quotes": BASE.replace('"', "'").encode(),
        "no-trailing-newline": lf.rstrip(b"\n"),
        "bom": b"\xef\xbb\xbf" + lf,
        "no-declaration": lf.split(b"\n", 1)[1],
        "self-closing-elbow": BASE.replace(
            '<link name="elbow">\n    <visual>\n      <geometry><cylinder radius="0.02" length="0.3"/></geometry>\n'
            "    </visual>\n  </link>",
            '<link name="elbow"/>',
        ).encode(),
        "multi-line-attributes": BASE.replace(
            '<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/>',
            '<inertia\n        ixx="1"\n        ixy="0"\n        ixz="0"\n        iyy="1"\n        iyz="0"\n        izz="1"\n      />',
        ).encode(),
        "comment-between-attrs-lines": BASE.replace(
            '      <mass value="1"/>', '      <mass value="1"/>  <!-- kg -->'
        ).encode(),
        "latin1-chars-in-comment": BASE.replace("invented", "invent\u00e9 \u2014 \u00e9t\u00e9").encode(),
    }


def inertial_line_numbers(data: bytes) -> set[int]:
    """0-based numbers of lines from a line with '<inertial' to the next with '</inertial>' (or '/>' on it)."""
    lines = data.decode("utf-8-sig").splitlines()
    inside, out = False, set()
    for i, text in enumerate(lines):
        if "<inertial" in text and "<!--" not in text:
            inside = True
        if inside:
            out.add(i)
        if inside and ("</inertial>" in text or "<inertial/>" in text):
            inside = False
    return out


@pytest.mark.parametrize("name", list(variants()))
def test_rewrite_touches_only_inertial_lines(name: str) -> None:
    before = variants()[name]
    changes = {"shoulder": edit(), "elbow": edit(mass=0.3, com=(0, 0, 0.15), moments=(0.002, 0.002, 6e-5))}
    after = check_written(before, changes)
    a = before.decode("utf-8-sig").splitlines(keepends=True)
    b = after.decode("utf-8-sig").splitlines(keepends=True)
    old_inertial, new_inertial = inertial_line_numbers(before), inertial_line_numbers(after)
    opcodes = difflib.SequenceMatcher(a=a, b=b, autojunk=False).get_opcodes()
    for tag, i1, i2, j1, j2 in opcodes:
        if tag == "equal":
            continue
        for i in range(i1, i2):
            assert i in old_inertial or (name == "self-closing-elbow" and a[i].strip() == '<link name="elbow"/>'), (name, a[i])
        for j in range(j1, j2):
            ok = j in new_inertial or (name == "self-closing-elbow" and b[j].strip() in ('<link name="elbow">', "</link>"))
            assert ok, (name, b[j])
    assert any(tag != "equal" for tag, *_ in opcodes)
    # line ends, BOM, trailing newline and the prologue are as they were
    assert after.count(b"\r\n") == (after.count(b"\n") if name == "crlf" else 0)
    assert after.endswith(b"\n") == before.endswith(b"\n")
    assert after.startswith(b"\xef\xbb\xbf") == (name == "bom")
    assert after.split(b"<robot", 1)[0] == before.split(b"<robot", 1)[0]
    # inside the existing block only attribute values changed: the same text with digits masked
    def shape(text: bytes) -> bytes:
        import re

        return re.sub(rb"(=\s*)([\"'])[^\"']*\2", rb"\1\2#\2", text)

    s_old = before[before.index(b"<inertial>") : before.index(b"</inertial>")]
    s_new = after[after.index(b"<inertial>") : after.index(b"</inertial>")]
    assert shape(s_old) == shape(s_new)


def test_existing_block_keeps_quotes_spacing_and_order() -> None:
    before = (
        "<robot name='r'>\n  <link name='a'>\n    <inertial>\n"
        "      <origin   rpy='0 0 0'  xyz=\"0 0 0\" />\n"
        "      <mass value = '1' ></mass>\n"
        "      <inertia izz='1' iyy='1' ixx='1' ixy='0' ixz='0' iyz='0'/>\n"
        "    </inertial>\n  </link>\n</robot>\n"
    ).encode()
    after = check_written(before, {"a": edit(com=(0.5, 0, 0), moments=(0.5, 0.25, 0.5))})
    assert b"<origin   rpy='0 0 0'  xyz=\"0.5 0 0\" />" in after
    assert b"<mass value = '1.25' ></mass>" in after
    assert b"<inertia izz='0.5' iyy='0.25' ixx='0.5' ixy='0' ixz='0' iyz='0'/>" in after


def test_missing_origin_and_products_are_added_in_style() -> None:
    before = (
        "<robot name='r'>\n\t<link name='a'>\n\t\t<inertial>\n\t\t\t<mass value='1'/>\n"
        "\t\t\t<inertia ixx='1' iyy='1' izz='1'/>\n\t\t</inertial>\n\t</link>\n</robot>\n"
    ).encode()
    after = check_written(before, {"a": edit()})
    text = after.decode()
    assert "\t\t\t<origin xyz='0.01 0 -0.02' rpy='0 0 0'/>\n\t\t\t<mass value='1.25'/>" in text
    # products of inertia are always written, even when zero
    assert "<inertia ixx='0.011' iyy='0.022' izz='0.031' ixy='0' ixz='0' iyz='0'/>" in text


def test_fill_indentation_and_empty_link_forms() -> None:
    before = (
        '<robot name="r">\n    <link name="a"></link>\n    <link name="b" />\n'
        '    <link name="c">\n        <!-- note -->\n        <visual><geometry><sphere radius="1"/></geometry></visual>\n    </link>\n</robot>'
    ).encode()
    after = check_written(before, {"a": edit(), "b": edit(), "c": edit()})
    block = (
        '        <inertial>\n            <origin xyz="0.01 0 -0.02" rpy="0 0 0"/>\n'
        '            <mass value="1.25"/>\n'
        '            <inertia ixx="0.011" ixy="0" ixz="0" iyy="0.022" iyz="0" izz="0.031"/>\n        </inertial>'
    )
    text = after.decode()
    assert f'<link name="a">\n{block}\n    </link>' in text
    assert f'<link name="b">\n{block}\n    </link>' in text
    assert f'<link name="c">\n{block}\n        <!-- note -->' in text
    assert not text.endswith("\n")


def test_empty_inertial_element_is_completed() -> None:
    before = b'<robot name="r">\n  <link name="a">\n    <inertial/>\n  </link>\n</robot>\n'
    after = check_written(before, {"a": edit()})
    assert b'\n    <inertial>\n      <origin xyz="0.01 0 -0.02" rpy="0 0 0"/>' in after


def test_rotated_frame_written_as_rpy_and_quaternion() -> None:
    rpy = (0.4, -0.3, 1.2)
    rpy_file = (
        '<robot name="r"><link name="a"><inertial><origin xyz="0 0 0" rpy="0 0 0"/><mass value="1"/>'
        '<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial></link></robot>'
    ).encode()
    e = edit(rpy=rpy)
    after = check_written(rpy_file, {"a": e})
    st = read_urdf(PATH, after).link("a").inertial
    np.testing.assert_allclose(st.rotation, Rotation.from_euler("xyz", rpy).as_matrix(), atol=1e-9)
    quat_file = rpy_file.replace(b'rpy="0 0 0"', b'quat_xyzw="0 0 0 1"')
    after = check_written(quat_file, {"a": e})
    assert b"rpy" not in after and b"quat_xyzw" in after
    st = read_urdf(PATH, after).link("a").inertial
    np.testing.assert_allclose(st.rotation, Rotation.from_euler("xyz", rpy).as_matrix(), atol=1e-9)


def test_thin_disc_and_rod_survive_rounding() -> None:
    # handbook: thin disc of radius r about a diameter m r^2/4, about its axis m r^2/2
    m, r = 0.7, 0.13
    disc = np.diag([m * r * r / 4, m * r * r / 4, m * r * r / 2])
    # rotated so every entry is an irrational-looking number
    rot = Rotation.from_euler("xyz", [0.3, 0.2, 0.1]).as_matrix()
    e = InertialEdit(m, np.array([1 / 3, 0, 0]), np.eye(3), rot @ disc @ rot.T)
    texts = format_edit(e)
    back = np.array([[float(texts[a]) for a in row] for row in (("ixx", "ixy", "ixz"), ("ixy", "iyy", "iyz"), ("ixz", "iyz", "izz"))])
    moments = np.linalg.eigvalsh(back)
    # perpendicular axis theorem: I1 + I2 = I3 for a lamina, so the deficit is only rounding
    assert abs(moments[0] + moments[1] - moments[2]) <= 1e-6 * moments.sum()
    assert inr.satisfies_triangle(back) and inr.is_positive_definite(back)
    # slender rod of length L: m L^2/12 about transverse axes, a tiny axial moment
    L = 0.9
    rod = np.diag([m * L * L / 12, m * L * L / 12, m * L * L / 12 * 1e-4])
    e = InertialEdit(m, np.zeros(3), np.eye(3), rot @ rod @ rot.T)
    t = format_edit(e)
    back = np.array([[float(t[a]) for a in row] for row in (("ixx", "ixy", "ixz"), ("ixy", "iyy", "iyz"), ("ixz", "iyz", "izz"))])
    assert inr.is_positive_definite(back) and inr.satisfies_triangle(back)
    np.testing.assert_allclose(np.linalg.eigvalsh(back), np.sort(np.diag(rod)), rtol=0, atol=1e-9 * np.trace(rod))


def test_format_number_is_short_and_exact() -> None:
    assert format_number(0.1) == "0.1"  # repr round trip, Python float spec
    assert format_number(2.0) == "2" and format_number(-0.0) == "0"
    assert float(format_number(1 / 3)) == 1 / 3
    assert format_number(1.2345e-7, 3) == "1.23e-7"
    assert rpy_text(np.eye(3)) == "0 0 0"
    r = Rotation.from_euler("xyz", [0.1, -0.2, 0.3]).as_matrix()
    np.testing.assert_allclose([float(v) for v in rpy_text(r).split()], [0.1, -0.2, 0.3], atol=1e-10)
    with pytest.raises(ValueError):
        format_number(float("nan"))


def test_rounding_noise_products_become_zero() -> None:
    t = format_edit(InertialEdit(1.0, np.zeros(3), np.eye(3), np.array([[1, -2e-22, 0], [-2e-22, 2, 0], [0, 0, 2.5]])))
    assert (t["ixy"], t["ixx"], t["izz"]) == ("0", "1", "2.5")


def test_refuses_xacro_links_and_unknown_links() -> None:
    data = (
        '<robot name="r" xmlns:xacro="http://www.ros.org/wiki/xacro"><link name="a"><inertial>'
        '<mass value="${m}"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial></link></robot>'
    ).encode()
    doc = read_urdf(PATH, data)
    with pytest.raises(LinkcheckError, match="xacro"):
        rewrite_urdf(doc, {"a": edit()})
    with pytest.raises(LinkcheckError, match="no link 'zz'"):
        rewrite_urdf(doc, {"zz": edit()})
    assert rewrite_urdf(doc, {}) == data


def test_non_utf8_is_refused() -> None:
    data = '<?xml version="1.0" encoding="ISO-8859-1"?>\n<robot name="\u00e9"><link name="a"/></robot>'.encode("latin-1")
    with pytest.raises(LinkcheckError, match="UTF-8"):
        rewrite_urdf(read_urdf(PATH, data), {"a": edit()})


def test_values_already_right_keep_their_text() -> None:
    before = (
        b'<robot name="r"><link name="a"><inertial><origin xyz="0.010 0.0 -2e-2" rpy="0.0 0 0"/>'
        b'<mass value="1.250"/><inertia ixx="1.1e-2" ixy="0.0" ixz="-0" iyy="0.022" iyz="0.00" izz="1"/>'
        b"</inertial></link></robot>"
    )
    after = check_written(before, {"a": edit()})
    # only izz differs from the intended block, so only its value bytes change
    assert after == before.replace(b'izz="1"', b'izz="0.031"')


def test_mutated_files_never_raise_and_rewrites_stay_well_formed() -> None:
    """Random byte mutations of the variants: reading never raises; any rewrite re-parses and is
    idempotent (the DESIGN.md promise: a one-line error, never a traceback or a corrupted file)."""
    import random

    rng = random.Random(20261202)
    sources = list(variants().values())
    alphabet = b"<>/\"'= \n\r\t&;!-?[]xyz0123456789.,e${}:abc\xc3\xa9\xff"
    rewritten = 0
    for _ in range(1500):
        data = bytearray(rng.choice(sources))
        for _ in range(rng.randint(1, 4)):
            i = rng.randrange(len(data))
            op = rng.random()
            if op < 0.4:
                data[i : i + 1] = bytes([rng.choice(alphabet)])
            elif op < 0.7:
                del data[i : i + rng.randint(1, 5)]
            else:
                data[i:i] = bytes([rng.choice(alphabet)])
        doc = read_urdf(PATH, bytes(data))
        if doc.fatal:
            assert [f.rule for f in doc.findings] == ["xml-malformed"] and "\n" not in doc.findings[0].message
            continue
        changes = {k.name: edit() for k in doc.links if k.handle.writable}
        if not doc.writable or not changes:
            continue
        out = rewrite_urdf(doc, changes)
        again = read_urdf(PATH, out)
        assert not again.fatal
        assert rewrite_urdf(again, changes) == out
        rewritten += 1
    assert rewritten > 100
