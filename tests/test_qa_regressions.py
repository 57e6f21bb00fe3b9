"""Regressions found by running linkcheck on invented robot models it had never seen.

Expected values come from outside the project: the handbook table of mass moments of inertia of
homogeneous solids (box m(b²+c²)/12, cylinder m(3r²+h²)/12 and mr²/2, sphere 2mr²/5, cube ma²/6;
recalled from memory), the rotation law I' = R I Rᵀ (an isotropic tensor is unchanged by any
rotation), xacro's own behaviour (it replaces every ``${...}``; what survives is text urdfdom
cannot parse as a number), the URDF and SDFormat specifications (defaults, @merge, auto inertia;
from memory), IEEE 754 double range, trimesh as a reference STL reader, and difflib.
"""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

from linkcheck.formats.urdf import read_urdf
from linkcheck.runner import check_document
from linkcheck.settings import Settings


def run(*args: str, cwd: Path) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linkcheck", "--no-cache", *args], cwd=cwd,
                          capture_output=True, text=True, timeout=120)


def box_moments(m: float, x: float, y: float, z: float) -> tuple[float, float, float]:
    return m * (y * y + z * z) / 12, m * (x * x + z * z) / 12, m * (x * x + y * y) / 12  # handbook: cuboid


def rules(urdf: str) -> dict[str, list]:
    doc = read_urdf(Path("qa.urdf"), urdf.encode())
    out: dict[str, list] = {}
    for f in check_document(doc, Settings())[1]:
        out.setdefault(f.rule, []).append(f)
    return out


def test_equal_moment_filler_in_a_rotated_inertial_frame_is_a_placeholder():
    # A 0.06 x 0.05 x 0.09 box: handbook principal moments ∝ 0.0106, 0.0117, 0.0061 (ratio 1.92 > 1.5),
    # so three equal moments are a filler whatever the frame: R (aE) Rᵀ = aE for every rotation R.
    # The rpy below leaves ~1e-20 rounding noise in the link-axes products; that must not hide it.
    urdf = ('<robot name="qa"><link name="wrist">'
            '<collision><origin rpy="0.4 -0.3 0.7"/><geometry><box size="0.06 0.05 0.09"/></geometry></collision>'
            '<inertial><origin xyz="0 0 0" rpy="0.4 -0.3 0.7"/><mass value="0.6"/>'
            '<inertia ixx="0.0002" ixy="0" ixz="0" iyy="0.0002" iyz="0" izz="0.0002"/></inertial>'
            '</link></robot>')
    found = rules(urdf)
    assert "inertia-placeholder" in found and "inertia-mismatch" not in found
    # near miss: the handbook tensor in the same rotated frame is clean
    ixx, iyy, izz = box_moments(0.6, 0.06, 0.05, 0.09)
    good = urdf.replace('ixx="0.0002"', f'ixx="{ixx!r}"').replace('iyy="0.0002"', f'iyy="{iyy!r}"') \
        .replace('izz="0.0002"', f'izz="{izz!r}"')
    assert rules(good) == {}


def test_identity_filler_in_a_rotated_inertial_frame_is_named_the_identity():
    # R E Rᵀ = E: an identity tensor given in a rotated frame is still diag(1, 1, 1) in link axes.
    urdf = ('<robot name="qa"><link name="plate">'
            '<inertial><origin rpy="0.3 0.2 0.1"/><mass value="2"/>'
            '<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial>'
            '</link></robot>')
    found = rules(urdf)
    assert "identity" in found["inertia-placeholder"][0].message


SHIFTING = """<robot name="qa">
  <link name="hopper">
    <collision><geometry><box size="0.2 0.1 0.1"/></geometry></collision>
  </link>
  <joint name="j" type="revolute"><parent link="hopper"/><child link="chute"/><axis xyz="0 0 1"/>
    <limit lower="-1" upper="1" effort="1" velocity="1"/></joint>
  <link name="chute">
    <collision><geometry><box size="0.3 0.05 0.05"/></geometry></collision>
    <inertial><mass value="1"/><inertia ixx="0.01" ixy="0" ixz="0" iyy="0.01" iyz="0" izz="0.01"/></inertial>
  </link>
</robot>
"""


