"""Angles written in degrees where radians are read: URDF rpy and SDF poses without degrees="true".

Both specs read roll/pitch/yaw in radians (FORMATS.md §0, §2.2); |angle| > 2π is not needed to
express any rotation, so such values are almost always degrees (common practice).
"""

from __future__ import annotations

from pathlib import Path

from linkcheck.formats.sdf import read_sdf
from linkcheck.formats.urdf import read_urdf


def _hints(doc) -> list:
    return [f for f in doc.findings if "looks like degrees" in f.message]


def test_urdf_rpy_in_degrees_is_warned():
    data = b'<robot name="r"><link name="a"><collision><origin rpy="90 0 0"/><geometry><box size="1 1 1"/></geometry></collision></link></robot>'
    (hint,) = _hints(read_urdf(Path("r.urdf"), data))
    assert hint.severity == "warning" and "90" in hint.message
    near = b'<robot name="r"><link name="a"><collision><origin rpy="3.14159 -6.2832 0"/><geometry><box size="1 1 1"/></geometry></collision></link></robot>'
    assert _hints(read_urdf(Path("r.urdf"), near)) == []  # pi and 2 pi are radians


def test_sdf_pose_in_degrees_without_the_attribute_is_warned():
    body = '<collision name="c"><pose{attr}>0 0 0 0 0 90</pose><geometry><box><size>1 1 1</size></box></geometry></collision>'
    def doc(attr: str):
        return read_sdf(Path("m.sdf"), f'<sdf version="1.9"><model name="m"><link name="a">{body.format(attr=attr)}</link></model></sdf>'.encode())
    assert len(_hints(doc(""))) == 1
    assert _hints(doc(' degrees="true"')) == []
