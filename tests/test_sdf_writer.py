"""Splicing inertial blocks into SDFormat files.

Outside references: DESIGN.md fix policy (only the inertial text changes, idempotent,
newline/indentation/encoding kept), FORMATS.md §2.2 (degrees and quat_xyzw poses),
§2.6 (<fluid_added_mass> left alone); values re-read are compared with the edit
(the intended numbers), and rotations with scipy.
"""

from __future__ import annotations

import difflib
from pathlib import Path

import numpy as np
import pytest
from scipy.spatial.transform import Rotation

from linkcheck.formats.numbers import InertialEdit
from linkcheck.formats.sdf import read_sdf, rewrite_sdf

FIXTURE = Path(__file__).parent.parent / "fixtures" / "sdf" / "orchard_gimbal" / "model.sdf"


def edit(mass=0.1, com=(0.01, 0.0, -0.02), rpy=(0.0, 0.0, 0.0), moments=(1e-5, 2e-5, 3e-5), degrees=False):
    rot = Rotation.from_euler("xyz", rpy, degrees=degrees).as_matrix()
    return InertialEdit(mass, np.array(com, dtype=float), rot, np.diag(moments))


def changed_lines(old: bytes, new: bytes) -> list[str]:
    diff = difflib.unified_diff(old.decode().splitlines(), new.decode().splitlines(), lineterm="", n=0)
    return [d for d in diff if d[:1] in "+-" and not d.startswith(("+++", "---"))]


def reread(path: Path, data: bytes):
    return read_sdf(path, data)


def test_only_the_inertial_span_changes():
    doc = read_sdf(FIXTURE)
    link = doc.link("yaw_arm")
    xml = link.handle.xml
    start, end = xml.span(link.handle.element.find("inertial"))
    new = rewrite_sdf(doc, {"yaw_arm": edit()})
    tail = len(doc.data) - end
    assert new[:start] == doc.data[:start] and new[len(new) - tail :] == doc.data[end:]
    assert new != doc.data


def test_round_trip_values_and_idempotence():
    doc = read_sdf(FIXTURE)
    changes = {"yaw_arm": edit(), "camera": edit(mass=0.05, com=(0, 0, 0)), "mount_plate": edit(rpy=(0.2, -0.3, 0.4))}
    new = rewrite_sdf(doc, changes)
    again = reread(FIXTURE, new)
    assert [k.name for k in again.links] == [k.name for k in doc.links]
    for name, e in changes.items():
        st = again.link(name).inertial
        assert st is not None and st.missing == ()
        assert np.isclose(st.mass, e.mass, rtol=1e-9)
        assert np.allclose(st.com, e.com, atol=1e-12)
        got = st.mass_properties().inertia
        want = e.rotation @ e.inertia_frame @ e.rotation.T
        assert np.allclose(got, want, rtol=1e-8, atol=1e-15)
    # the yaw_arm block gained its missing iyy and iyz (and no longer warns)
    assert not [f for f in again.findings if f.rule == "inertial-incomplete"]
    assert rewrite_sdf(again, changes) == new


def test_missing_children_inserted_in_canonical_order_and_indent():
    doc = read_sdf(FIXTURE)
    new = rewrite_sdf(doc, {"yaw_arm": edit(com=(0.005, 0, -0.009), mass=0.09, moments=(2.9e-05, 2e-5, 1.1e-05))})
    # pose and mass already equal: untouched; only iyy and iyz inserted, after ixz, in the file's indent
    assert changed_lines(doc.data, new) == ["+          <iyy>2e-5</iyy>", "+          <iyz>0</iyz>"]


def test_block_added_to_link_without_inertial():
    doc = read_sdf(FIXTURE)
    new = rewrite_sdf(doc, {"camera": edit(mass=0.05, com=(0, 0, 0))})
    lines = changed_lines(doc.data, new)
    assert lines == [
        "+      <inertial>",
        "+        <mass>0.05</mass>",
        "+        <inertia>",
        "+          <ixx>1e-5</ixx>",
        "+          <ixy>0</ixy>",
        "+          <ixz>0</ixz>",
        "+          <iyy>2e-5</iyy>",
        "+          <iyz>0</iyz>",
        "+          <izz>3e-5</izz>",
        "+        </inertia>",
        "+      </inertial>",
    ]
    # inserted right after the link's own <pose>
    text = new.decode()
    assert text.index("<inertial>", text.index('name="camera"')) > text.index("0.015 0 0 0 0 0")


def test_degrees_pose_keeps_degrees():
    doc = read_sdf(FIXTURE)
    new = rewrite_sdf(doc, {"pitch_cradle": edit(com=(0, 0, 0), rpy=(30, 0, 0), degrees=True, mass=0.06)})
    lines = changed_lines(doc.data, new)
    assert '+        <pose degrees="true">0 0 0 30 0 0</pose>' in lines
    st = reread(FIXTURE, new).link("pitch_cradle").inertial
    assert np.allclose(st.rotation, Rotation.from_euler("x", 30, degrees=True).as_matrix(), atol=1e-12)


