"""Severity levels and the fail-on levels built on them: one definition for readers, config, cache and exit codes."""

from __future__ import annotations

#: Most severe first.
SEVERITIES = ("error", "warning", "info")
#: ``--fail-on`` / ``fail-on``: the lowest severity that fails a file, or never.
FAIL_ON = (*SEVERITIES, "never")
#: Rank of a severity (0 is the most severe); a file fails when a finding ranks at or below its fail-on level.
RANK = {name: rank for rank, name in enumerate(SEVERITIES)}
FAIL_LEVELS = {**RANK, "never": -1}
