"""Each rule: a case that triggers it and a near miss that must not.

Expected tensors come from the handbook table of mass moments of inertia of
homogeneous solids (box m(b²+c²)/12, cylinder m(3r²+h²)/12 and mr²/2, sphere
2mr²/5; recalled from memory, the same table as REFERENCES.md) and the
parallel axis theorem I_o = I_c + m(|d|²E − ddᵀ); thresholds from DESIGN.md.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from linkcheck.formats.urdf import read_urdf
from linkcheck.runner import check_document
from linkcheck.settings import Settings


def box_moments(m, x, y, z):  # handbook: solid cuboid
    return m * (y * y + z * z) / 12, m * (x * x + z * z) / 12, m * (x * x + y * y) / 12


def link(name="part", mass=2.0, com="0 0 0", rpy="0 0 0", I=None, prod=(0, 0, 0), geometry='<box size="0.4 0.1 0.2"/>',
         geo_origin="0 0 0", extra=""):
    ixx, iyy, izz = I if I is not None else box_moments(mass or 0.0, 0.4, 0.1, 0.2)
    inertial = "" if mass is None else (
        f'<inertial><origin xyz="{com}" rpy="{rpy}"/><mass value="{mass!r}"/>'
        f'<inertia ixx="{ixx!r}" ixy="{prod[0]!r}" ixz="{prod[1]!r}" iyy="{iyy!r}" iyz="{prod[2]!r}" izz="{izz!r}"/></inertial>')
    geo = f'<collision><origin xyz="{geo_origin}"/><geometry>{geometry}</geometry></collision>' if geometry else ""
    return f'<link name="{name}">{inertial}{geo}{extra}</link>'


def rules_of(*links: str, joints: str = "", settings: Settings | None = None) -> dict[str, list]:
    data = f'<robot name="t">{"".join(links)}{joints}</robot>'.encode()
    doc = read_urdf(Path("t.urdf"), data)
    _, findings = check_document(doc, settings or Settings())
    out: dict[str, list] = {}
    for f in findings:
        out.setdefault(f.rule, []).append(f)
    return out


def test_correct_box_is_clean():
    assert rules_of(link()) == {}


def test_correct_link_with_rotated_inertial_frame_is_clean():
    # cylinder r 0.04, h 0.3 lying along x: its own frame rotated by pitch 90 deg; tensor written in that frame
    m, r, h = 1.5, 0.04, 0.3
    axial, trans = m * r * r / 2, m * (3 * r * r + h * h) / 12  # handbook: solid cylinder
    found = rules_of(link(mass=m, rpy="0 1.5707963267948966 0", I=(trans, trans, axial),
                          geometry=f'<cylinder radius="{r}" length="{h}"/>', extra="")
                     .replace('<collision><origin xyz="0 0 0"/>', '<collision><origin xyz="0 0 0" rpy="0 1.5707963267948966 0"/>'))
    assert found == {}


def test_mass_not_positive_and_near_miss():
    assert "mass-not-positive" in rules_of(link(mass=-1.0, I=(1e-3, 1e-3, 1e-3)))
    assert "mass-not-positive" in rules_of(link(mass=0.0, I=(0.0, 0.0, 0.0)))
    assert "mass-not-positive" not in rules_of(link(mass=1e-3))


def test_massless_frame_without_geometry_is_not_an_error():
    assert rules_of(link(mass=0.0, I=(0.0, 0.0, 0.0), geometry="")) == {}


def test_not_positive_definite_and_near_miss():
    assert "inertia-not-positive-definite" in rules_of(link(I=(0.01, 0.01, -0.001)))
    # a rod: izz = 0 exactly is not positive-definite (DESIGN.md: smallest moment must exceed eps)
    assert "inertia-not-positive-definite" in rules_of(link(I=(0.01, 0.01, 0.0), geometry=""))
    # a tensor singular only up to rounding after rotation stays clean if its moments are positive
    assert "inertia-not-positive-definite" not in rules_of(link(I=(0.01, 0.01, 1e-6), geometry=""))


def test_triangle_inequality_and_flat_plate_near_miss():
    found = rules_of(link(I=(0.01, 0.02, 0.034), geometry=""))
    assert "inertia-triangle-inequality" in found
    # (0.01 + 0.02 - 0.034) / 0.034 = 11.8 %: the message says so
    assert "12%" in found["inertia-triangle-inequality"][0].message
    # a flat plate (I1 + I2 = I3 exactly) is a rigid body
    assert "inertia-triangle-inequality" not in rules_of(link(I=(0.01, 0.02, 0.03), geometry=""))


def test_exceeds_geometry_and_near_miss():
    # box 0.4 x 0.1 x 0.2: R = half diagonal; trace/2 may not exceed m R^2 (REFERENCES.md bound)
    m = 2.0
    r2 = (0.2**2 + 0.05**2 + 0.1**2)
    big = 1.05 * m * r2 * 2 / 3  # each moment: trace/2 = 1.05 m R^2
    assert "inertia-exceeds-geometry" in rules_of(link(mass=m, I=(big, big, big)))
    ok = 0.95 * m * r2 * 2 / 3
    assert "inertia-exceeds-geometry" not in rules_of(link(mass=m, I=(ok, ok, ok)))


def test_placeholder_identity_and_isotropic_filler():
    assert "inertia-placeholder" in rules_of(link(I=(1.0, 1.0, 1.0)))
    found = rules_of(link(mass=2.0, I=(0.005, 0.005, 0.005), geometry='<box size="0.6 0.05 0.05"/>'))
    assert "inertia-placeholder" in found and "inertia-mismatch" not in found
    # a cube really is isotropic: equal moments are right there (handbook: m a^2 / 6)
    cube = 2.0 * 0.2**2 / 6
    assert rules_of(link(mass=2.0, I=(cube, cube, cube), geometry='<box size="0.2 0.2 0.2"/>')) == {}


def test_wrong_reference_point_and_near_miss():
    m, d = 2.0, 0.3  # box centred 0.3 m along x from the link origin
    ixx, iyy, izz = box_moments(m, 0.4, 0.1, 0.2)
    # parallel axis theorem about the origin: add m d^2 to the two moments perpendicular to x
    about_origin = (ixx, iyy + m * d * d, izz + m * d * d)
    found = rules_of(link(mass=m, com=f"{d} 0 0", I=about_origin, geo_origin=f"{d} 0 0"))
    assert "inertia-wrong-reference-point" in found and "inertia-mismatch" not in found
    assert "inertia-wrong-reference-point" not in rules_of(link(mass=m, com=f"{d} 0 0", geo_origin=f"{d} 0 0"))


def test_product_sign():
    # box rotated 30 deg about z: the tensor has a product ixy; a CAD export gives it with the other sign
    m, a = 2.0, np.radians(30)
    c, s = np.cos(a), np.sin(a)
    R = np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])
    link_tensor = (R @ np.diag(box_moments(m, 0.4, 0.1, 0.2)) @ R.T).tolist()
    geometry = '<box size="0.4 0.1 0.2"/>'
    base = link(mass=m, I=(link_tensor[0][0], link_tensor[1][1], link_tensor[2][2]), prod=(link_tensor[0][1], 0, 0), geometry=geometry)
    rotated = base.replace('<collision><origin xyz="0 0 0"/>', f'<collision><origin xyz="0 0 0" rpy="0 0 {float(a)!r}"/>')
    assert rules_of(rotated) == {}
    flipped = rotated.replace(f'ixy="{link_tensor[0][1]!r}"', f'ixy="{-link_tensor[0][1]!r}"')
    found = rules_of(flipped)
    assert "inertia-product-sign" in found and "inertia-mismatch" not in found


@pytest.mark.parametrize("power", [3, 6, -3])
def test_units_suspect(power):
    ixx, iyy, izz = box_moments(2.0, 0.4, 0.1, 0.2)
    found = rules_of(link(I=(ixx * 10**power, iyy * 10**power, izz * 10**power)))
    assert "inertia-units-suspect" in found
    assert found["inertia-units-suspect"][0].data["power"] == power


def test_units_near_miss_factor_of_two_is_a_mismatch_not_units():
    ixx, iyy, izz = box_moments(2.0, 0.4, 0.1, 0.2)
    found = rules_of(link(I=(ixx * 2, iyy * 2, izz * 2)))
    assert "inertia-units-suspect" not in found
    assert found["inertia-mismatch"][0].severity == "info"  # s = 2: outside [1/1.5, 1.5], inside [1/3, 3]


def test_mismatch_swapped_axes_warns():
    ixx, iyy, izz = box_moments(2.0, 0.4, 0.1, 0.2)
    found = rules_of(link(I=(iyy, ixx, izz)))  # proportions wrong, trace right
    assert found["inertia-mismatch"][0].severity == "warning"


def test_com_offset_levels_and_outside():
    # box 0.4 x 0.1 x 0.2, L = sqrt(0.4^2+0.1^2+0.2^2) = 0.458 m
    L = np.sqrt(0.4**2 + 0.1**2 + 0.2**2)
    info = rules_of(link(com=f"{0.15 * L} 0 0"))
    assert info["com-offset"][0].severity == "info"
    warn = rules_of(link(com=f"{0.19} 0 0"))  # 0.19 m > 0.25 L = 0.115 m, still inside the box
    assert warn["com-offset"][0].severity == "warning"
    outside = rules_of(link(com="0 0.2 0"))  # 0.15 m outside the 0.05 m half-width
    assert "com-outside-geometry" in outside and "com-offset" not in outside
    assert "com-offset" not in rules_of(link(com=f"{0.05 * L} 0 0"))


def test_density_implausible_names_grams():
    # 2 kg in 0.4*0.1*0.2 = 8e-3 m^3 is 250 kg/m^3: plausible; 2000 "kg" with a 2 kg tensor is grams
    found = rules_of(link(mass=2000.0, I=box_moments(2.0, 0.4, 0.1, 0.2)))
    assert "density-implausible" in found and "grams" in found["density-implausible"][0].message
    assert "inertia-units-suspect" not in found
    assert "density-implausible" not in rules_of(link(mass=0.5, I=box_moments(0.5, 0.4, 0.1, 0.2)))  # 62.5 kg/m^3


def test_inertial_missing_and_massless_moving_link():
    joints = ('<joint name="j" type="revolute"><parent link="a"/><child link="b"/>'
              '<limit lower="0" upper="1" effort="1" velocity="1"/></joint>')
    found = rules_of(link("a"), link("b", mass=None), joints=joints)
    assert "inertial-missing" in found and "massless-moving-link" not in found
    frame = rules_of(link("a"), link("b", mass=None, geometry=""), joints=joints)
    assert "massless-moving-link" in frame
    fixed = rules_of(link("a"), link("b", mass=None, geometry=""), joints=joints.replace("revolute", "fixed"))
    assert fixed == {}


def test_filler_parent_with_heavy_fixed_child_is_not_blamed():
    # DESIGN.md trap: mass in a fixed child, a 1e-6 kg filler on the parent that has the geometry
    plate = link("plate", mass=1e-6, I=box_moments(1e-6, 0.4, 0.1, 0.2))
    pod = link("pod", mass=2.0, I=box_moments(2.0, 0.4, 0.1, 0.2), geometry="")
    joint = '<joint name="j" type="fixed"><parent link="plate"/><child link="pod"/></joint>'
    assert rules_of(plate, pod, joints=joint) == {}
    # the same parent alone is implausible
    assert "density-implausible" in rules_of(plate)


def test_select_ignore_and_severity_override():
    from linkcheck.runner import select

    found = rules_of(link(I=(1.0, 1.0, 1.0)))
    flat = [f for fs in found.values() for f in fs]
    assert select(flat, Settings(ignore=("inertia-placeholder",))) == [f for f in flat if f.rule != "inertia-placeholder"]
    raised = select(flat, Settings(severity={"inertia-placeholder": "error"}))
    assert {f.severity for f in raised if f.rule == "inertia-placeholder"} == {"error"}


def test_fixed_group_does_not_hide_a_link_whose_own_mass_and_geometry_disagree():
    # both links carry their own mass and geometry: the group's average must not clear either
    a = link("a", com="0.19 0 0")  # 0.19 m > 0.25 L from the box centroid (see test_com_offset_levels_and_outside)
    b = link("b")
    joint = '<joint name="j" type="fixed"><parent link="a"/><child link="b"/><origin xyz="2 0 0"/></joint>'
    assert "com-offset" in rules_of(a, b, joints=joint)


def test_tensor_in_the_shape_axes_of_a_rotated_wheel_is_explained():
    # wheel: cylinder r 0.1, h 0.05 turned by roll 90 deg so its axis lies along y; the author wrote the
    # handbook tensor in the cylinder's own axes (axial moment m r^2/2 as izz) with rpy 0 0 0
    m, r, h = 2.0, 0.1, 0.05
    axial, trans = m * r * r / 2, m * (3 * r * r + h * h) / 12  # handbook: solid cylinder
    wheel = link(mass=m, I=(trans, trans, axial), geometry=f'<cylinder radius="{r}" length="{h}"/>').replace(
        '<collision><origin xyz="0 0 0"/>', '<collision><origin xyz="0 0 0" rpy="1.5707963267948966 0 0"/>')
    found = rules_of(wheel)
    assert "other axes" in found["inertia-mismatch"][0].message
    assert found["inertia-mismatch"][0].severity == "warning"
