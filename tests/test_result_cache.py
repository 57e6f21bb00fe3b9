"""The result cache: an unchanged file is answered from the store, any change is seen.

Physics reference for the cube model: a solid cuboid of sides a, b, c and mass m has
I_xx = m (b² + c²) / 12 about its centre (handbook formula, e.g. any rigid-body dynamics
text's table of moments of inertia), so a cube of side a has I = m a² / 6 about each axis.
The reference for every cached report is the same command run with ``--no-cache``.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
import trimesh

from linkcheck import reads, result_cache
from linkcheck.geometry import resolve
from linkcheck.cli import main
from linkcheck.config import clear_cache

MASS = 8.0
SIDE = 0.2
URDF = """<robot name="crate_rig">
  <link name="crate">
    <inertial><mass value="{m}"/><inertia ixx="{i}" ixy="0" ixz="0" iyy="{i}" iyz="0" izz="{i}"/></inertial>
    <collision><geometry><mesh filename="{mesh}"/></geometry></collision>
  </link>
</robot>
"""


def write_cube(path: Path, side: float) -> None:
    """A binary STL cube centred on the origin (12 triangles, so every side gives the same file size)."""
    path.write_bytes(trimesh.creation.box((side, side, side)).export(file_type="stl"))


@pytest.fixture
def crate(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A one-link crate whose stated tensor is the handbook cube's; the working folder is its folder."""
    monkeypatch.chdir(tmp_path)
    write_cube(tmp_path / "crate.stl", SIDE)
    path = tmp_path / "crate.urdf"
    path.write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="crate.stl"))
    return path


@pytest.fixture
def settled(monkeypatch: pytest.MonkeyPatch) -> None:
    """Files a test just wrote are brand new; let the caches trust their stamps anyway."""
    monkeypatch.setattr(reads, "RACY_SECONDS", -1e9)


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str]:
    """One command-line run, as a fresh process would see the configuration files and packages."""
    clear_cache()
    resolve._find_packages.cache_clear()
    code = main(["--format", "json", *args])
    return code, capsys.readouterr().out


def stored(cache: Path) -> list[Path]:
    return sorted((cache / f"results-v{result_cache.FORMAT_VERSION}").rglob("*.json"))


def rules(report: str) -> set[tuple[str, str]]:
    return {(f["rule"], f["severity"]) for e in json.loads(report)["files"] for f in e["findings"]}


def test_unchanged_file_is_answered_from_the_store(crate: Path, settled: None, private_cache: Path,
                                                   capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    reference = run(capsys, "--no-cache", str(crate))
    assert run(capsys, str(crate)) == reference  # computed, and stored
    (entry,) = stored(private_cache)
    assert str(crate.parent / "crate.stl") in json.loads(entry.read_bytes())["reads"]
    from linkcheck import runner

    monkeypatch.setattr(runner, "run_file", lambda *a, **k: pytest.fail("a stored result was recomputed"))
    assert run(capsys, str(crate)) == reference


@pytest.mark.parametrize("fmt", ["text", "json", "sarif", "github"])
def test_stored_report_reads_like_a_fresh_one(fmt: str, tmp_path: Path, settled: None, monkeypatch: pytest.MonkeyPatch,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    # the invented demo model, with findings of every severity; both runs from the same folder
    demo = Path(__file__).resolve().parents[1] / "fixtures" / "demo" / "harvester.urdf"
    monkeypatch.chdir(demo.parent)
    outputs = []
    for extra in (["--no-cache"], [], []):
        code = main(["--format", fmt, "--color", "never", *extra, str(demo)])
        outputs.append((code, capsys.readouterr().out))
    assert outputs[0][0] == 1 and outputs[0][1]
    assert outputs[1] == outputs[0] and outputs[2] == outputs[0]


def test_mesh_rewritten_to_the_same_size_is_seen(crate: Path, settled: None, capsys: pytest.CaptureFixture[str]) -> None:
    code, before = run(capsys, str(crate))
    assert code == 0 and not {r for r, sev in rules(before) if sev != "info"}
    size = (crate.parent / "crate.stl").stat().st_size
    write_cube(crate.parent / "crate.stl", 2 * SIDE)  # 4x the moments: stated/estimate = 1/4, outside [1/3, 3]
    assert (crate.parent / "crate.stl").stat().st_size == size
    code, after = run(capsys, str(crate))
    assert code == 1 and ("inertia-mismatch", "warning") in rules(after)
    assert (code, after) == run(capsys, "--no-cache", str(crate))


def test_description_and_configuration_changes_are_seen(crate: Path, settled: None, capsys: pytest.CaptureFixture[str]) -> None:
    crate.write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6 / 4, mesh="crate.stl"))  # stated 1/4 of the cube's
    assert ("inertia-mismatch", "warning") in rules(run(capsys, str(crate))[1])
    (crate.parent / "linkcheck.toml").write_text('ignore = ["inertia-mismatch"]\n')
    code, out = run(capsys, str(crate))
    assert code == 0 and "inertia-mismatch" not in {r for r, _ in rules(out)}
    (crate.parent / "linkcheck.toml").unlink()
    assert ("inertia-mismatch", "warning") in rules(run(capsys, str(crate))[1])
    assert ("inertia-mismatch", "warning") not in rules(run(capsys, "--ignore", "inertia-mismatch", str(crate))[1])


