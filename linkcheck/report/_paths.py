"""Paths as CI tools want them: relative to the working directory, POSIX separators."""

from __future__ import annotations

import os
from pathlib import Path


def relative_posix(path: str | os.PathLike[str], base: Path | None = None) -> str:
    """``path`` relative to ``base`` (default: the working directory) in POSIX form.

    Paths outside ``base`` stay absolute (POSIX form too), since a ``..`` path
    means nothing to a code-scanning service.
    """
    base = (base or Path.cwd()).resolve()
    p = Path(path)
    absolute = p if p.is_absolute() else base / p
    absolute = Path(os.path.normpath(absolute))
    try:
        return absolute.relative_to(base).as_posix()
    except ValueError:
        try:
            return absolute.resolve().relative_to(base).as_posix()
        except ValueError:
            return absolute.as_posix()
