"""The progress bar shows only on a slow interactive run, never under pre-commit or when piped."""

from __future__ import annotations

import io

from linkcheck.report import progress


class Tty(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_not_wanted_when_piped_or_under_precommit(monkeypatch):
    monkeypatch.delenv("CI", raising=False)
    monkeypatch.delenv("PRE_COMMIT", raising=False)
    assert progress.wanted(io.StringIO()) is False
    assert progress.wanted(Tty()) is True
    monkeypatch.setenv("PRE_COMMIT", "1")  # pre-commit sets it for every hook (LIBRARIES.md §4)
    assert progress.wanted(Tty()) is False


def test_bar_waits_for_a_slow_run(monkeypatch):
    ticks = iter([0.0, 0.1, 0.2, 5.0, 5.1])
    bar = progress.Progress(10, enabled=True, clock=lambda: next(ticks))
    bar.step("a.urdf")  # 0.1 s in: nothing yet
    assert bar._bar is None
    bar.step("b.urdf")  # 0.2 s
    assert bar._bar is None
    bar.step("c.urdf")  # 5 s: the run is slow, the bar starts
    assert bar._bar is not None
    bar.close()
