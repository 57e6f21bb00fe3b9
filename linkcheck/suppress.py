"""Inline suppressions: ``<!-- linkcheck: allow RULE[, RULE] - reason -->`` on a link.

XML forbids "--" inside a comment (XML 1.0 §2.5), so the reason follows a single
dash, a colon or "because".

The readers put each allowed rule on ``Link.suppressions`` as (rule, comment line,
reason). A suppression silences only its rules on its own link; one that silenced
nothing, or names no rule, becomes a ``suppression-unused`` info finding so that
stale comments get cleaned up instead of hiding the next real problem.
"""

from __future__ import annotations

from typing import Iterable

from linkcheck.model import Finding, Link
from linkcheck.rules import RULES, suggest
from linkcheck.settings import Settings

UNUSED = "suppression-unused"


def apply_suppressions(findings: Iterable[Finding], links: Iterable[Link],
                       settings: Settings | None = None) -> list[Finding]:
    """Drop the findings allowed on their link; append one info finding per stale suppression.

    With ``settings``, a suppression of a rule that configuration already turns off
    for that link is not called stale (it could not have fired).
    """
    allowed: dict[str, dict[str, list[int]]] = {}
    for link in links:
        per_rule = allowed.setdefault(link.name, {})
        for rule, line, _reason in link.suppressions:
            per_rule.setdefault(rule, []).append(line)
    used: set[tuple[str, str]] = set()
    kept: list[Finding] = []
    for finding in findings:
        if finding.link is not None and finding.rule != UNUSED and finding.rule in allowed.get(finding.link, {}):
            used.add((finding.link, finding.rule))
            continue
        kept.append(finding)
    for link_name, per_rule in allowed.items():
        for rule, lines in per_rule.items():
            if (link_name, rule) in used or _disabled(settings, rule, link_name):
                continue
            for line in lines:
                kept.append(_stale(link_name, rule, line))
    return kept


def _disabled(settings: Settings | None, rule: str, link_name: str) -> bool:
    if settings is None or rule not in RULES:
        return False
    from linkcheck.config import rule_enabled

    return not rule_enabled(settings, rule, link_name)


def _stale(link_name: str, rule: str, line: int) -> Finding:
    if rule in RULES:
        message = (f"link '{link_name}': the comment allows {rule}, which did not fire on this link; "
                   "remove the stale suppression")
    else:
        hint = suggest(rule)
        message = (f"link '{link_name}': the comment allows {rule!r}, which is not a linkcheck rule"
                   + (f" (did you mean {hint!r}?)" if hint else ""))
    return Finding(rule=UNUSED, severity=RULES[UNUSED].severity, message=message,
                   link=link_name, line=line, fixable=False, data={"suppressed_rule": rule})
