"""Settings from pyproject.toml ``[tool.linkcheck]`` or linkcheck.toml, with CLI overrides.

Discovery walks up from the checked file's folder to the first linkcheck.toml, or
pyproject.toml that has a ``[tool.linkcheck]`` table; ``--config FILE`` replaces
discovery. Precedence: command line > file > defaults. Unknown keys and bad values
raise ConfigError naming the file, line and key: a typo must never be ignored.
"""

from __future__ import annotations

import math
import re
import sys
from dataclasses import fields
from functools import lru_cache
from pathlib import Path
from typing import Any

from linkcheck.errors import ConfigError
from linkcheck.paths import config_candidates, display_path
from linkcheck.severity import FAIL_ON, SEVERITIES
from linkcheck.rules import RULES, suggest
from linkcheck.settings import DEFAULT, LinkOverride, LinkSettings, Settings

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised on 3.10 only
    import tomli as tomllib

GEOMETRY = ("collision", "visual")

#: Threshold keys: kebab key -> (Settings field, lower bound, bound inclusive, upper bound or None).
THRESHOLDS: dict[str, tuple[str, float, bool, float | None]] = {
    "tensor-rtol": ("tensor_rtol", 0.0, True, 1.0),
    "exceeds-geometry-factor": ("exceeds_geometry_factor", 0.0, False, None),
    "com-outside-tolerance": ("com_outside_tolerance", 0.0, True, None),
    "com-offset-warn": ("com_offset_warn", 0.0, False, None),
    "com-offset-info": ("com_offset_info", 0.0, False, None),
    "mismatch-scale-warn": ("mismatch_scale_warn", 1.0, False, None),
    "mismatch-scale-info": ("mismatch_scale_info", 1.0, False, None),
    "mismatch-shape-warn": ("mismatch_shape_warn", 0.0, False, None),
    "mismatch-shape-info": ("mismatch_shape_info", 0.0, False, None),
    "units-tolerance": ("units_tolerance", 0.0, False, 1.0),
    "reference-point-tolerance": ("reference_point_tolerance", 0.0, False, 1.0),
    "reference-point-matters": ("reference_point_matters", 0.0, True, None),
    "product-sign-matters": ("product_sign_matters", 0.0, True, None),
    "placeholder-equal-tolerance": ("placeholder_equal_tolerance", 0.0, True, 1.0),
    "placeholder-anisotropy": ("placeholder_anisotropy", 1.0, True, None),
    "mesh-max-extent": ("mesh_max_extent", 0.0, False, None),
    "mesh-min-extent": ("mesh_min_extent", 0.0, False, None),
    "default-density": ("default_density", 0.0, False, None),
}

OTHER_KEYS = ("fail-on", "select", "ignore", "severity", "density-range", "geometry",
              "package-paths", "model-paths", "links")
KEYS = OTHER_KEYS[:5] + tuple(THRESHOLDS) + OTHER_KEYS[5:]
LINK_KEYS = ("pattern", "ignore", "density", "mass")

#: Pairs that must be ordered: (smaller, larger).
ORDERED = (("com-offset-info", "com-offset-warn"), ("mismatch-scale-info", "mismatch-scale-warn"),
           ("mismatch-shape-info", "mismatch-shape-warn"), ("mesh-min-extent", "mesh-max-extent"))


class _Where:
    """Names a place in a config file for error messages: file, line, key."""

    def __init__(self, path: Path | None, text: str = "", header: str | None = None, occurrence: int = 0):
        self.path, self.text, self.header, self.occurrence = path, text, header, occurrence

    def at(self, header: str | None, occurrence: int = 0) -> _Where:
        return _Where(self.path, self.text, header, occurrence)

    def error(self, key: str, problem: str) -> ConfigError:
        if self.path is None:
            return ConfigError(f"command line: {key}: {problem}")
        line = self._line(key.split(".")[0].split("[")[0])
        where = display_path(self.path) + (f":{line}" if line else "")
        section = f"[{self.header}] " if self.header else ""
        return ConfigError(f"{where}: {section}{key}: {problem}")

    def _line(self, key: str) -> int | None:
        lines = self.text.splitlines()
        start = 0
        if self.header:
            pattern = re.compile(r"^\s*\[\[?\s*" + re.escape(self.header).replace(r"\.", r"\s*\.\s*") + r"\s*\]\]?\s*(#.*)?$")
            hits = [i for i, ln in enumerate(lines) if pattern.match(ln)]
            if not hits:
                return None
            start = hits[min(self.occurrence, len(hits) - 1)]
        keyed = re.compile(r"^\s*([\"']?)" + re.escape(key) + r"\1\s*=")
        for i in range(start, len(lines)):
            if i > start and self.header and lines[i].lstrip().startswith("["):
                break
            if keyed.match(lines[i]):
                return i + 1
        return start + 1 if self.header else None


