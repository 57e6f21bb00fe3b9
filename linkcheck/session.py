"""One run over many files: settings per file, shared mesh search and caches, mesh -> users.

The checking layers (and numpy, and the settings parser) are imported only when some file is
not answered by the result cache, so re-checking unchanged files costs little more than
starting the interpreter.
"""

from __future__ import annotations

import time
from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

from linkcheck.errors import LinkcheckError
from linkcheck.paths import config_candidates, expand_paths


class StoredResult:
    """A file's result from the result cache: what the reporters need; never a fix."""

    changed = False
    estimated = False

    def __init__(self, path: Path, stored: dict[str, Any]) -> None:
        self.path = path
        self.entry: dict[str, Any] = stored["entry"]  # ResultCache.get checked every field
        self.fatal: bool = stored["fatal"]
        self.fail_on: str = stored["fail_on"]

    def unwritten(self) -> StoredResult:
        return self

    def report_entry(self, display_path: str) -> dict[str, Any]:
        return {"path": display_path, **self.entry}


class Session:
    """Settings, search paths and caches shared by the files of one run."""

    def __init__(self, cli: dict[str, Any] | None = None, config: Path | None = None, no_cache: bool = False,
                 fix: Any = None) -> None:
        self.cli = cli or {}
        self.config = config
        self.no_cache = no_cache
        self.fix = fix
        self._settings: dict[Path, Any] = {}
        self._cache: Any = None
        self._results: Any = None

    def settings_for(self, path: Path) -> Any:
        folder = path.resolve().parent
        if folder not in self._settings:
            from linkcheck.config import load_settings

            self._settings[folder] = load_settings(folder, self.config, self.cli)
        return self._settings[folder]

    def search_for(self, settings: Any) -> Any:
        from linkcheck.geometry.resolve import SearchPaths

        return SearchPaths(package_paths={k: Path(v) for k, v in settings.package_paths.items()},
                           model_paths=tuple(Path(p) for p in settings.model_paths))

    def cache(self) -> Any:
        if self.no_cache:
            return None
        if self._cache is None:
            from linkcheck.geometry.cache import MeshCache

            self._cache = MeshCache()
        return self._cache

    def result_cache(self) -> Any:
        """Only check runs reuse results: a fix must see the file as it is."""
        if self.no_cache or self.fix is not None:
            return None
        if self._results is None:
            from linkcheck.result_cache import ResultCache

            self._results = ResultCache()
        return self._results

    def run(self, paths: list[Path], mesh_suffixes: tuple[str, ...]) -> tuple[list[Any], list[str]]:
        """Check every description named or found; return results (FileResult or StoredResult) and one-line input problems."""
        problems: list[str] = []
        files: list[Path] = []
        for path in expand_paths(paths):
            if not path.exists():
                problems.append(f"{path}: no such file or folder")
            elif not path.is_file():  # a FIFO or device: reading it could block forever
                problems.append(f"{path}: not a regular file")
            elif path.suffix.lower() in mesh_suffixes:
                files.extend(self._users_of(path))
            else:
                files.append(path)
        from linkcheck.report.progress import Progress

        results = []
        seen: set[tuple[Path, str]] = set()
        progress = Progress(len(files))
        try:
            for path in files:
                progress.step(str(path))
                key = (path.parent.resolve(), path.name)  # the file's own name: a symlinked copy finds meshes beside itself
                if key in seen:
                    continue
                seen.add(key)
                try:
                    results.append(self.check(path))
                except OSError as exc:
                    problems.append(f"{path}: cannot read: {exc.strerror or exc}")
        finally:
            progress.close()
        if self._cache is not None or self._results is not None:
            from linkcheck.geometry.cache import default_directory, prune

            prune(default_directory())
        return results, problems

    def check(self, path: Path) -> Any:
        """One file's result: from the result cache when nothing it was computed from changed."""
        store = self.result_cache()
        if store is None:
            return self._run(path)
        try:
            data = path.read_bytes()
        except OSError:
            return self._run(path)  # the reader reports it, as without the cache
        key = store.key(path, data, self.cli, self._config_files(path))
        stored = store.get(key) if key is not None else None
        if stored is not None:
            return StoredResult(path, stored)
        from linkcheck.reads import recording

        started = time.time_ns()
        with recording() as reads:
            result = self._run(path, data)
        if key is not None:
            store.put(key, reads, started, result.report_entry(str(path)), result.fatal, result.fail_on)
        return result

    def _config_files(self, path: Path) -> list[Path]:
        """The configuration files the file's settings may come from (the nearest one that has a table wins)."""
        if self.config is not None:
            return [Path(self.config)]
        return list(config_candidates(path.resolve().parent))

    def _run(self, path: Path, data: bytes | None = None) -> Any:
        from linkcheck.runner import RunOptions, run_file

        settings = self.settings_for(path)
        options = RunOptions(fix=self.fix, search=self.search_for(settings), cache=self.cache())
        return run_file(path, settings, options, data)

    def _users_of(self, mesh: Path) -> list[Path]:
        """Descriptions in the mesh's repository that use it (none: the mesh is ignored silently)."""
        from linkcheck.repo_scan import descriptions_using, find_repo_root

        settings = self.settings_for(mesh)
        try:
            return descriptions_using(mesh, find_repo_root(mesh), self.search_for(settings))
        except OSError as exc:
            raise LinkcheckError(f"{mesh}: cannot scan the repository for its users: {exc}") from exc