def test_diff_reports_the_lines_of_the_file_on_disk(tmp_path):
    # --fill-missing inserts a 6-line block into 'hopper', which would move 'chute' down; --diff writes
    # nothing, so every reported line must still be a line of the unchanged file (counted here by hand).
    path = tmp_path / "hopper.urdf"
    path.write_text(SHIFTING)
    chute_line = SHIFTING.splitlines().index('  <link name="chute">') + 1  # 7
    p = run("--fill-missing", "--density", "1000", "--diff", "--format", "json", "hopper.urdf", cwd=tmp_path)
    assert p.returncode == 1, p.stderr
    assert path.read_text() == SHIFTING
    entry = json.loads(p.stdout)["files"][0]
    assert {k["name"]: k["line"] for k in entry["links"]}["chute"] == chute_line
    lines = {f["line"] for f in entry["findings"] if f["link"] == "chute"}
    assert lines and all(SHIFTING.splitlines()[n - 1].strip().startswith(("<link", "<inertia")) for n in lines)
    text = run("--fill-missing", "--density", "1000", "--diff", "hopper.urdf", cwd=tmp_path)
    inertial_line = next(n for n, t in enumerate(SHIFTING.splitlines(), 1) if "<inertial>" in t)  # 9
    assert f"hopper.urdf:{inertial_line}  chute  warning  inertia-placeholder" in text.stdout, text.stdout
    assert text.stdout.rstrip().endswith("1 file would change"), text.stdout
    # the written fix reports the fixed file, whose lines did move
    p = run("--fill-missing", "--density", "1000", "hopper.urdf", cwd=tmp_path)
    assert p.returncode == 1 and path.read_text() != SHIFTING
    assert path.read_text().splitlines().index('  <link name="chute">') + 1 > chute_line
    assert p.stdout.rstrip().endswith("1 file changed"), p.stdout


LEFTOVER = """<?xml version="1.0"?>
<!-- autogenerated by xacro -->
<robot name="sprayer" xmlns:xacro="http://www.ros.org/wiki/xacro">
  <link name="tank">
    <collision><geometry><cylinder radius="0.15" length="0.4"/></geometry></collision>
    <inertial><mass value="${tank_mass}"/><inertia ixx="0.0947" ixy="0" ixz="0" iyy="0.0947" iyz="0" izz="0.05625"/></inertial>
  </link>
</robot>
"""


def test_xacro_leftover_in_an_expanded_urdf_is_an_error(tmp_path):
    # xacro replaces every ${...} and drops its own elements (and keeps the xmlns:xacro declaration), so a
    # .urdf with no xacro element but a ${...} value is broken output: urdfdom reads mass as a number and
    # fails on it (from memory). A pre-commit hook must fail on it, not pass it as an info.
    (tmp_path / "sprayer.urdf").write_text(LEFTOVER)
    p = run("sprayer.urdf", cwd=tmp_path)
    assert p.returncode == 1, p.stdout
    assert "sprayer.urdf:6  tank  error  value-malformed" in p.stdout and "${tank_mass}" in p.stdout
    # near miss: the same text as a xacro source is checked as far as it goes, an info
    (tmp_path / "sprayer.urdf.xacro").write_text(LEFTOVER)
    p = run("sprayer.urdf.xacro", cwd=tmp_path)
    assert p.returncode == 0 and "info  value-malformed" in p.stdout, p.stdout
    # and a .urdf holding xacro definitions is a source too (xacro reads any file name)
    (tmp_path / "source.urdf").write_text(LEFTOVER.replace("<link", '<xacro:property name="tank_mass" value="5"/>\n  <link', 1))
    p = run("source.urdf", cwd=tmp_path)
    assert p.returncode == 0 and "info  value-malformed" in p.stdout, p.stdout


def _nine(x: float) -> str:
    return f"{x:.9g}"  # what CAD exports and hand-written files typically carry


