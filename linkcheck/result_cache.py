"""Whole-file check results, reused while nothing they were computed from has changed.

A pre-commit hook re-checks the same descriptions many times a day. The key holds the
description's path and content hash, the command line's settings, the content of every
configuration file that may apply, the working folder, the search-path environment and
linkcheck's own version and source files; the entry lists every other file the check read
(meshes, included models, the package.xml that resolved a URI: see :mod:`linkcheck.reads`)
with its stat stamp. While all of that holds, the stored report entry is the answer and no
mesh is opened (numpy is not even imported). Not stored: a check that could not resolve a
reference (adding the file must change the answer), a fix run, and a check whose inputs
were modified within ``reads.RACY_SECONDS`` of it (a same-size rewrite could keep its stamp).
Entries sit beside the mesh cache and share its atomic writes and silent failures."""

from __future__ import annotations

import os
import sys
from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

from linkcheck import __version__
from linkcheck.geometry.cache import default_directory, read_json, short_digest, write_json
from linkcheck.paths import MODEL_PATH_VARS, PACKAGE_PATH_VARS
from linkcheck.reads import Reads, settled, stamp
from linkcheck.severity import FAIL_ON, SEVERITIES

#: Bump when the meaning of a stored entry changes.
FORMAT_VERSION = 1
_PACKAGE_DIR = Path(__file__).resolve().parent


#: Libraries whose upgrade can change a result (mesh readers, numerics), stamped by their package file.
DEPENDENCIES = ("numpy", "lxml", "trimesh", "scipy", "collada")


def code_stamp() -> str:
    """linkcheck's version and source files, Python's and the libraries' versions: an edited
    checkout, an upgrade or a newly installed optional reader makes a new key."""
    from importlib.util import find_spec

    parts = [__version__, sys.version]
    for folder, dirs, files in os.walk(_PACKAGE_DIR):
        dirs[:] = sorted(d for d in dirs if d != "__pycache__")
        for name in sorted(files):
            if name.endswith(".py"):
                parts.append(f"{name}:{stamp(os.path.join(folder, name))}")
    for name in DEPENDENCIES:
        try:
            spec = find_spec(name)  # finds the package without importing it
        except (ImportError, ValueError):
            spec = None
        parts.append(f"{name}:{stamp(spec.origin) if spec is not None and spec.origin else None}")
    return short_digest("|".join(parts).encode())


class ResultCache:
    """Report entries by everything that shaped them; every cache failure is silent."""

    def __init__(self, directory: Path | None = None) -> None:
        base = Path(directory) if directory is not None else default_directory()
        self._entries = base / f"results-v{FORMAT_VERSION}"
        self._code = code_stamp()

    def key(self, path: Path, data: bytes, cli: dict[str, Any], config_files: list[Path]) -> str | None:
        """Everything a file's result is a function of, besides the files it reads (None: unreadable config)."""
        try:
            configs = [f"{f.resolve()}:{short_digest(f.read_bytes())}" for f in config_files]
        except OSError:
            return None  # the check reports it
        env = [f"{v}={os.environ.get(v, '')}" for v in (*PACKAGE_PATH_VARS, *MODEL_PATH_VARS)]
        # the path as given, with the working folder: a symlinked copy finds its own meshes, and
        # messages quote paths the way the user wrote them
        text = "\n".join([str(FORMAT_VERSION), self._code, str(path), os.getcwd(), short_digest(data),
                          repr(sorted(cli.items())), *configs, *env])
        return short_digest(text.encode())

    def get(self, key: str) -> dict[str, Any] | None:
        """The stored ``{"entry", "fatal", "fail_on"}`` when every file it read is as it was, else None."""
        payload = read_json(self._file(key))
        if not isinstance(payload, dict) or payload.get("key") != key or not _well_formed(payload):
            return None
        reads = payload.get("reads")
        if not isinstance(reads, dict) or any(stamp(p) != s for p, s in reads.items()):
            return None
        return payload

    def put(self, key: str, reads: Reads, started_ns: int, entry: dict[str, Any], fatal: bool, fail_on: str) -> None:
        """Store a result computed from ``reads``, unless any of them changed around the check."""
        if not reads.complete:
            return
        for path, noted in reads.stamps.items():
            if stamp(path) != noted or (noted is not None and not settled(noted, started_ns)):
                return
        entry = {k: v for k, v in entry.items() if k != "path"}  # the path is shown relative to each run's folder
        write_json(self._file(key), {"key": key, "reads": reads.stamps, "entry": entry, "fatal": fatal,
                                     "fail_on": fail_on})

    def _file(self, key: str) -> Path:
        return self._entries / key[:2] / f"{key}.json"


def _well_formed(payload: dict[str, Any]) -> bool:
    """What the reporters and exit codes rely on; anything else is a foreign or damaged entry."""
    entry = payload.get("entry")
    if not isinstance(entry, dict) or payload.get("fail_on") not in FAIL_ON or not isinstance(payload.get("fatal"), bool):
        return False
    findings, links = entry.get("findings"), entry.get("links")
    if not isinstance(entry.get("format"), str) or not isinstance(links, list) or not isinstance(findings, list):
        return False
    return all(isinstance(k, dict) for k in links) and all(
        isinstance(f, dict) and isinstance(f.get("rule"), str) and f.get("severity") in SEVERITIES
        and isinstance(f.get("message"), str) and (f.get("line") is None or type(f.get("line")) is int)
        and (f.get("link") is None or isinstance(f.get("link"), str))
        for f in findings)
