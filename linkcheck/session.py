"""One run over many files: settings per file, shared mesh search and cache, mesh -> users."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from linkcheck.errors import LinkcheckError
from linkcheck.runner import FileResult, RunOptions, expand_paths, run_file
from linkcheck.settings import Settings


@dataclass
class Session:
    cli: dict[str, Any] = field(default_factory=dict)
    config: Path | None = None
    no_cache: bool = False
    fix: Any = None
    _settings: dict[Path, Settings] = field(default_factory=dict)
    _cache: Any = None

    def settings_for(self, path: Path) -> Settings:
        folder = path.resolve().parent
        if folder not in self._settings:
            from linkcheck.config import load_settings

            self._settings[folder] = load_settings(folder, self.config, self.cli)
        return self._settings[folder]

    def search_for(self, settings: Settings) -> Any:
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

    def run(self, paths: list[Path], mesh_suffixes: tuple[str, ...]) -> tuple[list[FileResult], list[str]]:
        """Check every description named or found; return results and one-line input problems."""
        problems: list[str] = []
        files: list[Path] = []
        for path in expand_paths(paths):
            if not path.exists():
                problems.append(f"{path}: no such file or folder")
            elif path.suffix.lower() in mesh_suffixes:
                files.extend(self._users_of(path))
            else:
                files.append(path)
        from linkcheck.report.progress import Progress

        results = []
        seen: set[Path] = set()
        progress = Progress(len(files))
        try:
            for path in files:
                progress.step(str(path))
                key = path.resolve()
                if key in seen:
                    continue
                seen.add(key)
                try:
                    settings = self.settings_for(path)
                    options = RunOptions(fix=self.fix, search=self.search_for(settings), cache=self.cache())
                    results.append(run_file(path, settings, options))
                except OSError as exc:
                    problems.append(f"{path}: cannot read: {exc.strerror or exc}")
        finally:
            progress.close()
        return results, problems

    def _users_of(self, mesh: Path) -> list[Path]:
        """Descriptions in the mesh's repository that use it (none: the mesh is ignored silently)."""
        from linkcheck.repo_scan import descriptions_using, find_repo_root

        settings = self.settings_for(mesh)
        try:
            return descriptions_using(mesh, find_repo_root(mesh), self.search_for(settings))
        except OSError as exc:
            raise LinkcheckError(f"{mesh}: cannot scan the repository for its users: {exc}") from exc