def test_fix_keeps_tensor_texts_that_already_say_the_right_number(tmp_path):
    import difflib

    # palm: 0.08 x 0.04 x 0.02 box of 0.25 kg; handbook moments written to 9 digits, COM moved off the body.
    # --fix recomputes COM and tensor; the tensor texts are right to 1e-9 and must stay byte-identical.
    ixx, iyy, izz = box_moments(0.25, 0.08, 0.04, 0.02)
    urdf = ('<robot name="qa">\n  <link name="palm">\n'
            '    <collision><origin xyz="0 0 0.01"/><geometry><box size="0.08 0.04 0.02"/></geometry></collision>\n'
            '    <inertial>\n      <origin xyz="0.3 0 0.01" rpy="0 0 0"/>\n      <mass value="0.25"/>\n'
            f'      <inertia ixx="{_nine(ixx)}" ixy="0" ixz="0" iyy="{_nine(iyy)}" iyz="0" izz="{_nine(izz)}"/>\n'
            '    </inertial>\n  </link>\n</robot>\n')
    sdf = ('<?xml version="1.0"?>\n<sdf version="1.9">\n  <model name="qa">\n    <link name="palm">\n'
           '      <inertial>\n        <pose>0.3 0 0.01 0 0 0</pose>\n        <mass>0.25</mass>\n'
           f'        <inertia><ixx>{_nine(ixx)}</ixx><ixy>0</ixy><ixz>0</ixz><iyy>{_nine(iyy)}</iyy><iyz>0</iyz>'
           f'<izz>{_nine(izz)}</izz></inertia>\n'
           '      </inertial>\n      <collision name="c"><pose>0 0 0.01 0 0 0</pose>'
           '<geometry><box><size>0.08 0.04 0.02</size></box></geometry></collision>\n    </link>\n  </model>\n</sdf>\n')
    for name, text, fixed in (("palm.urdf", urdf, '<origin xyz="0 0 0.01" rpy="0 0 0"/>'),
                              ("palm.sdf", sdf, "<pose>0 0 0.01 0 0 0</pose>")):
        path = tmp_path / name
        path.write_text(text)
        p = run("--fix", name, cwd=tmp_path)
        assert p.returncode == 1, p.stdout + p.stderr
        changed = [line for line in difflib.unified_diff(text.splitlines(), path.read_text().splitlines(), lineterm="", n=0)
                   if line[:1] in "+-" and not line.startswith(("+++", "---"))]
        assert [c[1:].strip() for c in changed if c.startswith("+")] == [fixed], changed
        assert len(changed) == 2, changed
        again = run("--fix", name, cwd=tmp_path)
        assert again.returncode == 0, again.stdout


def test_fix_does_not_add_a_zero_rpy_the_file_left_out(tmp_path):
    # URDF spec (from memory): <origin> xyz and rpy default to zero when absent. Replacing an identity
    # filler (box 0.4 x 0.1 x 0.2, 2 kg: handbook 0.00833, 0.0333, 0.0283) must leave <origin xyz='0 0 0'/> alone.
    text = ("<robot name='r'>\n\t<link name='a'>\n\t\t<collision><geometry><box size='0.4 0.1 0.2'/></geometry></collision>\n"
            "\t\t<inertial>\n\t\t\t<origin xyz='0 0 0'/>\n\t\t\t<mass value='2'/>\n"
            "\t\t\t<inertia ixx='1' ixy='0' ixz='0' iyy='1' iyz='0' izz='1'/>\n\t\t</inertial>\n\t</link>\n</robot>\n")
    path = tmp_path / "a.urdf"
    path.write_text(text)
    assert run("--fix", "a.urdf", cwd=tmp_path).returncode == 1
    new = path.read_text().splitlines()
    assert new[4] == "\t\t\t<origin xyz='0 0 0'/>", new[4]
    ixx, iyy, izz = box_moments(2.0, 0.4, 0.1, 0.2)
    values = dict(part.split("=") for part in new[6].strip()[len("<inertia "):-2].split())
    assert abs(float(values["ixx"].strip("'")) - ixx) < 1e-9 * izz
    assert abs(float(values["iyy"].strip("'")) - iyy) < 1e-9 * izz
    assert abs(float(values["izz"].strip("'")) - izz) < 1e-9 * izz
    # handbook: a box's principal axes are its edges, so the products stay zero; the stated 2 kg is kept
    assert [float(values[k].strip("'")) for k in ("ixy", "ixz", "iyz")] == [0.0, 0.0, 0.0], new[6]
    assert new[5] == "\t\t\t<mass value='2'/>", new[5]


