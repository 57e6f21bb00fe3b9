"""Configuration: discovery, precedence, per-link globs, and errors for every bad input.

Expected behaviour comes from issue 5 ("CLI > file > defaults", "walking up from
each checked file", "unknown keys and bad values are errors with the key's name")
and the TOML 1.0 spec (tables, arrays of tables); numbers are read back through
Python's tomllib, not through the code under test.
"""

from __future__ import annotations

from dataclasses import fields
from pathlib import Path

import pytest

from linkcheck.config import KEYS, THRESHOLDS, clear_cache, link_settings, load_settings, rule_enabled
from linkcheck.errors import ConfigError, LinkcheckError
from linkcheck.settings import DEFAULT, Settings


@pytest.fixture(autouse=True)
def _fresh() -> None:
    clear_cache()


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    return path


def robot(tmp_path: Path, rel: str = "repo/pkg/urdf/robot.urdf") -> Path:
    return write(tmp_path / rel, "<robot name='r'/>\n")


def test_defaults_without_any_config(tmp_path: Path) -> None:
    assert load_settings(robot(tmp_path)) == DEFAULT


def test_discovery_walks_up_from_the_file(tmp_path: Path) -> None:
    write(tmp_path / "repo/pyproject.toml", "[project]\nname='x'\n\n[tool.linkcheck]\ncom-offset-warn = 0.4\n")
    # a nearer pyproject.toml without a linkcheck table is passed over (issue 5: nearest with a section)
    write(tmp_path / "repo/pkg/pyproject.toml", "[project]\nname = 'pkg'\n")
    assert load_settings(robot(tmp_path)).com_offset_warn == 0.4
    # the folder itself works as a start too
    assert load_settings(tmp_path / "repo/pkg/urdf").com_offset_warn == 0.4


def test_nearest_config_wins_and_linkcheck_toml_uses_top_level_keys(tmp_path: Path) -> None:
    write(tmp_path / "repo/pyproject.toml", "[tool.linkcheck]\ncom-offset-warn = 0.4\nfail-on = 'error'\n")
    write(tmp_path / "repo/pkg/linkcheck.toml", "com-offset-warn = 0.3\n")
    s = load_settings(robot(tmp_path))
    assert s.com_offset_warn == 0.3
    assert s.fail_on == "warning"  # files do not merge: the nearest one governs
    other = robot(tmp_path, "repo/other/robot.urdf")
    assert load_settings(other).com_offset_warn == 0.4


def test_precedence_cli_over_file_over_defaults(tmp_path: Path) -> None:
    write(tmp_path / "repo/pyproject.toml", "[tool.linkcheck]\nfail-on = 'error'\ncom-offset-warn = 0.4\n"
          "severity = { com-offset = 'error', inertia-mismatch = 'info' }\n")
    s = load_settings(robot(tmp_path), cli={"com_offset_warn": 0.5, "fail_on": None,
                                             "severity": {"inertia-mismatch": "error"}})
    assert s.com_offset_warn == 0.5  # CLI
    assert s.fail_on == "error"  # file (CLI value None = not given)
    assert s.mismatch_scale_warn == DEFAULT.mismatch_scale_warn == 3.0  # default (DESIGN.md: s outside [1/3, 3])
    assert s.severity == {"com-offset": "error", "inertia-mismatch": "error"}


def test_explicit_config_replaces_discovery(tmp_path: Path) -> None:
    write(tmp_path / "repo/pyproject.toml", "[tool.linkcheck]\ncom-offset-warn = 0.4\n")
    explicit = write(tmp_path / "elsewhere/ci.toml", "com-offset-warn = 0.9\n")
    assert load_settings(robot(tmp_path), explicit=explicit).com_offset_warn == 0.9
    with pytest.raises(ConfigError, match="not found"):
        load_settings(robot(tmp_path), explicit=tmp_path / "missing.toml")
    bare = write(tmp_path / "elsewhere/pyproject.toml", "[project]\nname = 'x'\n")
    with pytest.raises(ConfigError, match=r"no \[tool\.linkcheck\] table"):
        load_settings(robot(tmp_path), explicit=bare)


