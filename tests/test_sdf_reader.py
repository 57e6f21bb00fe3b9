"""Reading SDFormat: inertial defaults, shapes, worlds, includes, suppressions, bad input.

Outside references: FORMATS.md §2.4 (silent inertial defaults: mass 1, ixx = iyy =
izz = 1, products 0; observed with libsdformat 12.3), §2.5 (auto inertia), §2.7
(shape parameters and defaults: capsule radius 0.5, others 1; cone frame at
mid-height, centroid at -L/4), §2.8 (includes, model.config). Numbers in
messages are those defaults, not values taken from the code.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from linkcheck.formats.sdf import read_sdf
from linkcheck.geometry.solid import primitive_solid


def read(body: str, tmp_path: Path, version: str = "1.11", name: str = "m"):
    text = f'<?xml version="1.0"?>\n<sdf version="{version}">\n<model name="{name}">\n{body}\n</model>\n</sdf>\n'
    path = tmp_path / "t.sdf"
    path.write_text(text)
    return read_sdf(path)


def rules(doc, rule=None):
    return [f for f in doc.findings if rule is None or f.rule == rule]


# ---- inertial defaults


def test_missing_inertial_is_absent_and_simulator_uses_one_kg(tmp_path):
    doc = read('<link name="arm"><collision name="c"><geometry><box><size>1 1 1</size></box></geometry></collision></link>', tmp_path)
    link = doc.link("arm")
    assert link.inertial is None and link.inertial_state == "absent"
    # FORMATS.md §2.4: no <inertial> -> 1 kg, diag(1, 1, 1), identity pose
    eff = link.handle.effective
    assert eff.mass == 1.0 and np.array_equal(eff.inertia, np.eye(3)) and np.array_equal(eff.com, np.zeros(3))
    assert not rules(doc, "inertial-incomplete")  # inertial-missing is the checks' rule


def test_partial_inertia_fills_defaults_and_says_so(tmp_path):
    doc = read(
        """<link name="arm"><inertial><mass>2</mass><inertia><ixx>0.01</ixx></inertia></inertial></link>""",
        tmp_path,
    )
    st = doc.link("arm").inertial
    # FORMATS.md §2.4 (exp libsdformat 12.3): <ixx>0.01</ixx> alone gives diag(0.01, 1, 1)
    assert np.array_equal(st.inertia_frame, np.diag([0.01, 1.0, 1.0]))
    assert st.missing == ("iyy", "izz")  # omitted products are 0 and not "missing"
    (f,) = rules(doc, "inertial-incomplete")
    assert f.severity == "warning" and f.fixable and f.link == "arm" and f.line == 4
    assert f.message == "link 'arm': <inertia> has no iyy, izz: simulators silently use iyy = 1, izz = 1 kg m²"


def test_mass_only_gives_unit_tensor(tmp_path):
    doc = read('<link name="arm"><inertial><mass>0.2</mass></inertial></link>', tmp_path)
    st = doc.link("arm").inertial
    # FORMATS.md §2.4: <mass> only -> tensor diag(1, 1, 1) regardless of the mass
    assert st.mass == 0.2 and np.array_equal(st.inertia_frame, np.eye(3))
    (f,) = rules(doc, "inertial-incomplete")
    assert "<inertial> has no <inertia>" in f.message and "ixx = iyy = izz = 1 kg m²" in f.message


def test_missing_mass_defaults_to_one(tmp_path):
    doc = read(
        "<link name='arm'><inertial><inertia><ixx>1e-3</ixx><iyy>1e-3</iyy><izz>1e-3</izz></inertia></inertial></link>",
        tmp_path,
    )
    assert doc.link("arm").inertial.mass == 1.0  # FORMATS.md §2.4: <mass> default 1.0
    (f,) = rules(doc, "inertial-incomplete")
    assert "no <mass>" in f.message and "mass = 1 kg" in f.message


def test_products_omitted_are_zero_without_a_warning(tmp_path):
    doc = read(
        "<link name='arm'><inertial><mass>1</mass><inertia><ixx>1e-3</ixx><iyy>2e-3</iyy><izz>3e-3</izz></inertia></inertial></link>",
        tmp_path,
    )
    assert np.array_equal(doc.link("arm").inertial.inertia_frame, np.diag([1e-3, 2e-3, 3e-3]))
    assert doc.link("arm").inertial.missing == ()
    assert not rules(doc, "inertial-incomplete")


def test_inertial_pose_rotates_the_tensor_frame(tmp_path):
    doc = read(
        "<link name='arm'><inertial><pose degrees='true'>0.1 0 0 0 0 90</pose><mass>1</mass>"
        "<inertia><ixx>1</ixx><iyy>2</iyy><izz>3</izz></inertia></inertial></link>",
        tmp_path,
    )
    props = doc.link("arm").inertial.mass_properties()
    # hand: yaw 90 swaps the x and y moments in link axes
    assert np.allclose(props.inertia, np.diag([2, 1, 3]), atol=1e-12)
    assert np.allclose(props.com, [0.1, 0, 0])


def test_auto_inertial_with_stated_values_is_reported_overwritten(tmp_path):
    doc = read(
        """<link name="arm"><inertial auto="true"><pose>0 0 1 0 0 0</pose><density>2700</density>
             <inertia><ixx>1</ixx></inertia></inertial>
           <collision name="c"><density>7800</density><geometry><sphere><radius>0.1</radius></sphere></geometry></collision></link>""",
        tmp_path,
    )
    st = doc.link("arm").inertial
    assert st.auto and st.density == 2700.0
    assert doc.link("arm").bodies[0].density == 7800.0
    # FORMATS.md §2.5: stated pose/inertia with auto="true" are overwritten; not an incomplete block
    (f,) = [x for x in doc.findings if x.rule == "inertial-incomplete"]
    assert f.severity == "info" and "<pose> and <inertia>" in f.message and "overwritten" in f.message
    assert doc.link("arm").handle.effective is None


def test_auto_inertial_alone_is_quiet(tmp_path):
    doc = read(
        '<link name="arm"><inertial auto="true"/><collision name="c"><geometry><sphere><radius>0.1</radius></sphere></geometry></collision></link>',
        tmp_path,
    )
    assert doc.link("arm").inertial.auto and not doc.findings


@pytest.mark.parametrize(
    "inner, words",
    [
        ("<mass>1,5</mass>", "mass is '1,5': expected a number (decimal point, not comma)"),
        ("<mass>inf</mass>", "mass is 'inf': expected a finite number"),
        ("<mass>1</mass><inertia><ixx>abc</ixx></inertia>", "inertia ixx is 'abc'"),
        ("<pose>0 0 0 0 0</pose><mass>1</mass>", "needs 6 numbers"),
    ],
)
def test_malformed_inertial_values(tmp_path, inner, words):
    doc = read(f"<link name='arm'><inertial>{inner}</inertial></link>", tmp_path)
    assert doc.link("arm").inertial_state == "malformed" and doc.link("arm").inertial is None
    (f,) = rules(doc, "value-malformed")
    assert words in f.message and f.severity == "error" and f.line == 4 and f.link == "arm"


# ---- shapes


def shapes(doc, link="l"):
    return [b.shape for b in doc.link(link).bodies]


def test_every_shape_and_its_parameters(tmp_path):
    doc = read(
        """<link name="l">
        <collision name="a"><geometry><box><size>0.1 0.2 0.3</size></box></geometry></collision>
        <collision name="b"><geometry><sphere><radius>0.05</radius></sphere></geometry></collision>
        <collision name="c"><geometry><cylinder><radius>0.1</radius><length>0.4</length></cylinder></geometry></collision>
        <collision name="d"><geometry><capsule><radius>0.02</radius><length>0.3</length></capsule></geometry></collision>
        <collision name="e"><geometry><cone><radius>0.1</radius><length>0.2</length></cone></geometry></collision>
        <collision name="f"><geometry><ellipsoid><radii>0.1 0.2 0.3</radii></ellipsoid></geometry></collision>
        <collision name="g"><geometry><mesh><uri>meshes/part.stl</uri><scale>0.001 0.001 0.001</scale>
          <submesh><name>bracket</name><center>true</center></submesh></mesh></geometry></collision>
        </link>""",
        tmp_path,
    )
    got = shapes(doc)
    assert [(s.kind, s.size) for s in got[:6]] == [
        ("box", (0.1, 0.2, 0.3)),
        ("sphere", (0.05,)),
        ("cylinder", (0.1, 0.4)),
        ("capsule", (0.02, 0.3)),  # length = the cylindrical part, as written (FORMATS.md §2.7)
        ("cone", (0.1, 0.2)),
        ("ellipsoid", (0.1, 0.2, 0.3)),
    ]
    mesh = got[6]
    assert (mesh.kind, mesh.uri, mesh.scale, mesh.submesh, mesh.center) == (
        "mesh", "meshes/part.stl", (0.001, 0.001, 0.001), "bracket", True)
    assert mesh.base_dir == tmp_path
    assert not doc.findings


def test_cone_read_has_centroid_at_minus_quarter_length(tmp_path):
    doc = read("<link name='l'><collision name='c'><geometry><cone><radius>0.1</radius><length>0.2</length></cone></geometry></collision></link>", tmp_path)
    solid = primitive_solid(shapes(doc)[0])
    # FORMATS.md §2.7 / lsdf Cone.cc: frame at mid-height, COM at z = -L/4 = -0.05
    assert np.allclose(solid.props.com, [0, 0, -0.05], atol=1e-12)


def test_capsule_length_excludes_caps(tmp_path):
    doc = read("<link name='l'><collision name='c'><geometry><capsule><radius>0.1</radius><length>0.2</length></capsule></geometry></collision></link>", tmp_path)
    solid = primitive_solid(shapes(doc)[0])
    # FORMATS.md §2.7: length is the cylindrical part only; V = pi r^2 L + 4/3 pi r^3
    assert np.isclose(solid.volume, np.pi * 0.01 * 0.2 + 4 / 3 * np.pi * 0.001, rtol=1e-9)


def test_missing_shape_children_take_spec_defaults_with_info(tmp_path):
    doc = read(
        """<link name="l">
        <collision name="a"><geometry><cylinder><radius>0.1</radius></cylinder></geometry></collision>
        <collision name="b"><geometry><capsule/></geometry></collision>
        <collision name="c"><geometry><box/></geometry></collision>
        </link>""",
        tmp_path,
    )
    # FORMATS.md §2.7 and §2.4 (exp: cylinder without <length> -> length 1); capsule radius 0.5, length 1
    assert [s.size for s in shapes(doc)] == [(0.1, 1.0), (0.5, 1.0), (1.0, 1.0, 1.0)]
    msgs = [f.message for f in doc.findings]
    assert all(f.severity == "info" for f in doc.findings)
    assert "link 'l': collision 'a': <cylinder> has no <length>: simulators silently use length = 1" in msgs
    assert "link 'l': collision 'b': <capsule> has no <radius>: simulators silently use radius = 0.5" in msgs
    assert "link 'l': collision 'c': <box> has no <size>: simulators silently use size = 1 1 1" in msgs


@pytest.mark.parametrize("kind", ["plane", "heightmap", "polyline", "image", "empty"])
def test_non_solid_shapes_are_skipped_with_info(tmp_path, kind):
    doc = read(f"<link name='l'><collision name='g'><geometry><{kind}/></geometry></collision></link>", tmp_path)
    (shape,) = shapes(doc)
    assert shape.kind == kind and shape.size == ()
    (f,) = doc.findings
    assert f.severity == "info" and f.message == f"link 'l': collision 'g': {kind} carries no volume: skipped"


def test_shape_newer_than_declared_version_warns(tmp_path):
    doc = read("<link name='l'><collision name='c'><geometry><capsule><radius>1</radius><length>1</length></capsule></geometry></collision></link>", tmp_path, version="1.6")
    (f,) = doc.findings
    # FORMATS.md §2.9.7: capsule needs 1.8
    assert f.severity == "warning" and "needs SDFormat 1.8+" in f.message and "1.6" in f.message


@pytest.mark.parametrize(
    "geometry, words",
    [
        ("<box><size>1 1</size></box>", "expected 3 numbers"),
        ("<sphere><radius>-1</radius></sphere>", "expected positive numbers"),
        ("<mesh/>", "<mesh> has no <uri>"),
        ("", "has no shape"),
        ("<torus/>", "unknown shape <torus>"),
    ],
)
def test_bad_geometry(tmp_path, geometry, words):
    doc = read(f"<link name='l'><collision name='c'><geometry>{geometry}</geometry></collision></link>", tmp_path)
    assert shapes(doc) == [None]
    assert any(words in f.message and f.severity == "error" for f in doc.findings), doc.findings


# ---- worlds, naming, includes


def world(tmp_path: Path, body: str, name: str = "w.world") -> Path:
    path = tmp_path / name
    path.write_text(f'<?xml version="1.0"?>\n<sdf version="1.9">\n<world name="orchard">\n{body}\n</world>\n</sdf>\n')
    return path


def test_world_with_two_models_and_an_unresolved_include(tmp_path, monkeypatch):
    monkeypatch.delenv("SDF_PATH", raising=False)
    monkeypatch.delenv("GZ_SIM_RESOURCE_PATH", raising=False)
    path = world(
        tmp_path,
        """
  <model name="drone"><link name="base"/></model>
  <model name="cart"><pose>3 0 0 0 0 0</pose><link name="base"/></model>
  <include><uri>model://not_here</uri></include>
  <joint name="tow" type="fixed"><parent>drone::base</parent><child>cart::base</child></joint>
