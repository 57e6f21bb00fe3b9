"""The URDF reader against the URDF spec (ROS wiki urdf/XML/link and urdf/XML/joint, as
summarised in shared FORMATS.md section 1) and scipy.spatial.transform.Rotation for rotations.
All robots here are invented for the test."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from linkcheck.formats.urdf import read_urdf


def robot(body: str, head: str = '<?xml version="1.0"?>\n') -> bytes:
    return (head + '<robot name="bench">\n' + body + "</robot>\n").encode()


def read(body: str, name: str = "bench.urdf"):
    return read_urdf(Path("/models") / name, robot(body))


def only(doc, rule: str, severity: str = "error"):
    found = [f for f in doc.findings if f.rule == rule and f.severity == severity]
    assert len(found) == 1, doc.findings
    return found[0]


GOOD = """\
  <link name="plate">
    <inertial>
      <origin xyz="0.01 -0.02 0.03" rpy="0.3 -0.2 1.1"/>
      <mass value="2.5"/>
      <inertia ixx="0.4" ixy="-0.01" ixz="0.02"
               iyy="0.5" iyz="0.03" izz="0.6"/>
    </inertial>
    <collision name="c0">
      <origin xyz="0 0 0.05" rpy="0 1.5707963267948966 0"/>
      <geometry><box size="0.1 0.2 0.3"/></geometry>
    </collision>
    <collision><geometry><cylinder radius="0.05" length="0.4"/></geometry></collision>
    <collision><geometry><sphere radius="0.07"/></geometry></collision>
    <collision><geometry><capsule radius="0.02" length="0.1"/></geometry></collision>
    <visual><geometry><mesh filename="meshes/plate.stl"/></geometry></visual>
    <visual><geometry><mesh filename="package://bench/m.dae" scale="0.001 0.001 -0.001"/></geometry></visual>
  </link>
  <link name="frame_only"/>
  <joint name="hinge" type="revolute">
    <parent link="frame_only"/>
    <child link="plate"/>
    <origin xyz="0 0 1" rpy="0 0 0.5"/>
    <limit lower="-1" upper="1" effort="1" velocity="1"/>
  </joint>
  <joint name="weld" type="fixed"><parent link="plate"/><child link="tool"/></joint>
  <link name="tool"/>
