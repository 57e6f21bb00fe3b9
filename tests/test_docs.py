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


def _yaml_block(after: str) -> str:
    block = re.search(re.escape(after) + r".*?```yaml\n(.+?)\n```", README, re.S)
    assert block, f"README lost the YAML block after {after!r}"
    return block.group(1)


def test_hook_snippet_names_the_shipped_hooks():
    import yaml

    config = yaml.safe_load(_yaml_block("## Use as a pre-commit hook"))
    hooks = yaml.safe_load((Path(__file__).resolve().parents[1] / ".pre-commit-hooks.yaml").read_text())
    ids = {h["id"] for h in hooks}
    repo = config["repos"][0]
    assert repo["rev"] and {h["id"] for h in repo["hooks"]} <= ids
    assert "linkcheck-fix" in ids and "linkcheck-fix" in _yaml_block("## Use as a pre-commit hook")


def test_ci_workflow_steps_run_as_documented(tmp_path):
    """Every `linkcheck` step of the README's workflow, run on a copy of the fixtures."""
    import json
    import shutil
    import subprocess
    import sys

    import jsonschema
    import yaml

    workflow = yaml.safe_load(_yaml_block("## Use in CI"))
    steps = [s["run"] for job in workflow["jobs"].values() for s in job["steps"]
             if "run" in s and s["run"].lstrip().startswith("linkcheck")]
    assert len(steps) == 3
    shutil.copytree(Path(__file__).resolve().parents[1] / "fixtures", tmp_path / "fixtures")
    for step in steps:
        command = step.split("#")[0].split(">")[0].split()
        p = subprocess.run([sys.executable, "-m", "linkcheck", "--no-cache", *command[1:]], cwd=tmp_path,
                           capture_output=True, text=True, timeout=300)
        assert "Traceback" not in p.stderr and "internal error" not in p.stderr
        if "--format" in command and "github" in command:
            assert p.returncode == 1 and p.stdout.startswith("::error ")  # the demo has planted errors
        elif "sarif" in command:
            assert p.returncode == 0  # --fail-on never: the upload step always gets its file
            schema = json.loads((Path(__file__).parent / "data" / "sarif-schema-2.1.0.json").read_text())
            jsonschema.Draft4Validator(schema).validate(json.loads(p.stdout))
        else:
            assert p.returncode == 1 and "+    <inertial>" in p.stdout  # fills pending: shown, not written
    assert (tmp_path / "fixtures" / "demo" / "harvester.urdf").read_bytes() == \
        (Path(__file__).resolve().parents[1] / "fixtures" / "demo" / "harvester.urdf").read_bytes()