# --------------------------------------------------------------------------- reading files


@lru_cache(maxsize=None)
def _read(path: Path) -> tuple[dict[str, Any], str]:
    """Parse a TOML file once per run; a syntax error is a ConfigError with its line."""
    try:
        text = path.read_bytes().decode("utf-8")
    except OSError as exc:
        raise ConfigError(f"{display_path(path)}: cannot read configuration: {exc.strerror or exc}") from None
    except UnicodeDecodeError:
        raise ConfigError(f"{display_path(path)}: configuration is not UTF-8 text") from None
    try:
        return tomllib.loads(text), text
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(f"{display_path(path)}: invalid TOML: {exc}") from None


def _section(path: Path, explicit: bool) -> tuple[dict[str, Any], _Where] | None:
    """The linkcheck table of a config file, or None when a pyproject.toml has none."""
    data, text = _read(path)
    if path.name == "pyproject.toml":
        tool = data.get("tool")
        table = tool.get("linkcheck") if isinstance(tool, dict) else None
        if table is None:
            if explicit:
                raise ConfigError(f"{display_path(path)}: no [tool.linkcheck] table")
            return None
        if not isinstance(table, dict):
            raise _Where(path, text).error("tool.linkcheck", "expected a table")
        return table, _Where(path, text, "tool.linkcheck")
    return data, _Where(path, text)


@lru_cache(maxsize=None)
def find_config(folder: Path) -> Path | None:
    """The config file that governs files in ``folder``: the nearest one with a linkcheck section."""
    return next((c for c in config_candidates(folder) if _section(c, explicit=False) is not None), None)


@lru_cache(maxsize=None)
def _file_changes(path: Path, explicit: bool) -> tuple[tuple[str, Any], ...]:
    found = _section(path, explicit)
    if found is None:
        return ()
    table, where = found
    return tuple(_parse_table(table, where, path.parent).items())


# --------------------------------------------------------------------------- values


def _number(value: Any, key: str, where: _Where, lower: float = 0.0, inclusive: bool = False,
            upper: float | None = None) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise where.error(key, f"expected a number, got {_show(value)}")
    x = float(value)
    if not math.isfinite(x):
        raise where.error(key, f"expected a finite number, got {_show(value)}")
    if x < lower or (x == lower and not inclusive):
        raise where.error(key, f"must be {'>=' if inclusive else '>'} {lower:g}, got {x:g}")
    if upper is not None and x >= upper:
        raise where.error(key, f"must be < {upper:g}, got {x:g}")
    return x


def _show(value: Any) -> str:
    if isinstance(value, str):
        return repr(value)
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return str(value)


def _choice(value: Any, key: str, where: _Where, choices: tuple[str, ...]) -> str:
    if not isinstance(value, str) or value not in choices:
        raise where.error(key, f"expected one of {', '.join(choices)}; got {_show(value)}")
    return value


def _rule_list(value: Any, key: str, where: _Where) -> tuple[str, ...]:
    if isinstance(value, str) and where.path is None:
        value = [v.strip() for v in value.split(",") if v.strip()]
    if isinstance(value, tuple):
        value = list(value)
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise where.error(key, f"expected a list of rule names, got {_show(value)}")
    for name in value:
        _rule_name(name, key, where)
    return tuple(dict.fromkeys(value))


def _rule_name(name: str, key: str, where: _Where) -> str:
    if name not in RULES:
        hint = suggest(name)
        raise where.error(key, f"unknown rule {name!r}" + (f" (did you mean {hint!r}?)" if hint else ""))
    return name