def test_sdf_children_added_to_a_one_line_inertia_stay_on_that_line(tmp_path):
    # sphere r 0.05 m, 0.4 kg: handbook 2/5 m r² = 0.0004 kg m²; the missing ixy, iyy, iyz (SDFormat
    # defaults 0, 1, 0 from its inertial.sdf description, from memory) are written inline, one line as before.
    line = "      <inertial><mass>0.4</mass><inertia><ixx>0.0004</ixx><ixz>0</ixz><izz>0.0004</izz></inertia></inertial>"
    text = ('<?xml version="1.0"?>\n<sdf version="1.9">\n  <model name="m">\n    <link name="head">\n' + line + "\n"
            '      <collision name="c"><geometry><sphere><radius>0.05</radius></sphere></geometry></collision>\n'
            "    </link>\n  </model>\n</sdf>\n")
    path = tmp_path / "m.sdf"
    path.write_text(text)
    p = run("--fix", "m.sdf", cwd=tmp_path)
    assert p.returncode == 1, p.stdout + p.stderr
    new = path.read_text().splitlines()
    assert len(new) == len(text.splitlines())
    assert new[4] == ("      <inertial><mass>0.4</mass><inertia><ixx>0.0004</ixx><ixy>0</ixy><ixz>0</ixz>"
                      "<iyy>0.0004</iyy><iyz>0</iyz><izz>0.0004</izz></inertia></inertial>"), new[4]
    assert run("--fix", "m.sdf", cwd=tmp_path).returncode == 0


def test_sdf_merge_include_names_its_links_in_the_parent_model(tmp_path):
    # SDFormat 1.9 <include merge="true"> (sdformat include description, from memory): the included model's
    # links, joints and frames become the parent model's own, so a joint of the parent names them bare.
    wheel = tmp_path / "parts" / "wheel"
    wheel.mkdir(parents=True)
    (wheel / "model.config").write_text('<model><name>wheel</name><sdf version="1.9">wheel.sdf</sdf></model>\n')
    m, r, h = 1.2, 0.1, 0.05  # handbook: solid cylinder m(3r²+h²)/12, mr²/2
    (wheel / "wheel.sdf").write_text(
        '<sdf version="1.9"><model name="wheel"><link name="rim"><inertial><mass>1.2</mass><inertia>'
        f'<ixx>{m * (3 * r * r + h * h) / 12!r}</ixx><ixy>0</ixy><ixz>0</ixz><iyy>{m * (3 * r * r + h * h) / 12!r}</iyy>'
        f'<iyz>0</iyz><izz>{m * r * r / 2!r}</izz></inertia></inertial><collision name="c"><geometry><cylinder>'
        '<radius>0.1</radius><length>0.05</length></cylinder></geometry></collision></link></model></sdf>\n')
    dx, dy, dz = box_moments(1.0, 1, 0.5, 0.01)
    cart = ('<?xml version="1.0"?>\n<sdf version="1.9">\n  <model name="cart">\n'
            f'    <link name="deck"><inertial><mass>1</mass><inertia><ixx>{dx!r}</ixx><ixy>0</ixy><ixz>0</ixz>'
            f'<iyy>{dy!r}</iyy><iyz>0</iyz><izz>{dz!r}</izz></inertia></inertial>'
            '<collision name="c"><geometry><box><size>1 0.5 0.01</size></box></geometry></collision></link>\n'
            '    <include MERGE><uri>parts/wheel</uri><name>wl</name><pose>0.4 0.3 0 0 0 0</pose></include>\n'
            '    <joint name="jl" type="revolute"><parent>deck</parent><child>rim</child></joint>\n'
            '  </model>\n</sdf>\n')
    (tmp_path / "cart.sdf").write_text(cart.replace("MERGE", 'merge="true"'))
    p = run("cart.sdf", cwd=tmp_path)
    assert p.returncode == 0 and "value-malformed" not in p.stdout, p.stdout
    # near miss: without merge the wheel is a nested model 'wl', and a bare 'rim' names nothing
    (tmp_path / "cart.sdf").write_text(cart.replace(" MERGE", ""))
    p = run("cart.sdf", cwd=tmp_path)
    assert p.returncode == 1 and "value-malformed  joint 'jl': frame 'rim' not found" in p.stdout, p.stdout


