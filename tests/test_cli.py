"""The command line as a user runs it: a subprocess, exit codes, JSON shape, hostile input."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"


def run(*args: str, cwd: Path = ROOT) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linkcheck", *args], cwd=cwd, capture_output=True, text=True, timeout=120)


def test_clean_model_exits_0():
    p = run(str(DEMO / "harvester_clean.urdf"))
    assert p.returncode == 0, p.stdout + p.stderr
    assert "0 errors, 0 warnings, 0 infos" in p.stdout


def test_demo_explains_every_planted_defect_and_nothing_else():
    p = run("--format", "json", str(DEMO / "harvester.urdf"))
    assert p.returncode == 1
    found = {(f["link"], f["rule"]) for f in json.loads(p.stdout)["files"][0]["findings"]}
    # the defects planted by tools/make_demo.py, one per link
    assert found == {
        ("lift_column", "inertia-placeholder"),
        ("shoulder", "inertia-wrong-reference-point"),
        ("upper_arm", "inertia-triangle-inequality"),
        ("forearm", "inertia-units-suspect"),
        ("forearm", "inertia-exceeds-geometry"),  # 1e6 x too large is also physically impossible
        ("wrist", "com-outside-geometry"),
        ("camera_mount", "inertial-missing"),
        ("gripper_palm", "density-implausible"),
        ("tool_flange", "massless-moving-link"),
    }


def test_json_matches_the_contract():
    p = run("--format", "json", str(DEMO))
    report = json.loads(p.stdout)
    assert report["version"] == 1
    assert set(report["summary"]) == {"files", "links", "errors", "warnings", "infos", "changed"}
    entry = report["files"][0]
    assert set(entry) == {"path", "format", "links", "findings"} and entry["format"] == "urdf"
    base = next(k for k in entry["links"] if k["name"] == "base_cart")
    assert set(base) == {"name", "line", "stated", "computed"}
    assert set(base["computed"]) == {"volume", "density", "mass", "com", "inertia", "geometry"}
    assert base["computed"]["geometry"] == "collision"
    # box 0.8 x 0.5 x 0.25 m: volume 0.1 m^3, 40 kg -> 400 kg/m^3 (arithmetic)
    assert base["computed"]["volume"] == pytest.approx(0.1)
    assert base["computed"]["density"] == pytest.approx(400.0)
    assert len(base["stated"]["inertia"]) == 3 and all(len(r) == 3 for r in base["stated"]["inertia"])
    frame = next(k for k in entry["links"] if k["name"] == "tool_flange")
    assert frame["stated"] is None and frame["computed"] is None
    f = entry["findings"][0]
    assert set(f) == {"rule", "severity", "link", "line", "message", "fixable"}


def test_fail_on_levels():
    bad = str(DEMO / "harvester.urdf")
    assert run("--fail-on", "never", bad).returncode == 0
    assert run("--fail-on", "error", bad).returncode == 1
    assert run("--select", "com-offset", bad).returncode == 0


def test_usage_errors_exit_2_with_one_line():
    for args in (["--select", "no-such-rule", str(DEMO)], [str(DEMO / "missing.urdf")], []):
        p = run(*args)
        assert p.returncode == 2
        assert "Traceback" not in p.stderr
        assert p.stderr.strip()


def test_malformed_xml_exits_2_and_json_still_prints(tmp_path):
    bad = tmp_path / "broken.urdf"
    bad.write_text('<robot name="r">\n  <link name="a">\n</robot>\n')
    p = run("--format", "json", str(bad))
    assert p.returncode == 2 and "Traceback" not in p.stderr
    assert "broken.urdf" in p.stderr and len(p.stderr.strip().splitlines()) == 1
    assert json.loads(p.stdout)["files"][0]["findings"][0]["rule"] == "xml-malformed"


def test_hostile_files_are_refused_without_leaking(tmp_path):
    secret = tmp_path / "secret.txt"
    secret.write_text("TOPSECRET-4242")
    xxe = tmp_path / "xxe.urdf"
    xxe.write_text(f'<?xml version="1.0"?>\n<!DOCTYPE robot [<!ENTITY s SYSTEM "file://{secret}">]>\n'
                   '<robot name="r"><link name="&s;"/></robot>\n')
    bomb = tmp_path / "bomb.urdf"
    ents = "".join(f'<!ENTITY e{i} "{"&e%d;" % (i - 1) * 10}">' for i in range(1, 10))
    bomb.write_text(f'<?xml version="1.0"?>\n<!DOCTYPE robot [<!ENTITY e0 "ha">{ents}]>\n<robot name="&e9;"/>\n')
    for f in (xxe, bomb):
        p = run("--format", "json", str(f))
        assert p.returncode == 2
        assert "TOPSECRET" not in p.stdout + p.stderr and "Traceback" not in p.stderr
        assert json.loads(p.stdout)["files"][0]["findings"][0]["rule"] == "xml-malformed"


def test_malformed_number_is_a_finding_not_a_crash(tmp_path):
    f = tmp_path / "comma.urdf"
    f.write_text('<robot name="r">\n<link name="a">\n<inertial><mass value="1,5"/>'
                 '<inertia ixx="1" ixy="0" ixz="0" iyy="1" iyz="0" izz="1"/></inertial>\n</link>\n</robot>\n')
    p = run(str(f))
    assert p.returncode == 1 and "Traceback" not in p.stderr
    assert "value-malformed" in p.stdout and "comma.urdf:3" in p.stdout


def test_text_report_is_plain_when_piped():
    p = run(str(DEMO / "harvester.urdf"))
    assert "\x1b[" not in p.stdout
    assert "fixtures/demo/harvester.urdf:" in p.stdout and "inertia-placeholder" in p.stdout


def test_python_api_returns_the_json_entry():
    import linkcheck

    entry = linkcheck.check_file(DEMO / "harvester.urdf")
    assert entry["format"] == "urdf"
    assert {f["rule"] for f in entry["findings"]} >= {"inertia-placeholder", "inertial-missing"}


XACRO = """<?xml version="1.0"?>
<robot name="arm" xmlns:xacro="http://www.ros.org/wiki/xacro">
  <xacro:macro name="box_inertial" params="m x y z">
    <inertial><mass value="${m}"/><inertia ixx="${m*(y*y+z*z)/12}" ixy="0" ixz="0" iyy="${m*(x*x+z*z)/12}" iyz="0" izz="${m*(x*x+y*y)/12}"/></inertial>
  </xacro:macro>
  <link name="base">
    <xacro:box_inertial m="2" x="0.4" y="0.1" z="0.2"/>
    <collision><geometry><box size="0.4 0.1 0.2"/></geometry></collision>
  </link>
