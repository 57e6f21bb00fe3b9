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


def _urdf(comment_inside: str, comment_before: str = "") -> str:
    return f"""<?xml version="1.0"?>
<robot name="test_rig">
  {comment_before}
  <link name="base">
    {comment_inside}
    <inertial>
      <mass value="2"/>
      <inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="3"/>
    </inertial>
    <collision><geometry><box size="0.1 0.2 0.3"/></geometry></collision>
  </link>
</robot>
"""


def test_comments_in_a_real_file_through_the_cli(tmp_path, capsys) -> None:  # type: ignore[no-untyped-def]
    """Reader + runner + suppression, as a user writes it (issue 5's comment syntax).

    The tensor (1, 1, 3) breaks I1 + I2 >= I3 (a property of every rigid body); both
    rules that fire on it are allowed, one stale allowance is reported as info.
    """
    import json

    from linkcheck.cli import main

    path = tmp_path / "rig.urdf"
    path.write_text(_urdf("<!-- linkcheck: allow inertia-triangle-inequality, inertia-exceeds-geometry - test rig -->",
                          "<!-- linkcheck: allow com-offset: old -->"))
    code = main(["--format", "json", str(path)])
    report = json.loads(capsys.readouterr().out)
    rules = [(f["rule"], f["severity"]) for f in report["files"][0]["findings"]]
    assert ("suppression-unused", "info") in rules
    assert not any(r.startswith("inertia-") for r, _ in rules)
    assert code == 0  # infos stay below the default fail-on (warning)

    path.write_text(_urdf("<!-- linkcheck: allow inertia-triangle-inequality - only one -->"))
    code = main(["--format", "json", str(path)])
    rules = [f["rule"] for f in json.loads(capsys.readouterr().out)["files"][0]["findings"]]
    assert "inertia-exceeds-geometry" in rules and "inertia-triangle-inequality" not in rules
    assert code == 1