def _path_text(value: Any, key: str, where: _Where, base: Path) -> str:
    if not isinstance(value, str) or not value:
        raise where.error(key, f"expected a folder path, got {_show(value)}")
    p = Path(value).expanduser()
    return str(p if p.is_absolute() else (base / p))


def _parse_table(table: dict[str, Any], where: _Where, base: Path) -> dict[str, Any]:
    """Validate one linkcheck table; return Settings field changes. Paths become absolute."""
    out: dict[str, Any] = {}
    for key, value in table.items():
        if key in THRESHOLDS:
            name, lower, inclusive, upper = THRESHOLDS[key]
            out[name] = _number(value, key, where, lower, inclusive, upper)
        elif key == "fail-on":
            out["fail_on"] = _choice(value, key, where, FAIL_ON)
        elif key in ("select", "ignore"):
            out[key] = _rule_list(value, key, where)
        elif key == "severity":
            out["severity"] = _severity_table(value, key, where)
        elif key == "density-range":
            out["density_min"], out["density_max"] = _density_range(value, key, where)
        elif key == "geometry":
            out["geometry"] = _choice(value, key, where, GEOMETRY)
        elif key == "package-paths":
            if not isinstance(value, dict):
                raise where.error(key, f"expected a table of package name = folder, got {_show(value)}")
            out["package_paths"] = {str(k): _path_text(v, f"{key}.{k}", where, base) for k, v in value.items()}
        elif key == "model-paths":
            if not isinstance(value, (list, tuple)):
                raise where.error(key, f"expected a list of folders, got {_show(value)}")
            out["model_paths"] = tuple(_path_text(v, key, where, base) for v in value)
        elif key == "links" and where.path is not None:
            out["links"] = _links(value, where)
        else:
            raise where.error(key, _unknown_key(key, KEYS))
    return out


def _unknown_key(key: str, known: tuple[str, ...]) -> str:
    import difflib

    hint = difflib.get_close_matches(key.replace("_", "-"), known, n=1, cutoff=0.6)
    return "unknown key" + (f" (did you mean {hint[0]!r}?)" if hint else "")


def _severity_table(value: Any, key: str, where: _Where) -> dict[str, str]:
    if not isinstance(value, dict):
        raise where.error(key, f"expected a table of rule = level, got {_show(value)}")
    return {_rule_name(r, key, where): _choice(level, f"{key}.{r}", where, SEVERITIES) for r, level in value.items()}


def _density_range(value: Any, key: str, where: _Where) -> tuple[float, float]:
    if not isinstance(value, (list, tuple)) or len(value) != 2:
        raise where.error(key, f"expected [min, max] in kg/m^3, got {_show(value)}")
    lo, hi = (_number(v, key, where) for v in value)
    if lo >= hi:
        raise where.error(key, f"min must be below max, got [{lo:g}, {hi:g}]")
    return lo, hi


def _links(value: Any, where: _Where) -> tuple[LinkOverride, ...]:
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        raise where.error("links", "expected [[links]] sections (an array of tables)")
    header = f"{where.header}.links" if where.header else "links"
    out = []
    for i, section in enumerate(value):
        here = where.at(header, i)
        for key in section:
            if key not in LINK_KEYS:
                raise here.error(key, _unknown_key(key, LINK_KEYS))
        pattern = section.get("pattern")
        if not isinstance(pattern, str) or not pattern:
            raise here.error("pattern", "each [[links]] section needs pattern = \"glob of link names\"")
        density = section.get("density")
        mass = section.get("mass")
        out.append(LinkOverride(
            pattern=pattern,
            ignore=_rule_list(section.get("ignore", []), "ignore", here),
            density=None if density is None else _number(density, "density", here),
            mass=None if mass is None else _number(mass, "mass", here),
        ))
    return tuple(out)


# --------------------------------------------------------------------------- command line

_FIELDS = {f.name for f in fields(Settings)}
_BY_FIELD = {spec[0]: key for key, spec in THRESHOLDS.items()}


