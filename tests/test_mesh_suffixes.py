"""One list of mesh suffixes: what the loaders read is what a PATH, the repository scan and the hooks treat as a mesh.

Outside references: the pre-commit hook manifest (its ``files`` regex selects what reaches the
command line), the README's Usage section, and real ``git`` for the repository scan.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import trimesh
import yaml

from helpers import run_linkcheck
from linkcheck import cli, paths, repo_scan
from linkcheck.geometry.mesh_io import LOADERS

ROOT = Path(__file__).resolve().parents[1]


def test_loaders_read_exactly_the_mesh_suffixes() -> None:
    assert sorted(LOADERS) == sorted(paths.MESH_SUFFIXES)
    assert len(set(paths.MESH_SUFFIXES)) == len(paths.MESH_SUFFIXES)
    assert all(s == s.lower() and s.startswith(".") for s in paths.MESH_SUFFIXES)


def test_command_line_and_repository_scan_use_the_one_list() -> None:
    assert cli.MESH_SUFFIXES is paths.MESH_SUFFIXES
    assert repo_scan.MESH_SUFFIXES is paths.MESH_SUFFIXES
    for suffix in paths.MESH_SUFFIXES:
        assert repo_scan.is_mesh(Path(f"meshes/part{suffix.upper()}"))


def test_hooks_select_every_mesh_and_description_suffix() -> None:
    hooks = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text())
    suffixes = (*paths.MESH_SUFFIXES, *repo_scan.DESCRIPTION_SUFFIXES)
    for hook in hooks:
        files = re.compile(hook["files"])
        for suffix in suffixes:
            for name in (f"robot/part{suffix}", f"robot/part{suffix.upper()}"):
                assert files.search(name), (hook["id"], name)
        assert not files.search("robot/notes.txt")


def test_readme_usage_lists_every_mesh_suffix() -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    usage = re.search(r"A mesh file \(([^)]*)\)", readme)
    assert usage, "README Usage lost its list of mesh suffixes"
    assert sorted(re.findall(r"`(\.[a-z]+)`", usage.group(1))) == sorted(paths.MESH_SUFFIXES)


def test_paths_module_stays_stdlib_only() -> None:
    probe = "import sys, linkcheck.paths; print(','.join(m for m in ('numpy', 'trimesh', 'lxml') if m in sys.modules))"
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, timeout=60, cwd=ROOT)
    assert out.returncode == 0 and out.stdout.strip() == "", out.stdout + out.stderr


# A link whose stated principal moments (1, 1, 3) break I1 + I2 >= I3 (true of every rigid body,
# handbook): the finding shows the description was checked when only its mesh was named.
URDF = """<robot name="cart"><link name="base">
  <inertial><mass value="2"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="3"/></inertial>
  <collision><geometry><mesh filename="meshes/body.{ext}"/></geometry></collision>
</link></robot>
"""


def test_ply_and_off_given_as_paths_select_their_descriptions(tmp_path: Path) -> None:
    subprocess.run(["git", "init", "-q", str(tmp_path)], check=True)
    (tmp_path / "meshes").mkdir()
    body = trimesh.creation.box((0.1, 0.2, 0.3))
    (tmp_path / "meshes" / "body.ply").write_bytes(trimesh.exchange.ply.export_ply(body))
    (tmp_path / "meshes" / "body.off").write_text(trimesh.exchange.off.export_off(body))
    for ext in ("ply", "off"):
        (tmp_path / f"cart_{ext}.urdf").write_text(URDF.format(ext=ext))
    p = run_linkcheck("--no-cache", "meshes/body.ply", "meshes/body.off", cwd=tmp_path)
    out = p.stdout + p.stderr
    assert "xml-malformed" not in out, out
    assert p.returncode == 1, out
    for ext in ("ply", "off"):
        assert re.search(rf"^cart_{ext}\.urdf:\d+ +base +error +inertia-triangle-inequality", p.stdout, re.M), out
