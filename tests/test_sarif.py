"""SARIF output validated against the OASIS SARIF 2.1.0 JSON schema and GitHub's ingestion rules.

Outside sources: tests/data/sarif-schema-2.1.0.json (OASIS SARIF 2.1.0 Errata 01 schema,
source in tests/data/README.md); GitHub Docs, "SARIF support for code scanning"
(the properties code scanning requires, the 1024-character description limit);
SARIF 2.1.0 §3.27.10 (result.level is none, note, warning or error); and the rule
table of DESIGN.md (the catalogue names are the interface).
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any

import jsonschema
import pytest

from helpers import run_linkcheck, write_impossible_cart
from linkcheck.report.sarif import render_sarif
from linkcheck.rules import RULES

SCHEMA = json.loads((Path(__file__).parent / "data" / "sarif-schema-2.1.0.json").read_text(encoding="utf-8"))

#: The rule column of DESIGN.md's catalogue, copied from the contract, plus our own suppression rule.
DESIGN_RULES = """xml-malformed value-malformed mesh-unavailable inertial-missing mass-not-positive
inertia-not-positive-definite inertia-triangle-inequality inertia-exceeds-geometry inertia-placeholder
inertia-wrong-reference-point inertia-product-sign inertia-units-suspect density-implausible
com-outside-geometry com-offset inertia-mismatch inertial-incomplete estimate-unavailable
mesh-not-watertight mesh-inside-out mesh-units-suspect massless-moving-link""".split()
#: Our own additions beyond the DESIGN.md catalogue.
OWN_RULES = ["geometry-note", "suppression-unused"]


def report(base: Path) -> dict[str, Any]:
    """A report shaped as DESIGN.md's JSON report (version 1)."""
    return {
        "version": 1,
        "files": [
            {"path": str(base / "robots" / "demo bot.urdf"), "format": "urdf",
             "links": [{"name": "forearm", "line": 42, "stated": None, "computed": None},
                       {"name": "base", "line": 7, "stated": None, "computed": None}],
             "findings": [
                 {"rule": "inertia-triangle-inequality", "severity": "error", "link": "forearm", "line": 42,
                  "message": "link 'forearm': principal moments 1, 1, 3 break I1 + I2 >= I3", "fixable": True},
                 {"rule": "com-offset", "severity": "info", "link": "base", "line": None,
                  "message": "stated COM 0.12 m from the centroid", "fixable": True},
                 {"rule": "mesh-unavailable", "severity": "error", "link": "base", "line": 9,
                  "message": "package://demo/meshes/a.stl not found", "fixable": False},
                 {"rule": "mesh-unavailable", "severity": "error", "link": "base", "line": 11,
                  "message": "package://demo/meshes/b.stl not found", "fixable": False},
             ]},
            {"path": "worlds/yard.sdf", "format": "sdf", "links": [],
             "findings": [{"rule": "xml-malformed", "severity": "error", "link": None, "line": None,
                           "message": "not well-formed (invalid token)", "fixable": False}]},
        ],
        "summary": {"files": 2, "links": 2, "errors": 4, "warnings": 0, "infos": 1, "changed": 0},
    }


@pytest.fixture()
def sarif(tmp_path: Path) -> dict[str, Any]:
    return json.loads(render_sarif(report(tmp_path), base=tmp_path))


def test_validates_against_the_oasis_schema(sarif: dict[str, Any]) -> None:
    jsonschema.Draft4Validator.check_schema(SCHEMA)
    jsonschema.Draft4Validator(SCHEMA).validate(sarif)