def test_per_link_globs(tmp_path: Path) -> None:
    write(tmp_path / "repo/pyproject.toml", """
[tool.linkcheck]
ignore = ["mesh-inside-out"]

[[tool.linkcheck.links]]
pattern = "wheel_*"
ignore = ["com-offset"]
density = 1200

[[tool.linkcheck.links]]
pattern = "wheel_front_*"
ignore = ["inertia-mismatch"]
mass = 0.8

[[tool.linkcheck.links]]
pattern = "arm::*"
density = 2700.0
""")
    s = load_settings(robot(tmp_path))
    # fnmatch glob semantics (Python docs, fnmatch.fnmatchcase: case-sensitive, * matches anything)
    assert link_settings(s, "wheel_rear_left") == (("com-offset",), 1200.0, None)
    assert link_settings(s, "wheel_front_left") == (("com-offset", "inertia-mismatch"), 1200.0, 0.8)
    assert link_settings(s, "Wheel_rear") == ((), None, None)
    assert link_settings(s, "arm::upper") == ((), 2700.0, None)
    assert link_settings(s, "base") == ((), None, None)
    assert not rule_enabled(s, "com-offset", "wheel_rear_left")
    assert rule_enabled(s, "com-offset", "base")
    assert not rule_enabled(s, "mesh-inside-out", "base")
    selected = s.replace(select=("com-offset",))
    assert not rule_enabled(selected, "inertia-mismatch", "base")


def test_paths_are_relative_to_the_config_file(tmp_path: Path) -> None:
    write(tmp_path / "repo/linkcheck.toml", "model-paths = ['models', '/abs/models']\n"
          "[package-paths]\nmy_robot = 'src/my_robot'\n")
    s = load_settings(robot(tmp_path))
    assert Path(s.package_paths["my_robot"]) == (tmp_path / "repo/src/my_robot").resolve()
    assert [Path(p) for p in s.model_paths] == [(tmp_path / "repo/models").resolve(), Path("/abs/models")]


@pytest.mark.parametrize("body, key", [
    ("com-ofset-warn = 0.3\n", "com-ofset-warn"),
    ("[[tool.linkcheck.links]]\npattern = 'a*'\ndensty = 3\n", "densty"),
    ("fail_on = 'error'\n", "fail_on"),
])
def test_unknown_key_is_an_error_naming_file_line_and_key(tmp_path: Path, body: str, key: str) -> None:
    cfg = write(tmp_path / "repo/pyproject.toml", "[project]\nname = 'x'\n\n[tool.linkcheck]\n" + body)
    with pytest.raises(ConfigError) as err:
        load_settings(robot(tmp_path))
    message = str(err.value)
    line = next(i + 1 for i, ln in enumerate(cfg.read_text().splitlines()) if ln.startswith(key))
    assert f"pyproject.toml:{line}:" in message
    assert key in message and "unknown key" in message
    assert "\n" not in message
    assert isinstance(err.value, LinkcheckError)


def test_unknown_key_suggests_the_near_one(tmp_path: Path) -> None:
    write(tmp_path / "repo/linkcheck.toml", "com-ofset-warn = 0.3\n")
    with pytest.raises(ConfigError, match="did you mean 'com-offset-warn'"):
        load_settings(robot(tmp_path))


@pytest.mark.parametrize("body, fragment", [
    ("com-offset-warn = 'abc'", "com-offset-warn: expected a number, got 'abc'"),
    ("com-offset-warn = true", "expected a number, got true"),  # TOML booleans are not numbers
    ("com-offset-warn = -0.2", "must be > 0"),
    ("com-offset-warn = nan", "finite"),  # TOML 1.0 allows nan/inf literals
    ("mismatch-scale-warn = 0.5", "must be > 1"),
    ("fail-on = 'sometimes'", "fail-on: expected one of error, warning, info, never"),
    ("geometry = 'both'", "geometry: expected one of collision, visual"),
    ("select = ['inertia-mismach']", "unknown rule 'inertia-mismach' (did you mean 'inertia-mismatch'?)"),
    ("ignore = 'com-offset'", "expected a list of rule names"),
    ("severity = { com-offset = 'fatal' }", "severity.com-offset: expected one of error, warning, info"),
    ("severity = { no-such-rule = 'error' }", "unknown rule 'no-such-rule'"),
    ("density-range = [25000, 50]", "min must be below max"),
    ("density-range = [50]", "expected [min, max]"),
    ("default-density = 0", "must be > 0"),
    ("package-paths = ['a']", "expected a table of package name = folder"),
    ("com-offset-info = 0.5", "com-offset-info (0.5) must not exceed com-offset-warn (0.25)"),
    ("[[links]]\ndensity = 3", "needs pattern"),
    ("[[links]]\npattern = 'a'\nmass = -1", "links] mass: must be > 0"),
])
def test_bad_values_are_one_line_errors(tmp_path: Path, body: str, fragment: str) -> None:
    write(tmp_path / "repo/linkcheck.toml", body + "\n")
    with pytest.raises(ConfigError) as err:
        load_settings(robot(tmp_path))
    assert fragment in str(err.value)
    assert str(err.value).startswith("repo/linkcheck.toml") or "linkcheck.toml" in str(err.value)
    assert "\n" not in str(err.value)


