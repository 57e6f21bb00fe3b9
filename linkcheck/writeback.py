"""Atomic file replacement: a fix either lands whole or leaves the original untouched."""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path

from linkcheck.errors import LinkcheckError


def write_atomic(path: Path, data: bytes) -> None:
    """Replace ``path`` with ``data`` via a temporary file in the same folder and a rename.

    The rename is atomic on POSIX and Windows, so readers see the old or the new
    bytes, never a mix. Mode bits are kept; a symlink is followed and its target
    rewritten, so the link survives. On any failure the original is unchanged,
    the temporary file is removed, and LinkcheckError says why.
    """
    target = Path(os.path.realpath(path))
    try:
        mode = stat.S_IMODE(os.stat(target).st_mode)
    except FileNotFoundError:
        mode = _default_mode()
    except OSError as exc:
        raise LinkcheckError(f"{path}: cannot write: {exc.strerror or exc}") from None
    tmp: str | None = None
    try:
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.", suffix=".linkcheck-tmp")
        with os.fdopen(fd, "wb") as out:
            out.write(data)
            out.flush()
            os.fsync(out.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
        tmp = None
    except Exception as exc:  # any failure: the original stays, the user gets one line
        why = getattr(exc, "strerror", None) or str(exc) or type(exc).__name__
        raise LinkcheckError(f"{path}: cannot write: {why}; the file was left unchanged") from None
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
    _sync_dir(target.parent)


def _default_mode() -> int:
    """What open(2) would give a new file under the current umask (mkstemp makes it 0600)."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def _sync_dir(folder: Path) -> None:
    """Make the rename durable where the platform allows opening a folder."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
