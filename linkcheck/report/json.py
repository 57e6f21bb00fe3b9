"""The JSON report of DESIGN.md: the machine interface. Keep it stable; bump ``VERSION`` on change."""

from __future__ import annotations

import json
import math

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

    from linkcheck.model import Finding

VERSION = 1


def _num(x: Any) -> float | None:
    """JSON has no nan or inf: those become null."""
    x = float(x)
    return x if math.isfinite(x) else None


def _vec(v: Any) -> list[float | None]:
    return [_num(x) for x in v]


def _mat(m: Any) -> list[list[float | None]]:
    return [_vec(row) for row in m]


def finding_entry(f: Finding) -> dict[str, Any]:
    return {"rule": f.rule, "severity": f.severity, "link": f.link, "line": f.line,
            "message": f.message, "fixable": f.fixable}


def link_entry(ctx: Any) -> dict[str, Any]:
    s = ctx.stated
    stated = None if s is None else {"mass": _num(s.mass), "com": _vec(s.com), "inertia": _mat(s.inertia)}
    computed = None
    e, props = ctx.estimate, ctx.computed
    if e is not None and e.volume > 0:
        computed = {
            "volume": float(e.volume),
            "density": ctx.computed_density,
            "mass": float(props.mass) if props is not None else None,
            "com": _vec(e.props.com),
            "inertia": _mat(props.inertia) if props is not None else None,
            "geometry": ctx.geometry_source,
        }
    return {"name": ctx.name, "line": ctx.line, "stated": stated, "computed": computed}


def file_entry(result: Any, display_path: str | None = None) -> dict[str, Any]:
    return {
        "path": display_path if display_path is not None else str(result.path),
        "format": result.document.format,
        "links": [link_entry(c) for c in result.contexts],
        "findings": [finding_entry(f) for f in result.findings],
    }


def build_report(entries: list[dict[str, Any]], changed: int = 0) -> dict[str, Any]:
    findings = [f for e in entries for f in e["findings"]]
    count = lambda sev: sum(1 for f in findings if f["severity"] == sev)  # noqa: E731
    return {
        "version": VERSION,
        "files": entries,
        "summary": {"files": len(entries), "links": sum(len(e["links"]) for e in entries),
                    "errors": count("error"), "warnings": count("warning"), "infos": count("info"),
                    "changed": changed},
    }


def render_json(report: dict[str, Any]) -> str:
    return json.dumps(report, indent=2, allow_nan=False, default=_fallback) + "\n"


def _fallback(value: Any) -> Any:
    try:
        return float(value)
    except (TypeError, ValueError):
        return str(value)
