"""Unified diffs of a fix, for review before (``--diff``) or instead of writing."""

from __future__ import annotations

import difflib
from typing import TextIO

CAUTION = (
    "estimated values assume uniform density; check them against CAD data or "
    "measurement before using the model on hardware: wrong inertia can make a robot move unexpectedly"
)

NO_NEWLINE = "\\ No newline at end of file"


def _text(data: bytes) -> str:
    """The file as text: UTF-8 (a BOM is dropped), undecodable bytes shown, never an error."""
    return data.decode("utf-8-sig", errors="replace")


def _lines(text: str) -> list[str]:
    """Lines split on LF only, each keeping its ending (so CRLF vs LF still compares unequal)."""
    parts = text.split("\n")
    lines = [p + "\n" for p in parts[:-1]]
    if parts[-1]:
        lines.append(parts[-1])
    return lines


def unified_diff(path: str, old: bytes, new: bytes, context: int = 3) -> str:
    """``a/path`` -> ``b/path`` unified diff of two versions of a file; "" when they are equal.

    Line endings are shown as plain lines (no visible CR); a last line without a
    newline gets git's "\\ No newline at end of file" marker.
    """
    if old == new:
        return ""
    a, b = _lines(_text(old)), _lines(_text(new))
    out: list[str] = []
    name = path.lstrip("/")  # an absolute path still gives git's a/... b/... headers
    for k, line in enumerate(difflib.unified_diff(a, b, f"a/{name}", f"b/{name}", n=context, lineterm="")):
        if k < 2 or line.startswith("@@"):  # file headers, hunk headers; content starts with ' ', '-', '+'
            out.append(line)
            continue
        body = line[:-1] if line.endswith("\n") else line
        if body.endswith("\r"):
            body = body[:-1]
        out.append(body)
        if not line.endswith("\n"):
            out.append(NO_NEWLINE)
    return "\n".join(out) + "\n" if out else ""


def print_diff(text: str, stream: TextIO, color: bool) -> None:
    """Write the diff: highlighted with rich when ``color``, plain bytes-for-lines otherwise."""
    if not text:
        return
    if not color:
        stream.write(text if text.endswith("\n") else text + "\n")
        return
    from rich.console import Console
    from rich.syntax import Syntax

    console = Console(file=stream, force_terminal=True, highlight=False, soft_wrap=True)
    console.print(Syntax(text.rstrip("\n"), "diff", theme="ansi_dark", background_color="default"), soft_wrap=True)
