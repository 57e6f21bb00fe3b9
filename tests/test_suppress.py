"""Inline suppressions silence only the named rules on their own link; stale ones are reported.

Behaviour specified by issue 5 ("silences those rules for that link; a suppression
that no longer matches anything is itself reported (info)").
"""

from __future__ import annotations

from linkcheck.model import Finding, Link
from linkcheck.settings import DEFAULT, LinkOverride
from linkcheck.suppress import apply_suppressions


def link(name: str, *suppressions: tuple[str, int, str]) -> Link:
    return Link(name=name, line=10, inertial=None, inertial_state="absent", suppressions=list(suppressions))


def finding(rule: str, link_name: str | None, severity: str = "warning") -> Finding:
    return Finding(rule=rule, severity=severity, message=f"{rule} on {link_name}", link=link_name, line=10)  # type: ignore[arg-type]


def rules_of(findings: list[Finding]) -> list[tuple[str, str | None]]:
    return [(f.rule, f.link) for f in findings]


def test_only_the_named_rule_on_that_link_is_silenced() -> None:
    links = [link("arm", ("com-offset", 9, "measured on the real part")), link("leg")]
    findings = [finding("com-offset", "arm"), finding("inertia-mismatch", "arm"),
                finding("com-offset", "leg"), finding("xml-malformed", None, "error")]
    kept = apply_suppressions(findings, links)
    assert rules_of(kept) == [("inertia-mismatch", "arm"), ("com-offset", "leg"), ("xml-malformed", None)]


def test_several_rules_in_one_comment() -> None:
    links = [link("arm", ("com-offset", 9, "r"), ("inertia-mismatch", 9, "r"))]
    kept = apply_suppressions([finding("com-offset", "arm"), finding("inertia-mismatch", "arm")], links)
    assert kept == []


def test_stale_suppression_is_reported_as_info_at_the_comment_line() -> None:
    links = [link("arm", ("com-offset", 7, "old reason"), ("inertia-mismatch", 7, "still true"))]
    kept = apply_suppressions([finding("inertia-mismatch", "arm")], links)
    assert len(kept) == 1
    stale = kept[0]
    assert (stale.rule, stale.severity, stale.link, stale.line) == ("suppression-unused", "info", "arm", 7)
    assert "com-offset" in stale.message and "arm" in stale.message
    assert not stale.fixable


def test_unknown_rule_name_is_reported_with_a_suggestion() -> None:
    kept = apply_suppressions([finding("com-offset", "arm")], [link("arm", ("com-ofset", 4, "typo"))])
    assert rules_of(kept) == [("com-offset", "arm"), ("suppression-unused", "arm")]
    assert "not a linkcheck rule" in kept[1].message and "'com-offset'" in kept[1].message


def test_a_suppression_on_one_link_does_not_leak_to_a_namesake_prefix() -> None:
    links = [link("arm", ("com-offset", 3, "r")), link("arm_2")]
    kept = apply_suppressions([finding("com-offset", "arm_2")], links)
    assert rules_of(kept) == [("com-offset", "arm_2"), ("suppression-unused", "arm")]


def test_rule_turned_off_by_configuration_is_not_called_stale() -> None:
    settings = DEFAULT.replace(links=(LinkOverride(pattern="arm*", ignore=("com-offset",)),))
    links = [link("arm", ("com-offset", 3, "r")), link("leg", ("com-offset", 5, "r"))]
    kept = apply_suppressions([], links, settings)
    assert rules_of(kept) == [("suppression-unused", "leg")]


def test_no_suppressions_keeps_everything_in_order() -> None:
    findings = [finding("com-offset", "a"), finding("inertia-mismatch", "b")]
    assert apply_suppressions(findings, [link("a"), link("b")]) == findings
