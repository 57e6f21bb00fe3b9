"""Mesh URI resolution.

Expected behaviour comes from the ROS and Gazebo conventions written up in the shared
FORMATS.md §1.5 (rospkg: a package is the folder whose package.xml <name> is NAME, not the
folder name; ament: <prefix>/share/NAME; resource_retriever hands file:// to libcurl) and
§1.5's note that Gazebo rewrites package:// to model:// resolved on its resource path.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from linkcheck.geometry.resolve import Resolution, SearchPaths, resolve_uri

NO_ENV = SearchPaths(env={})


def touch(path: Path, data: bytes = b"x") -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(data)
    return path


def package(folder: Path, name: str) -> Path:
    touch(folder / "package.xml", f"<?xml version='1.0'?>\n<package format='3'>\n  <name>{name}</name>\n</package>\n".encode())
    return folder


@pytest.fixture
def repo(tmp_path: Path) -> Path:
    root = tmp_path / "ws" / "repo"
    (root / ".git").mkdir(parents=True)
    return root


def test_relative_path_is_relative_to_the_description(tmp_path: Path) -> None:
    mesh = touch(tmp_path / "urdf" / "meshes" / "a.stl")
    res = resolve_uri("meshes/a.stl", tmp_path / "urdf", NO_ENV)
    assert res.path == mesh


def test_missing_relative_file_names_the_absolute_path(tmp_path: Path) -> None:
    res = resolve_uri("meshes/none.stl", tmp_path, NO_ENV)
    assert res.path is None
    assert str(tmp_path / "meshes" / "none.stl") in res.reason


def test_file_uri_absolute_and_localhost(tmp_path: Path) -> None:
    mesh = touch(tmp_path / "abs" / "b.stl")
    # file:///abs and file://localhost/abs are the two absolute forms of RFC 8089
    assert resolve_uri(f"file://{mesh}", tmp_path / "elsewhere", NO_ENV).path == mesh
    assert resolve_uri(f"file://localhost{mesh}", tmp_path / "elsewhere", NO_ENV).path == mesh


def test_file_uri_with_relative_path_reads_as_relative(tmp_path: Path) -> None:
    # DESIGN.md "real-world traps": file://meshes/x.stl is a relative path written as a file URI
    mesh = touch(tmp_path / "meshes" / "x.stl")
    assert resolve_uri("file://meshes/x.stl", tmp_path, NO_ENV).path == mesh


def test_percent_encoded_space(tmp_path: Path) -> None:
    mesh = touch(tmp_path / "my mesh.stl")
    assert resolve_uri("file://my%20mesh.stl", tmp_path, NO_ENV).path == mesh


def test_package_by_package_xml_name_not_folder_name(repo: Path) -> None:
    # rospkg: the package name is package.xml's <name>, the folder may be called anything
    pkg = package(repo / "desc_folder", "arm_description")
    mesh = touch(pkg / "meshes" / "base.stl")
    res = resolve_uri("package://arm_description/meshes/base.stl", pkg / "urdf", NO_ENV)
    assert res.path == mesh and res.note is None


def test_package_elsewhere_in_the_repository(repo: Path) -> None:
    desc = package(repo / "src" / "robot_description", "robot_description")
    meshes = package(repo / "src" / "nested" / "robot_meshes", "robot_meshes")
    mesh = touch(meshes / "m" / "link.dae")
    assert resolve_uri("package://robot_meshes/m/link.dae", desc / "urdf", NO_ENV).path == mesh


def test_package_in_a_sibling_repository(repo: Path) -> None:
    desc = package(repo / "robot_description", "robot_description")
    other = package(repo.parent / "other_repo" / "gripper", "gripper_meshes")
    mesh = touch(other / "meshes" / "finger.stl")
    assert resolve_uri("package://gripper_meshes/meshes/finger.stl", desc, NO_ENV).path == mesh


def test_empty_package_three_slashes(repo: Path) -> None:
    pkg = package(repo / "p", "cart")
    mesh = touch(pkg / "meshes" / "wheel.stl")
    assert resolve_uri("package:///cart/meshes/wheel.stl", pkg, NO_ENV).path == mesh


def test_package_path_option(tmp_path: Path) -> None:
    mesh = touch(tmp_path / "vendor" / "thing" / "meshes" / "a.stl")
    search = SearchPaths(package_paths={"thing": tmp_path / "vendor" / "thing"}, env={})
    res = resolve_uri("package://thing/meshes/a.stl", tmp_path / "desc", search)
    assert res.path == mesh


def test_ros_package_path_walks_for_package_xml(tmp_path: Path) -> None:
    root = tmp_path / "rpp"
    pkg = package(root / "deep" / "er" / "folder", "lidar_mount")
    mesh = touch(pkg / "meshes" / "mount.stl")
    search = SearchPaths(env={"ROS_PACKAGE_PATH": f"{tmp_path / 'nothing'}:{root}"})
    assert resolve_uri("package://lidar_mount/meshes/mount.stl", tmp_path / "d", search).path == mesh


def test_catkin_ignore_hides_a_package(tmp_path: Path) -> None:
    # rospkg stops at folders that hold CATKIN_IGNORE
    root = tmp_path / "rpp"
    pkg = package(root / "ignored" / "p", "hidden_pkg")
    touch(root / "ignored" / "CATKIN_IGNORE", b"")
    touch(pkg / "a.stl")
    search = SearchPaths(env={"ROS_PACKAGE_PATH": str(root)})
    assert resolve_uri("package://hidden_pkg/a.stl", tmp_path / "d", search).path is None


def test_ament_prefix_share(tmp_path: Path) -> None:
    # ament_index: get_package_share_directory(pkg) = <prefix>/share/<pkg>
    mesh = touch(tmp_path / "install" / "share" / "base_pkg" / "meshes" / "b.stl")
    search = SearchPaths(env={"AMENT_PREFIX_PATH": f"/nonexistent:{tmp_path / 'install'}"})
    assert resolve_uri("package://base_pkg/meshes/b.stl", tmp_path / "d", search).path == mesh


def test_folder_name_fallback_with_a_note(repo: Path) -> None:
    pkg = package(repo / "fancy_arm", "fancy_arm_v2")
    mesh = touch(pkg / "meshes" / "a.stl")
    res = resolve_uri("package://fancy_arm/meshes/a.stl", pkg / "urdf", NO_ENV)
    assert res.path == mesh
    assert res.note is not None and "folder name" in res.note and "fancy_arm_v2" in res.note


def test_unresolved_package_says_how_to_fix(repo: Path) -> None:
    res = resolve_uri("package://ghost/meshes/a.stl", repo, NO_ENV)
    assert res.path is None
    assert "--package-path ghost=DIR" in res.reason
    assert res.tried


def test_package_found_but_file_missing_lists_the_path(repo: Path) -> None:
    pkg = package(repo / "p", "here")
    res = resolve_uri("package://here/meshes/none.stl", pkg, NO_ENV)
    assert res.path is None
    assert any(str(pkg / "meshes" / "none.stl") in t for t in res.tried)


def test_model_uri_on_resource_path(tmp_path: Path) -> None:
    mesh = touch(tmp_path / "models" / "crate" / "meshes" / "crate.dae")
    for var in ("GZ_SIM_RESOURCE_PATH", "SDF_PATH", "IGN_GAZEBO_RESOURCE_PATH"):
        search = SearchPaths(env={var: str(tmp_path / "models")})
        assert resolve_uri("model://crate/meshes/crate.dae", tmp_path / "w", search).path == mesh
    search = SearchPaths(model_paths=(tmp_path / "models",), env={})
    assert resolve_uri("model://crate/meshes/crate.dae", tmp_path / "w", search).path == mesh


def test_model_uri_missing(tmp_path: Path) -> None:
    res = resolve_uri("model://nothing/m.dae", tmp_path, NO_ENV)
    assert res.path is None and "GZ_SIM_RESOURCE_PATH" in res.reason


def test_network_uris_are_never_fetched(tmp_path: Path) -> None:
    for uri in ("http://example.invalid/a.stl", "HTTPS://example.invalid/a.stl"):
        res = resolve_uri(uri, tmp_path, NO_ENV)
        assert res == Resolution(None, (), None, res.reason)
        assert "never fetched" in res.reason


def test_unknown_scheme(tmp_path: Path) -> None:
    res = resolve_uri("s3://bucket/a.stl", tmp_path, NO_ENV)
    assert res.path is None and "scheme" in res.reason


def test_dotdot_escaping_the_repository_resolves_only_real_files(repo: Path, tmp_path: Path) -> None:
    outside = touch(tmp_path / "shared_meshes" / "a.stl")
    desc = repo / "urdf"
    desc.mkdir()
    rel = "../../../shared_meshes/a.stl"
    assert resolve_uri(rel, desc, NO_ENV).path.resolve() == outside.resolve()
    missing = resolve_uri("../../../shared_meshes/none.stl", desc, NO_ENV)
    assert missing.path is None and "none.stl" in missing.reason
    # a folder is not a mesh file
    assert resolve_uri("../../../shared_meshes", desc, NO_ENV).path is None


# A package is a folder that exists (rospkg finds package.xml folders; ament_index_python raises
# PackageNotFoundError when <prefix>/share/NAME is not there, from memory). A guessed share/NAME or a
# --package-path folder that does not exist is no package, so the message must say how to point
# linkcheck at it, not that a found package lacks the file.


def test_ament_prefix_without_the_package_says_not_found(tmp_path: Path) -> None:
    prefix = tmp_path / "install"
    (prefix / "share" / "other_pkg").mkdir(parents=True)  # a real prefix, just not this package
    search = SearchPaths(env={"AMENT_PREFIX_PATH": f"/nonexistent/prefix:{prefix}"})
    res = resolve_uri("package://no_such_pkg/meshes/part.stl", tmp_path / "d", search)
    assert res.path is None
    assert "package 'no_such_pkg'" in res.reason and "not found" in res.reason
    assert "--package-path no_such_pkg=DIR" in res.reason and "has no file" not in res.reason
    assert any(str(prefix / "share" / "no_such_pkg") in t for t in res.tried)  # still listed as tried


def test_package_path_to_a_missing_folder_says_not_found(tmp_path: Path) -> None:
    search = SearchPaths(package_paths={"no_such_pkg": tmp_path / "nonexistent_dir"}, env={})
    res = resolve_uri("package://no_such_pkg/meshes/part.stl", tmp_path / "d", search)
    assert res.path is None
    assert "not found" in res.reason and "has no file" not in res.reason
    assert f"{tmp_path / 'nonexistent_dir'} does not exist" in res.reason
    assert "--package-path no_such_pkg=DIR" in res.reason


@pytest.mark.parametrize("how", ["ament", "package-path"])
def test_existing_package_folder_without_the_file_says_the_file_is_missing(tmp_path: Path, how: str) -> None:
    share = tmp_path / "install" / "share" / "base_pkg"
    touch(share / "meshes" / "other.stl")
    if how == "ament":
        search = SearchPaths(env={"AMENT_PREFIX_PATH": str(tmp_path / "install")})
    else:
        search = SearchPaths(package_paths={"base_pkg": share}, env={})
    res = resolve_uri("package://base_pkg/meshes/part.stl", tmp_path / "d", search)
    assert res.path is None
    assert "package 'base_pkg' has no file 'meshes/part.stl'" in res.reason and "not found" not in res.reason


def test_package_path_that_is_a_folder_is_not_a_regular_file(tmp_path: Path) -> None:
    pkg = tmp_path / "vendor" / "thing"
    (pkg / "meshes" / "part.stl").mkdir(parents=True)
    search = SearchPaths(package_paths={"thing": pkg}, env={})
    res = resolve_uri("package://thing/meshes/part.stl", tmp_path / "d", search)
    assert res.path is None
    assert f"{pkg / 'meshes' / 'part.stl'} is not a regular file" in res.reason


def test_folder_and_fifo_and_device_are_not_regular_files(tmp_path: Path) -> None:
    (tmp_path / "meshes" / "dir.stl").mkdir(parents=True)
    specials = ["meshes/dir.stl"]
    if hasattr(os, "mkfifo"):
        os.mkfifo(tmp_path / "meshes" / "pipe.stl")  # opening it for reading would block
        specials.append("meshes/pipe.stl")
    if Path("/dev/zero").exists():
        specials.append("/dev/zero")  # reading it never ends
    for uri in specials:
        res = resolve_uri(uri, tmp_path, NO_ENV)
        assert res.path is None
        assert "not a regular file" in res.reason and "no file at" not in res.reason, (uri, res.reason)
    missing = resolve_uri("meshes/none.stl", tmp_path, NO_ENV)
    assert missing.reason.startswith("no file at ")  # a plain miss keeps its wording
