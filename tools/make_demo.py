"""Generate the demo greenhouse harvester (invented scenario) and its clean twin from handbook formulas."""
import math
def box(m,x,y,z): return (m*(y*y+z*z)/12, m*(x*x+z*z)/12, m*(x*x+y*y)/12)
def cyl(m,r,h): return (m*(3*r*r+h*h)/12, m*(3*r*r+h*h)/12, m*r*r/2)
def sph(m,r): return (2*m*r*r/5,)*3
def g(v): return f"{v:.6g}"
def inertial(m, xyz, I, rpy="0 0 0", prod=(0,0,0)):
    return (f'    <inertial>\n      <origin xyz="{xyz}" rpy="{rpy}"/>\n      <mass value="{g(m)}"/>\n'
            f'      <inertia ixx="{g(I[0])}" ixy="{g(prod[0])}" ixz="{g(prod[1])}" iyy="{g(I[1])}" iyz="{g(prod[2])}" izz="{g(I[2])}"/>\n    </inertial>\n')
def geom(kind, xyz, rpy="0 0 0"):
    return (f'    <visual>\n      <origin xyz="{xyz}" rpy="{rpy}"/>\n      <geometry>{kind}</geometry>\n    </visual>\n'
            f'    <collision>\n      <origin xyz="{xyz}" rpy="{rpy}"/>\n      <geometry>{kind}</geometry>\n    </collision>\n')
def link(name, body, comment=None):
    c = f"  <!-- {comment} -->\n" if comment else ""
    return f'{c}  <link name="{name}">\n{body}  </link>\n'
def joint(name, typ, parent, child, xyz, axis=None, rpy="0 0 0"):
    lim = '\n    <limit lower="-2.6" upper="2.6" effort="40" velocity="1.5"/>' if typ in ("revolute","prismatic") else ""
    ax = f'\n    <axis xyz="{axis}"/>' if axis else ""
    return (f'  <joint name="{name}" type="{typ}">\n    <parent link="{parent}"/>\n    <child link="{child}"/>\n'
            f'    <origin xyz="{xyz}" rpy="{rpy}"/>{ax}{lim}\n  </joint>\n')

