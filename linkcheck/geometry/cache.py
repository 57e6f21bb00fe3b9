"""On-disk cache of mesh results, shared by concurrent hook processes.

Entries are keyed by the file's content hash, the scale, the loader and ``FORMAT_VERSION``,
so a changed mesh or a new release never reads an old result. Every write goes to a temporary
file in the same folder and is renamed into place (atomic on POSIX and Windows), so a reader
sees a whole entry or none; a corrupt or foreign entry is ignored and rebuilt. A small stat
index (size, mtime, inode per path) lets a warm run skip re-reading and re-hashing big meshes;
a file modified within ``reads.RACY_SECONDS`` of being indexed is always re-hashed.
"""

from __future__ import annotations

import json
import os
import time
from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

from linkcheck import reads

#: Bump when the meaning of a cached payload changes.
FORMAT_VERSION = 3  # 2: closed meshes with one of several bodies inside-out are re-oriented per body; 3: by exact nesting


def default_directory(env: dict[str, str] | None = None) -> Path:
    """``$XDG_CACHE_HOME/linkcheck`` (``~/.cache/linkcheck`` when unset), or ``$LINKCHECK_CACHE_DIR``."""
    env = os.environ if env is None else env
    if env.get("LINKCHECK_CACHE_DIR"):
        return Path(env["LINKCHECK_CACHE_DIR"])
    base = env.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "linkcheck"


#: Cache files not rewritten for this long are deleted (a hot entry is merely recomputed once).
PRUNE_AFTER_DAYS = 60
_PRUNE_EVERY_SECONDS = 86400.0


def prune(directory: Path, now: float | None = None) -> int:
    """Delete linkcheck's cache files older than ``PRUNE_AFTER_DAYS``, at most once a day; how many went.

    Keeps the folder from growing forever (every edit of a description stores a new result).
    Only files inside linkcheck's own ``*-vN`` folders are touched; errors are silent.
    """
    now = time.time() if now is None else now
    marker = Path(directory) / ".pruned"
    try:
        if now - marker.stat().st_mtime < _PRUNE_EVERY_SECONDS:
            return 0
    except FileNotFoundError:
        pass
    except OSError:
        return 0
    try:
        marker.parent.mkdir(parents=True, exist_ok=True)
        marker.touch()
        os.utime(marker, (now, now))
        folders = [d for d in Path(directory).iterdir() if d.is_dir() and d.name.rpartition("-v")[2].isdigit()]
    except OSError:
        return 0
    cutoff, removed = now - PRUNE_AFTER_DAYS * 86400.0, 0
    for folder in folders:
        for root, _, files in os.walk(folder):
            for name in files:
                path = os.path.join(root, name)
                try:
                    if os.stat(path).st_mtime < cutoff:
                        os.unlink(path)
                        removed += 1
                except OSError:
                    pass
    return removed


def content_digest(data: bytes) -> str:
    """Hash of a mesh's bytes: SHA-1 is the fastest here (SHA-NI); collisions are not a threat model for a cache."""
    import hashlib

    return hashlib.sha1(data).hexdigest()


def short_digest(text: bytes) -> str:
    """Hash for cache keys, file names and small files, by the builtin BLAKE2 (hashlib's import loads
    OpenSSL, ~3 ms of every run, for nothing a cache key needs)."""
    try:
        from _blake2 import blake2b
    except ImportError:  # not CPython
        from hashlib import blake2b
    return blake2b(text, digest_size=20).hexdigest()


class MeshCache:
    """Mesh results by content; every failure to read or write the cache is silent (it is only a cache)."""

    def __init__(self, directory: Path | None = None) -> None:
        self.directory = Path(directory) if directory is not None else default_directory()
        self._entries = self.directory / f"meshes-v{FORMAT_VERSION}"
        self._index = self.directory / f"stat-v{FORMAT_VERSION}"

    # --- content hashes, via the stat index
    def digest(self, path: Path) -> tuple[str, bytes | None]:
        """Content hash of ``path``, and its bytes if they had to be read (None: known from the index).

        Raises OSError when the file cannot be read.
        """
        path = Path(path)
        stamp = reads.stamp(path)
        if stamp is None:
            os.stat(path)  # raises the OSError that says why
        index_file = self._index / (short_digest(str(path.resolve()).encode()) + ".json")
        known = read_json(index_file)
        if (
            isinstance(known, dict)
            and known.get("stamp") == stamp
            and isinstance(known.get("digest"), str)
            and isinstance(known.get("indexed_ns"), int)
            and reads.settled(stamp, known["indexed_ns"])
        ):
            return known["digest"], None
        data = path.read_bytes()
        digest = content_digest(data)
        write_json(index_file, {"stamp": stamp, "digest": digest, "indexed_ns": time.time_ns()})
        return digest, data

    @staticmethod
    def key(digest: str, scale: tuple[float, float, float], loader: str) -> str:
        text = f"{FORMAT_VERSION}|{digest}|{loader}|{','.join(repr(float(s)) for s in scale)}"
        return short_digest(text.encode())

    # --- entries
    def get(self, key: str) -> dict[str, Any] | None:
        payload = read_json(self._entries / key[:2] / f"{key}.json")
        if not isinstance(payload, dict) or payload.get("version") != FORMAT_VERSION or payload.get("key") != key:
            return None
        return payload

    def put(self, key: str, payload: dict[str, Any]) -> None:
        write_json(self._entries / key[:2] / f"{key}.json", {**payload, "version": FORMAT_VERSION, "key": key})


def read_json(path: Path) -> Any:
    try:
        with open(path, "rb") as fh:
            return json.loads(fh.read())
    except (OSError, ValueError):
        return None


def write_json(path: Path, payload: dict[str, Any]) -> None:
    import tempfile  # only writers pay for it (it pulls in shutil and random)

    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".json", dir=path.parent)
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(json.dumps(payload, allow_nan=False).encode())
            os.replace(tmp, path)
        except BaseException:
            try:
                os.unlink(tmp)
            except OSError:
                pass
            raise
    except (OSError, ValueError, TypeError):
        pass