def test_unresolved_mesh_is_never_stored(tmp_path: Path, settled: None, private_cache: Path,
                                         monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(tmp_path)
    path = tmp_path / "crate.urdf"
    path.write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="meshes/crate.stl"))
    assert ("mesh-unavailable", "error") in rules(run(capsys, str(path))[1])
    assert stored(private_cache) == []
    (tmp_path / "meshes").mkdir()
    write_cube(tmp_path / "meshes" / "crate.stl", SIDE)  # the file the error asked for: now it is found
    assert run(capsys, str(path))[0] == 0


def test_fresh_inputs_are_not_trusted(crate: Path, private_cache: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # without the `settled` fixture the mesh was written a moment ago: its stamp could repeat
    # after a same-size rewrite on a coarse file-system clock, so nothing is stored yet
    run(capsys, str(crate))
    assert stored(private_cache) == []


def test_no_cache_and_fixes_neither_read_nor_store(crate: Path, settled: None, private_cache: Path,
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    crate.write_text(URDF.format(m=MASS, i=1.0, mesh="crate.stl"))  # far beyond any 8 kg body inside the cube
    run(capsys, "--no-cache", str(crate))
    run(capsys, "--diff", str(crate))
    assert stored(private_cache) == []
    assert ("inertia-exceeds-geometry", "error") in rules(run(capsys, str(crate))[1])
    assert len(stored(private_cache)) == 1
    assert main(["--fix", str(crate)]) == 1  # a fix judges the file itself, never the stored result
    capsys.readouterr()
    assert len(stored(private_cache)) == 1
    (link,) = json.loads(run(capsys, str(crate))[1])["files"][0]["links"]
    for k in range(3):
        assert link["stated"]["inertia"][k][k] == pytest.approx(MASS * SIDE**2 / 6, rel=1e-4)


def test_corrupt_or_foreign_entry_is_ignored(crate: Path, settled: None, private_cache: Path,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    reference = run(capsys, str(crate))
    (entry,) = stored(private_cache)
    good = json.loads(entry.read_bytes())
    damaged = [{**good, "key": "another"}, {**good, "entry": None}, {**good, "fail_on": "bogus"},
               {**good, "entry": {**good["entry"], "findings": "oops"}},
               {**good, "entry": {k: v for k, v in good["entry"].items() if k != "findings"}},
               {**good, "entry": {**good["entry"], "findings": [{"rule": "x", "severity": "bogus", "message": "", "line": 1}]}}]
    for garbage in (b"{not json", b"[]", *(json.dumps(d).encode() for d in damaged)):
        entry.write_bytes(garbage)
        assert run(capsys, str(crate)) == reference
        assert json.loads(entry.read_bytes()) == good  # rewritten whole


def test_a_mesh_shared_by_two_descriptions_is_recorded_for_both(crate: Path, settled: None,
                                                                capsys: pytest.CaptureFixture[str]) -> None:
    twin = crate.parent / "twin.urdf"
    twin.write_text(crate.read_text().replace("crate_rig", "twin_rig"))
    code, out = run(capsys, str(crate), str(twin))
    assert code == 0
    write_cube(crate.parent / "crate.stl", 2 * SIDE)
    report = json.loads(run(capsys, str(crate), str(twin))[1])
    for entry in report["files"]:  # the second file's mesh came from the in-process memo, and still counts
        assert ("inertia-mismatch", "warning") in {(f["rule"], f["severity"]) for f in entry["findings"]}, entry["path"]


def test_code_stamp_follows_the_source_files_and_the_libraries(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    (tmp_path / "src").mkdir()
    (tmp_path / "src" / "a.py").write_text("x = 1\n")
    monkeypatch.setattr(result_cache, "_PACKAGE_DIR", tmp_path / "src")
    monkeypatch.setattr(result_cache, "DEPENDENCIES", ("qa_meshreader",))
    monkeypatch.syspath_prepend(str(tmp_path / "site"))
    first = result_cache.code_stamp()
    assert result_cache.code_stamp() == first
    (tmp_path / "src" / "a.py").write_text("x = 22\n")  # an edited checkout is another linkcheck
    second = result_cache.code_stamp()
    assert second != first
    (tmp_path / "site" / "qa_meshreader").mkdir(parents=True)  # an optional reader gets installed
    (tmp_path / "site" / "qa_meshreader" / "__init__.py").write_text("")
    import importlib

    importlib.invalidate_caches()
    assert result_cache.code_stamp() != second


def test_symlinked_copy_finds_its_own_meshes(tmp_path: Path, settled: None, monkeypatch: pytest.MonkeyPatch,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(tmp_path)
    for folder, side in (("real", SIDE), ("other", 2 * SIDE)):
        (tmp_path / folder).mkdir()
        write_cube(tmp_path / folder / "crate.stl", side)
    (tmp_path / "real" / "crate.urdf").write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="crate.stl"))
    (tmp_path / "other" / "crate.urdf").symlink_to(tmp_path / "real" / "crate.urdf")
    for path in ("other/crate.urdf", "real/crate.urdf", "./real/crate.urdf", str(tmp_path / "real" / "crate.urdf")):
        assert run(capsys, path) == run(capsys, "--no-cache", path), path
    report = json.loads(run(capsys, "real/crate.urdf", "other/crate.urdf")[1])
    assert [e["path"] for e in report["files"]] == ["real/crate.urdf", "other/crate.urdf"]
    assert [("inertia-mismatch", "warning") in {(f["rule"], f["severity"]) for f in e["findings"]}
            for e in report["files"]] == [False, True]  # the 2x cube beside the link: 4x the moments


def test_a_mesh_that_failed_to_load_is_never_stored(crate: Path, settled: None, private_cache: Path,
                                                    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    from linkcheck.geometry import mesh, mesh_io

    def missing_reader(*args: object, **kwargs: object) -> None:
        raise mesh_io.MeshError("needs an optional package to read '.stl' (No module named 'qa_reader')")

    with monkeypatch.context() as patch:  # as if an optional reader were not installed yet
        patch.setattr(mesh, "load_triangles", missing_reader)
        assert ("mesh-unavailable", "error") in rules(run(capsys, "--no-cache", str(crate))[1])
        assert ("mesh-unavailable", "error") in rules(run(capsys, str(crate))[1])
    assert stored(private_cache) == []
    assert run(capsys, str(crate))[0] == 0


def test_gltf_buffers_are_part_of_both_caches(tmp_path: Path, settled: None, monkeypatch: pytest.MonkeyPatch,
                                              capsys: pytest.CaptureFixture[str]) -> None:
    # glTF 2.0 (Khronos spec): a .gltf's vertex data may live in a separate buffer file named by buffers[].uri
    monkeypatch.chdir(tmp_path)

    def export(side: float, suffix: str = "") -> None:
        for name, data in trimesh.creation.box((side, side, side)).export(file_type="gltf").items():
            if name.endswith(suffix):
                (tmp_path / name).write_bytes(data)

    export(SIDE)
    (tmp_path / "crate.urdf").write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="model.gltf"))
    assert [p.name for p in tmp_path.iterdir() if p.suffix == ".bin"], "the export keeps its buffer beside it"
    assert run(capsys, "crate.urdf")[0] == 0
    gltf = (tmp_path / "model.gltf").read_bytes()
    export(2 * SIDE, ".bin")  # the vertices change in the buffer only
    assert (tmp_path / "model.gltf").read_bytes() == gltf
    for args in (["crate.urdf"], ["--fail-on", "error", "crate.urdf"]):  # the second misses the result cache only
        after = run(capsys, *args)
        assert after == run(capsys, "--no-cache", *args)
        assert ("inertia-mismatch", "warning") in rules(after[1])


PROBE = """
import runpy, sys
sys.argv = ["linkcheck", "--format", "json", sys.argv[1]]
try:
    runpy.run_module("linkcheck", run_name="__main__")
except SystemExit as exc:
    code = exc.code
print("loaded:" + ",".join(m for m in ("numpy", "lxml", "trimesh", "linkcheck.runner") if m in sys.modules), file=sys.stderr)
"""


def test_stored_answer_needs_no_numpy(crate: Path, settled: None, capsys: pytest.CaptureFixture[str]) -> None:
    reference = run(capsys, str(crate))
    p = subprocess.run([sys.executable, "-c", PROBE, str(crate)], cwd=crate.parent, capture_output=True, text=True,
                       timeout=120, env=os.environ.copy())
    assert p.stdout == reference[1]
    assert p.stderr.strip().splitlines()[-1] == "loaded:"


def test_renaming_the_package_is_seen(tmp_path: Path, settled: None, monkeypatch: pytest.MonkeyPatch,
                                      capsys: pytest.CaptureFixture[str]) -> None:
    # REP 127 / package.xml format (ROS, from memory): <name> is the package's name that package:// URIs use
    pkg = tmp_path / "crate_description"
    (pkg / "meshes").mkdir(parents=True)
    (pkg / "package.xml").write_text("<package><name>crate_description</name></package>\n")
    write_cube(pkg / "meshes" / "crate.stl", SIDE)
    (pkg / "urdf").mkdir()
    path = pkg / "urdf" / "crate.urdf"
    path.write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="package://crate_description/meshes/crate.stl"))
    monkeypatch.chdir(tmp_path)
    (tmp_path / ".git").mkdir()  # the repository root bounds the package search
    before = run(capsys, str(path))
    assert before[0] == 0 and "geometry-note" not in before[1]
    (pkg / "package.xml").write_text("<package><name>pallet_description</name></package>\n")
    after = run(capsys, str(path))
    assert "geometry-note" in after[1]  # now found only by the folder's name, which an info says
    assert after == run(capsys, "--no-cache", str(path))