def test_schema_catches_a_broken_document(sarif: dict[str, Any]) -> None:
    """The check can fail: the schema rejects startLine 0 and an unknown level."""
    bad = json.loads(json.dumps(sarif))
    bad["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]["startLine"] = 0
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.Draft4Validator(SCHEMA).validate(bad)
    bad = json.loads(json.dumps(sarif))
    bad["runs"][0]["results"][0]["level"] = "info"
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.Draft4Validator(SCHEMA).validate(bad)


def test_github_required_properties(sarif: dict[str, Any]) -> None:
    assert sarif["version"] == "2.1.0" and sarif["$schema"].endswith("sarif-schema-2.1.0.json")
    driver = sarif["runs"][0]["tool"]["driver"]
    assert driver["name"] == "linkcheck" and re.fullmatch(r"\d+\.\d+\.\d+.*", driver["version"])
    assert "informationUri" not in driver or driver["informationUri"].startswith("https://")
    for rule in driver["rules"]:
        assert rule["id"] and rule["help"]["text"] and rule["help"]["markdown"]
        assert 0 < len(rule["shortDescription"]["text"]) <= 1024
        assert 0 < len(rule["fullDescription"]["text"]) <= 1024
        assert rule["defaultConfiguration"]["level"] in ("note", "warning", "error")
    for result in sarif["runs"][0]["results"]:
        assert result["message"]["text"]
        physical = result["locations"][0]["physicalLocation"]
        assert physical["artifactLocation"]["uri"] and physical["region"]["startLine"] >= 1
        assert result["partialFingerprints"]


def test_driver_rules_are_the_design_catalogue(sarif: dict[str, Any]) -> None:
    ids = [r["id"] for r in sarif["runs"][0]["tool"]["driver"]["rules"]]
    assert sorted(ids) == sorted(DESIGN_RULES + OWN_RULES) == sorted(RULES)
    levels = {r["id"]: r["defaultConfiguration"]["level"] for r in sarif["runs"][0]["tool"]["driver"]["rules"]}
    # DESIGN.md defaults: xml-malformed error, inertial-missing warning, estimate-unavailable info (= SARIF note)
    assert (levels["xml-malformed"], levels["inertial-missing"], levels["estimate-unavailable"]) == (
        "error", "warning", "note")


def test_results_levels_locations_and_fixable(sarif: dict[str, Any]) -> None:
    rules = sarif["runs"][0]["tool"]["driver"]["rules"]
    results = sarif["runs"][0]["results"]
    assert [r["ruleId"] for r in results] == ["inertia-triangle-inequality", "com-offset", "mesh-unavailable",
                                               "mesh-unavailable", "xml-malformed"]
    assert [r["level"] for r in results] == ["error", "note", "error", "error", "error"]
    for r in results:
        assert rules[r["ruleIndex"]]["id"] == r["ruleId"]
    loc = [r["locations"][0]["physicalLocation"] for r in results]
    # relative, POSIX, percent-encoded (RFC 3986: a space in a URI reference is %20)
    assert loc[0]["artifactLocation"]["uri"] == "robots/demo%20bot.urdf"
    assert loc[4]["artifactLocation"]["uri"] == "worlds/yard.sdf"
    # line of the finding, else of its link, else 1
    assert [p["region"]["startLine"] for p in loc] == [42, 7, 9, 11, 1]
    assert [r["properties"]["fixable"] for r in results] == [True, True, False, False, False]
    assert "base" in results[1]["message"]["text"]


def test_fingerprints_survive_moved_lines_and_tell_findings_apart(tmp_path: Path) -> None:
    first = json.loads(render_sarif(report(tmp_path), base=tmp_path))["runs"][0]["results"]
    moved = report(tmp_path)
    for f in moved["files"][0]["findings"]:
        f["line"] = (f["line"] or 0) + 5
    second = json.loads(render_sarif(moved, base=tmp_path))["runs"][0]["results"]
    prints = [json.dumps(r["partialFingerprints"], sort_keys=True) for r in first]
    assert prints == [json.dumps(r["partialFingerprints"], sort_keys=True) for r in second]
    assert len(set(prints)) == len(prints)


def test_path_outside_the_base_becomes_a_file_uri(tmp_path: Path) -> None:
    data = report(tmp_path / "sub")
    doc = json.loads(render_sarif(data, base=tmp_path / "elsewhere"))
    uri = doc["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
    assert uri.startswith("file:///") and uri.endswith("demo%20bot.urdf")
    jsonschema.Draft4Validator(SCHEMA).validate(doc)


def test_empty_report_is_a_valid_run(tmp_path: Path) -> None:
    doc = json.loads(render_sarif({"version": 1, "files": [], "summary": {}}, base=tmp_path))
    jsonschema.Draft4Validator(SCHEMA).validate(doc)
    assert doc["runs"][0]["results"] == []


def test_plain_text_no_terminal_codes(tmp_path: Path) -> None:
    text = render_sarif(report(tmp_path), base=tmp_path)
    assert "\x1b[" not in text and text.endswith("\n")


def test_real_cli_output_validates(tmp_path: Path) -> None:
    """The whole path: a description with an impossible tensor (1 + 1 < 3) -> --format sarif -> schema."""
    write_impossible_cart(tmp_path / "robots")
    r = run_linkcheck("--format", "sarif", "robots", cwd=tmp_path)
    assert r.returncode == 1, r.stderr
    doc = json.loads(r.stdout)
    jsonschema.Draft4Validator(SCHEMA).validate(doc)
    results = doc["runs"][0]["results"]
    assert "inertia-triangle-inequality" in {x["ruleId"] for x in results}
    for x in results:
        physical = x["locations"][0]["physicalLocation"]
        assert physical["artifactLocation"]["uri"] == "robots/cart.urdf"
        assert physical["region"]["startLine"] in (2, 3)  # the link's or the inertial's line
