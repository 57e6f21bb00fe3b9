"""Find the SDF file an ``<include><uri>`` names: model folders, model.config, search paths."""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

from linkcheck import reads
from linkcheck.formats.xml import XmlError, parse_xml


def _text(el: Any | None) -> str:
    return (el.text or "").strip() if el is not None else ""


def parse_version(text: str | None) -> tuple[int, int] | None:
    """``"1.9"`` -> (1, 9); None when it is not a protocol version."""
    m = re.fullmatch(r"\s*(\d+)\.(\d+)\s*", text or "")
    return (int(m.group(1)), int(m.group(2))) if m else None


def _model_dir_file(folder: Path) -> Path | None:
    """The SDF file of a model-database folder: model.config's best <sdf> entry (else model.sdf)."""
    config = folder / "model.config"
    if config.is_file():
        reads.note(config)
        try:
            xml = parse_xml(config, config.read_bytes())
            entries = [(parse_version(e.get("version")) or (0, 0), _text(e)) for e in xml.root.iter("sdf")]
            entries = [e for e in entries if e[1]]
            if entries:
                best = max(entries, key=lambda e: e[0])
                candidate = folder / best[1]
                if candidate.is_file():
                    return candidate
        except (OSError, XmlError):
            pass
    candidate = folder / "model.sdf"
    return candidate if candidate.is_file() else None


def _model_roots(search: Any) -> list[Path]:
    """``model://`` roots: configured model paths, then the simulators' environment variables."""
    from linkcheck.paths import MODEL_PATH_VARS

    roots = [Path(p) for p in getattr(search, "model_paths", ()) or ()]
    env = getattr(search, "env", None)
    env = os.environ if env is None else env
    for var in MODEL_PATH_VARS:
        roots.extend(Path(p) for p in env.get(var, "").split(os.pathsep) if p)
    return roots


def find_include(uri: str, base_dir: Path, search: Any = None) -> Path | None:
    """The SDF file an ``<include><uri>`` names, or None.

    ``model://NAME[/file]`` is looked up in the including file's folder and its parent
    (a repository's models side by side), then the configured model paths and
    GZ_SIM_RESOURCE_PATH / SDF_PATH / GAZEBO_MODEL_PATH; relative and ``file://`` URIs
    are relative to the including file. A folder means its model.config entry.
    """
    found = _find_include(uri.strip(), base_dir, search)
    if found is None:
        reads.note_incomplete()
    else:
        reads.note(found)
    return found


def _find_include(uri: str, base_dir: Path, search: Any) -> Path | None:
    if uri.startswith("model://"):
        rest = uri[len("model://") :].lstrip("/")
        candidates = [root / rest for root in (base_dir, base_dir.parent, *_model_roots(search))]
    elif uri.startswith("file://"):
        rest = uri[len("file://") :]
        candidates = [Path(rest) if Path(rest).is_absolute() else base_dir / rest]
    elif "://" in uri:
        return None
    else:
        candidates = [Path(uri) if Path(uri).is_absolute() else base_dir / uri]
    for c in candidates:
        if not _named(c):
            continue
        reads.note(c)  # absent, a file, or a folder (whose stamp changes when a model.config appears)
        if c.is_dir():
            found = _model_dir_file(c)
            if found is not None:
                return found.resolve()
        elif c.is_file():
            return c.resolve()
    return None


def _named(path: Path) -> bool:
    """Refuse empty names (``model://`` alone would name the search root itself)."""
    return bool(path.name)
