"""Turn mesh URIs (relative, file://, package://, model://) into local files, offline.

No ROS installation is needed: ``package://NAME`` is found the way the ROS tools find it
(a ``package.xml`` whose ``<name>`` is NAME), searched near the description first, then in
folders the user names, then on the ROS environment paths. Network URIs are never fetched.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from urllib.parse import unquote

from linkcheck import reads
from linkcheck.paths import MODEL_PATH_VARS

#: Bounds of the folder walks: a description in a home folder must not trigger a disk scan.
_MAX_DIRS = 4000
_SKIP_DIRS = {"node_modules", "build", "install", "log", "__pycache__", "site-packages"}
_NAME_RE = re.compile(rb"<name>\s*([^<\s]+)\s*</name>")


@dataclass(frozen=True)
class SearchPaths:
    """Where to look besides the description's own folder.

    ``package_paths`` maps a package name to its folder (``--package-path NAME=DIR`` and
    config); ``model_paths`` are extra ``model://`` roots. ``env`` is the environment to read
    (``None``: ``os.environ``), so tests and callers can pin it.
    """

    package_paths: dict[str, Path] = field(default_factory=dict)
    model_paths: tuple[Path, ...] = ()
    env: dict[str, str] | None = None

    def _env(self, name: str) -> list[Path]:
        value = (os.environ if self.env is None else self.env).get(name, "")
        return [Path(p) for p in value.split(os.pathsep) if p]


@dataclass(frozen=True)
class Resolution:
    """Where a URI led: ``path`` (an existing file) or None; ``tried`` says what was looked at.

    ``note`` is information worth an info finding (e.g. a package found only by folder name);
    ``reason`` says why nothing resolved.
    """

    path: Path | None
    tried: tuple[str, ...] = ()
    note: str | None = None
    reason: str | None = None


def resolve_uri(uri: str, base_dir: Path, search: SearchPaths | None = None) -> Resolution:
    """Resolve ``uri`` as written in a description whose folder is ``base_dir``."""
    found = _resolve(uri, base_dir, search or SearchPaths())
    if found.path is None:
        reads.note_incomplete()
    else:
        reads.note(found.path)
    return found


def _resolve(uri: str, base_dir: Path, search: SearchPaths) -> Resolution:
    uri = uri.strip()
    base_dir = Path(base_dir)
    low = uri.lower()
    if low.startswith(("http://", "https://", "ftp://")):
        return Resolution(None, (), None, f"network URI '{uri}' is never fetched: use a local path or package:// URI")
    if low.startswith("package://"):
        rest = uri[len("package://") :].lstrip("/")
        name, _, sub = rest.partition("/")
        return _resolve_package(uri, name, sub, base_dir, search)
    if low.startswith("model://"):
        rest = uri[len("model://") :].lstrip("/")
        name, _, sub = rest.partition("/")
        return _resolve_model(uri, name, sub, base_dir, search)
    if low.startswith("file://"):
        rest = uri[len("file://") :]
        if rest.startswith("localhost/"):
            rest = rest[len("localhost") :]
        # file:///abs is absolute; file://meshes/x.stl is read as a relative path, as common loaders do
        return _resolve_plain(uri, rest, base_dir)
    if re.match(r"^[a-zA-Z][a-zA-Z0-9+.-]+://", uri):
        return Resolution(None, (), None, f"unsupported URI scheme in '{uri}'")
    return _resolve_plain(uri, uri, base_dir)


def _resolve_plain(uri: str, path_text: str, base_dir: Path) -> Resolution:
    if not path_text:
        return Resolution(None, (), None, f"empty mesh path in '{uri}'")
    tried: list[str] = []
    for text in dict.fromkeys((path_text, unquote(path_text))):
        candidate = Path(text)
        if not candidate.is_absolute():
            candidate = base_dir / candidate
        tried.append(str(candidate))
        reads.note(candidate)
        if candidate.is_file():
            return Resolution(candidate, tuple(tried))
    for text in tried:
        if Path(text).exists():  # a folder, FIFO or device: opening it would hang or fail
            return Resolution(None, tuple(tried), None, f"{text} is not a regular file")
    return Resolution(None, tuple(tried), None, f"no file at {tried[0]}{_case_hint(Path(tried[0]))}")


def _case_hint(missing: Path) -> str:
    """Names a file that differs from ``missing`` only in letter case (CAD exports write .STL; Linux minds)."""
    try:
        near = [p.name for p in missing.parent.iterdir() if p.name.lower() == missing.name.lower() and p.name != missing.name]
    except OSError:
        return ""
    return f" (there is '{near[0]}': file names are case-sensitive)" if near else ""


def _resolve_package(uri: str, name: str, sub: str, base_dir: Path, search: SearchPaths) -> Resolution:
    if not name:
        return Resolution(None, (), None, f"no package name in '{uri}'")
    tried: list[str] = []

    seen: set[Path] = set()
    misses: list[Path] = []  # in a package folder that exists: the package is there, the file is not
    irregular: list[Path] = []  # there, but a folder, FIFO or device
    absent: list[Path] = []  # folders named by --package-path that do not exist

    def attempt(folder: Path, how: str) -> Path | None:
        candidate = folder / unquote(sub) if sub else folder
        if candidate in seen:
            return None
        seen.add(candidate)
        tried.append(f"{candidate} ({how})")
        reads.note(candidate)
        if candidate.is_file():
            return candidate
        if not folder.is_dir():  # a guessed <prefix>/share/NAME or a mistyped folder: no package there
            if how == "--package-path":
                absent.append(folder)
        elif candidate.exists():
            irregular.append(candidate)
        else:
            misses.append(candidate)
        return None

    root = _project_root(base_dir)
    for folder in _ancestors_until(base_dir, root):
        if _package_name(folder) == name and (hit := attempt(folder, "package.xml above the description")):
            return Resolution(hit, tuple(tried))
    for folder in _find_packages(str(root), 4).get(name, ()):
        if hit := attempt(Path(folder), "package.xml in the project"):
            return Resolution(hit, tuple(tried))
    parent = root.parent
    if parent != root:
        for folder in _find_packages(str(parent), 3, str(root)).get(name, ()):
            if hit := attempt(Path(folder), "package.xml beside the project"):
                return Resolution(hit, tuple(tried))
    if name in search.package_paths and (hit := attempt(Path(search.package_paths[name]), "--package-path")):
        return Resolution(hit, tuple(tried))
    for entry in search._env("ROS_PACKAGE_PATH"):
        for folder in _find_packages(str(entry), 5).get(name, ()):
            if hit := attempt(Path(folder), "ROS_PACKAGE_PATH"):
                return Resolution(hit, tuple(tried))
    for prefix in search._env("AMENT_PREFIX_PATH"):
        if hit := attempt(prefix / "share" / name, "AMENT_PREFIX_PATH"):
            return Resolution(hit, tuple(tried))
    for folder in (base_dir, *base_dir.parents):
        if folder.name == name and (hit := attempt(folder, "folder named like the package")):
            declared = _package_name(folder)
            why = f"its package.xml declares '{declared}'" if declared else "it has no package.xml"
            note = f"package '{name}' found by folder name at {folder} ({why})"
            return Resolution(hit, tuple(tried), note)
    given = f" (--package-path folder {absent[0]} does not exist)" if absent else ""
    reason = (
        f"package '{name}' of '{uri}' not found{given}; point linkcheck at it with "
        f"--package-path {name}=DIR (or ROS_PACKAGE_PATH)"
    )
    if irregular:
        reason = f"package '{name}': {irregular[0]} is not a regular file"
    elif misses:  # the package is there; the file is not
        reason = f"package '{name}' has no file '{unquote(sub)}'{_case_hint(misses[0])}"
    if not tried:
        tried.append(f"no package.xml named '{name}' under {root} or beside it")
    return Resolution(None, tuple(tried), None, reason)


def _resolve_model(uri: str, name: str, sub: str, base_dir: Path, search: SearchPaths) -> Resolution:
    if not name:
        return Resolution(None, (), None, f"no model name in '{uri}'")
    tried: list[str] = []
    roots = list(search.model_paths)
    for var in MODEL_PATH_VARS:
        roots.extend(search._env(var))
    for root in roots:
        candidate = Path(root) / name / unquote(sub)
        tried.append(str(candidate))
        reads.note(candidate)
        if candidate.is_file():
            return Resolution(candidate, tuple(tried))
    # Gazebo rewrites package:// to model://, so a ROS package of that name is the same thing.
    found = _resolve_package(f"package://{name}/{sub}", name, sub, base_dir, search)
    if found.path is not None:
        return Resolution(found.path, (*tried, *found.tried), found.note)
    reason = (
        f"model '{name}' of '{uri}' not found; add its parent folder to GZ_SIM_RESOURCE_PATH "
        f"or the linkcheck model paths"
    )
    return Resolution(None, (*tried, *found.tried), None, reason)


def _project_root(start: Path) -> Path:
    """The repository root (a folder with .git), else the outermost package folder, else ``start``."""
    start = start.resolve() if start.exists() else start
    outer_package = None
    for folder in (start, *start.parents):
        if (folder / ".git").exists():
            return folder
        if (folder / "package.xml").is_file():
            outer_package = folder
    return outer_package or start


def _ancestors_until(start: Path, root: Path) -> list[Path]:
    start = start.resolve() if start.exists() else start
    out = []
    for folder in (start, *start.parents):
        out.append(folder)
        if folder == root:
            break
    return out


def _package_name(folder: Path) -> str | None:
    reads.note(folder / "package.xml")  # renaming a package, or adding one, must change the answer
    try:
        with open(folder / "package.xml", "rb") as fh:
            head = fh.read(65536)
    except OSError:
        return None
    match = _NAME_RE.search(head)
    return match.group(1).decode("utf-8", "replace") if match else None


@lru_cache(maxsize=64)
def _find_packages(root: str, depth: int, skip: str | None = None) -> dict[str, tuple[str, ...]]:
    """Package name -> folders under ``root`` (bounded walk; rospkg's ignore markers honoured)."""
    found: dict[str, list[str]] = {}
    queue = [(Path(root), 0)]
    visited = 0
    while queue and visited < _MAX_DIRS:
        folder, level = queue.pop(0)
        visited += 1
        try:
            names = set(os.listdir(folder))
        except OSError:
            continue
        if "CATKIN_IGNORE" in names or "COLCON_IGNORE" in names or "AMENT_IGNORE" in names:
            continue
        if "package.xml" in names:
            name = _package_name(folder)
            if name:
                found.setdefault(name, []).append(str(folder))
        elif "manifest.xml" in names:
            found.setdefault(folder.name, []).append(str(folder))
        if level >= depth or "rospack_nosubdirs" in names:
            continue
        for child in sorted(names):
            if child.startswith(".") or child in _SKIP_DIRS:
                continue
            path = folder / child
            if skip is not None and str(path) == skip:
                continue
            if path.is_dir():
                queue.append((path, level + 1))
    return {k: tuple(v) for k, v in found.items()}