def test_a_found_package_without_the_file_is_not_called_missing(tmp_path):
    # ROS resolves package://NAME/rest to <package folder>/rest (REP 0127 / resource_retriever, from memory);
    # Linux file systems are case-sensitive, so .stl does not open .STL. The message must say the package was
    # found and which file is missing, not "package not found", and name the file that differs in case.
    from linkcheck.geometry.resolve import resolve_uri

    pkg = tmp_path / "src" / "pollinator"
    (pkg / "meshes").mkdir(parents=True)
    (pkg / "package.xml").write_text("<package format='3'><name>pollinator</name></package>\n")
    (pkg / "meshes" / "bracket.STL").write_bytes(b"\0" * 84)
    (pkg / "urdf").mkdir()
    res = resolve_uri("package://pollinator/meshes/bracket.stl", pkg / "urdf")
    assert res.path is None
    assert "package 'pollinator' has no file 'meshes/bracket.stl'" in res.reason and "not found" not in res.reason
    assert "'bracket.STL'" in res.reason
    res = resolve_uri("../meshes/bracket.stl", pkg / "urdf")
    assert res.path is None and "'bracket.STL'" in res.reason
    res = resolve_uri("package://ghost/meshes/bracket.STL", pkg / "urdf")  # near miss: a package that is absent
    assert res.path is None and "package 'ghost'" in res.reason and "not found" in res.reason


def test_numbers_too_large_to_compute_with_are_malformed_not_an_internal_error(tmp_path):
    # IEEE 754 double: the largest finite value is about 1.8e308, so 1e308 moments overflow as soon as
    # they are added or squared (a trace, a Frobenius norm); a 1e200 m box overflows its own inertia.
    urdf = ('<robot name="x">\n'
            '  <link name="a"><collision><geometry><box size="0.1 0.1 0.1"/></geometry></collision><inertial>'
            '<mass value="1e308"/><inertia ixx="1e308" ixy="0" ixz="0" iyy="1e308" iyz="0" izz="1e308"/></inertial></link>\n'
            '  <link name="d"><collision><geometry><box size="1e200 1e200 1e200"/></geometry></collision><inertial>'
            '<mass value="1"/><inertia ixx="1e-3" ixy="0" ixz="0" iyy="1e-3" iyz="0" izz="1e-3"/></inertial></link>\n'
            '</robot>\n')
    sdf = ('<sdf version="1.9"><model name="m"><link name="a"><pose>1e300 0 0 0 0 0</pose><inertial><mass>1e308</mass>'
           '<inertia><ixx>1e308</ixx><ixy>0</ixy><ixz>0</ixz><iyy>1e308</iyy><iyz>0</iyz><izz>1e308</izz></inertia>'
           '</inertial><collision name="c"><geometry><box><size>0.1 0.1 0.1</size></box></geometry></collision>'
           '</link></model></sdf>\n')
    (tmp_path / "x.urdf").write_text(urdf)
    (tmp_path / "x.sdf").write_text(sdf)
    for name in ("x.urdf", "x.sdf"):
        p = run(name, cwd=tmp_path)
        assert p.returncode == 1 and p.stderr == "", (p.stdout, p.stderr)
        assert "value-malformed" in p.stdout and "no larger than 1e30" in p.stdout, p.stdout
    # near miss: a large but computable robot (a 1e3 m box of 1e6 kg) is judged normally
    big = urdf.split("\n")[0] + "\n" + (
        f'  <link name="hall"><collision><geometry><box size="1000 1000 1000"/></geometry></collision><inertial>'
        f'<mass value="1e6"/><inertia ixx="{1e6 * 2e6 / 12!r}" ixy="0" ixz="0" iyy="{1e6 * 2e6 / 12!r}" iyz="0" '
        f'izz="{1e6 * 2e6 / 12!r}"/></inertial></link>\n</robot>\n')  # handbook cube: m(a²+a²)/12
    (tmp_path / "big.urdf").write_text(big)
    p = run("big.urdf", cwd=tmp_path)
    assert "value-malformed" not in p.stdout and p.stderr == "", p.stdout + p.stderr


