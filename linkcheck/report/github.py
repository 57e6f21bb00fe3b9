"""GitHub Actions workflow-command annotations, one line per finding, most severe first.

Syntax and escaping follow GitHub's "Workflow commands for GitHub Actions" page
and @actions/core's command.ts (escapeData / escapeProperty). Plain text on
stdout; never through rich, which would wrap or interpret brackets.
"""

from __future__ import annotations

from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

from linkcheck.report._paths import relative_posix
from linkcheck.severity import RANK

COMMAND = {"error": "error", "warning": "warning", "info": "notice"}


def escape_data(text: str) -> str:
    """Message escaping: % CR LF (percent first, so escapes are not escaped twice)."""
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def escape_property(text: str) -> str:
    """Property escaping: the message set plus ':' and ','."""
    return escape_data(text).replace(":", "%3A").replace(",", "%2C")


def render_github(report: dict[str, Any], base: Path | None = None) -> str:
    """``::error file=...,line=...,title=...::message`` lines for every finding in ``report``."""
    rows: list[tuple[int, int, str]] = []
    for entry in report.get("files", []):
        path = relative_posix(str(entry.get("path", "")), base)
        link_lines = {k.get("name"): k.get("line") for k in entry.get("links", []) or []}
        for finding in entry.get("findings", []) or []:
            severity = str(finding.get("severity", "warning"))
            link = finding.get("link")
            line = finding.get("line") or link_lines.get(link) or 1
            rule = str(finding.get("rule"))
            title = f"linkcheck {rule}" + (f" ({link})" if link else "")
            message = str(finding.get("message") or rule)
            if link and str(link) not in message:
                message = f"link '{link}': {message}"
            props = f"file={escape_property(path)},line={max(1, int(line))},title={escape_property(title)}"
            rows.append((RANK.get(severity, 1), len(rows),
                         f"::{COMMAND.get(severity, 'warning')} {props}::{escape_data(message)}"))
    rows.sort()
    return "".join(row + "\n" for _, _, row in rows)
