"""Map a changed mesh back to the descriptions that use it, so a mesh-only commit is rechecked.

pre-commit passes only the changed files; a commit that touches only a mesh would
otherwise never recheck the URDF whose stated inertia depends on it. The scan reads
the repository's descriptions, keeps the mesh references whose file name matches
(a cheap text test first), and resolves them with the checker's own URI rules, so a
reference counts exactly when the checker would load that very file.
"""

from __future__ import annotations

import os
import re
import subprocess
from functools import lru_cache
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from linkcheck.paths import MESH_SUFFIXES

if TYPE_CHECKING:
    from linkcheck.geometry.resolve import SearchPaths

DESCRIPTION_SUFFIXES = (".urdf", ".sdf", ".world", ".xacro")
#: Folders a walk skips besides hidden ones: build trees and environments, never sources.
SKIP_DIRS = frozenset({"build", "install", "devel", "log", "node_modules", "__pycache__", "site-packages",
                       "venv", "dist"})

_REFERENCE = re.compile(r"""\bfilename\s*=\s*(["'])(.*?)\1|<uri>\s*([^<]*?)\s*</uri>""", re.S)
_FIND = re.compile(r"^\$\(find\s+([^)\s]+)\)/?")


def find_repo_root(path: Path) -> Path | None:
    """The nearest folder at or above ``path`` holding ``.git`` (folder or worktree file)."""
    here = Path(path).resolve()
    if not here.is_dir():
        here = here.parent
    for folder in (here, *here.parents):
        if (folder / ".git").exists():
            return folder
    return None


def is_mesh(path: Path) -> bool:
    return path.suffix.lower() in MESH_SUFFIXES


def is_description(path: Path) -> bool:
    return path.suffix.lower() in DESCRIPTION_SUFFIXES


@lru_cache(maxsize=8)
def description_files(repo_root: Path) -> tuple[Path, ...]:
    """Descriptions in the repository: git's tracked and unignored files, else a pruned walk."""
    root = Path(repo_root).resolve()
    names = _git_files(root)
    if names is None:
        names = _walk(root)
    return tuple(sorted(p for p in (root / n for n in names) if is_description(p) and p.is_file()))


def _git_files(root: Path) -> list[str] | None:
    if not (root / ".git").exists():
        return None
    try:
        out = subprocess.run(
            ["git", "-C", str(root), "ls-files", "-z", "--cached", "--others", "--exclude-standard"],
            capture_output=True, check=True, timeout=60,
        ).stdout
    except (OSError, subprocess.SubprocessError):
        return None
    return sorted({os.fsdecode(n) for n in out.split(b"\0") if n})


def _walk(root: Path) -> list[str]:
    found: list[str] = []
    for folder, dirs, files in os.walk(root):
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and d not in SKIP_DIRS)
        rel = Path(folder).relative_to(root)
        found.extend(str(rel / f) for f in files if f.lower().endswith(DESCRIPTION_SUFFIXES))
    return found


def references(text: str) -> list[str]:
    """Every ``filename="..."`` and ``<uri>...</uri>`` value, with ``$(find pkg)`` as ``package://pkg/``.

    Values built from xacro expressions (``${...}``, ``$(arg ...)``) cannot be resolved
    without expanding the xacro and are left out.
    """
    out = []
    for m in _REFERENCE.finditer(text):
        value = (m.group(2) if m.group(2) is not None else m.group(3) or "").strip()
        value = _FIND.sub(lambda f: f"package://{f.group(1)}/", value)
        if value and "${" not in value and "$(" not in value:
            out.append(value)
    return out


def _key(path: Path) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except OSError:
        return None
    return st.st_dev, st.st_ino


def _leaf(uri: str) -> str:
    return uri.replace("\\", "/").rstrip("/").rsplit("/", 1)[-1].lower()


def descriptions_using(mesh: Path, repo_root: Path | None, search: SearchPaths | None = None) -> list[Path]:
    """The descriptions in ``repo_root`` that reference ``mesh`` (the same file), sorted.

    A xacro that includes a file which uses the mesh uses it too, transitively. A mesh
    nobody references gives an empty list. Without a root (not in git), the working
    directory is scanned.
    """
    return descriptions_using_any([mesh], repo_root, search)


def descriptions_using_any(meshes: Iterable[Path], repo_root: Path | None,
                           search: SearchPaths | None = None) -> list[Path]:
    """Like descriptions_using for several meshes at once: one pass over the repository."""
    from linkcheck.geometry.resolve import resolve_uri

    frontier = [Path(m) for m in meshes]
    if repo_root is None:
        repo_root = next((r for r in map(find_repo_root, frontier) if r is not None), Path.cwd())
    targets = {k for k in map(_key, frontier) if k is not None}
    texts: dict[Path, str] = {}
    for f in description_files(Path(repo_root).resolve()):
        try:
            texts[f] = f.read_bytes().decode("utf-8", errors="replace")
        except OSError:
            continue
    users: list[Path] = []
    while frontier and targets:
        leaves = {p.name.lower() for p in frontier}
        found = []
        for f, text in texts.items():
            if f in users or _key(f) in targets:
                continue
            lowered = text.lower()
            if not any(leaf in lowered for leaf in leaves):
                continue
            for uri in references(text):
                if _leaf(uri) not in leaves:
                    continue
                resolved = resolve_uri(uri, f.parent, search).path
                if resolved is not None and _key(resolved) in targets:
                    found.append(f)
                    break
        users.extend(found)
        targets |= {k for k in map(_key, found) if k is not None}
        frontier = found
    return sorted(users)


def clear_cache() -> None:
    """Forget the file lists (long-lived callers whose repository changed)."""
    description_files.cache_clear()
