"""A progress bar on stderr for long interactive runs; silent everywhere else.

It appears only after about a second, only on an interactive terminal, and
never under pre-commit (PRE_COMMIT=1), which buffers and replays output.
"""

from __future__ import annotations

import os
import sys
import time

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

DELAY_S = 1.0


def wanted(stream: Any = None) -> bool:
    stream = stream if stream is not None else sys.stderr
    if os.environ.get("PRE_COMMIT") or os.environ.get("CI") or os.environ.get("TERM") == "dumb":
        return False
    return bool(getattr(stream, "isatty", lambda: False)())


class Progress:
    """Call ``step(label)`` once per file; the bar starts only when the run turns out slow."""

    def __init__(self, total: int, enabled: bool | None = None, clock: Any = time.monotonic):
        self.total, self.done, self.clock = total, 0, clock
        self.enabled = wanted() if enabled is None else enabled
        self.started = clock()
        self._bar: Any = None
        self._task: Any = None

    def step(self, label: str) -> None:
        self.done += 1
        if not self.enabled or self.done >= self.total:
            return
        if self._bar is None:
            if self.clock() - self.started < DELAY_S:
                return
            from rich.console import Console
            from rich.progress import BarColumn, MofNCompleteColumn, Progress as Bar, TextColumn

            self._bar = Bar(TextColumn("checking"), BarColumn(), MofNCompleteColumn(),
                            TextColumn("{task.description}", markup=False),
                            console=Console(stderr=True), transient=True)
            self._bar.start()
            self._task = self._bar.add_task("", total=self.total, completed=self.done)
        self._bar.update(self._task, completed=self.done, description=label)

    def close(self) -> None:
        if self._bar is not None:
            self._bar.stop()
