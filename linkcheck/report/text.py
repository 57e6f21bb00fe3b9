"""The human report: one line per finding, grouped by file, a summary; colour only on a terminal.

rich is imported only when colour is on, so piped runs and hooks stay fast.
"""

from __future__ import annotations

import re

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import IO, Any

from linkcheck.severity import RANK

SEVERITY_STYLE = {"error": "bold red", "warning": "yellow", "info": "cyan"}
_LINK_PREFIX = re.compile(r"^link '[^']*': ")


def finding_line(path: str, f: dict[str, Any]) -> tuple[str, ...]:
    """The columns of one line: location, link, severity, rule, message."""
    where = f"{path}:{f['line']}" if f.get("line") else path
    message = _LINK_PREFIX.sub("", f["message"]) if f.get("link") else f["message"]
    return where, f.get("link") or "-", f["severity"], f["rule"], message


def summary_line(summary: dict[str, int], pending: bool = False) -> str:
    """The totals; ``pending``: the changes were only shown (--diff), nothing was written."""
    def plural(n: int, word: str) -> str:
        return f"{n} {word}{'' if n == 1 else 's'}"

    parts = [plural(summary["errors"], "error"), plural(summary["warnings"], "warning"), plural(summary["infos"], "info")]
    text = f"{plural(summary['files'], 'file')}, {plural(summary['links'], 'link')}: " + ", ".join(parts)
    if summary.get("changed"):
        text += f"; {plural(summary['changed'], 'file')} {'would change' if pending else 'changed'}"
    return text


def render_text(report: dict[str, Any], stream: IO[str], color: bool, quiet: bool = False, pending: bool = False) -> None:
    """Write the report. ``quiet`` drops infos and the summary; ``pending``: see summary_line."""
    rows: list[tuple[str, ...]] = []
    for entry in report["files"]:
        found = [f for f in entry["findings"] if not (quiet and f["severity"] == "info")]
        found.sort(key=lambda f: (f.get("line") or 0, RANK[f["severity"]]))
        if rows and found:
            rows.append(())
        rows.extend(finding_line(entry["path"], f) for f in found)
    if color:
        _render_rich(rows, report["summary"], stream, quiet, pending)
        return
    for row in rows:
        stream.write("  ".join(row) + "\n" if row else "\n")
    if not quiet:
        stream.write(("\n" if rows else "") + summary_line(report["summary"], pending) + "\n")


def _render_rich(rows: list[tuple[str, ...]], summary: dict[str, int], stream: IO[str], quiet: bool, pending: bool) -> None:
    from rich.console import Console
    from rich.text import Text

    console = Console(file=stream, force_terminal=True, highlight=False, markup=False, soft_wrap=True)
    for row in rows:
        if not row:
            console.print()
            continue
        where, link, severity, rule, message = row
        line = Text()
        line.append(where, "dim")
        line.append("  ")
        line.append(link, "bold")
        line.append("  ")
        line.append(severity, SEVERITY_STYLE[severity])
        line.append("  ")
        line.append(rule, "magenta")
        line.append("  " + message)
        console.print(line)
    if not quiet:
        worst = "error" if summary["errors"] else "warning" if summary["warnings"] else None
        if rows:
            console.print()
        console.print(Text(summary_line(summary, pending), SEVERITY_STYLE[worst] if worst else "green"))