</robot>
"""


def test_xacro_macro_inertial_is_not_called_missing_and_never_rewritten(tmp_path):
    f = tmp_path / "arm.urdf.xacro"
    f.write_text(XACRO)
    p = run("--format", "json", str(f))
    rules = {x["rule"] for x in json.loads(p.stdout)["files"][0]["findings"]}
    assert "inertial-missing" not in rules and "value-malformed" in rules
    fixed = run("--fix", str(f))
    assert f.read_text() == XACRO and "not fixed" not in fixed.stdout


def test_closed_pipe_is_not_an_internal_error(tmp_path):
    # `linkcheck ... | head -1` on a report far larger than a pipe's buffer: the reader goes away
    links = "".join(f'<link name="l{i}"><inertial><mass value="1"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" '
                    f'iyz="0" izz="1"/></inertial></link>' for i in range(400))
    big = tmp_path / "big.urdf"
    big.write_text(f'<robot name="r">{links}</robot>')
    p = subprocess.run(f"{sys.executable} -m linkcheck --format json {big} | head -c 10", shell=True, cwd=ROOT,
                       capture_output=True, text=True, timeout=120)
    assert "Traceback" not in p.stderr and "internal error" not in p.stderr


def test_each_file_fails_at_its_own_configured_level(tmp_path):
    # placeholder identity tensor: a warning (DESIGN.md); folder a tolerates warnings, folder b does not
    body = ('<robot name="r"><link name="p"><inertial><mass value="2"/><inertia ixx="1" ixy="0" ixz="0" iyy="1" '
            'iyz="0" izz="1"/></inertial></link></robot>')
    for name, level in (("a", "error"), ("b", "warning")):
        (tmp_path / name).mkdir()
        (tmp_path / name / "linkcheck.toml").write_text(f'fail-on = "{level}"\n')
        (tmp_path / name / "r.urdf").write_text(body)
    assert run(str(tmp_path / "a" / "r.urdf")).returncode == 0
    assert run(str(tmp_path / "a" / "r.urdf"), str(tmp_path / "b" / "r.urdf")).returncode == 1
    assert run("--fail-on", "warning", str(tmp_path / "a" / "r.urdf")).returncode == 1  # CLI beats the file


def test_json_computed_mass_from_a_density_when_nothing_is_stated():
    # camera_mount has geometry, no block: box 0.05 x 0.09 x 0.03 m at 1200 kg/m³ = 0.162 kg (arithmetic)
    p = run("--format", "json", "--density", "1200", str(DEMO / "harvester.urdf"))
    cam = next(k for k in json.loads(p.stdout)["files"][0]["links"] if k["name"] == "camera_mount")
    assert cam["stated"] is None
    assert cam["computed"]["mass"] == pytest.approx(1200 * 0.05 * 0.09 * 0.03)
    assert cam["computed"]["inertia"][0][0] == pytest.approx(0.162 * (0.09**2 + 0.03**2) / 12)  # handbook box
