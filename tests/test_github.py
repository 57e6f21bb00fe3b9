"""GitHub workflow-command annotations against the documented syntax.

Sources: GitHub Docs, "Workflow commands for GitHub Actions" (``::error file={name},
line={line},title={title}::{message}``, also ``::warning`` and ``::notice``; one command
per line) and @actions/core ``src/command.ts`` (escapeData: % -> %25, CR -> %0D,
LF -> %0A; escapeProperty: those plus : -> %3A and , -> %2C). The display limit of
10 annotations per type per step (actions/toolkit docs) is why the most severe come first.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from helpers import run_linkcheck, write_impossible_cart
from linkcheck.report.github import escape_data, escape_property, render_github

#: The documented shape: command, space, comma-separated key=value properties, '::', message.
COMMAND = re.compile(r"^::(error|warning|notice) ((?:[a-zA-Z]+=[^,:\r\n]*)(?:,[a-zA-Z]+=[^,:\r\n]*)*)::([^\r\n]*)$")


def unescape(text: str) -> str:
    """The runner's decoding, written from the documented escape table (reverse order of encoding)."""
    return (text.replace("%2C", ",").replace("%3A", ":").replace("%0A", "\n").replace("%0D", "\r")
            .replace("%25", "%"))


def parse(line: str) -> tuple[str, dict[str, str], str]:
    m = COMMAND.match(line)
    assert m, f"not a workflow command: {line!r}"
    props = dict(p.split("=", 1) for p in m.group(2).split(","))
    return m.group(1), {k: unescape(v) for k, v in props.items()}, unescape(m.group(3))


def report(base: Path) -> dict[str, Any]:
    return {
        "version": 1,
        "files": [
            {"path": str(base / "robots/demo.urdf"), "format": "urdf",
             "links": [{"name": "wheel", "line": 30}],
             "findings": [
                 {"rule": "com-offset", "severity": "info", "link": "wheel", "line": None,
                  "message": "stated COM 12% of L from the centroid", "fixable": True},
                 {"rule": "inertia-mismatch", "severity": "warning", "link": "wheel", "line": 30,
                  "message": "link 'wheel': trace 5x the estimate\nshape differs: q = 0.61", "fixable": True},
                 {"rule": "mass-not-positive", "severity": "error", "link": "wheel", "line": 31,
                  "message": "link 'wheel': mass is -1", "fixable": True},
             ]},
            {"path": "odd,name:1.urdf", "format": "urdf", "links": [],
             "findings": [{"rule": "xml-malformed", "severity": "error", "link": None, "line": 3,
                           "message": "not well-formed: 100% broken\r\n", "fixable": False}]},
        ],
        "summary": {},
    }


def test_every_line_is_a_documented_command_most_severe_first(tmp_path: Path) -> None:
    lines = render_github(report(tmp_path), base=tmp_path).splitlines()
    parsed = [parse(line) for line in lines]
    assert [cmd for cmd, _, _ in parsed] == ["error", "error", "warning", "notice"]
    cmd, props, message = parsed[0]
    assert props == {"file": "robots/demo.urdf", "line": "31", "title": "linkcheck mass-not-positive (wheel)"}
    assert message == "link 'wheel': mass is -1"


def test_escaping_follows_actions_core(tmp_path: Path) -> None:
    parsed = [parse(line) for line in render_github(report(tmp_path), base=tmp_path).splitlines()]
    _, props, message = parsed[1]
    assert props["file"] == "odd,name:1.urdf" and props["line"] == "3"
    assert message == "not well-formed: 100% broken\r\n"
    _, _, message = parsed[2]
    assert message == "link 'wheel': trace 5x the estimate\nshape differs: q = 0.61"
    # the link line stands in when a finding has none; the link is named when the message does not
    _, props, message = parsed[3]
    assert props["line"] == "30" and message == "link 'wheel': stated COM 12% of L from the centroid"


def test_escape_tables_exactly() -> None:
    # @actions/core command.ts: escapeData and escapeProperty
    assert escape_data("a%b\rc\nd:e,f") == "a%25b%0Dc%0Ad:e,f"
    assert escape_property("a%b\rc\nd:e,f") == "a%25b%0Dc%0Ad%3Ae%2Cf"
    assert escape_data("%0A") == "%250A"  # percent first, or a literal '%0A' would turn into a newline


def test_empty_report_prints_nothing(tmp_path: Path) -> None:
    assert render_github({"version": 1, "files": [], "summary": {}}, base=tmp_path) == ""


def test_no_terminal_codes_and_one_command_per_line(tmp_path: Path) -> None:
    text = render_github(report(tmp_path), base=tmp_path)
    assert "\x1b[" not in text and text.endswith("\n")
    assert all(line.startswith("::") for line in text.splitlines())


def test_real_cli_output(tmp_path: Path) -> None:
    """--format github on a description with an impossible tensor: every line a documented command."""
    write_impossible_cart(tmp_path)
    r = run_linkcheck("--format", "github", "cart.urdf", cwd=tmp_path)
    assert r.returncode == 1, r.stderr
    parsed = [parse(line) for line in r.stdout.splitlines()]
    assert parsed and all(cmd == "error" for cmd, _, _ in parsed)
    assert {p["file"] for _, p, _ in parsed} == {"cart.urdf"}
    assert any("inertia-triangle-inequality" in p["title"] for _, p, _ in parsed)
