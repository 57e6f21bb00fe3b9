"""write_atomic: all or nothing (POSIX rename(2): the new name refers to the old or the new file,
never a mix), mode bits kept, no temporary file left behind, one clear error."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from linkcheck import writeback
from linkcheck.errors import LinkcheckError
from linkcheck.writeback import write_atomic

ORIGINAL = b'<?xml version="1.0"?>\r\n<robot name="demo">\r\n  <link name="base"/>\r\n</robot>'
FIXED = ORIGINAL.replace(b"base", b"base_link")


def _folder(path: Path) -> list[str]:
    return sorted(p.name for p in path.parent.iterdir())


def test_writes_bytes_and_keeps_mode(tmp_path: Path) -> None:
    target = tmp_path / "robot.urdf"
    target.write_bytes(ORIGINAL)
    os.chmod(target, 0o640)
    write_atomic(target, FIXED)
    assert target.read_bytes() == FIXED
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o640  # compared with the stat(2) mode bits set above
    assert _folder(target) == ["robot.urdf"]


def test_executable_bit_survives(tmp_path: Path) -> None:
    target = tmp_path / "robot.sdf"
    target.write_bytes(ORIGINAL)
    os.chmod(target, 0o755)
    write_atomic(target, FIXED)
    assert stat.S_IMODE(os.stat(target).st_mode) == 0o755


@pytest.mark.parametrize("step", ["replace", "fsync", "chmod"])
def test_failure_leaves_original_and_no_temp_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch, step: str) -> None:
    target = tmp_path / "robot.urdf"
    target.write_bytes(ORIGINAL)
    before = os.stat(target)

    def boom(*args: object, **kwargs: object) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(writeback.os, step, boom)
    with pytest.raises(LinkcheckError) as err:
        write_atomic(target, FIXED)
    monkeypatch.undo()
    assert target.read_bytes() == ORIGINAL
    assert os.stat(target).st_ino == before.st_ino  # still the very same file
    assert _folder(target) == ["robot.urdf"]
    message = str(err.value)
    assert "robot.urdf" in message and "No space left on device" in message and "\n" not in message


def test_failure_while_writing_data(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    target = tmp_path / "robot.urdf"
    target.write_bytes(ORIGINAL)
    real_fdopen = os.fdopen

    class Broken:
        def __init__(self, fd: int) -> None:
            self.f = real_fdopen(fd, "wb")

        def __enter__(self) -> Broken:
            return self

        def __exit__(self, *exc: object) -> None:
            self.f.close()

        def write(self, data: bytes) -> int:
            self.f.write(data[:10])  # a partial write, then the disk fails
            raise OSError(5, "Input/output error")

    monkeypatch.setattr(writeback.os, "fdopen", lambda fd, mode: Broken(fd))
    with pytest.raises(LinkcheckError, match="Input/output error"):
        write_atomic(target, FIXED)
    monkeypatch.undo()
    assert target.read_bytes() == ORIGINAL
    assert _folder(target) == ["robot.urdf"]


def test_unwritable_folder_is_a_clear_error(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    target = tmp_path / "robot.urdf"
    target.write_bytes(ORIGINAL)

    def denied(*args: object, **kwargs: object) -> None:
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(writeback.tempfile, "mkstemp", denied)
    with pytest.raises(LinkcheckError, match="Permission denied"):
        write_atomic(target, FIXED)
    monkeypatch.undo()
    assert target.read_bytes() == ORIGINAL


def test_symlink_is_followed_and_kept(tmp_path: Path) -> None:
    real = tmp_path / "real.urdf"
    real.write_bytes(ORIGINAL)
    link = tmp_path / "robot.urdf"
    link.symlink_to(real)
    write_atomic(link, FIXED)
    assert link.is_symlink()
    assert real.read_bytes() == FIXED


def test_missing_folder_raises_linkcheck_error(tmp_path: Path) -> None:
    with pytest.raises(LinkcheckError):
        write_atomic(tmp_path / "nope" / "robot.urdf", FIXED)


def test_new_file_gets_umask_mode(tmp_path: Path) -> None:
    old = os.umask(0o022)
    try:
        write_atomic(tmp_path / "new.urdf", FIXED)
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "new.urdf").st_mode) == 0o644  # open(2): 0666 & ~umask
    assert (tmp_path / "new.urdf").read_bytes() == FIXED