def test_a_file_appearing_at_an_earlier_search_step_is_seen(tmp_path: Path, settled: None, private_cache: Path,
                                                            monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    # README "Meshes": --package-path is searched before ROS_PACKAGE_PATH
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    monkeypatch.chdir(repo)
    workspace = tmp_path / "opt" / "robots" / "share" / "ws"  # deeper than the scans beside the repository
    ros = workspace / "crate_description"
    (ros / "meshes").mkdir(parents=True)
    (ros / "package.xml").write_text("<package><name>crate_description</name></package>\n")
    write_cube(ros / "meshes" / "crate.stl", SIDE)
    mine = repo / "vendor"
    mine.mkdir()
    monkeypatch.setenv("ROS_PACKAGE_PATH", str(workspace))
    path = repo / "crate.urdf"
    path.write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="package://crate_description/meshes/crate.stl"))
    args = ("--package-path", f"crate_description={mine}", str(path))
    assert run(capsys, *args)[0] == 0  # found on ROS_PACKAGE_PATH; the --package-path candidate is absent
    assert len(stored(private_cache)) == 1  # stored, the absent candidate with it
    (mine / "meshes").mkdir()
    write_cube(mine / "meshes" / "crate.stl", 2 * SIDE)  # now --package-path finds a cube of twice the side
    after = run(capsys, *args)
    assert ("inertia-mismatch", "warning") in rules(after[1])
    assert after == run(capsys, "--no-cache", *args)