def test_a_fill_density_outside_the_plausible_range_is_a_usage_error(tmp_path):
    # 1.2 is a plastic's density in g/cm³ (1200 kg/m³); as kg/m³ it is outside the default plausible range
    # [50, 25000] (README), so a fill would write a block that density-implausible reports at once.
    text = ('<robot name="g"><link name="base"/><joint name="j" type="revolute"><parent link="base"/>'
            '<child link="sensor"/><axis xyz="0 0 1"/><limit lower="0" upper="1" effort="1" velocity="1"/></joint>'
            '<link name="sensor"><visual><geometry><box size="0.01 0.01 0.01"/></geometry></visual></link></robot>\n')
    path = tmp_path / "g.urdf"
    path.write_text(text)
    p = run("--fill-missing", "--density", "1.2", "g.urdf", cwd=tmp_path)
    assert p.returncode == 2 and path.read_text() == text, p.stdout + p.stderr
    assert "1200 kg/m³" in p.stderr and len(p.stderr.strip().splitlines()) == 1, p.stderr
    # near miss: 1200 kg/m³ fills the 1 cm³ box with 1.2 g (handbook: m(a²+a²)/12 = 2e-8 kg m²)
    p = run("--fill-missing", "--density", "1200", "g.urdf", cwd=tmp_path)
    assert p.returncode == 1 and 'mass value="0.0012"' in path.read_text(), p.stdout + p.stderr
    assert 'ixx="2e-8"' in path.read_text()
    # handbook cube m a²/6: all three moments equal, products zero (a cube's inertia is isotropic)
    (written,) = re.findall(r"<inertia ([^/]*)/>", path.read_text())
    moments = {k: float(v) for k, v in re.findall(r'(\w+)="([^"]*)"', written)}
    want = 1200 * 0.01**3 * 0.01**2 / 6
    assert all(abs(moments[k] - want) <= 1e-9 * want for k in ("ixx", "iyy", "izz")), written
    assert [moments[k] for k in ("ixy", "ixz", "iyz")] == [0.0, 0.0, 0.0], written


def _ascii_cube_stl(a: float) -> str:
    """A closed cube of edge ``a`` as ASCII STL, 12 outward triangles, keywords in upper case."""
    import itertools

    h = a / 2
    out = ["SOLID CUBE"]
    for axis, sign in itertools.product(range(3), (-1, 1)):
        u, v = [i for i in range(3) if i != axis]
        corners = []
        for du, dv in ((-1, -1), (1, -1), (1, 1), (-1, 1)):
            p = [0.0, 0.0, 0.0]
            p[axis], p[u], p[v] = sign * h, du * h, dv * h
            corners.append(p)
        if (sign > 0) != ((axis == 1) is False):  # keep every face wound outward (right-hand rule)
            corners.reverse()
        for tri in ((0, 1, 2), (0, 2, 3)):
            out += ["  FACET NORMAL 0 0 0", "    OUTER LOOP"]
            out += [f"      VERTEX {corners[k][0]!r} {corners[k][1]!r} {corners[k][2]!r}" for k in tri]
            out += ["    ENDLOOP", "  ENDFACET"]
    out.append("ENDSOLID CUBE")
    return "\n".join(out) + "\n"


def test_ascii_stl_with_upper_case_keywords_is_read(tmp_path):
    # STL keywords are case-insensitive in practice: trimesh reads an upper-case file (checked here too);
    # the cube's volume is a³ (8e-6 m³ for a = 0.02 m) and its moments m a²/6 (handbook).
    import trimesh

    text = _ascii_cube_stl(0.02)
    (tmp_path / "cube.stl").write_text(text)
    ref = trimesh.load(tmp_path / "cube.stl", force="mesh")
    assert ref.is_watertight and abs(ref.volume - 8e-6) < 1e-15
    m = 0.05
    i = m * 0.02 ** 2 / 6
    urdf = (f'<robot name="c"><link name="cube"><collision><geometry><mesh filename="cube.stl"/></geometry></collision>'
            f'<inertial><mass value="{m}"/><inertia ixx="{i!r}" ixy="0" ixz="0" iyy="{i!r}" iyz="0" izz="{i!r}"/>'
            '</inertial></link></robot>\n')
    (tmp_path / "c.urdf").write_text(urdf)
    p = run("--format", "json", "c.urdf", cwd=tmp_path)
    entry = json.loads(p.stdout)["files"][0]
    assert entry["findings"] == [], entry["findings"]
    assert abs(entry["links"][0]["computed"]["volume"] - 8e-6) < 1e-12


