"""Mesh geometry: load, integrate exactly, judge honestly, cache.

Binary STL is read by our own numpy view over the bytes (no trimesh import); ASCII STL by a
regular expression. OBJ, COLLADA, glTF/GLB, PLY and OFF go through trimesh, imported only then,
with every scene node's transform baked in and all parts concatenated.

COLLADA: ``<unit meter>`` is applied (ROS viewers and Gazebo do; trimesh only records it) and
``<up_axis>`` is ignored (rviz and Gazebo drop the up-axis rotation; loading is in mesh_io.py), so the estimate matches
what those tools simulate and show. glTF is taken in metres with no axis conversion.

The integral is the divergence theorem over signed tetrahedra, in float64, with coordinates
shifted to the bounding-box centre first. A cheap closure test runs on every mesh: over a closed,
consistently wound surface every edge is used once in each direction, so the antisymmetric edge
sums Σ p×q and Σ (p+q)⊗(p×q) vanish (to rounding); they also make the integrals independent of
the reference point. Only a mesh that fails it, or whose integral is no possible solid (no volume,
centroid outside the bounding box, inertia not positive or breaking the triangle inequality: a
closed surface with one of several bodies inside-out), pays for the topology pass (vertex merge by
exact bit pattern, edge-use counts, winding propagation, per-body orientation), whose result the
cache keeps.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from linkcheck import reads
from linkcheck.geometry.cache import MeshCache
from linkcheck.geometry.mesh_io import LOADERS, UP_AXIS_RE, MeshError, load_triangles
from linkcheck.geometry.resolve import Resolution, SearchPaths, resolve_uri
from linkcheck.geometry.solid import Solid, enclosing_sphere
from linkcheck.inertia import MassProperties, principal, satisfies_triangle, tolerance
from linkcheck.model import Finding
from linkcheck.severity import SEVERITIES
from linkcheck.settings import DEFAULT

#: Loader names by lower-case extension; the loader is part of the cache key.
#: Relative size of the closure residuals below which a surface counts as closed.
CLOSURE_TOL = 1e-7
#: Unit factors tried by the units hints: millimetres, centimetres, inches, and the reverse.
UNIT_FACTORS = (1e-3, 1e-2, 0.0254, 1e3)
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


@dataclass
class _Result:
    props: MassProperties | None
    points: np.ndarray | None
    findings: list[Finding] = field(default_factory=list)
    upper_bound: bool = False
    triangles: int = 0
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
    scale_problem = _scale_problem(scale)
    if scale_problem is not None:
        return _unavailable(uri, path, scale_problem, notes)
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
    result: _Result | None = _MEMO.get(memo_key) if cache is None else None
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
            result = _Result(None, None, [Finding("mesh-unavailable", "error", str(exc))])
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
    units = _units_finding(uri, result.points, scale, max_extent, min_extent)
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
_MEMO: dict[tuple[Any, ...], _Result] = {}


def _with_uri(f: Finding, uri: str, path: Path) -> Finding:
    where = f" ({path})" if str(path) not in uri else ""
    return Finding(f.rule, f.severity, f"mesh '{uri}'{where}: {f.message}", data={**f.data, "uri": uri})


# --------------------------------------------------------------------------- integration


@dataclass(frozen=True)
class _Integral:
    volume: float
    com: np.ndarray  # absolute
    second: np.ndarray  # covariance about the com, ∫ r r^T dV
    area: float  # twice the total area
    closure: float  # relative closure residual (0 for a closed, consistently wound surface)


def integrate(cols: np.ndarray, origin: np.ndarray, radius: float) -> _Integral:
    """Signed-tetrahedron integrals over corners ``cols[k, j, i]`` (coordinate k of corner j of
    triangle i, float64, already shifted by ``origin``); ``radius`` bounds |corner|."""
    a, b, c = cols[:, 0], cols[:, 1], cols[:, 2]
    ab, bc, ca = _cross(a, b), _cross(b, c), _cross(c, a)
    d = np.einsum("ij,ij->j", a, bc)
    vol = float(d.sum()) / 6.0
    s = a + b + c
    first = (s @ d) / 24.0
    cov = sum(np.einsum("ij,kj->ik", x * d, x) for x in (a, b, c, s)) / 120.0
    normals = ab + bc + ca
    area2 = float(np.sqrt(np.einsum("ij,ij->j", normals, normals)).sum())
    moment = sum(np.einsum("ij,kj->ik", p + q, pq) for p, q, pq in ((a, b, ab), (b, c, bc), (c, a, ca)))
    scale = max(area2, 1e-300)
    closure = max(float(np.linalg.norm(normals.sum(axis=1))) / scale, float(np.linalg.norm(moment)) / (scale * max(radius, 1e-300)))
    if vol != 0.0:
        com_local = first / vol
        second = cov - vol * np.outer(com_local, com_local)
    else:
        com_local = np.zeros(3)
        second = cov
    return _Integral(vol, com_local + origin, second, area2, closure)


def _cross(u: np.ndarray, v: np.ndarray) -> np.ndarray:
    out = np.empty_like(u)
    tmp = np.empty_like(u[0])
    for k, (i, j) in enumerate(((1, 2), (2, 0), (0, 1))):
        np.multiply(u[i], v[j], out=out[k])
        np.multiply(u[j], v[i], out=tmp)
        out[k] -= tmp
    return out


def to_columns(tris: np.ndarray) -> np.ndarray:
    """(n, 3, 3) corners -> contiguous float64 (3 coordinates, 3 corners, n): every later pass is a straight sweep."""
    return np.ascontiguousarray(np.asarray(tris).transpose(2, 1, 0), dtype=np.float64)


def _props(it: _Integral, sign: float = 1.0) -> MassProperties:
    second = it.second * sign
    inertia = np.trace(second) * np.eye(3) - second
    return MassProperties(it.volume * sign, it.com.copy(), 0.5 * (inertia + inertia.T))


def _extreme_points(cols: np.ndarray) -> np.ndarray:
    """Vertices extreme along 26 directions (axes, face and body diagonals, both ways) plus the one
    farthest from the reference point (the bounding-box centre).

    A cheap subset of the hull's vertices: exact for the bounding box and for the largest distance
    from its centre (both searched over every corner); the diagonal directions search the first
    corner of each triangle only, which nearly always includes every vertex. Its hull lies inside
    the true hull (about 0.85 of a sphere's radius), so a point outside it is only probably outside
    the mesh: ``mesh_hull_points`` confirms.
    """
    x, y, z = cols.reshape(3, -1)
    picks = [np.stack((x[i], y[i], z[i])) for i in (x.argmin(), x.argmax(), y.argmin(), y.argmax(), z.argmin(), z.argmax())]
    picks.append(cols.reshape(3, -1)[:, int((x * x + y * y + z * z).argmax())])
    x0, y0, z0 = cols[0, 0], cols[1, 0], cols[2, 0]
    for combo in (x0 + y0, x0 - y0, y0 + z0, y0 - z0, x0 + z0, x0 - z0, x0 + y0 + z0, x0 + y0 - z0, x0 - y0 + z0, y0 + z0 - x0):
        for i in (combo.argmax(), (-combo).argmax()):
            picks.append(cols[:, 0, i])
    return np.unique(np.array(picks), axis=0)


def _compute(data: bytes, loader: str, path: Path, scale: np.ndarray, part: tuple[str, bool] | None = None) -> _Result:
    result = _compute_solid(data, loader, path, scale, part)
    if loader == "dae":
        match = UP_AXIS_RE.search(data)
        result.up_axis = match.group(1).decode() if match else "Y_UP"  # COLLADA's default
    return result


def _compute_solid(data: bytes, loader: str, path: Path, scale: np.ndarray, part: tuple[str, bool] | None) -> _Result:
    raw = load_triangles(data, loader, path, *(part or (None, False)))
    n = len(raw)
    if n == 0:
        raise MeshError("the file holds no triangles")
    cols = to_columns(raw)
    del raw
    flat = cols.reshape(3, -1)
    for k in range(3):
        if scale[k] != 1.0:
            flat[k] *= scale[k]
    lo, hi = flat.min(axis=1), flat.max(axis=1)
    if not (np.isfinite(lo).all() and np.isfinite(hi).all()):
        bad = int((~np.isfinite(cols).all(axis=(0, 1))).sum())
        raise MeshError(f"{bad} of {n} triangles have non-finite coordinates (nan/inf)")
    origin = 0.5 * (lo + hi)
    for k in range(3):
        flat[k] -= origin[k]
    if np.prod(np.sign(scale)) < 0:
        cols = cols[:, [0, 2, 1]]  # mirroring flips orientation; re-wind to keep the outside out
    extent = hi - lo
    if np.count_nonzero(extent > 1e-12 * max(float(extent.max()), 1e-300)) < 3:
        raise MeshError(f"the mesh is flat (extents {_fmt_vec(extent)} m): it encloses no volume")
    radius = 0.5 * float(np.linalg.norm(extent))
    it = integrate(cols, origin, radius)
    findings: list[Finding] = []
    points = _extreme_points(cols) + origin
    if it.closure <= CLOSURE_TOL and not _no_volume(it, radius) and _impossible(it, lo, hi) is None:
        return _closed_result(it, points, n, findings)
    # open, or closed with an integral no solid can have (bodies inside-out among right ones)
    return _repair(cols, origin, radius, points, n, lo, hi)


def _no_volume(it: _Integral, radius: float) -> bool:
    return abs(it.volume) <= 1e-9 * it.area * radius


def _impossible(it: _Integral, lo: np.ndarray, hi: np.ndarray) -> str | None:
    """Why the integral of a closed surface cannot be a solid of positive density (None: it can).

    A solid's centroid lies in its bounding box and its central inertia has no negative principal
    moment and obeys I3 <= I1 + I2 (tolerances of inertia.py). A surface that is closed but holds
    bodies wound inside-out beside right ones passes the closure test and usually fails this one.
    """
    props = _props(it, -1.0 if it.volume < 0 else 1.0)
    slack = 1e-6 * float(np.linalg.norm(hi - lo))
    if np.any(props.com < lo - slack) or np.any(props.com > hi + slack):
        return f"centre of mass {_fmt_vec(props.com)} m outside the bounding box"
    moments = principal(props.inertia)[0]
    if np.trace(props.inertia) <= 0 or moments[0] < -tolerance(props.inertia):
        return f"principal moments {_fmt_vec(moments)} m^5 include a negative one"
    if not satisfies_triangle(props.inertia, moments=moments):
        return f"principal moments {_fmt_vec(moments)} m^5 break the triangle inequality"
    return None


def _fmt_vec(v: np.ndarray) -> str:
    return "(" + ", ".join(f"{x:.4g}" for x in v) + ")"


# --------------------------------------------------------------------------- repair


@dataclass(frozen=True)
class Topology:
    """Edge-use counts of a mesh after merging vertices with identical coordinates."""

    faces: np.ndarray  # (m, 3) merged vertex ids of the non-degenerate faces
    keep: np.ndarray  # indices of those faces in the input
    open_edges: int  # edges used by an odd number of faces (holes)
    inconsistent_edges: int  # edges used twice in the same direction (winding flips)
    nonmanifold_edges: int


def topology(tris: np.ndarray) -> Topology:
    """Merge vertices by exact bit pattern (+0.0 first, so -0.0 joins 0.0) and count edge uses."""
    verts = np.ascontiguousarray(tris.reshape(-1, 3), dtype=np.float64) + 0.0
    bits = verts.view(np.uint64).reshape(-1, 3)
    order = np.lexsort((bits[:, 2], bits[:, 1], bits[:, 0]))
    sb = bits[order]
    new = np.ones(len(sb), dtype=bool)
    new[1:] = (sb[1:] != sb[:-1]).any(axis=1)
    ids = np.empty(len(sb), dtype=np.int64)
    ids[order] = np.cumsum(new) - 1
    faces = ids.reshape(-1, 3)
    keep = np.flatnonzero((faces[:, 0] != faces[:, 1]) & (faces[:, 1] != faces[:, 2]) & (faces[:, 2] != faces[:, 0]))
    faces = faces[keep]
    key, sign, _ = _edges(faces)
    order = np.argsort(key, kind="stable")
    sk, ss = key[order], sign[order]
    starts = np.flatnonzero(np.r_[True, sk[1:] != sk[:-1]])
    counts = np.diff(np.r_[starts, len(sk)])
    sums = np.add.reduceat(ss, starts) if len(starts) else np.zeros(0, dtype=np.int64)
    odd = counts % 2 == 1
    return Topology(faces, keep, int(odd.sum()), int(((~odd) & (sums != 0)).sum()), int((counts > 2).sum()))


def _edges(faces: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Undirected edge keys, direction signs and owning face of the 3 edges of every face."""
    u = faces.ravel()
    v = np.roll(faces, -1, axis=1).ravel()
    lo, hi = np.minimum(u, v), np.maximum(u, v)
    key = (lo.astype(np.uint64) << np.uint64(32)) | hi.astype(np.uint64)
    sign = np.where(u < v, 1, -1).astype(np.int64)
    owner = np.repeat(np.arange(len(faces)), 3)
    return key, sign, owner


def orient(faces: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """Flags of the faces to flip so every two-face edge is used once each way, and the patch
    label of every face; None if impossible (non-orientable or non-manifold).

    Each connected patch keeps the orientation most of its faces already had.
    """
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import breadth_first_order, connected_components

    m = len(faces)
    if m == 0:
        return None
    key, sign, owner = _edges(faces)
    order = np.argsort(key, kind="stable")
    sk = key[order]
    starts = np.flatnonzero(np.r_[True, sk[1:] != sk[:-1]])
    counts = np.diff(np.r_[starts, len(sk)])
    pair = starts[counts == 2]
    f1, f2 = owner[order[pair]], owner[order[pair + 1]]
    same = (sign[order[pair]] == sign[order[pair + 1]]).astype(np.int8)  # 1: neighbours disagree
    # node m is a root joined to one face of every patch, so one search covers them all
    _, labels = connected_components(coo_matrix((np.ones(len(f1)), (f1, f2)), shape=(m, m)), directed=False)
    _, firsts = np.unique(labels, return_index=True)
    rows = np.r_[f1, np.full(len(firsts), m)]
    cols = np.r_[f2, firsts]
    graph = coo_matrix((np.ones(len(rows)), (rows, cols)), shape=(m + 1, m + 1)).tocsr()
    graph = (graph + graph.T).tocsr()
    nodes, pred = breadth_first_order(graph, m, directed=False, return_predecessors=True)
    parent = np.where(pred < 0, np.arange(m + 1), pred)
    child = nodes[1:]
    child = child[parent[child] < m]
    pair_key = np.minimum(f1, f2) * (m + 1) + np.maximum(f1, f2)
    by_key = np.argsort(pair_key, kind="stable")
    want = np.minimum(child, parent[child]) * (m + 1) + np.maximum(child, parent[child])
    rel = np.zeros(m + 1, dtype=bool)
    rel[child] = same[by_key[np.searchsorted(pair_key[by_key], want)]] == 1
    parity, jump = rel, parent
    for _ in range(int(np.ceil(np.log2(m + 2))) + 1):  # pointer jumping: parity of the path to the root
        parity, jump = parity ^ parity[jump], jump[jump]
    flip = parity[:m]
    # each patch keeps the orientation most of its faces had
    flip = flip ^ (2 * np.bincount(labels, weights=flip, minlength=len(firsts)) > np.bincount(labels))[labels]
    sign2 = np.where(flip[owner], -sign, sign)  # flipping a face reverses its three edges
    sums = np.add.reduceat(sign2[order], starts)
    if np.any((counts == 2) & (sums != 0)):
        return None
    return flip, labels


def _repair(cols: np.ndarray, origin: np.ndarray, radius: float, points: np.ndarray, n: int,
            lo: np.ndarray, hi: np.ndarray) -> _Result:
    tris = cols.transpose(2, 1, 0)
    topo = topology(tris)
    findings: list[Finding] = []
    if topo.open_edges == 0:
        if topo.inconsistent_edges == 0:
            it = integrate(to_columns(tris[topo.keep]), origin, radius)
            if not _no_volume(it, radius) and _impossible(it, lo, hi) is None:
                return _closed_result(it, points, n, findings)
        oriented = orient(topo.faces)
        if oriented is not None:
            flip, labels = oriented
            fixed = tris[topo.keep]
            fixed[flip] = fixed[flip][:, [0, 2, 1]]
            faces = topo.faces.copy()
            faces[flip] = faces[flip][:, [0, 2, 1]]
            outward = _outward_patches(fixed, labels, faces)
            fixed[outward[labels]] = fixed[outward[labels]][:, [0, 2, 1]]
            it = integrate(to_columns(fixed), origin, radius)
            if it.closure <= CLOSURE_TOL * 10:
                if _no_volume(it, radius):
                    raise MeshError(f"the surface encloses no volume (signed volume {it.volume:.3g} m^3 "
                                    f"over extents {_fmt_vec(hi - lo)} m)")
                bodies, turned = len(outward), int(outward.sum())
                impossible = _impossible(it, lo, hi)
                if impossible is not None:
                    return _Result(None, None, [Finding(
                        "mesh-unavailable", "error",
                        f"the surface is closed but integrates to no possible solid ({impossible}) even with its "
                        f"{bodies} bodies oriented; which are bodies and which are cavities cannot be decided "
                        f"(bodies through each other, or an inward one inside another's bounding box but not "
                        f"inside it), so the mesh gives no estimate", data={"bodies": bodies})], False, n)
                wound = []
                if flip.any():
                    wound.append(f"{int(flip.sum())} of {n} triangles were wound against their neighbours "
                                 f"and were re-oriented consistently")
                if turned:
                    wound.append(f"{turned} of {bodies} bodies {'was' if turned == 1 else 'were'} wound inside-out "
                                 f"(facing inward and inside no other body) and flipped")
                if wound:
                    findings.append(Finding("mesh-inside-out", "info", "; ".join(wound) + " before integrating",
                                            data={"reoriented": int((flip ^ outward[labels]).sum()),
                                                  "bodies_flipped": turned, "bodies": bodies}))
                return _closed_result(it, points, n, findings)
        if topo.inconsistent_edges == 0:  # closed and consistent, yet the faces cannot be paired into bodies
            return _Result(None, None, [Finding(
                "mesh-unavailable", "error",
                f"the surface is closed but integrates to no possible solid "
                f"({'no volume' if _no_volume(it, radius) else _impossible(it, lo, hi) or 'not closed once oriented'}) "
                f"and its faces do not pair into bodies; "
                f"the mesh gives no estimate")], False, n)
        why = f"{topo.inconsistent_edges} edges where the winding flips and cannot be made consistent"
    else:
        why = f"{topo.open_edges} open edges (holes)"
    hull = _hull(tris.reshape(-1, 3) + origin)
    if hull is None:
        raise MeshError(f"the mesh has {why} and its convex hull is flat")
    hull_props, hull_points = hull
    findings.append(Finding("mesh-not-watertight", "warning",
                            f"the mesh has {why}; volume {hull_props.mass:.6g} m^3 and inertia come from its convex hull, "
                            f"an upper bound on the real solid",
                            data={"open_edges": topo.open_edges, "inconsistent_edges": topo.inconsistent_edges,
                                  "upper_bound": True}))
    return _Result(hull_props, hull_points, findings, True, n)


def _outward_patches(tris: np.ndarray, labels: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """Patches to flip: those wound inward that no other patch's box contains (so not cavities).

    The winding of a patch is only known relative to itself; a patch whose signed volume is
    negative is a cavity when it sits inside another patch, an inverted body otherwise. Only a
    patch closed on its own (every edge of it used once each way by its own faces, ``faces``
    being the merged ids wound as ``tris``) has a signed volume that means anything, so only
    those are bodies, cavities or containers; pieces of a non-manifold surface are left as wound.
    """
    count = int(labels.max()) + 1
    out = np.zeros(count, dtype=bool)
    if count == 1:
        return out  # one body: an inward result is flipped as a whole and reported as inside-out
    d = np.einsum("ij,ij->i", tris[:, 0], np.cross(tris[:, 1], tris[:, 2]))
    vol = np.bincount(labels, weights=d, minlength=count)
    key, sign, owner = _edges(faces)
    lab = labels[owner]
    order = np.lexsort((key, lab))
    sk, sl = key[order], lab[order]
    starts = np.flatnonzero(np.r_[True, (sk[1:] != sk[:-1]) | (sl[1:] != sl[:-1])])
    closed = np.ones(count, dtype=bool)
    closed[sl[starts[np.add.reduceat(sign[order], starts) != 0]]] = False
    lo = np.full((count, 3), np.inf)
    hi = np.full((count, 3), -np.inf)
    corners = tris.reshape(-1, 3)
    rep = np.repeat(labels, 3)
    np.minimum.at(lo, rep, corners)
    np.maximum.at(hi, rep, corners)
    inward, hosts = np.flatnonzero(closed & (vol < 0)), np.flatnonzero(closed & (vol > 0))
    step = max(1, 1_000_000 // max(len(hosts), 1))  # bounded memory, no Python loop per patch
    for s in range(0, len(inward), step):
        i = inward[s:s + step]
        inside = ((lo[hosts][None] <= lo[i][:, None]) & (hi[hosts][None] >= hi[i][:, None])).all(axis=2)
        out[i] = ~inside.any(axis=1)
    return out


def _closed_result(it: _Integral, points: np.ndarray, n: int, findings: list[Finding]) -> _Result:
    if it.volume < 0:
        findings.append(Finding("mesh-inside-out", "info",
                                f"the surface is wound inward (signed volume {it.volume:.6g} m^3); integrated with flipped orientation",
                                data={"signed_volume": it.volume}))
        return _Result(_props(it, -1.0), points, findings, False, n)
    return _Result(_props(it), points, findings, False, n)


def _hull(verts: np.ndarray) -> tuple[MassProperties, np.ndarray] | None:
    """Mass properties of the convex hull (scipy's qhull), simplices wound outward."""
    from scipy.spatial import ConvexHull, QhullError

    pts = np.unique(verts, axis=0)
    if len(pts) < 4:
        return None
    origin = 0.5 * (pts.min(axis=0) + pts.max(axis=0))
    try:
        hull = ConvexHull(pts - origin)
    except (QhullError, ValueError):
        return None
    tri = hull.points[hull.simplices]
    normal = np.cross(tri[:, 1] - tri[:, 0], tri[:, 2] - tri[:, 0])
    inward = np.einsum("ij,ij->i", normal, hull.equations[:, :3]) < 0
    tri[inward] = tri[inward][:, [0, 2, 1]]
    it = integrate(to_columns(tri), origin, float(np.abs(tri).max()) * 3**0.5)
    if it.volume <= 0:
        return None
    return _props(it), hull.points[hull.vertices] + origin


def _units_finding(uri: str, points: np.ndarray, scale: tuple[float, ...], max_extent: float, min_extent: float) -> Finding | None:
    extent = float((points.max(axis=0) - points.min(axis=0)).max())
    if min_extent <= extent <= max_extent:
        return None
    large = extent > max_extent
    factor = _extent_factor(extent, min_extent, max_extent)
    kind = "larger than" if large else "smaller than"
    hint = "millimetres or other small units read as metres" if large else "a unit scale applied twice or a mesh in metres scaled as millimetres"
    head = f"mesh '{uri}' is {extent:.4g} m across after scale, {kind} {max_extent if large else min_extent:g} m"
    if factor is None:
        # no unit factor brings it into range: a hint would only move it to another absurd size
        return Finding(
            "mesh-units-suspect",
            "warning",
            f"{head}, and no unit factor (mm, cm, inch, or the reverse) brings it between {min_extent:g} and "
            f"{max_extent:g} m: check the mesh file and its scale",
            data={"uri": uri, "extent": extent, "factor": None, "scale": None},
        )
    return Finding(
        "mesh-units-suspect",
        "warning",
        f"{head} (looks like {hint}); scale=\"{_scale_text(scale, factor)}\" would make it {extent * factor:.4g} m",
        data={"uri": uri, "extent": extent, "factor": factor, "scale": [s * factor for s in scale]},
    )


def _extent_factor(extent: float, min_extent: float, max_extent: float) -> float | None:
    """The unit factor (shrinking a too-large mesh, growing a too-small one) that brings ``extent``
    into [min_extent, max_extent], or None when none does."""
    large = extent > max_extent
    for f in (UNIT_FACTORS if large else UNIT_FACTORS[::-1]):
        if (f < 1) == large and min_extent <= extent * f <= max_extent:
            return f
    return None


def _scale_text(scale: tuple[float, ...], factor: float) -> str:
    """The URDF ``scale`` attribute value with every factor multiplied by ``factor``."""
    return " ".join(f"{s * factor:.6g}" for s in scale)


def _scale_problem(scale: tuple[float, ...]) -> str | None:
    """Why a mesh ``scale`` cannot be integrated in float64, or None.

    Besides zero and non-finite factors: a scale whose factors multiply to a volume factor that
    underflows (or overflows) float64, e.g. 1e-300 on every axis, leaves nothing to compute with.
    """
    if len(scale) != 3 or not all(np.isfinite(scale)) or any(s == 0 for s in scale):
        return f"scale {scale} must be three finite, non-zero numbers"
    volume_factor = abs(scale[0]) * abs(scale[1]) * abs(scale[2])
    if volume_factor < np.finfo(float).tiny or not np.isfinite(volume_factor):
        way = "underflows to 0" if volume_factor < np.finfo(float).tiny else "overflows"
        return (f"scale {scale} is unusable: its volume factor sx*sy*sz {way} in float64, so no volume or "
                "inertia can be computed; a unit scale is 0.001 (millimetres), 0.01 (centimetres) or 0.0254 (inches)")
    return None


#: How far outside the density range a unit-corrected density may stay when the stated tensor
#: confirms the factor (the tensor, not the density, is then the evidence; the mass may be off too).
DENSITY_SLACK = 10.0

#: What the mesh coordinates were, by unit factor: the words of the density-based hint.
UNIT_WORDS = {1e-3: "millimetres read as metres", 1e-2: "centimetres read as metres", 0.0254: "inches read as metres",
              1e3: "metres scaled as millimetres (a scale 0.001 too many)"}


def suggest_scale(
    volume: float,
    mass: float,
    density_range: tuple[float, float] = (DEFAULT.density_min, DEFAULT.density_max),
    *,
    inertia: np.ndarray | None = None,
    geometry_at: Any = None,
    tolerance: float = DEFAULT.units_tolerance,
    extent: float | None = None,
    extent_range: tuple[float, float] = (DEFAULT.mesh_min_extent, DEFAULT.mesh_max_extent),
) -> float | None:
    """A length factor (one of ``UNIT_FACTORS``) the mesh coordinates look off by, or None.

    Only when mass/volume lies outside ``density_range``. By the density alone (``inertia``
    None): the first factor f with mass/(volume f³) inside the range. With the stated tensor
    ``inertia`` (kg m², about the COM) and ``geometry_at(f)`` (the link geometry's unit-density
    MassProperties with its meshes scaled by f): the factor whose geometry, at the stated mass,
    has the stated tensor within ``tolerance`` (relative Frobenius) and whose implied density
    mass/volume(f) is inside the range widened by ``DENSITY_SLACK``. A tensor computed for the
    real part confirms the factor (its ratio to the mesh's is about f², at the mass as stated),
    where a density alone could be a filler mass on a real large or small part. ``extent``
    (the meshes' largest extent, m): when given, f x extent must lie inside ``extent_range``.
    """
    lo, hi = density_range
    if not (volume > 0 and mass > 0):
        return None
    if lo <= mass / volume <= hi:
        return None
    for f in UNIT_FACTORS:
        if extent is not None and not extent_range[0] <= extent * f <= extent_range[1]:
            continue
        if inertia is None or geometry_at is None:
            if lo <= mass / (volume * f**3) <= hi:
                return f
            continue
        geometry = geometry_at(f)
        if geometry is None or not geometry.mass > 0:
            continue
        if not lo / DENSITY_SLACK <= mass / geometry.mass <= hi * DENSITY_SLACK:
            continue
        expected = np.asarray(geometry.with_mass(mass).inertia, dtype=float)
        norm = float(np.linalg.norm(expected))
        if norm > 0 and float(np.linalg.norm(np.asarray(inertia, dtype=float) - expected)) <= tolerance * norm:
            return f
    return None


# --------------------------------------------------------------------------- cache payloads


def _to_payload(r: _Result) -> dict[str, Any]:
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


def _from_payload(p: dict[str, Any] | None) -> _Result | None:
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
            return _Result(None, None, findings, bool(p["upper_bound"]), int(p["triangles"]), up)
        com = np.array(s["com"], dtype=float).reshape(3)
        inertia = np.array(s["inertia"], dtype=float).reshape(3, 3)
        points = np.array(s["points"], dtype=float).reshape(-1, 3)
        if not (np.isfinite(com).all() and np.isfinite(inertia).all() and len(points)):
            return None
        return _Result(MassProperties(float(s["volume"]), com, inertia), points, findings, bool(p["upper_bound"]), int(p["triangles"]), up)
    except (KeyError, TypeError, ValueError, OverflowError):
        return None
