"""linkcheck: check and fix the mass properties of robot descriptions against their geometry."""

from __future__ import annotations

from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

__version__ = "0.1.0"


def check_file(path: str | Path, settings: Any = None, *, search: Any = None, cache: Any = None) -> dict[str, Any]:
    """Check one description file; return the file entry of the JSON report (see the README).

    ``settings`` is a :class:`linkcheck.settings.Settings`; by default the file's
    own configuration (pyproject.toml / linkcheck.toml found upward) is used.
    """
    from linkcheck.report.json import file_entry
    from linkcheck.runner import RunOptions, run_file

    path = Path(path)
    if settings is None:
        from linkcheck.config import load_settings

        settings = load_settings(path.resolve().parent)
    return file_entry(run_file(path, settings, RunOptions(search=search, cache=cache)))