def robot(defects):
    parts = []
    parts.append(link("base_cart", inertial(40, "0 0 0.125", box(40,0.8,0.5,0.25)) + geom('<box size="0.8 0.5 0.25"/>', "0 0 0.125")))
    # lift column: 8 kg, 0.12 x 0.12 x 1.0 box
    I = (0.01,0.01,0.01) if defects else box(8,0.12,0.12,1.0)
    parts.append(link("lift_column", inertial(8, "0 0 0.5", I) + geom('<box size="0.12 0.12 1.0"/>', "0 0 0.5")))
    # shoulder: 2.5 kg cylinder r 0.08 h 0.12, centred at z 0.06
    I = cyl(2.5,0.08,0.12)
    if defects:  # given about the link origin instead of the COM (d = 0.06 m along z)
        d = 0.06; I = (I[0]+2.5*d*d, I[1]+2.5*d*d, I[2])
    parts.append(link("shoulder", inertial(2.5, "0 0 0.06", I) + geom('<cylinder radius="0.08" length="0.12"/>', "0 0 0.06")))
    # upper arm: 3 kg box 0.4 x 0.08 x 0.08 along x
    I = box(3,0.4,0.08,0.08)
    if defects:  # izz typed far too large: ixx + iyy < izz
        I = (I[0], I[1], 0.09)
    parts.append(link("upper_arm", inertial(3, "0.2 0 0", I) + geom('<box size="0.4 0.08 0.08"/>', "0.2 0 0")))
    # elbow motor: cylinder along y, inertial in the cylinder's own rotated frame (correct in both)
    parts.append(link("elbow_motor", inertial(0.9, "0 0 0", cyl(0.9,0.04,0.09), rpy="1.5708 0 0") + geom('<cylinder radius="0.04" length="0.09"/>', "0 0 0", rpy="1.5708 0 0")))
    # forearm: 1.4 kg cylinder r 0.035 h 0.35 along x
    c = cyl(1.4,0.035,0.35); I = (c[2], c[0], c[1])
    if defects:  # written in kg mm^2
        I = tuple(v*1e6 for v in I)
    parts.append(link("forearm", inertial(1.4, "0.175 0 0", I) + geom('<cylinder radius="0.035" length="0.35"/>', "0.175 0 0", rpy="0 1.5708 0")))
    # wrist: 0.6 kg sphere r 0.045
    xyz = "0 0 0.12" if defects else "0 0 0"
    parts.append(link("wrist", inertial(0.6, xyz, sph(0.6,0.045)) + geom('<sphere radius="0.045"/>', "0 0 0")))
    # camera mount: 0.15 kg box 0.05 x 0.09 x 0.03 at z 0.06
    body = geom('<box size="0.05 0.09 0.03"/>', "0 0 0.06")
    if not defects:
        body = inertial(0.15, "0 0 0.06", box(0.15,0.05,0.09,0.03)) + body
    parts.append(link("camera_mount", body))
    # gripper palm: 0.35 kg box 0.06 x 0.1 x 0.04 at x 0.03
    m = 350 if defects else 0.35
    parts.append(link("gripper_palm", inertial(m, "0.03 0 0", box(0.35,0.06,0.1,0.04)) + geom('<box size="0.06 0.1 0.04"/>', "0.03 0 0")))
    parts.append(link("tool_flange", ""))
    # sensor plate (filler mass) with the sensor pod's mass in a fixed child: fine as one rigid body
    parts.append(link("sensor_plate", inertial(1e-6, "0 0 0", box(1e-6,0.2,0.3,0.01)) + geom('<box size="0.2 0.3 0.01"/>', "0 0 0"),
                      comment="the pod's mass sits in sensor_pod, a fixed child; simulators lump them into one body"))
    parts.append(link("sensor_pod", inertial(1.2, "0 0 -0.02", box(1.2,0.2,0.3,0.01))))
    joints = [
        joint("column_mount", "fixed", "base_cart", "lift_column", "0 0 0.25"),
        joint("shoulder_yaw", "revolute", "lift_column", "shoulder", "0 0 1.0", "0 0 1"),
        joint("shoulder_pitch", "revolute", "shoulder", "upper_arm", "0 0 0.12", "0 1 0"),
        joint("elbow_motor_mount", "fixed", "upper_arm", "elbow_motor", "0.4 0 0"),
        joint("elbow", "revolute", "upper_arm", "forearm", "0.4 0 0", "0 1 0"),
        joint("wrist_pitch", "revolute", "forearm", "wrist", "0.35 0 0", "0 1 0"),
        joint("camera_bracket", "fixed", "wrist", "camera_mount", "0 0 0"),
        joint("wrist_roll", "continuous", "wrist", "gripper_palm", "0.05 0 0", "1 0 0"),
        joint("flange_mount", "continuous" if defects else "fixed", "gripper_palm", "tool_flange", "0.06 0 0", "1 0 0" if defects else None),
        joint("sensor_plate_mount", "fixed", "base_cart", "sensor_plate", "0.42 0 0.2"),
        joint("sensor_pod_mount", "fixed", "sensor_plate", "sensor_pod", "0 0 0.02"),
    ]
    head = '<?xml version="1.0"?>\n<!-- Greenhouse tomato harvester: a 5-axis arm on a rail cart (demo model, invented for linkcheck). -->\n'
    note = "deliberate defects for the linkcheck demo; see harvester_clean.urdf" if defects else "the clean twin of harvester.urdf"
    return head + f'<robot name="tomato_harvester">\n  <!-- {note} -->\n' + "".join(parts) + "".join(joints) + "</robot>\n"

open("fixtures/demo/harvester.urdf","w").write(robot(True))
open("fixtures/demo/harvester_clean.urdf","w").write(robot(False))
