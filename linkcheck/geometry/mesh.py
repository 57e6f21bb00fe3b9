"""Mesh geometry: load, integrate exactly, judge honestly, cache.

Binary STL is read by our own numpy view over the bytes (no trimesh import); ASCII STL by a
regular expression. OBJ, COLLADA, glTF/GLB, PLY and OFF go through trimesh, imported only then,
with every scene node's transform baked in and all parts concatenated.

COLLADA: ``<unit meter>`` is applied (ROS viewers and Gazebo do; trimesh only records it) and
``<up_axis>`` is ignored (rviz and Gazebo drop the up-axis rotation; loading is in mesh_io.py), so the estimate matches
what those tools simulate and show. glTF is taken in metres with no axis conversion.

Every mesh gets the exact integrals and cheap tests (polyhedron.py): closure, a possible solid
(volume, centroid in the box, inertia positive and within the triangle inequality), positive
total volume, outward faces at the axis extremes, and no negative winding along a line near the
centroid. Only a mesh that fails one pays for the topology pass (mesh_repair.py: per-body
orientation by nesting depth), whose result the cache keeps. Sizes that look like the wrong units are judged in units.py.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from linkcheck import reads
from linkcheck.geometry.cache import MeshCache
from linkcheck.geometry.mesh_io import LOADERS, UP_AXIS_RE, MeshError, load_triangles
from linkcheck.geometry.resolve import Resolution, SearchPaths, resolve_uri
from linkcheck.geometry.solid import Solid, enclosing_sphere
from linkcheck.geometry.mesh_repair import MeshResult, closed_result, repair
from linkcheck.geometry.polyhedron import CLOSURE_TOL, encloses_no_volume, format_vector, integrate, to_columns, why_impossible
from linkcheck.geometry.units import extent_finding, scale_problem
from linkcheck.inertia import MassProperties
from linkcheck.model import Finding
from linkcheck.severity import SEVERITIES
from linkcheck.settings import DEFAULT

@dataclass(frozen=True)
class MeshEstimate:
    """What a mesh contributes to its link.

    ``solid`` is at unit density in the mesh frame with the scale applied (None if unusable).
    ``findings`` carry no link or line (the caller fills them in). ``trusted`` False: do not
    compare with or fix from this estimate. ``upper_bound``: the solid is the convex hull of an
    open mesh. ``up_axis``: a COLLADA file's ``<up_axis>`` as written; the estimate ignores it
    (as rviz and Gazebo do), and ``up_axis_rotation`` gives the rotation a tool that honours it
    would apply, to explain a stated COM that only matches after it.
    """

    solid: Solid | None
    findings: tuple[Finding, ...]
    trusted: bool
    path: Path | None
    upper_bound: bool = False
    triangles: int = 0
    cached: bool = False
    up_axis: str | None = None


def mesh_estimate(
    uri: str,
    base_dir: Path,
    scale: tuple[float, float, float] = (1.0, 1.0, 1.0),
    search: SearchPaths | None = None,
    cache: MeshCache | None = None,
    *,
    max_extent: float = DEFAULT.mesh_max_extent,
    min_extent: float = DEFAULT.mesh_min_extent,
    submesh: str | None = None,
    center: bool = False,
) -> MeshEstimate:
    """Resolve, load and integrate one mesh geometry. Never raises for bad input.

    ``base_dir`` is the folder of the file that named the mesh (None: the working folder);
    ``max_extent``/``min_extent`` come from Settings; ``submesh``/``center`` from SDFormat.
    """
    try:
        base = Path(base_dir) if base_dir is not None else Path.cwd()
        part = (submesh, bool(center)) if submesh else None
        return _mesh_estimate(uri, base, tuple(float(s) for s in scale), search, cache, max_extent, min_extent, part)
    except MeshError as exc:
        return _unavailable(uri, None, str(exc))
    except Exception as exc:  # a loader's own bug must not become a traceback for the user
        return _unavailable(uri, None, f"could not be read ({type(exc).__name__}: {exc})")


def _unavailable(uri: str, path: Path | None, reason: str, extra: tuple[Finding, ...] = ()) -> MeshEstimate:
    where = f" ({path})" if path is not None and str(path) not in uri else ""
    finding = Finding("mesh-unavailable", "error", f"mesh '{uri}'{where}: {reason}", data={"uri": uri})
    return MeshEstimate(None, (*extra, finding), False, path)


def _mesh_estimate(
    uri: str,
    base_dir: Path,
    scale: tuple[float, ...],
    search: SearchPaths | None,
    cache: MeshCache | None,
    max_extent: float,
    min_extent: float,
    part: tuple[str, bool] | None,
) -> MeshEstimate:
    res: Resolution = resolve_uri(uri, base_dir, search)
    notes: tuple[Finding, ...] = ()
    if res.note:
        notes = (Finding("geometry-note", "info", f"mesh '{uri}': {res.note}", data={"uri": uri}),)
    if res.path is None:
        reason = res.reason or "not found"
        tried = ""
        if res.tried and res.tried[0] not in reason:
            tried = "; tried " + ", ".join(res.tried[:6]) + (" ..." if len(res.tried) > 6 else "")
        est = _unavailable(uri, None, f"{reason}{tried}")
        return MeshEstimate(None, est.findings, False, None)
    path = res.path
    bad_scale = scale_problem(scale)
    if bad_scale is not None:
        return _unavailable(uri, path, bad_scale, notes)
    ext = path.suffix.lower()
    loader = LOADERS.get(ext)
    if loader is None:
        return _unavailable(uri, path, f"unsupported mesh format '{path.suffix}' (STL, OBJ, DAE, glTF/GLB, PLY, OFF)", notes)
    variant = loader if part is None else f"{loader}|submesh={part[0]}|center={part[1]}"

    data: bytes | None = None
    key = None
    cached = False
    try:
        st = path.stat()
    except OSError as exc:
        return _unavailable(uri, path, f"cannot be read ({exc.strerror or exc})", notes)
    extra = _external_files(path) if ext == ".gltf" else []
    for f in extra:
        reads.note(f)
    memo_key = (str(path.resolve()), st.st_size, st.st_mtime_ns, st.st_ino, scale, variant, *(str(reads.stamp(f)) for f in extra))
    # without a disk cache, a mesh named by several links is still computed once per process
    result: MeshResult | None = _MEMO.get(memo_key) if cache is None else None
    if result is None and cache is not None:
        try:
            digest, data = cache.digest(path)
            for f in extra:  # a .gltf's buffers hold its vertices: their content is part of the key
                digest += "|" + (cache.digest(f)[0] if f.is_file() else "missing")
        except OSError as exc:
            return _unavailable(uri, path, f"cannot be read ({exc.strerror or exc})", notes)
        key = cache.key(digest, scale, variant)  # type: ignore[arg-type]
        result = _from_payload(cache.get(key))
        cached = result is not None
    if result is None:
        if data is None:
            try:
                data = path.read_bytes()
            except OSError as exc:
                return _unavailable(uri, path, f"cannot be read ({exc.strerror or exc})", notes)
        try:
            result = _compute(data, loader, path, np.array(scale, dtype=float), part)
        except MeshError as exc:
            # not cached: a failure may come from the environment (a missing optional reader)
            reads.note_incomplete()
            result = MeshResult(None, None, [Finding("mesh-unavailable", "error", str(exc))])
        else:
            if cache is not None and key is not None:
                cache.put(key, _to_payload(result))
    if cache is None:
        if len(_MEMO) >= 64:
            _MEMO.clear()
        _MEMO[memo_key] = result

    findings = [*notes, *(_with_uri(f, uri, path) for f in result.findings)]
    if result.props is None or result.points is None:
        return MeshEstimate(None, tuple(findings), False, path, triangles=result.triangles, cached=cached)
    solid = Solid(result.props, result.points, spheres=enclosing_sphere(result.points))
    units = extent_finding(uri, result.points, scale, max_extent, min_extent)
    if units is not None:
        findings.append(units)
    return MeshEstimate(solid, tuple(findings), units is None, path, result.upper_bound, result.triangles, cached, result.up_axis)


def _external_files(path: Path) -> list[Path]:
    """The files a .gltf reads besides itself (buffers not embedded as data: URIs)."""
    import json
    from urllib.parse import unquote

    try:
        buffers = json.loads(path.read_bytes()).get("buffers", [])
        uris = [b.get("uri") for b in buffers]
    except (OSError, ValueError, AttributeError, TypeError):
        return []  # the loader says what is wrong with the file
    return [path.parent / unquote(u) for u in uris if isinstance(u, str) and u and not u.startswith("data:")]


#: Results already computed in this process (the same mesh on several links, or a re-check).
_MEMO: dict[tuple[Any, ...], MeshResult] = {}


def _with_uri(f: Finding, uri: str, path: Path) -> Finding:
    where = f" ({path})" if str(path) not in uri else ""
    return Finding(f.rule, f.severity, f"mesh '{uri}'{where}: {f.message}", data={**f.data, "uri": uri})


# --------------------------------------------------------------------------- computing a mesh


def _extreme_points(cols: np.ndarray, extremes: np.ndarray) -> np.ndarray:
    """Vertices extreme along 26 directions (axes, face and body diagonals, both ways) plus the one
    farthest from the reference point (the bounding-box centre).

    A cheap subset of the hull's vertices: exact for the bounding box and for the largest distance
    from its centre (both searched over every corner); the diagonal directions search the first
    corner of each triangle only, which nearly always includes every vertex. Its hull lies inside
    the true hull (about 0.85 of a sphere's radius), so a point outside it is only probably outside
    the mesh: ``Solid.exact_points`` (every vertex, read again) confirms. ``extremes``: the flat
    corner indices of the smallest and largest x, y and z (``_compute_solid`` finds them once).
    """
    x, y, z = cols.reshape(3, -1)
    picks = [np.stack((x[i], y[i], z[i])) for i in extremes]
    picks.append(cols.reshape(3, -1)[:, int((x * x + y * y + z * z).argmax())])
    x0, y0, z0 = cols[0, 0], cols[1, 0], cols[2, 0]
    for combo in (x0 + y0, x0 - y0, y0 + z0, y0 - z0, x0 + z0, x0 - z0, x0 + y0 + z0, x0 + y0 - z0, x0 - y0 + z0, y0 + z0 - x0):
        for i in (combo.argmax(), (-combo).argmax()):
            picks.append(cols[:, 0, i])
    return np.unique(np.array(picks), axis=0)


def _compute(data: bytes, loader: str, path: Path, scale: np.ndarray, part: tuple[str, bool] | None = None) -> MeshResult:
    result = _compute_solid(data, loader, path, scale, part)
    if loader == "dae":
        match = UP_AXIS_RE.search(data)
        result.up_axis = match.group(1).decode() if match else "Y_UP"  # COLLADA's default
    return result


def _compute_solid(data: bytes, loader: str, path: Path, scale: np.ndarray, part: tuple[str, bool] | None) -> MeshResult:
    raw = load_triangles(data, loader, path, *(part or (None, False)))
    n = len(raw)
    if n == 0:
        raise MeshError("the file holds no triangles")
    cols = to_columns(raw)
    del raw
    if np.prod(np.sign(scale)) < 0:  # mirroring flips orientation; re-wind to keep the outside out
        second = cols[:, 1].copy()
        cols[:, 1] = cols[:, 2]
        cols[:, 2] = second
    flat = cols.reshape(3, -1)  # a view: scaled and shifted in place
    for k in range(3):
        if scale[k] != 1.0:
            flat[k] *= scale[k]
    # corners of the smallest and largest x, y, z (a nan is taken as the smallest and largest)
    extremes = np.array([f(flat[k]) for k in range(3) for f in (np.argmin, np.argmax)])
    lo, hi = flat[(0, 1, 2), extremes[0::2]], flat[(0, 1, 2), extremes[1::2]]
    if not (np.isfinite(lo).all() and np.isfinite(hi).all()):
        bad = int((~np.isfinite(cols).all(axis=(0, 1))).sum())
        raise MeshError(f"{bad} of {n} triangles have non-finite coordinates (nan/inf)")
    origin = 0.5 * (lo + hi)
    for k in range(3):
        flat[k] -= origin[k]  # monotonic: the extreme corners stay extreme
    extent = hi - lo
    if np.count_nonzero(extent > 1e-12 * max(float(extent.max()), 1e-300)) < 3:
        raise MeshError(f"the mesh is flat (extents {format_vector(extent)} m): it encloses no volume")
    radius = 0.5 * float(np.linalg.norm(extent))
    it = integrate(cols, origin, radius)
    findings: list[Finding] = []
    points = _extreme_points(cols, extremes) + origin
    if it.closure > CLOSURE_TOL or encloses_no_volume(it, radius):
        return repair(cols, origin, radius, points, n, lo, hi)  # open, or closed around nothing
    # closed: a body inside-out among right ones shows as an integral no solid can have, a negative
    # total, an outer body facing inward at the mesh's extremes, or an inner one along a probe line
    from linkcheck.geometry.polyhedron import faces_out_at_extremes, winding_dips_below_zero

    if (it.volume > 0 and why_impossible(it, lo, hi) is None and faces_out_at_extremes(cols, extremes)
            and not winding_dips_below_zero(cols, it.com - origin, extent)):
        return closed_result(it, points, n, findings)
    return repair(cols, origin, radius, points, n, lo, hi, suspect=True)


# --------------------------------------------------------------------------- cache payloads


def _to_payload(r: MeshResult) -> dict[str, Any]:
    solid = None
    if r.props is not None and r.points is not None:
        solid = {"volume": r.props.mass, "com": r.props.com.tolist(), "inertia": r.props.inertia.tolist(), "points": r.points.tolist()}
    return {
        "solid": solid,
        "findings": [[f.rule, f.severity, f.message, f.data] for f in r.findings],
        "upper_bound": r.upper_bound,
        "triangles": r.triangles,
        "up_axis": r.up_axis,
    }


def _from_payload(p: dict[str, Any] | None) -> MeshResult | None:
    if p is None:
        return None
    try:
        findings = [Finding(str(rule), sev, str(msg), data=dict(data)) for rule, sev, msg, data in p["findings"]]
        if any(f.severity not in SEVERITIES for f in findings):
            return None
        s = p["solid"]
        up = p.get("up_axis")
        up = str(up) if up is not None else None
        if s is None:
            return MeshResult(None, None, findings, bool(p["upper_bound"]), int(p["triangles"]), up)
        com = np.array(s["com"], dtype=float).reshape(3)
        inertia = np.array(s["inertia"], dtype=float).reshape(3, 3)
        points = np.array(s["points"], dtype=float).reshape(-1, 3)
        if not (np.isfinite(com).all() and np.isfinite(inertia).all() and len(points)):
            return None
        return MeshResult(MassProperties(float(s["volume"]), com, inertia), points, findings, bool(p["upper_bound"]), int(p["triangles"]), up)
    except (KeyError, TypeError, ValueError, OverflowError):
        return None
