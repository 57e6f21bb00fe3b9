"""The files a check read besides the description, so a stored result can be re-verified.

Readers call :func:`note` for each path whose state shaped a result: the files they read (a
resolved mesh and the buffers of a .gltf, an included model, a model.config, a package.xml) and
the candidates they probed and did not find on the way (recorded as absent, so a file that
appears there later changes the answer). :func:`note_incomplete` marks a result that hangs on
something no stamp records: a reference that did not resolve (folder scans are not recorded) or
a mesh that failed to load (perhaps for want of an optional package). Such a check is never reused. Outside
:func:`recording` both do nothing, which keeps the readers free of cache plumbing.
"""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

#: A file modified this close to being stamped may be rewritten again with the same stamp
#: (coarse file-system clocks): only older stamps are trusted.
RACY_SECONDS = 2.0


def stamp(path: str | Path) -> list[int] | None:
    """Size, mtime, inode and ctime: what changes when a file is rewritten or replaced."""
    try:
        st = os.stat(path)
    except OSError:
        return None
    return [st.st_size, st.st_mtime_ns, st.st_ino, st.st_ctime_ns]


def settled(found: list[int], at_ns: int) -> bool:
    """Whether a stamp taken at ``at_ns`` can vouch for the content (see ``RACY_SECONDS``)."""
    return max(found[1], found[3]) < at_ns - RACY_SECONDS * 1e9


class Reads:
    """Stamps of the paths consulted (None: absent), by absolute path; ``complete`` is False after a miss."""

    def __init__(self) -> None:
        self.stamps: dict[str, list[int] | None] = {}
        self.complete = True


_active: list[Reads] = []


def note(path: str | Path) -> None:
    if _active:
        # joined, not normalised: "link/../meshes" must stay the folder the kernel finds through a symlink
        reads, key = _active[-1], os.path.join(os.getcwd(), path)
        if key not in reads.stamps:
            reads.stamps[key] = stamp(key)


def note_incomplete() -> None:
    if _active:
        _active[-1].complete = False


@contextmanager
def recording() -> Iterator[Reads]:
    reads = Reads()
    _active.append(reads)
    try:
        yield reads
    finally:
        _active.pop()