""",
    )
    doc = read_sdf(path)
    # several top-level models: links scoped by model name to stay unique
    assert [k.name for k in doc.links] == ["drone::base", "cart::base"]
    (f,) = [f for f in doc.findings if "not_here" in f.message]
    assert f.severity == "info" and f.line == 7 and "not found" in f.message
    assert doc.included == []


def test_world_level_joint_is_ignored_but_model_joints_resolve(tmp_path):
    path = world(
        tmp_path,
        """
  <model name="drone"><link name="base"/><link name="arm"><pose>0 0 1 0 0 0</pose></link>
    <joint name="j" type="fixed"><parent>base</parent><child>arm</child></joint></model>
  <model name="cart"><link name="base"/></model>""",
    )
    doc = read_sdf(path)
    (j,) = doc.joints
    assert (j.name, j.parent, j.child) == ("drone::j", "drone::base", "drone::arm")


def make_model_dir(root: Path, name: str, sdf_file: str = "gadget.sdf") -> Path:
    folder = root / name
    folder.mkdir(parents=True)
    (folder / "model.config").write_text(
        f'<?xml version="1.0"?><model><name>{name}</name>'
        f'<sdf version="1.6">old.sdf</sdf><sdf version="1.9">{sdf_file}</sdf></model>'
    )
    (folder / sdf_file).write_text(
        '<?xml version="1.0"?>\n<sdf version="1.9">\n<model name="gadget">\n'
        '<link name="body"><pose>0 0 0.1 0 0 0</pose><inertial><mass>0.5</mass></inertial></link>\n'
        "</model>\n</sdf>\n"
    )
    (folder / "old.sdf").write_text("<sdf version='1.6'><model name='old'><link name='wrong'/></model></sdf>")
    return folder


def test_include_model_uri_via_sdf_path(tmp_path, monkeypatch):
    make_model_dir(tmp_path / "models", "cam")
    monkeypatch.setenv("SDF_PATH", str(tmp_path / "models"))
    doc = read(
        """<link name="base"/>
        <include><uri>model://cam</uri><name>cam</name><pose>1 0 0 0 0 0</pose></include>
        <joint name="j" type="fixed"><parent>base</parent><child>cam::body</child></joint>""",
        tmp_path,
    )
    assert [k.name for k in doc.links] == ["base"]  # included links are not this file's
    (sub,) = doc.included
    assert sub.path.name == "gadget.sdf"  # model.config: the best version entry
    assert [k.name for k in sub.links] == ["cam::body"] and not sub.writable
    assert sub.links[0].handle.read_only
    (j,) = doc.joints
    # include pose replaces the model pose: body at (1, 0, 0.1) in the including model
    assert j.child == "cam::body" and np.allclose(j.pose.translation, [1, 0, 0.1])
    assert not doc.findings


def test_include_relative_directory(tmp_path):
    make_model_dir(tmp_path, "parts")
    doc = read("<link name='base'/><include><uri>parts</uri></include>", tmp_path)
    assert [k.name for k in doc.included[0].links] == ["gadget::body"]


# ---- suppressions, bad input


def test_suppression_comments_inside_and_before_link(tmp_path):
    doc = read(
        """<!-- linkcheck: allow inertia-mismatch, com-offset - measured on the bench -->
        <link name="a">
          <!-- linkcheck: allow density-implausible -->
        </link>
        <!-- an ordinary comment -->
        <link name="b"/>""",
        tmp_path,
    )
    assert doc.link("a").suppressions == [
        ("inertia-mismatch", 4, "measured on the bench"),
        ("com-offset", 4, "measured on the bench"),
        ("density-implausible", 6, ""),
    ]
    assert doc.link("b").suppressions == []


@pytest.mark.parametrize(
    "data, words",
    [
        (b"<sdf version='1.9'><model name='m'>", "no element found"),
        (b"<robot name='r'/>", "not an SDFormat file"),
        (b'<!DOCTYPE sdf [<!ENTITY x "y">]><sdf version="1.9"/>', "refused"),
    ],
)
def test_bad_files_are_fatal_findings(tmp_path, data, words):
    path = tmp_path / "bad.sdf"
    doc = read_sdf(path, data)
    assert doc.fatal and not doc.writable
    (f,) = doc.findings
    assert f.rule == "xml-malformed" and words in f.message and "\n" not in f.message


def test_unreadable_file_is_a_finding(tmp_path):
    doc = read_sdf(tmp_path / "missing.sdf")
    assert doc.fatal and "cannot read" in doc.findings[0].message


def test_demo_fixture_reads_cleanly():
    doc = read_sdf(Path(__file__).parent.parent / "fixtures" / "sdf" / "orchard_gimbal" / "model.sdf")
    assert [k.name for k in doc.links] == ["mount_plate", "yaw_arm", "pitch_cradle", "camera"]
    assert not [f for f in doc.findings if f.severity == "error"]
    assert [f.rule for f in doc.findings] == ["inertial-incomplete"]


def test_demo_world_fixture_with_include_and_unresolved_include(monkeypatch):
    for var in ("SDF_PATH", "GZ_SIM_RESOURCE_PATH", "GAZEBO_MODEL_PATH", "IGN_GAZEBO_RESOURCE_PATH"):
        monkeypatch.delenv(var, raising=False)
    doc = read_sdf(Path(__file__).parent.parent / "fixtures" / "sdf" / "orchard_row.world")
    assert [k.name for k in doc.links] == ["ground::soil", "scout::airframe", "cart::chassis"]
    (sub,) = doc.included
    assert [k.name for k in sub.links][:2] == ["scout::gimbal::mount_plate", "scout::gimbal::yaw_arm"]
    assert [j.name for j in sub.joints] == ["scout::gimbal::yaw_joint", "scout::gimbal::pitch_joint", "scout::gimbal::camera_mount"]
    # the included model's own findings stay with its own file
    assert [f.rule for f in sub.findings] == ["inertial-incomplete"]
    (mount,) = doc.joints
    # include pose relative_to airframe: mount plate 0.1 forward, 0.06 below
    assert mount.child == "scout::gimbal::mount_plate" and np.allclose(mount.pose.translation, [0.1, 0, -0.06])
    assert sorted((f.severity, f.line) for f in doc.findings) == [("info", 9), ("info", 50)]
    assert any("'model://weather_mast' not found" in f.message for f in doc.findings)
    assert any("plane carries no volume" in f.message for f in doc.findings)
    assert doc.link("cart::chassis").inertial.auto and doc.link("cart::chassis").inertial.density == 600


def test_include_through_configured_model_paths(tmp_path):
    from linkcheck.geometry.resolve import SearchPaths

    make_model_dir(tmp_path / "elsewhere", "cam")
    (tmp_path / "w").mkdir()
    path = tmp_path / "w" / "t.sdf"
    path.write_text("<sdf version='1.9'><model name='m'><link name='base'/><include><uri>model://cam</uri></include></model></sdf>")
    assert read_sdf(path, search=SearchPaths(env={})).included == []
    doc = read_sdf(path, search=SearchPaths(model_paths=(tmp_path / "elsewhere",), env={}))
    assert [k.name for k in doc.included[0].links] == ["gadget::body"]


def test_duplicate_names_are_reported(tmp_path):
    doc = read("<link name='a'/><link name='a'/><frame name='a'/>", tmp_path)
    assert [k.name for k in doc.links] == ["a"]
    dup = [f for f in doc.findings if "already used" in f.message]
    assert len(dup) == 2 and all(f.severity == "error" for f in dup)


def test_static_models_mark_their_links(tmp_path):
    path = world(tmp_path, "<model name='ground'><static>true</static><link name='soil'/><model name='rock'><link name='r'/></model></model><model name='cart'><link name='c'/></model>")
    doc = read_sdf(path)
    # sdf/1.x/model.sdf <static>: the model never moves (its mass properties are unused)
    assert [(k.name, k.handle.static, k.static) for k in doc.links] == [
        ("ground::soil", True, True), ("ground::rock::r", True, True), ("cart::c", False, False)]


def test_same_model_included_twice_and_self_include(tmp_path):
    make_model_dir(tmp_path, "tree")
    path = world(
        tmp_path,
        "<include><uri>model://tree</uri><name>t1</name></include>"
        "<include><uri>model://tree</uri><name>t2</name><pose>2 0 0 0 0 0</pose></include>"
        "<include><uri>w.world</uri></include>",
    )
    doc = read_sdf(path)
    assert [[k.name for k in sub.links] for sub in doc.included] == [["t1::body"], ["t2::body"]]
    (f,) = doc.findings
    assert "includes itself" in f.message
