"""SARIF 2.1.0 from the JSON report, for code-scanning services (GitHub and others).

Written with the stdlib json module: plain text, never through rich. The driver
carries the whole rule catalogue so a service can show each rule's help.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any
from urllib.parse import quote

from linkcheck import __version__
from linkcheck.report._paths import relative_posix
from linkcheck.rules import RULES, Rule

SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
LEVEL = {"error": "error", "warning": "warning", "info": "note"}
FINGERPRINT = "linkcheck/v1"


def _rule(rule: Rule) -> dict[str, Any]:
    fix = "Fixed by `linkcheck " + rule.fix + "`." if rule.fix != "none" else "No automatic fix."
    return {
        "id": rule.name,
        "shortDescription": {"text": rule.summary},
        "fullDescription": {"text": rule.help},
        "help": {
            "text": f"{rule.help} {fix.replace('`', '')}",
            "markdown": f"**{rule.name}** ({rule.severity} by default)\n\n{rule.help}\n\n{fix}",
        },
        "defaultConfiguration": {"level": LEVEL[rule.severity]},
        "properties": {"fix": rule.fix},
    }


def _uri(path: str, base: Path | None) -> dict[str, Any]:
    rel = relative_posix(path, base)
    if rel.startswith("/"):
        return {"uri": Path(rel).as_uri()}
    return {"uri": quote(rel, safe="/"), "uriBaseId": "%SRCROOT%"}


def _message(finding: dict[str, Any]) -> str:
    text = str(finding.get("message") or finding.get("rule", "finding"))
    link = finding.get("link")
    if link and f"'{link}'" not in text and str(link) not in text:
        text = f"link '{link}': {text}"
    return text


def render_sarif(report: dict[str, Any], base: Path | None = None) -> str:
    """One SARIF run holding every finding of ``report`` (the DESIGN.md JSON report dict).

    ``base`` is the folder artifact URIs are relative to (default: the working directory).
    """
    index = {name: i for i, name in enumerate(RULES)}
    results: list[dict[str, Any]] = []
    for entry in report.get("files", []):
        location = _uri(str(entry.get("path", "")), base)
        link_lines = {k.get("name"): k.get("line") for k in entry.get("links", []) or []}
        seen: dict[tuple[str, str], int] = {}
        for finding in entry.get("findings", []) or []:
            rule = str(finding.get("rule"))
            link = finding.get("link")
            line = finding.get("line") or link_lines.get(link) or 1
            key = (rule, str(link))
            ordinal = seen.get(key, 0)
            seen[key] = ordinal + 1
            digest = hashlib.sha256("\0".join((rule, location["uri"], str(link), str(ordinal))).encode()).hexdigest()
            result: dict[str, Any] = {
                "ruleId": rule,
                "level": LEVEL.get(str(finding.get("severity")), "warning"),
                "message": {"text": _message(finding)},
                "locations": [{
                    "physicalLocation": {
                        "artifactLocation": dict(location),
                        "region": {"startLine": max(1, int(line))},
                    },
                    **({"logicalLocations": [{"name": str(link), "kind": "element"}]} if link else {}),
                }],
                "partialFingerprints": {FINGERPRINT: digest[:32]},
                "properties": {"fixable": bool(finding.get("fixable", False))},
            }
            if rule in index:
                result["ruleIndex"] = index[rule]
            results.append(result)
    sarif = {
        "$schema": SCHEMA,
        "version": "2.1.0",
        "runs": [{
            "tool": {"driver": {
                "name": "linkcheck",
                "version": __version__,
                "semanticVersion": __version__,
                "rules": [_rule(r) for r in RULES.values()],
            }},
            "columnKind": "unicodeCodePoints",
            "results": results,
        }],
    }
    return json.dumps(sarif, indent=2, ensure_ascii=False) + "\n"