def test_fill_missing_beside_an_auto_inertial_with_a_stated_pose_is_no_internal_error(tmp_path):
    # SDFormat 1.11 <inertial auto="true"> (spec, from memory): the simulator computes mass properties from the
    # collisions and overwrites a stated <pose>. No fix may write into it; the other link is still filled
    # (sphere r 0.1 at 1000 kg/m³: 4/3 π r³ ρ = 4.18879 kg, handbook 2/5 m r² = 0.0167552 kg m²).
    text = ('<?xml version="1.0"?>\n<sdf version="1.11">\n  <model name="cart">\n    <link name="bin">\n'
            '      <inertial auto="true"><mass>3</mass><pose>1 1 1 0 0 0</pose></inertial>\n'
            '      <collision name="c"><geometry><box><size>0.4 0.3 0.3</size></box></geometry></collision>\n'
            '    </link>\n    <link name="lone">\n'
            '      <collision name="c"><geometry><sphere><radius>0.1</radius></sphere></geometry></collision>\n'
            '    </link>\n  </model>\n</sdf>\n')
    path = tmp_path / "cart.sdf"
    path.write_text(text)
    p = run("--fill-missing", "--density", "1000", "cart.sdf", cwd=tmp_path)
    assert p.returncode == 1 and "internal error" not in p.stderr, p.stdout + p.stderr
    new = path.read_text()
    assert '<inertial auto="true"><mass>3</mass><pose>1 1 1 0 0 0</pose></inertial>' in new
    import math
    mass = float(new.split("<mass>")[2].split("</mass>")[0])
    assert abs(mass - 4 / 3 * math.pi * 0.1 ** 3 * 1000) < 1e-6


def test_a_tensor_with_zero_trace_is_reported_without_numpy_warnings(tmp_path):
    # ixx = -0.002 (a sign typo), iyy = izz = 0.001: trace 0, so one principal moment is negative
    # (the trace is the sum of the eigenvalues): not positive-definite, and nothing to divide by.
    (tmp_path / "t.urdf").write_text(
        '<robot name="t"><link name="a"><collision><geometry><box size="0.1 0.1 0.1"/></geometry></collision>'
        '<inertial><mass value="1"/><inertia ixx="-0.002" ixy="0" ixz="0" iyy="0.001" iyz="0" izz="0.001"/>'
        '</inertial></link></robot>\n')
    p = run("t.urdf", cwd=tmp_path)
    assert p.returncode == 1 and p.stderr == "", p.stderr
    assert "inertia-not-positive-definite" in p.stdout


def test_default_namespace_on_robot_is_read_as_urdf():
    # urdfdom reads with TinyXML, which ignores namespaces (from memory): such files load in ROS
    data = (b'<robot name="r" xmlns="http://example.invalid/urdf"><link name="a"><inertial><mass value="2"/>'
            b'<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial></link></robot>')
    doc = read_urdf(Path("ns.urdf"), data)
    assert not doc.fatal and [k.name for k in doc.links] == ["a"] and doc.links[0].inertial.mass == 2.0


def test_second_inertial_block_is_warned_and_does_not_block_a_fix():
    # FORMATS.md §1.2: urdfdom uses the first child element of each name, silently
    from linkcheck.fix import FixOptions, FixPlan, plan_fix

    block = '<inertial><mass value="2"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial>'
    data = (f'<robot name="r"><link name="a">{block}{block}<collision><geometry><box size="0.4 0.1 0.2"/>'
            '</geometry></collision></link></robot>').encode()
    doc = read_urdf(Path("two.urdf"), data)
    contexts, found = check_document(doc, Settings())
    dup = [f for f in found if f.rule == "value-malformed"]
    assert len(dup) == 1 and dup[0].severity == "warning" and "2 <inertial> blocks" in dup[0].message
    assert isinstance(plan_fix(contexts[0], found, FixOptions()), FixPlan)
