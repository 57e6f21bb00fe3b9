"""SDFormat pose strings and frame-graph resolution.

Outside references: FORMATS.md §0 (rpy = Rz(y) Ry(p) Rx(r), pose maps child to
parent), §2.2 (pose string rules), §2.3 (default frames per element);
scipy.spatial.transform.Rotation for rotations and compositions; expected
translations worked by hand in the comments.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.transform import Rotation

from linkcheck.formats.frames import WORLD, FrameError, FrameGraph, PoseError, parse_pose
from linkcheck.formats.sdf import read_sdf
from linkcheck.model import Pose


def read(body: str, tmp_path: Path, version: str = "1.9", name: str = "m"):
    text = f'<?xml version="1.0"?>\n<sdf version="{version}">\n<model name="{name}">\n{body}\n</model>\n</sdf>\n'
    path = tmp_path / "t.sdf"
    path.write_text(text)
    return read_sdf(path)


# ---- pose strings


def test_pose_rpy_matches_scipy_extrinsic_xyz():
    # FORMATS.md §0: fixed axes X, Y, Z = scipy's extrinsic "xyz"
    pose = parse_pose("1 2 3 0.3 -0.4 1.1")
    expected = Rotation.from_euler("xyz", [0.3, -0.4, 1.1]).as_matrix()
    assert np.allclose(pose.rotation, expected, atol=1e-12)
    assert np.allclose(pose.translation, [1, 2, 3])


def test_pose_degrees_equals_radians():
    # sdf/1.9/pose.sdf: degrees="true" reads the three angles in degrees
    deg = parse_pose("0 0 0 30 -45 90", degrees="true")
    expected = Rotation.from_euler("xyz", [30, -45, 90], degrees=True).as_matrix()
    assert np.allclose(deg.rotation, expected, atol=1e-12)


def test_pose_quaternion_is_xyzw_w_last():
    # sdf/1.9/pose.sdf: quat_xyzw = x y z qx qy qz qw; scipy from_quat is scalar-last too
    q = Rotation.from_euler("z", 90, degrees=True).as_quat()
    pose = parse_pose("0.1 0 0 " + " ".join(str(float(v)) for v in q), rotation_format="quat_xyzw")
    # hand: Rz(90) maps x to y
    assert np.allclose(pose.rotation @ [1, 0, 0], [0, 1, 0], atol=1e-12)


def test_pose_quaternion_is_normalised():
    pose = parse_pose("0 0 0 0 0 2 2", rotation_format="quat_xyzw")
    assert np.allclose(pose.rotation, Rotation.from_quat([0, 0, 1, 1]).as_matrix(), atol=1e-12)


def test_empty_pose_is_identity():
    # T-pfs: an empty <pose/> is the identity
    assert parse_pose("").is_identity and parse_pose(None).is_identity and parse_pose("  \n ").is_identity


@pytest.mark.parametrize(
    "text, kw, words",
    [
        ("1 2 3 0 0", {}, "6 numbers"),
        ("1 2 3 0 0 0 1", {}, "6 numbers"),
        ("0 0 0 0 0 0", {"rotation_format": "quat_xyzw"}, "7 numbers"),
        ("0 0 0 0 0 0 1", {"rotation_format": "quat_xyzw", "degrees": "true"}, "cannot have degrees"),
        ("0 0 0 0 0 1,5", {}, "decimal point"),
        ("0 0 nan 0 0 0", {}, "not finite"),
        ("0 0 0 0 0 0 0", {"rotation_format": "quat_xyzw"}, "zero"),
        ("0 0 0 0 0 0", {"rotation_format": "euler_zyx"}, "rotation_format"),
    ],
)
def test_bad_pose_strings(text, kw, words):
    # sdf/1.9/pose.sdf + lsdf Param.cc (FORMATS.md §2.2): wrong count, degrees with quaternions, non-finite
    with pytest.raises(PoseError, match=words):
        parse_pose(text, **kw)


# ---- frame graph through the reader


def test_link_pose_relative_to_another_link(tmp_path):
    doc = read(
        """
        <link name="a"><pose>1 0 0 0 0 1.5707963267948966</pose></link>
        <link name="b"><pose relative_to="a">1 0 0 0 0 0</pose>
          <collision name="c"><pose relative_to="__model__">0 0 0 0 0 0</pose>
            <geometry><sphere><radius>0.1</radius></sphere></geometry></collision>
        </link>
        <joint name="j" type="revolute"><parent>a</parent><child>b</child></joint>
        """,
        tmp_path,
    )
    assert not [f for f in doc.findings if f.severity == "error"]
    # hand: b in model = t_a + Rz(90)(1,0,0) = (1,1,0), rotated 90 about z;
    # the model origin in b = Rz(-90)(-(1,1,0)) = (-1, 1, 0)
    c = doc.link("b").bodies[0]
    assert np.allclose(c.pose.translation, [-1, 1, 0], atol=1e-12)
    assert np.allclose(c.pose.rotation, Rotation.from_euler("z", -90, degrees=True).as_matrix(), atol=1e-12)
    # joint pose: child b in parent a = the stated (1, 0, 0), no rotation
    j = doc.joints[0]
    assert (j.parent, j.child) == ("a", "b")
    assert np.allclose(j.pose.translation, [1, 0, 0], atol=1e-12)
    assert np.allclose(j.pose.rotation, np.eye(3), atol=1e-12)


def test_collision_relative_to_frame_attached_to_other_link(tmp_path):
    doc = read(
        """
        <link name="a"><pose>0 0 0.5 0 0 0</pose></link>
        <frame name="f" attached_to="a"><pose>0 0 1 0 0 0</pose></frame>
        <link name="b"><pose>2 0 0 0 0 0</pose>
          <collision name="c"><pose relative_to="f">0 0 0.5 0 0 0</pose>
            <geometry><box><size>1 1 1</size></box></geometry></collision>
        </link>
        """,
        tmp_path,
    )
    # hand: f's pose defaults to its attached_to frame a: z = 0.5 + 1 = 1.5 in the model;
    # c at z = 2.0 in the model; b is at x = 2, so c in b = (-2, 0, 2)
    assert np.allclose(doc.link("b").bodies[0].pose.translation, [-2, 0, 2.0], atol=1e-12)


def test_frame_relative_to_other_than_attached(tmp_path):
    doc = read(
        """
        <link name="a"><pose>0 3 0 0 0 0</pose></link>
        <link name="b"><pose>0 0 0 0 0 0</pose>
          <collision name="c"><pose relative_to="f"/>
            <geometry><box><size>1 1 1</size></box></geometry></collision></link>
        <frame name="f" attached_to="a"><pose relative_to="__model__">1 0 0 0 0 0</pose></frame>
        """,
        tmp_path,
    )
    # hand: relative_to wins over attached_to for the pose (sdf/1.12/frame.sdf): f at (1, 0, 0)
    assert np.allclose(doc.link("b").bodies[0].pose.translation, [1, 0, 0], atol=1e-12)


def test_joint_pose_defaults_to_child_and_relative_to_joint(tmp_path):
    doc = read(
        """
        <link name="a"/>
        <link name="b"><pose relative_to="j">0 0 0.25 0 0 0</pose></link>
        <joint name="j" type="fixed"><pose relative_to="a">0 1 0 0 0 0</pose><parent>a</parent><child>b</child></joint>
        """,
        tmp_path,
    )
    # hand: j at (0,1,0) in a; b 0.25 above j: b in a = (0, 1, 0.25)
    assert np.allclose(doc.joints[0].pose.translation, [0, 1, 0.25], atol=1e-12)


def test_nested_model_scope(tmp_path):
    doc = read(
        """
        <link name="base"/>
        <model name="arm">
          <pose>0 0 1 0 0 0</pose>
          <link name="forearm"><pose>1 0 0 0 0 0</pose>
            <collision name="c"><pose relative_to="__model__">0 0 0 0 0 0</pose>
              <geometry><sphere><radius>0.1</radius></sphere></geometry></collision></link>
          <model name="hand"><pose relative_to="forearm">0 0 0.5 0 0 0</pose>
            <link name="palm"/></model>
        </model>
        <joint name="mount" type="fixed"><parent>base</parent><child>arm::forearm</child></joint>
        <joint name="wrist" type="fixed"><parent>arm::forearm</parent><child>arm::hand::palm</child></joint>
        <joint name="to_model" type="fixed"><parent>base</parent><child>arm</child></joint>
        """,
        tmp_path,
    )
    assert not [f for f in doc.findings if f.severity == "error"], doc.findings
    assert [k.name for k in doc.links] == ["base", "arm::forearm", "arm::hand::palm"]
    # hand: forearm at (0,0,1) + (1,0,0); __model__ inside arm is arm's frame, at (-1, 0, 0) in forearm
    assert np.allclose(doc.link("arm::forearm").bodies[0].pose.translation, [-1, 0, 0], atol=1e-12)
    poses = {j.name: (j.parent, j.child, j.pose.translation) for j in doc.joints}
    assert poses["mount"][1] == "arm::forearm" and np.allclose(poses["mount"][2], [1, 0, 1])
    assert poses["wrist"][1] == "arm::hand::palm" and np.allclose(poses["wrist"][2], [0, 0, 0.5])
    # a nested model named as a child means its canonical link: the first link, forearm
    assert poses["to_model"][1] == "arm::forearm"


def test_canonical_link_attribute(tmp_path):
    doc = read(
        """
        <link name="base"/>
        <model name="tool" canonical_link="tip"><link name="shank"/><link name="tip"><pose>0 0 2 0 0 0</pose></link></model>
        <joint name="j" type="fixed"><parent>base</parent><child>tool</child></joint>
        """,
        tmp_path,
    )
    assert doc.joints[0].child == "tool::tip"
    assert np.allclose(doc.joints[0].pose.translation, [0, 0, 2])


def test_placement_frame(tmp_path):
    doc = read(
        """
        <link name="base"/>
        <model name="tool" placement_frame="tip"><pose>0 0 5 0 0 0</pose>
          <link name="tip"><pose>0 0 1 0 0 0</pose></link></model>
        <joint name="j" type="fixed"><parent>base</parent><child>tool::tip</child></joint>
        """,
        tmp_path,
    )
    # sdf/1.12/model.sdf @placement_frame: the model pose places tip, so tip is at z = 5 (not 6)
    assert np.allclose(doc.joints[0].pose.translation, [0, 0, 5], atol=1e-12)


def test_sdf16_frame_attribute_reads_as_relative_to(tmp_path):
    doc = read(
        """
        <link name="a"><pose>0 0 1 0 0 0</pose></link>
        <link name="b"><pose frame="a">0 0 1 0 0 0</pose></link>
        <joint name="j" type="fixed"><parent>a</parent><child>b</child></joint>
        """,
        tmp_path,
        version="1.6",
    )
    # FORMATS.md §2.1: the 1.6 -> 1.7 conversion renames pose@frame to @relative_to
    assert np.allclose(doc.joints[0].pose.translation, [0, 0, 1], atol=1e-12)


def test_cycle_is_a_finding_not_a_crash(tmp_path):
    doc = read(
        """
        <link name="a">
          <collision name="c"><pose relative_to="f1"/><geometry><box><size>1 1 1</size></box></geometry></collision>
        </link>
        <frame name="f1"><pose relative_to="f2"/></frame>
        <frame name="f2"><pose relative_to="f1"/></frame>
        """,
        tmp_path,
    )
    errors = [f for f in doc.findings if f.rule == "value-malformed"]
    assert len(errors) == 1 and "cycle" in errors[0].message and "f1" in errors[0].message
    assert "\n" not in errors[0].message and errors[0].line == 6  # the <collision> line
    assert doc.link("a").bodies[0].shape is None


def test_unknown_frame_is_a_finding(tmp_path):
    doc = read(
        """
        <link name="a"><collision name="c"><pose relative_to="nowhere"/>
          <geometry><box><size>1 1 1</size></box></geometry></collision></link>
        <link name="b"><pose relative_to="ghost">0 0 0 0 0 0</pose></link>
        """,
        tmp_path,
    )
    messages = [f.message for f in doc.findings if f.rule == "value-malformed" and f.severity == "error"]
    assert any("'nowhere' not found" in m for m in messages)
    assert any("'ghost' not found" in m and "link 'b'" in m for m in messages)


def test_joint_parent_world(tmp_path):
    doc = read(
        """
        <link name="a"><pose>0 0 2 0 0 0</pose></link>
        <joint name="j" type="fixed"><parent>world</parent><child>a</child></joint>
        """,
        tmp_path,
    )
    assert doc.joints[0].parent == "world" and np.allclose(doc.joints[0].pose.translation, [0, 0, 2])


# ---- graph alone, against scipy compositions

angles = st.floats(-math.pi, math.pi, allow_nan=False)
coords = st.floats(-5, 5, allow_nan=False)
poses6 = st.tuples(coords, coords, coords, angles, angles, angles)


@settings(max_examples=60, deadline=None)
@given(st.lists(poses6, min_size=1, max_size=5), poses6)
def test_chain_of_relative_to_matches_scipy(chain, body):
    graph = FrameGraph()
    graph.add_model(("m",), Pose())
    expected_r = Rotation.identity()
    expected_t = np.zeros(3)
    prev = None
    for i, p in enumerate(chain):
        text = " ".join(repr(v) for v in p)
        graph.add_frame(("m",), f"f{i}", _p(text), relative_to=prev)
        # scipy: X_prev_i then X_M_i = X_M_prev * X_prev_i
        r_i = Rotation.from_euler("xyz", p[3:])
        expected_t = expected_t + expected_r.apply(p[:3])
        expected_r = expected_r * r_i
        prev = f"f{i}"
    got = graph.resolve(("m",), _p(" ".join(repr(v) for v in body)), prev, WORLD)
    expected_t = expected_t + expected_r.apply(body[:3])
    expected_r = expected_r * Rotation.from_euler("xyz", body[3:])
    assert np.allclose(got.translation, expected_t, atol=1e-9)
    assert np.allclose(got.rotation, expected_r.as_matrix(), atol=1e-9)


def _p(text: str) -> Pose:
    return parse_pose(text)


def test_graph_attached_to_cycle_raises_frame_error():
    graph = FrameGraph()
    graph.add_model(("m",), Pose())
    graph.add_frame(("m",), "x", Pose(), attached_to="y")
    graph.add_frame(("m",), "y", Pose(), attached_to="x")
    with pytest.raises(FrameError, match="cycle"):
        graph.attached_link((("m",), "x"))