def test_quaternion_pose_keeps_quaternion(tmp_path):
    path = tmp_path / "q.sdf"
    path.write_bytes(
        b'<sdf version="1.9"><model name="m"><link name="l"><inertial>'
        b'<pose rotation_format="quat_xyzw">0 0 0 0 0 0 1</pose><mass>1</mass>'
        b"<inertia><ixx>1</ixx><iyy>1</iyy><izz>1</izz></inertia></inertial></link></model></sdf>"
    )
    doc = read_sdf(path)
    new = rewrite_sdf(doc, {"l": edit(com=(0, 0, 0.5), rpy=(0, 0, 90), degrees=True)})
    pose = new.decode().split('<pose rotation_format="quat_xyzw">')[1].split("</pose>")[0].split()
    assert len(pose) == 7
    # scipy: Rz(90) as (x, y, z, w)
    assert np.allclose([float(v) for v in pose[3:]], Rotation.from_euler("z", 90, degrees=True).as_quat(), atol=1e-9)


def test_crlf_tabs_and_fluid_added_mass_untouched(tmp_path):
    text = (
        '<?xml version="1.0"?>\r\n<sdf version="1.10">\r\n<model name="boat">\r\n'
        '\t<link name="hull">\r\n\t\t<inertial>\r\n\t\t\t<mass>3</mass>\r\n'
        "\t\t\t<fluid_added_mass>\r\n\t\t\t\t<xx>0.5</xx>\r\n\t\t\t</fluid_added_mass>\r\n"
        "\t\t</inertial>\r\n\t</link>\r\n"
        '\t<link name="keel">\r\n\t\t<collision name="c"><geometry><box><size>1 1 1</size></box></geometry></collision>\r\n\t</link>\r\n'
        "</model>\r\n</sdf>\r\n"
    )
    path = tmp_path / "boat.sdf"
    path.write_bytes(text.encode())
    doc = read_sdf(path)
    new = rewrite_sdf(doc, {"hull": edit(mass=3, com=(0, 0, 0)), "keel": edit(mass=1, com=(0, 0, 0))})
    assert b"\n" not in new.replace(b"\r\n", b"")  # every newline still CRLF
    out = new.decode()
    assert "\t\t\t<fluid_added_mass>\r\n\t\t\t\t<xx>0.5</xx>\r\n\t\t\t</fluid_added_mass>" in out
    assert "\t\t\t<inertia>\r\n\t\t\t\t<ixx>1e-5</ixx>" in out  # tabs, one level deeper
    assert "\t\t<inertial>\r\n\t\t\t<mass>1</mass>" in out  # keel's new block at the link's child indent
    assert "<mass>3</mass>" in out  # equal mass: text untouched
    again = read_sdf(path, new)
    assert np.allclose(again.link("keel").inertial.inertia_frame, np.diag([1e-5, 2e-5, 3e-5]))
    assert rewrite_sdf(again, {"hull": edit(mass=3, com=(0, 0, 0)), "keel": edit(mass=1, com=(0, 0, 0))}) == new


def test_empty_link_tag_gets_a_block(tmp_path):
    path = tmp_path / "e.sdf"
    path.write_bytes(b'<sdf version="1.9">\n  <model name="m">\n    <link name="l"/>\n  </model>\n</sdf>\n')
    doc = read_sdf(path)
    new = rewrite_sdf(doc, {"l": edit(com=(0, 0, 0))})
    assert new.decode().startswith('<sdf version="1.9">\n  <model name="m">\n    <link name="l">\n      <inertial>\n        <mass>0.1</mass>')
    assert new.decode().endswith("      </inertial>\n    </link>\n  </model>\n</sdf>\n")
    assert read_sdf(path, new).link("l").inertial.mass == 0.1


def test_auto_and_included_links_are_refused(tmp_path):
    path = tmp_path / "a.sdf"
    path.write_bytes(b'<sdf version="1.11"><model name="m"><link name="l"><inertial auto="true"/></link></model></sdf>')
    doc = read_sdf(path)
    with pytest.raises(ValueError, match="auto"):
        rewrite_sdf(doc, {"l": edit()})
    with pytest.raises(ValueError, match="not a link"):
        rewrite_sdf(doc, {"ghost": edit()})


@pytest.mark.parametrize("attrs", ["", ' degrees="true"', ' rotation_format="quat_xyzw"'])
def test_random_edits_reread_as_written(tmp_path, attrs):
    # scipy random rotations; tensors from random principal moments obeying the triangle inequality
    rng = np.random.default_rng(7)
    pose_text = "0 0 0 0 0 0 1" if "quat" in attrs else "0 0 0 0 0 0"
    path = tmp_path / "r.sdf"
    path.write_text(
        f'<sdf version="1.9"><model name="m"><link name="l"><inertial><pose{attrs}>{pose_text}</pose>'
        "<mass>1</mass><inertia><ixx>1</ixx><iyy>1</iyy><izz>1</izz></inertia></inertial></link></model></sdf>"
    )
    doc = read_sdf(path)
    for rot in Rotation.random(20, random_state=3):
        a, b = rng.uniform(0.1, 1.0, 2)
        moments = np.array([a, b, rng.uniform(abs(a - b) + 0.01, a + b)]) * 1e-3
        e = InertialEdit(float(rng.uniform(0.01, 5)), rng.uniform(-0.2, 0.2, 3), rot.as_matrix(), np.diag(moments))
        new = rewrite_sdf(doc, {"l": e})
        st = read_sdf(path, new).link("l").inertial
        want = e.rotation @ e.inertia_frame @ e.rotation.T
        assert np.isclose(st.mass, e.mass, rtol=1e-9)
        assert np.allclose(st.com, e.com, atol=1e-9)
        assert np.allclose(st.mass_properties().inertia, want, rtol=0, atol=1e-9 * np.trace(want))
        assert (attrs.strip() in new.decode()) if attrs else True
