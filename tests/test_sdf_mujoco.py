"""A multi-link SDF model cross-checked against an equivalent MJCF compiled by MuJoCo.

Outside reference: mujoco (inertiafromgeom: body mass, COM and principal moments
from its geoms at density 1000). The MJCF places each geom in its body frame
with poses worked out by hand from the SDF's frame semantics (FORMATS.md §2.3),
so the comparison checks our frame-graph resolution, not our own arithmetic.
"""

from __future__ import annotations

from pathlib import Path

import mujoco
import numpy as np

from linkcheck.formats.sdf import read_sdf
from linkcheck.geometry.solid import primitive_solid, union

SDF = """<?xml version="1.0"?>
<sdf version="1.9">
  <model name="picker">
    <link name="base">
      <collision name="plate"><geometry><box><size>0.2 0.2 0.04</size></box></geometry></collision>
    </link>
    <frame name="tip" attached_to="base"><pose>0.5 0.3 0.2 0 0 0</pose></frame>
    <link name="arm">
      <pose>0.5 0 0.2 0 0 1.5707963267948966</pose>
      <collision name="block">
        <pose relative_to="tip">0 0 0 0 0 0</pose>
        <geometry><box><size>0.2 0.1 0.05</size></box></geometry>
      </collision>
      <collision name="rod">
        <pose degrees="true">0 0 -0.1 90 0 0</pose>
        <geometry><cylinder><radius>0.04</radius><length>0.3</length></cylinder></geometry>
      </collision>
    </link>
    <joint name="swing" type="revolute"><parent>base</parent><child>arm</child></joint>
  </model>
</sdf>
"""

# Hand-worked: arm = Rz(90) at (0.5, 0, 0.2). The block sits at tip = (0.5, 0.3, 0.2) in the
# model with no rotation, i.e. at Rz(-90)(0, 0.3, 0) = (0.3, 0, 0) in arm, rotated -90 about z.
# The rod is in the arm frame already: (0, 0, -0.1), rolled 90 about x.
MJCF = """
<mujoco>
  <compiler angle="degree" inertiafromgeom="true"/>
  <default><geom density="1000"/></default>
  <worldbody>
    <body name="base">
      <geom type="box" size="0.1 0.1 0.02"/>
      <body name="arm" pos="0.5 0 0.2" axisangle="0 0 1 90">
        <geom type="box" size="0.1 0.05 0.025" pos="0.3 0 0" axisangle="0 0 1 -90"/>
        <geom type="cylinder" size="0.04 0.15" pos="0 0 -0.1" axisangle="1 0 0 90"/>
      </body>
    </body>
  </worldbody>
</mujoco>
"""


def test_link_with_two_offset_collisions_matches_mujoco(tmp_path: Path):
    path = tmp_path / "picker.sdf"
    path.write_text(SDF)
    doc = read_sdf(path)
    assert not doc.findings
    arm = doc.link("arm")
    solid = union([primitive_solid(b.shape).transformed(b.pose) for b in arm.bodies])
    ours = solid.props.scaled(1000.0)

    model = mujoco.MjModel.from_xml_string(MJCF)
    data = mujoco.MjData(model)
    mujoco.mj_forward(model, data)
    bid = mujoco.mj_name2id(model, mujoco.mjtObj.mjOBJ_BODY, "arm")

    assert np.isclose(ours.mass, model.body_mass[bid], rtol=1e-9)
    assert np.allclose(ours.com, model.body_ipos[bid], atol=1e-9)
    moments = np.sort(np.linalg.eigvalsh(ours.inertia))
    assert np.allclose(moments, np.sort(model.body_inertia[bid]), rtol=1e-7)

    # the joint pose (child in parent at zero configuration) against MuJoCo's world placement
    (joint,) = doc.joints
    assert np.allclose(joint.pose.translation, data.xpos[bid], atol=1e-12)
    assert np.allclose(joint.pose.rotation, data.xmat[bid].reshape(3, 3), atol=1e-12)
