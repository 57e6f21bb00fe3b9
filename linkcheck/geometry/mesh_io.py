"""Mesh files to triangles: our own binary/ASCII STL reader, trimesh for the other formats.

Binary STL is a numpy view over the bytes (no trimesh import). OBJ, COLLADA, glTF/GLB, PLY and
OFF go through trimesh, imported only then, with every scene node's transform baked in and all
parts concatenated. COLLADA ``<unit meter>`` is applied (ROS viewers and Gazebo do; trimesh only
records it); ``<up_axis>`` is read but not applied (rviz and Gazebo drop it).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

LOADERS = {".stl": "stl", ".obj": "trimesh", ".dae": "dae", ".glb": "trimesh", ".gltf": "trimesh",
           ".ply": "trimesh", ".off": "trimesh"}
_STL_RECORD = np.dtype([("n", "<f4", (3,)), ("v", "<f4", (3, 3)), ("attr", "<u2")])
_VERTEX_RE = re.compile(rb"vertex\s+(\S+)\s+(\S+)\s+(\S+)", re.I)  # some exporters write upper case
UP_AXIS_RE = re.compile(rb"<up_axis>\s*([XYZ]_UP)\s*</up_axis>")
_UNIT_RE = re.compile(rb"<unit\b[^>]*?\bmeter\s*=\s*[\"']([^\"']+)[\"']")
#: Text formats trimesh decodes as UTF-8, else by a charset_normalizer guess (not a dependency);
#: they reach it as UTF-8. PLY is text only up to ``end_header`` unless ``format ascii``.
_TEXT_FORMATS = frozenset({"obj", "off", "gltf"})
_PLY_ASCII_RE = re.compile(rb"^[ \t]*format[ \t]+ascii\b", re.I | re.M)




class MeshError(Exception):
    """A mesh that cannot be used; the message is the reason, in words for the user."""


def load_triangles(data: bytes, loader: str, path: Path, submesh: str | None = None, center: bool = False) -> np.ndarray:
    """(n, 3, 3) triangle corners in file units (metres for DAE after ``<unit meter>``).

    ``submesh`` keeps only the part with that geometry or node name (SDFormat ``<submesh>``);
    ``center`` then moves its bounding-box centre to the origin, as Gazebo does.
    """
    if loader == "stl":
        if submesh:
            raise MeshError(f"submesh '{submesh}' requested, but an STL file has no named parts")
        return _read_stl(data)
    tris = _read_with_trimesh(path, data, submesh)
    if submesh and center:
        flat = tris.reshape(-1, 3)
        tris = tris - 0.5 * (flat.min(axis=0) + flat.max(axis=0))
    if loader == "dae":
        match = _UNIT_RE.search(data)
        if match:
            try:
                unit = float(match.group(1))
            except ValueError:
                raise MeshError(f"COLLADA <unit meter=\"{match.group(1).decode(errors='replace')}\"> is not a number") from None
            if not np.isfinite(unit) or unit <= 0:
                raise MeshError(f"COLLADA <unit meter> must be positive (got {unit})")
            tris = tris * unit
    return tris


def _read_stl(data: bytes) -> np.ndarray:
    size = len(data)
    count = int(np.frombuffer(data, "<u4", 1, 80)[0]) if size >= 84 else -1
    if count >= 0 and 84 + 50 * count == size:
        return np.frombuffer(data, _STL_RECORD, count, 84)["v"]
    head = data[:512].lstrip()
    if head[:5].lower() == b"solid" and (b"facet" in data[:4096].lower() or b"endsolid" in data[-512:].lower()):
        found = _VERTEX_RE.findall(data)
        if len(found) % 3:
            raise MeshError(f"ASCII STL has {len(found)} vertices, not a multiple of 3")
        try:
            return np.array(found, dtype=float).reshape(-1, 3, 3)
        except ValueError as exc:
            raise MeshError(f"ASCII STL has a vertex that is not a number ({exc})") from None
    if count > 0 and size > 84 + 50 * count:
        return np.frombuffer(data, _STL_RECORD, count, 84)["v"]
    if size < 84:
        raise MeshError(f"not an STL file ({size} bytes: too short for binary, no 'solid' header)")
    raise MeshError(f"binary STL is truncated: header says {count} triangles ({84 + 50 * count} bytes), file has {size}")


def _read_with_trimesh(path: Path, data: bytes, submesh: str | None = None) -> np.ndarray:
    import io
    import logging

    import trimesh

    logging.getLogger("trimesh").setLevel(logging.ERROR)
    ext = path.suffix.lower().lstrip(".")
    if ext in _TEXT_FORMATS:
        data = _as_utf8(data)
    elif ext == "ply":
        data = _ply_as_utf8(data)
    if ext == "gltf":
        import json

        try:
            json.loads(data)
        except ValueError as exc:
            raise MeshError(f"corrupt '.gltf' file: not JSON ({exc})") from None
    try:
        if ext == "gltf":  # external buffers sit beside it
            resolver = trimesh.resolvers.FilePathResolver(str(path))
            scene = trimesh.load_scene(io.BytesIO(data), file_type=ext, resolver=resolver, process=False)
        else:
            scene = trimesh.load_scene(io.BytesIO(data), file_type=ext, process=False)
    except ImportError as exc:
        raise MeshError(f"needs an optional package to read '.{ext}' ({exc})") from None
    except Exception as exc:
        raise MeshError(f"corrupt or unreadable '.{ext}' file ({type(exc).__name__}: {exc})") from None
    parts = []
    names: set[str] = set()
    for node in scene.graph.nodes_geometry:
        transform, geom_name = scene.graph[node]
        names.update((str(node), str(geom_name)))
        if submesh is not None and submesh not in (node, geom_name):
            continue
        geom = scene.geometry.get(geom_name)
        if geom is None or not hasattr(geom, "faces") or len(geom.faces) == 0:
            continue
        tris = np.asarray(geom.vertices, dtype=float)[np.asarray(geom.faces)]
        transform = np.asarray(transform, dtype=float)
        tris = tris @ transform[:3, :3].T + transform[:3, 3]
        if np.linalg.det(transform[:3, :3]) < 0:
            tris = tris[:, [0, 2, 1]]
        parts.append(tris)
    if not parts and submesh is not None:
        raise MeshError(f"submesh '{submesh}' not found (parts: {', '.join(sorted(names)) or 'none'})")
    if not parts:
        raise MeshError("the file holds no triangles")
    return np.concatenate(parts)


def _as_utf8(data: bytes) -> bytes:
    """Text bytes as UTF-8: unchanged if they already are, else read as latin-1 (every byte decodes)."""
    if data.isascii():
        return data
    try:
        data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode("latin-1").encode("utf-8")
    return data


def _ply_as_utf8(data: bytes) -> bytes:
    """A PLY file with its header as UTF-8, and its body too if ``format ascii``; binary bodies untouched."""
    end = data.find(b"end_header")
    if end < 0:
        return data  # trimesh reports the broken header
    newline = data.find(b"\n", end)
    cut = len(data) if newline < 0 else newline + 1
    header, body = data[:cut], data[cut:]
    if _PLY_ASCII_RE.search(header):
        body = _as_utf8(body)
    return _as_utf8(header) + body


def up_axis_rotation(up_axis: str | None) -> np.ndarray:
    """Rotation taking a COLLADA file's up axis to +z: what a loader that honours it applies."""
    if up_axis == "Y_UP":
        return np.array([[1.0, 0.0, 0.0], [0.0, 0.0, -1.0], [0.0, 1.0, 0.0]])
    if up_axis == "X_UP":
        return np.array([[0.0, 0.0, -1.0], [0.0, 1.0, 0.0], [1.0, 0.0, 0.0]])
    return np.eye(3)


def mesh_vertices(path: Path, scale: tuple[float, float, float] = (1.0, 1.0, 1.0),
                  submesh: str | None = None, center: bool = False) -> np.ndarray | None:
    """Every triangle corner of the scaled mesh, (3n, 3) float64, or None if it cannot be read.

    Their convex hull is the mesh's hull: what a point-in-hull or largest-distance test needs,
    without building the hull (GJK works on the points directly).
    """
    try:
        path = Path(path)
        loader = LOADERS.get(path.suffix.lower())
        if loader is None:
            return None
        tris = load_triangles(path.read_bytes(), loader, path, submesh, center)
        verts = np.asarray(tris, dtype=float).reshape(-1, 3) * np.asarray(scale, dtype=float)
        return verts if np.isfinite(verts).all() else None
    except Exception:  # only ever a refinement: without it the caller keeps the cheap points
        return None