def test_toml_syntax_error_names_file_and_line(tmp_path: Path) -> None:
    write(tmp_path / "repo/linkcheck.toml", "fail-on = 'error'\ncom-offset-warn = = 3\n")
    with pytest.raises(ConfigError, match=r"linkcheck\.toml: invalid TOML: .*line 2"):
        load_settings(robot(tmp_path))


def test_bad_cli_values_name_the_option(tmp_path: Path) -> None:
    with pytest.raises(ConfigError, match="^command line: select: unknown rule 'bogus'"):
        load_settings(robot(tmp_path), cli={"select": "bogus,com-offset"})
    with pytest.raises(ConfigError, match="^command line: fail-on"):
        load_settings(robot(tmp_path), cli={"fail_on": "loud"})
    s = load_settings(robot(tmp_path), cli={"select": "com-offset, inertia-mismatch", "density_min": 10,
                                             "package_paths": ["pkg=somewhere"]})
    assert s.select == ("com-offset", "inertia-mismatch")
    assert s.density_min == 10 and s.density_max == DEFAULT.density_max
    assert Path(s.package_paths["pkg"]) == Path.cwd() / "somewhere"


def test_every_threshold_of_settings_has_a_key() -> None:
    numeric = {f.name for f in fields(Settings) if f.type in ("float", "float | None")}
    covered = {spec[0] for spec in THRESHOLDS.values()} | {"density_min", "density_max"}
    assert numeric == covered


def test_every_key_is_read(tmp_path: Path) -> None:
    """One file setting every documented key to a non-default value changes every field."""
    thresholds = "\n".join(f"{k} = {_non_default(k)}" for k in THRESHOLDS)
    write(tmp_path / "repo/linkcheck.toml", f"""
fail-on = "info"
select = ["com-offset", "inertia-mismatch"]
ignore = ["mesh-inside-out"]
severity = {{ com-offset = "error" }}
density-range = [100, 20000]
geometry = "visual"
model-paths = ["models"]
{thresholds}

[package-paths]
demo_bot = "src/demo_bot"

[[links]]
pattern = "leg_*"
ignore = ["com-offset"]
mass = 2.5
""")
    s = load_settings(robot(tmp_path))
    changed = {f.name for f in fields(Settings) if getattr(s, f.name) != getattr(DEFAULT, f.name)}
    assert changed == {f.name for f in fields(Settings)}
    assert len(KEYS) == len(set(KEYS))


def _non_default(key: str) -> str:
    name = THRESHOLDS[key][0]
    value = getattr(DEFAULT, name)
    if value is None:
        return "1500.0"
    if key.endswith("-info") or key == "mesh-min-extent":
        return repr(value * 0.9)
    return repr(value * 1.1 if value > 0 else 0.01)


def test_cli_package_paths_add_to_the_files(tmp_path: Path) -> None:
    write(tmp_path / "repo/linkcheck.toml", "[package-paths]\na = 'src/a'\nb = 'src/b'\n")
    s = load_settings(robot(tmp_path), cli={"package_paths": {"b": "/opt/b"}})
    assert Path(s.package_paths["a"]) == (tmp_path / "repo/src/a").resolve()
    assert s.package_paths["b"] == "/opt/b"


def test_cli_config_file_through_the_command_line(tmp_path: Path) -> None:
    """The real CLI turns a bad config into exit 2 and one line naming file and key (DESIGN.md exit codes)."""
    import subprocess
    import sys

    urdf = robot(tmp_path)
    write(tmp_path / "repo/linkcheck.toml", "com-offset-warn = 'far'\n")
    r = subprocess.run([sys.executable, "-m", "linkcheck", str(urdf)], capture_output=True, text=True,
                       cwd=tmp_path, timeout=120)
    assert r.returncode == 2
    assert r.stderr.strip().count("\n") == 0 and "Traceback" not in r.stderr
    assert "repo/linkcheck.toml:1:" in r.stderr and "com-offset-warn" in r.stderr
