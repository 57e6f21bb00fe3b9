"""Mesh -> the descriptions that use it, through the checker's own URI resolution.

Outside references: real ``git`` (ls-files honours .gitignore, git-scm docs of
ls-files --others --exclude-standard); ROS package:// and ``$(find pkg)``
conventions (FORMATS.md §1.5, xacro's substitution args); the file identity test is
os.path.samefile (Python docs), so a same-named mesh elsewhere never counts.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

import pytest

from linkcheck.geometry.resolve import SearchPaths
from linkcheck.repo_scan import clear_cache, descriptions_using, descriptions_using_any, find_repo_root, references

PINNED = SearchPaths(env={})


@pytest.fixture(autouse=True)
def _fresh() -> None:
    clear_cache()


def write(path: Path, text: str | bytes) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    (path.write_bytes if isinstance(text, bytes) else path.write_text)(text)  # type: ignore[operator]
    return path


def urdf(mesh_uri: str) -> str:
    return (f"<robot name='r'><link name='a'><collision><geometry>"
            f"<mesh filename=\"{mesh_uri}\"/></geometry></collision></link></robot>\n")


def make_repo(root: Path, git: bool) -> dict[str, Path]:
    p = {
        "mesh": write(root / "demo_bot/meshes/arm.stl", b"solid x\nendsolid x\n"),
        "twin": write(root / "other/meshes/arm.stl", b"solid y\nendsolid y\n"),
        "pkg": write(root / "demo_bot/package.xml", "<package><name>demo_bot</name></package>\n"),
        "relative": write(root / "demo_bot/urdf/relative.urdf", urdf("../meshes/arm.stl")),
        "package": write(root / "demo_bot/urdf/package.urdf", urdf("package://demo_bot/meshes/arm.stl")),
        "twin_user": write(root / "other/urdf/twin.urdf", urdf("../meshes/arm.stl")),
        "sdf": write(root / "demo_bot/models/arm/model.sdf",
                     "<sdf version='1.9'><model name='m'><link name='l'><collision name='c'><geometry><mesh>"
                     "<uri>\n  ../../meshes/arm.stl\n</uri></mesh></geometry></collision></link></model></sdf>\n"),
        "macro": write(root / "demo_bot/urdf/arm.xacro",
                       "<robot xmlns:xacro='http://www.ros.org/wiki/xacro'><xacro:macro name='arm'>"
                       "<mesh filename='$(find demo_bot)/meshes/arm.stl'/></xacro:macro></robot>\n"),
        "top": write(root / "demo_bot/urdf/robot.urdf.xacro",
                     "<robot xmlns:xacro='http://www.ros.org/wiki/xacro'>"
                     "<xacro:include filename='$(find demo_bot)/urdf/arm.xacro'/><xacro:arm/></robot>\n"),
        "expr": write(root / "demo_bot/urdf/expr.xacro", urdf("package://demo_bot/meshes/${name}.stl")),
        "unused": write(root / "demo_bot/meshes/spare.STL", b"solid z\nendsolid z\n"),
        "ignored": write(root / "build/generated.urdf", urdf("../demo_bot/meshes/arm.stl")),
        "hidden": write(root / ".cache/copy.urdf", urdf("../demo_bot/meshes/arm.stl")),
    }
    if git:
        write(root / ".gitignore", "build/\n.cache/\n")
        env = {**os.environ, "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_NOSYSTEM": "1"}
        subprocess.run(["git", "init", "-q", str(root)], check=True, env=env)
    return p


@pytest.mark.parametrize("git", [True, False], ids=["git", "walk"])
def test_finds_every_user_and_only_users_of_that_file(tmp_path: Path, git: bool) -> None:
    p = make_repo(tmp_path / "repo", git)
    users = descriptions_using(p["mesh"], tmp_path / "repo", PINNED)
    expected = sorted(p[k].resolve() for k in ("relative", "package", "sdf", "macro", "top"))
    assert users == expected  # not the same-named twin, not build/ or hidden folders, not ${...}


def test_unused_mesh_gives_nothing(tmp_path: Path) -> None:
    p = make_repo(tmp_path / "repo", True)
    assert descriptions_using(p["unused"], tmp_path / "repo", PINNED) == []


def test_several_meshes_in_one_pass(tmp_path: Path) -> None:
    p = make_repo(tmp_path / "repo", True)
    users = descriptions_using_any([p["twin"], p["unused"]], tmp_path / "repo", PINNED)
    assert users == [p["twin_user"].resolve()]


def test_upper_case_extension_is_matched(tmp_path: Path) -> None:
    mesh = write(tmp_path / "r/meshes/Base.STL", b"solid\nendsolid\n")
    user = write(tmp_path / "r/robot.URDF", urdf("meshes/Base.STL"))
    assert descriptions_using(mesh, tmp_path / "r", PINNED) == [user.resolve()]


def test_find_repo_root(tmp_path: Path) -> None:
    make_repo(tmp_path / "repo", True)
    assert find_repo_root(tmp_path / "repo/demo_bot/urdf/relative.urdf") == (tmp_path / "repo").resolve()
    assert find_repo_root(tmp_path / "repo/demo_bot") == (tmp_path / "repo").resolve()
    # no repository above tmp_path/plain (pytest's tmp folders are outside any checkout)
    write(tmp_path / "plain/x.urdf", "<robot/>")
    assert find_repo_root(tmp_path / "plain/x.urdf") is None


def test_references_reads_attributes_and_uris() -> None:
    text = ("<mesh filename = 'a.stl'/><uri> model://m/b.dae </uri>"
            "<mesh filename=\"$(find p)/c.obj\"/><mesh filename='$(arg x)/d.stl'/>")
    assert references(text) == ["a.stl", "model://m/b.dae", "package://p/c.obj"]
