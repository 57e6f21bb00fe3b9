"""The README is the user's contract: every rule and every configuration key is documented there."""

from __future__ import annotations

import re
import shlex
from pathlib import Path

from linkcheck.config import KEYS
from linkcheck.rules import RULES

README = (Path(__file__).resolve().parents[1] / "README.md").read_text(encoding="utf-8")
DESIGN_CATALOGUE = """xml-malformed value-malformed mesh-unavailable inertial-missing mass-not-positive
inertia-not-positive-definite inertia-triangle-inequality inertia-exceeds-geometry inertia-placeholder
inertia-wrong-reference-point inertia-product-sign inertia-units-suspect density-implausible
com-outside-geometry com-offset inertia-mismatch inertial-incomplete estimate-unavailable
mesh-not-watertight mesh-inside-out mesh-units-suspect massless-moving-link""".split()  # DESIGN.md rule table


def test_every_rule_has_a_row_with_its_default_severity():
    assert set(DESIGN_CATALOGUE) <= set(RULES)
    for name, rule in RULES.items():
        row = re.search(rf"^\| `{re.escape(name)}` \| ([a-z /]+) \|", README, re.M)
        assert row, f"README rule table lacks {name}"
        assert rule.severity in row.group(1)


def test_every_config_key_is_documented():
    for key in KEYS:
        assert f"`{key}`" in README or (key == "links" and "`[[links]]`" in README), key


def test_ci_runs_the_readme_test_command():
    block = re.search(r"To run the tests:\n\n```sh\n(.+?)\n```", README, re.S)
    assert block, "README quick start lost its test command"
    ci = (Path(__file__).resolve().parents[1] / ".ci" / "run").read_text()
    assert block.group(1).strip() in ci
    assert shlex.split(block.group(1))[:2] == ["pip", "install"]