"""


def test_links_lines_and_inertial() -> None:
    doc = read(GOOD)
    assert not doc.fatal and doc.findings == [] and doc.writable
    assert [k.name for k in doc.links] == ["plate", "frame_only", "tool"]
    plate = doc.link("plate")
    assert plate.line == 3  # <robot> is line 2 after the declaration
    assert plate.inertial_state == "present"
    st = plate.inertial
    assert st.line == 4 and st.mass == 2.5
    np.testing.assert_array_equal(st.com, [0.01, -0.02, 0.03])
    # URDF rpy: fixed axes x, y, z = scipy's extrinsic "xyz" (FORMATS.md sec. 0)
    r = Rotation.from_euler("xyz", [0.3, -0.2, 1.1]).as_matrix()
    np.testing.assert_allclose(st.rotation, r, atol=1e-14)
    tensor = np.array([[0.4, -0.01, 0.02], [-0.01, 0.5, 0.03], [0.02, 0.03, 0.6]])
    np.testing.assert_array_equal(st.inertia_frame, tensor)
    np.testing.assert_allclose(st.mass_properties().inertia, r @ tensor @ r.T, atol=1e-14)
    assert doc.link("frame_only").inertial_state == "absent" and doc.link("frame_only").inertial is None


def test_geometry_of_every_shape_kind() -> None:
    plate = read(GOOD).link("plate")
    kinds = [(b.role, b.shape.kind, b.shape.size) for b in plate.bodies]
    assert kinds == [
        ("collision", "box", (0.1, 0.2, 0.3)),
        ("collision", "cylinder", (0.05, 0.4)),
        ("collision", "sphere", (0.07,)),
        ("collision", "capsule", (0.02, 0.1)),
        ("visual", "mesh", ()),
        ("visual", "mesh", ()),
    ]
    box = plate.bodies[0]
    assert box.name == "c0" and box.line == 10
    np.testing.assert_allclose(box.pose.rotation, Rotation.from_euler("y", np.pi / 2).as_matrix(), atol=1e-15)
    np.testing.assert_array_equal(box.pose.translation, [0, 0, 0.05])
    # spec: origin defaults to identity, mesh scale to "1 1 1"
    assert plate.bodies[1].pose.is_identity
    stl, dae = plate.bodies[4].shape, plate.bodies[5].shape
    assert stl.uri == "meshes/plate.stl" and stl.scale == (1.0, 1.0, 1.0) and stl.base_dir == Path("/models")
    assert dae.uri == "package://bench/m.dae" and dae.scale == (0.001, 0.001, -0.001)


def test_joints() -> None:
    doc = read(GOOD)
    hinge, weld = doc.joints
    assert (hinge.name, hinge.type, hinge.parent, hinge.child, hinge.line) == ("hinge", "revolute", "frame_only", "plate", 21)
    assert hinge.movable and not weld.movable
    np.testing.assert_allclose(hinge.pose.rotation, Rotation.from_euler("z", 0.5).as_matrix(), atol=1e-15)
    np.testing.assert_array_equal(hinge.pose.translation, [0, 0, 1])
    assert weld.pose.is_identity


def test_inertial_defaults() -> None:
    doc = read('<link name="a"><inertial><mass value="1"/>'
               '<inertia ixx="1" ixy="0" ixz="0" iyy="2" iyz="0" izz="3"/></inertial></link>\n')
    st = doc.link("a").inertial
    np.testing.assert_array_equal(st.com, [0, 0, 0])
    np.testing.assert_array_equal(st.rotation, np.eye(3))
    assert not st.frame_rotated
    origin_only_xyz = read('<link name="a"><inertial><origin xyz="1 2 3"/><mass value="1"/>'
                           '<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial></link>\n')
    np.testing.assert_array_equal(origin_only_xyz.link("a").inertial.rotation, np.eye(3))


def test_quat_xyzw_origin() -> None:
    q = Rotation.from_euler("xyz", [0.1, 0.7, -0.4]).as_quat()  # scipy: scalar last (x, y, z, w)
    doc = read(f'<link name="a"><inertial><origin xyz="0 0 0" quat_xyzw="{" ".join(repr(float(v)) for v in q)}"/>'
               '<mass value="1"/><inertia ixx="1" ixy="0" ixz="0" iyy="2" iyz="0" izz="3"/></inertial></link>\n',
               )
    np.testing.assert_allclose(doc.link("a").inertial.rotation, Rotation.from_quat(q).as_matrix(), atol=1e-14)


INERTIA = 'ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"'


@pytest.mark.parametrize(
    "inertial, words",
    [
        (f'<mass value="1,5"/><inertia {INERTIA}/>', "mass value is '1,5' — expected a number (decimal point, not comma)"),
        ('<mass value="1"/><inertia ixx="1,5" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/>',
         "link 'forearm': inertia ixx is '1,5' — expected a number (decimal point, not comma)"),
        (f'<mass value="abc"/><inertia {INERTIA}/>', "mass value is 'abc' — expected a number"),
        (f'<mass value=""/><inertia {INERTIA}/>', "mass value is '' — expected a number"),
        (f'<mass value="nan"/><inertia {INERTIA}/>', "expected a finite number"),
        (f'<mass value="inf"/><inertia {INERTIA}/>', "expected a finite number"),
        (f'<mass value="-Infinity"/><inertia {INERTIA}/>', "expected a finite number"),
        (f'<mass value="1 2"/><inertia {INERTIA}/>', "expected a single number"),
        (f'<origin xyz="0 0"/><mass value="1"/><inertia {INERTIA}/>', "inertial origin xyz is '0 0' — expected 3 numbers, got 2"),
        (f'<origin rpy="0,0,0"/><mass value="1"/><inertia {INERTIA}/>', "inertial origin rpy is '0,0,0'"),
        (f'<mass/><inertia {INERTIA}/>', "mass value is missing"),
        ('<mass value="1"/><inertia ixx="1" ixz="0" iyy="1" iyz="0" izz="1"/>', "inertia ixy is missing"),
        (f'<inertia {INERTIA}/>', "inertial has no <mass>"),
        ('<mass value="1"/>', "inertial has no <inertia>"),
    ],
)
def test_malformed_numbers(inertial: str, words: str) -> None:
    body = (f'  <link name="forearm">\n    <inertial>\n      {inertial}\n    </inertial>\n'
            '    <collision><geometry><sphere radius="0.1"/></geometry></collision>\n  </link>\n')
    doc = read(body)
    f = only(doc, "value-malformed")
    assert words in f.message and f.link == "forearm"
    assert "\n" not in f.message
    # the offending element is on line 5 (its own line, or the <inertial> when a child is missing)
    assert f.line == (4 if "has no" in words else 5)
    link = doc.link("forearm")
    assert link.inertial_state == "malformed" and link.inertial is None
    assert link.bodies[0].shape is not None  # the geometry is still read (unlike urdfdom, see FORMATS 1.2)
    assert not doc.fatal


@pytest.mark.parametrize(
    "geometry, words",
    [
        ('<box size="0.1 0.2"/>', "box size is '0.1 0.2' — expected 3 numbers"),
        ('<cylinder radius="0.1"/>', "cylinder length is missing"),
        ('<sphere radius="-1"/>', "expected positive numbers"),
        ('<mesh/>', "mesh has no filename"),
        ('<mesh filename="a.stl" scale="1 1"/>', "mesh scale is '1 1' — expected 3 numbers"),
        ('<ellipsoid radii="1 1 1"/>', "<ellipsoid> is not a URDF shape"),
        ("", "geometry is empty"),
    ],
)
def test_malformed_geometry_keeps_link(geometry: str, words: str) -> None:
    doc = read(f'<link name="arm">\n<collision>\n<geometry>\n{geometry}\n</geometry>\n</collision>\n'
               '<collision><geometry><box size="1 1 1"/></geometry></collision>\n</link>\n')
    f = only(doc, "value-malformed")
    assert words in f.message and f.link == "arm"
    arm = doc.link("arm")
    assert arm.bodies[0].shape is None and arm.bodies[1].shape.kind == "box"


@pytest.mark.parametrize(
    "data, words, line",
    [
        (b'<robot name="x">\n<link name="a">\n</robot>\n', "not well-formed XML", 3),
        (b'<sdf version="1.9"><model name="m"/></sdf>', "expected <robot>", 1),
        (b'<!DOCTYPE robot [<!ENTITY m "1">]>\n<robot/>', "unsafe XML", 1),
    ],
)
def test_fatal_documents(data: bytes, words: str, line: int) -> None:
    doc = read_urdf(Path("bad.urdf"), data)
    f = only(doc, "xml-malformed")
    assert doc.fatal and not doc.writable and doc.links == []
    assert words in f.message and f.line == line and "\n" not in f.message


def test_external_entity_content_never_appears(tmp_path: Path) -> None:
    secret = tmp_path / "secret.txt"
    secret.write_text("TOPSECRET-77")
    data = f'<!DOCTYPE robot [<!ENTITY s SYSTEM "file://{secret}">]>\n<robot><link name="&s;"/></robot>'.encode()
    doc = read_urdf(tmp_path / "r.urdf", data)
    assert doc.fatal
    assert "TOPSECRET" not in repr(doc.findings) and "TOPSECRET" not in repr(doc.links)


def test_reads_from_path_and_reports_missing_file(tmp_path: Path) -> None:
    p = tmp_path / "r.urdf"
    p.write_bytes(robot('<link name="a"/>\n'))
    assert [k.name for k in read_urdf(p).links] == ["a"]
    missing = read_urdf(tmp_path / "nope.urdf")
    assert missing.fatal and only(missing, "xml-malformed").message.startswith("cannot read")


def test_late_declaration_gives_an_info() -> None:
    doc = read_urdf(Path("r.urdf"), robot('<link name="a"/>\n', head='<!-- exported -->\n<?xml version="1.0"?>\n'))
    f = only(doc, "xml-malformed", "info")
    assert f.line == 2 and not doc.fatal and doc.link("a").line == 4


def test_xacro_expressions_are_not_checked_nor_writable() -> None:
    body = (
        '  <xacro:property name="m" value="2"/>\n'
        '  <link name="a">\n    <inertial>\n      <mass value="${m}"/>\n'
        f'      <inertia {INERTIA}/>\n    </inertial>\n  </link>\n'
        '  <link name="b">\n    <xacro:insert_block name="inertial"/>\n  </link>\n'
        '  <link name="c"/>\n'
    )
    data = ('<robot name="x" xmlns:xacro="http://www.ros.org/wiki/xacro">\n' + body + "</robot>\n").encode()
    doc = read_urdf(Path("r.urdf.xacro"), data)
    notes = [f for f in doc.findings if "xacro expression" in f.message]
    assert [(f.link, f.severity, f.line) for f in notes] == [("a", "info", 5), ("b", "info", 10)]
    assert not any(f.severity == "error" for f in doc.findings)
    assert doc.link("a").inertial_state == "malformed"
    assert not doc.link("a").handle.writable and not doc.link("b").handle.writable
    assert doc.link("c").handle.writable


def test_suppressions_inside_and_before_link() -> None:
    body = (
        "  <!-- linkcheck: allow inertia-mismatch, com-offset \u2014 collision is a rough proxy -->\n"
        '  <link name="a">\n'
        "    <!-- linkcheck: allow density-implausible: hollow shell -->\n"
        "    <!-- an ordinary comment -->\n"
        "  </link>\n"
        '  <!-- linkcheck: allow inertial-missing -->\n'
        '  <joint name="j" type="fixed"><parent link="a"/><child link="b"/></joint>\n'
        '  <link name="b"/>\n'
    )
    doc = read(body)
    assert doc.link("a").suppressions == [
        ("inertia-mismatch", 3, "collision is a rough proxy"),
        ("com-offset", 3, "collision is a rough proxy"),
        ("density-implausible", 5, "hollow shell"),
    ]
    assert doc.link("b").suppressions == []  # a joint stands between the comment and the link


def test_non_utf8_file_is_read_but_not_writable() -> None:
    data = ('<?xml version="1.0" encoding="ISO-8859-1"?>\n<robot name="r\u00e9">\n  <link name="a"/>\n</robot>\n').encode("latin-1")
    doc = read_urdf(Path("r.urdf"), data)
    assert not doc.fatal and not doc.writable and doc.link("a").line == 3
    assert not doc.link("a").handle.writable