def _cli_changes(cli: dict[str, Any]) -> dict[str, Any]:
    """CLI values keyed by Settings field or config key; None means "not given"."""
    where = _Where(None)
    table: dict[str, Any] = {}
    bounds: dict[str, float] = {}
    for raw, value in cli.items():
        if value is None:
            continue
        key = raw.replace("_", "-")
        if raw in _BY_FIELD:
            key = _BY_FIELD[raw]
        elif key in ("density-min", "density-max"):
            bounds[key.replace("-", "_")] = _number(value, key, where)
            continue
        elif key == "package-paths" and not isinstance(value, dict):
            value = dict(_name_value(v, key, where) for v in value)
        elif key == "severity" and not isinstance(value, dict):
            value = dict(_name_value(v, key, where) for v in value)
        table[key] = value
    return {**_parse_table(table, where, Path.cwd()), **bounds}


def _name_value(item: Any, key: str, where: _Where) -> tuple[str, str]:
    if not isinstance(item, str) or "=" not in item:
        raise where.error(key, f"expected NAME=VALUE, got {_show(item)}")
    name, _, value = item.partition("=")
    return name.strip(), value.strip()


# --------------------------------------------------------------------------- public


def load_settings(start: Path, explicit: Path | None = None, cli: dict[str, Any] | None = None) -> Settings:
    """The Settings for files at ``start`` (a file or folder): defaults < config file < CLI."""
    if explicit is not None:
        path = Path(explicit)
        if not path.is_file():
            raise ConfigError(f"{path}: configuration file not found")
        source: Path | None = path.resolve()
        file_changes = dict(_file_changes(source, True))
    else:
        start = Path(start).resolve()
        folder = start if start.is_dir() else start.parent
        source = find_config(folder)
        file_changes = dict(_file_changes(source, False)) if source is not None else {}
    cli_changes = _cli_changes(cli) if cli else {}
    merged = {**file_changes, **cli_changes}
    for table in ("severity", "package_paths"):
        if table in file_changes and table in cli_changes:
            merged[table] = {**file_changes[table], **cli_changes[table]}
    settings = DEFAULT.replace(**merged)
    _check_order(settings, source if not cli_changes else None)
    return settings


def _check_order(settings: Settings, source: Path | None) -> None:
    for small, large in ORDERED:
        a = getattr(settings, THRESHOLDS[small][0])
        b = getattr(settings, THRESHOLDS[large][0])
        if a > b:
            where = f"{display_path(source)}: " if source is not None else ""
            raise ConfigError(f"{where}{small} ({a:g}) must not exceed {large} ({b:g})")
    if settings.density_min >= settings.density_max:
        where = f"{display_path(source)}: " if source is not None else ""
        raise ConfigError(f"{where}density-range: min ({settings.density_min:g}) must be below max "
                          f"({settings.density_max:g})")
    rho = settings.default_density
    if rho is not None and not settings.density_min <= rho <= settings.density_max:
        # a fill with it would write blocks that density-implausible then reports
        where = f"{display_path(source)}: " if source is not None else ""
        grams = rho < settings.density_min and rho * 1000 <= settings.density_max
        hint = f" (in kg/m³: {rho:g} g/cm³ is {rho * 1000:g} kg/m³)" if grams else ""
        raise ConfigError(f"{where}default-density / --density {rho:g} kg/m³ is outside density-range "
                          f"{settings.density_min:g}–{settings.density_max:g} kg/m³{hint}")


def link_settings(settings: Settings, link_name: str) -> LinkSettings:
    """The [[links]] settings of one link (see Settings.for_link)."""
    return settings.for_link(link_name)


def rule_enabled(settings: Settings, rule: str, link_name: str | None = None) -> bool:
    """Whether ``rule`` reports (select, ignore and the link's [[links]] ignores)."""
    if settings.select and rule not in settings.select:
        return False
    if rule in settings.ignore:
        return False
    return link_name is None or rule not in settings.for_link(link_name).ignore


def severity_of(settings: Settings, rule: str, default: str) -> str:
    """The configured severity of ``rule``, or ``default`` (the rule's own level for the finding)."""
    return settings.severity.get(rule, default)


def clear_cache() -> None:
    """Forget discovered and parsed files (tests and long-lived callers that edit configs)."""
    _read.cache_clear()
    find_config.cache_clear()
    _file_changes.cache_clear()
