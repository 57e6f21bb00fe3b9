"""Where linkcheck looks for files: descriptions under folders, configuration above them, search-path variables.

Light on purpose (stdlib only): the result cache builds its keys from these before any
checking code is imported.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

DESCRIPTION_SUFFIXES = (".urdf", ".sdf", ".world")
#: Mesh files linkcheck reads (the loaders in geometry/mesh_io.py); as a PATH they select their users.
MESH_SUFFIXES = (".stl", ".dae", ".obj", ".glb", ".gltf", ".ply", ".off")
#: Configuration file names, nearest folder first; in a folder the first name wins.
CONFIG_NAMES = ("linkcheck.toml", "pyproject.toml")
#: Environment variables that list ROS package folders and install prefixes (``package://``).
PACKAGE_PATH_VARS = ("ROS_PACKAGE_PATH", "AMENT_PREFIX_PATH")
#: Environment variables whose folders hold ``model://NAME`` models.
MODEL_PATH_VARS = ("GZ_SIM_RESOURCE_PATH", "SDF_PATH", "IGN_GAZEBO_RESOURCE_PATH", "GAZEBO_MODEL_PATH")


def display_path(path: Path) -> str:
    """A path as the user would type it: relative to the working folder when inside it (not
    resolved, so a symlinked copy keeps its own name)."""
    try:
        return Path(os.path.abspath(path)).relative_to(os.getcwd()).as_posix()
    except ValueError:
        return str(path)


def expand_paths(paths: list[Path]) -> list[Path]:
    """Files as given; folders searched for descriptions (sorted, hidden folders skipped)."""
    out: list[Path] = []
    for p in paths:
        if p.is_dir():
            found = [f for f in p.rglob("*") if f.is_file() and f.suffix.lower() in DESCRIPTION_SUFFIXES
                     and not any(part.startswith(".") for part in f.relative_to(p).parts)]
            out.extend(sorted(found))
        else:
            out.append(p)
    seen: set[Path] = set()
    return [p for p in out if not (p in seen or seen.add(p))]  # type: ignore[func-returns-value]


def config_candidates(folder: Path) -> Iterator[Path]:
    """Existing configuration files that may govern ``folder`` (an absolute path), nearest first."""
    for here in (folder, *folder.parents):
        for name in CONFIG_NAMES:
            candidate = here / name
            if candidate.is_file():
                yield candidate
