"""Text mesh formats with a byte that is not UTF-8 (a latin-1 comment or name from an older exporter).

trimesh decodes OBJ, OFF and glTF as UTF-8 and otherwise asks charset_normalizer, which linkcheck
does not depend on; PLY headers it decodes as strict UTF-8. linkcheck hands it UTF-8, reading
such bytes as latin-1 (where every byte is a character: ISO 8859-1 maps all 256). charset_normalizer
is blocked in every test here, so a test passes only when trimesh never needs it.

References named beside each check: trimesh's ``Trimesh.mass_properties`` on the same mesh read
from a UTF-8 copy of the file (the same numbers, only the comment byte differs), and the handbook
box (volume abc; moments m(b²+c²)/12 about the centre).
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import pytest
import trimesh

from linkcheck.geometry.mesh import mesh_estimate
from linkcheck.geometry.resolve import SearchPaths

NO_ENV = SearchPaths(env={})
LATIN1_NOTE = "Teil f\xfcr Greifer"  # "für": 0xFC alone is not UTF-8
SIDES = (0.3, 0.5, 0.7)


@pytest.fixture(autouse=True)
def _no_charset_normalizer(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setitem(sys.modules, "charset_normalizer", None)  # import now raises ImportError


def box() -> trimesh.Trimesh:
    mesh = trimesh.creation.box(SIDES)
    mesh.apply_translation((0.4, -1.2, 2.5))  # a non-trivial centre of mass
    return mesh


def estimate(path: Path):
    return mesh_estimate(path.name, path.parent, (1.0, 1.0, 1.0), NO_ENV, None)


def pair(tmp_path: Path, name: str, utf8: bytes, latin1: bytes) -> tuple[Path, Path]:
    """The file with the latin-1 byte, and its UTF-8 twin (the reference reads that one)."""
    assert b"\xfc" in latin1 and b"\xfc" not in utf8
    (tmp_path / "latin1").mkdir()
    (tmp_path / "utf8").mkdir()
    bad, good = tmp_path / "latin1" / name, tmp_path / "utf8" / name
    bad.write_bytes(latin1)
    good.write_bytes(utf8)
    return bad, good


def assert_same_as(est, ref: trimesh.Trimesh) -> None:
    assert est.solid is not None, [f.message for f in est.findings]
    assert not [f for f in est.findings if f.rule == "mesh-unavailable"]
    props = est.solid.props
    assert props.mass == pytest.approx(ref.volume, rel=1e-9)
    assert np.allclose(props.com, ref.center_mass, rtol=0, atol=1e-9)
    assert np.allclose(props.inertia, ref.moment_inertia, rtol=0, atol=1e-9 * np.abs(ref.moment_inertia).max())


def assert_handbook_box(est) -> None:
    a, b, c = SIDES
    props = est.solid.props
    assert props.mass == pytest.approx(a * b * c, rel=1e-6)  # unit density: mass = volume
    m = a * b * c
    expected = np.diag([m * (b * b + c * c), m * (a * a + c * c), m * (a * a + b * b)]) / 12
    assert np.allclose(props.inertia, expected, rtol=1e-6, atol=1e-12)


def test_obj_with_a_latin1_comment(tmp_path: Path) -> None:
    text = trimesh.exchange.obj.export_obj(box())
    bad, good = pair(tmp_path, "part.obj", text.encode(), f"# {LATIN1_NOTE}\n{text}".encode("latin-1"))
    ref = trimesh.load_mesh(good, process=False)
    est = estimate(bad)
    assert_same_as(est, ref)
    assert_handbook_box(est)


def test_off_with_a_latin1_comment(tmp_path: Path) -> None:
    text = trimesh.exchange.off.export_off(box())
    head, rest = text.split("\n", 1)  # the OFF keyword stays first
    bad, good = pair(tmp_path, "part.off", text.encode(), f"{head}\n# {LATIN1_NOTE}\n{rest}".encode("latin-1"))
    est = estimate(bad)
    assert_same_as(est, trimesh.load_mesh(good, process=False))
    assert_handbook_box(est)


def _ply_with_comment(data: bytes) -> bytes:
    first, fmt, rest = data.split(b"\n", 2)  # "ply", "format ...", the rest of the header and body
    return b"\n".join((first, fmt, b"comment " + LATIN1_NOTE.encode("latin-1"), rest))


@pytest.mark.parametrize("encoding", ["ascii", "binary"])
def test_ply_with_a_latin1_header_comment(tmp_path: Path, encoding: str) -> None:
    data = trimesh.exchange.ply.export_ply(box(), encoding=encoding)
    # the binary body must reach trimesh byte for byte: re-encoding it would change the coordinates
    assert encoding == "ascii" or not data.split(b"end_header\n", 1)[1].isascii()
    bad, good = pair(tmp_path, "part.ply", data, _ply_with_comment(data))
    est = estimate(bad)
    assert_same_as(est, trimesh.load_mesh(good, process=False))
    assert_handbook_box(est)


def test_gltf_with_a_latin1_generator_and_external_buffer(tmp_path: Path) -> None:
    files = trimesh.Scene(box()).export(file_type="gltf")  # {"model.gltf": ..., "gltf_buffer_*.bin": ...}
    name = next(n for n in files if n.endswith(".gltf"))
    tree = json.loads(files[name])
    tree["asset"]["generator"] = "@@"
    utf8 = json.dumps(tree).replace("@@", "x").encode()
    latin1 = json.dumps(tree).replace("@@", LATIN1_NOTE).encode("latin-1")  # a raw 0xFC byte, not an escape
    bad, good = pair(tmp_path, name, utf8, latin1)
    for folder in (bad.parent, good.parent):
        for other, data in files.items():
            if other != name:
                (folder / other).write_bytes(data)
    est = estimate(bad)
    ref = trimesh.load_scene(good, process=False).to_mesh()
    assert_same_as(est, ref)
    assert_handbook_box(est)


def test_ascii_stl_with_a_latin1_solid_name(tmp_path: Path) -> None:
    # linkcheck's own ASCII STL reader works on bytes: no decoding at all
    text = trimesh.exchange.stl.export_stl_ascii(box())
    body = text.split("\n", 1)[1]
    path = tmp_path / "part.stl"
    path.write_bytes(f"solid {LATIN1_NOTE}\n{body}".encode("latin-1"))
    est = estimate(path)
    assert est.solid is not None, [f.message for f in est.findings]
    assert_handbook_box(est)


def test_gltf_that_is_not_json_is_named_so(tmp_path: Path) -> None:
    # glTF 2.0 (Khronos spec): a .gltf file is a JSON document
    (tmp_path / "part.gltf").write_text("{not json")
    est = mesh_estimate("part.gltf", tmp_path)
    (finding,) = [f for f in est.findings if f.rule == "mesh-unavailable"]
    assert "not JSON" in finding.message