def test_a_model_config_added_to_an_included_folder_is_seen(tmp_path: Path, settled: None, private_cache: Path,
                                                            monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    # SDFormat model folders: model.config names the model's SDF file; without it, model.sdf is used
    monkeypatch.chdir(tmp_path)
    parts = tmp_path / "parts"
    parts.mkdir()
    body = "<sdf version='1.9'><model name='{n}'><link name='{link}'/></model></sdf>"
    (parts / "model.sdf").write_text(body.format(n="crate", link="body"))
    (parts / "other.sdf").write_text(body.format(n="crate", link="lid"))
    world = tmp_path / "yard.sdf"
    world.write_text("<sdf version='1.9'><model name='yard'><link name='base'/>"
                     "<include><uri>parts</uri><name>crate</name></include>"
                     "<joint name='j' type='fixed'><parent>base</parent><child>crate::body</child></joint>"
                     "</model></sdf>")
    before = run(capsys, str(world))
    assert len(stored(private_cache)) == 1
    (parts / "model.config").write_text("<model><name>crate</name><sdf version='1.9'>other.sdf</sdf></model>")
    after = run(capsys, str(world))
    assert after == run(capsys, "--no-cache", str(world))
    assert after != before  # the joint's child crate::body is gone from other.sdf


def test_dot_dot_through_a_symlinked_folder_watches_the_mesh_the_kernel_finds(tmp_path: Path, settled: None,
                                                                              monkeypatch: pytest.MonkeyPatch,
                                                                              capsys: pytest.CaptureFixture[str]) -> None:
    # POSIX path resolution (from memory): "link/../x" follows the symlink first, then "..": it is not "x"
    real = tmp_path / "real" / "pkg"
    (real / "urdf").mkdir(parents=True)
    (real / "meshes").mkdir()
    write_cube(real / "meshes" / "crate.stl", SIDE)
    (real / "urdf" / "crate.urdf").write_text(URDF.format(m=MASS, i=MASS * SIDE**2 / 6, mesh="../meshes/crate.stl"))
    work = tmp_path / "work"
    (work / "meshes").mkdir(parents=True)
    write_cube(work / "meshes" / "crate.stl", SIDE)  # a decoy where the lexical "work/link/../meshes" points
    (work / "link").symlink_to(real / "urdf")
    monkeypatch.chdir(work)
    assert run(capsys, "link/crate.urdf")[0] == 0
    write_cube(real / "meshes" / "crate.stl", 2 * SIDE)
    after = run(capsys, "link/crate.urdf")
    assert ("inertia-mismatch", "warning") in rules(after[1])
    assert after == run(capsys, "--no-cache", "link/crate.urdf")


def test_a_fifo_named_like_a_description_is_refused_not_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                                             capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.chdir(tmp_path)
    os.mkfifo(tmp_path / "pipe.urdf")  # reading it would block until a writer comes
    assert main(["pipe.urdf"]) == 2
    assert "pipe.urdf: not a regular file" in capsys.readouterr().err
