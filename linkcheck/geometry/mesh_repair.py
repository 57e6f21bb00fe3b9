"""The topology pass for meshes the cheap test does not pass: merge, count edges, orient, or fall back to the hull.

Vertices are merged by exact bit pattern before topology is judged (STL repeats them); a closed
surface is oriented consistently and its bodies turned outward unless they are cavities; an open
surface is estimated by its convex hull (scipy), an upper bound the finding says so.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from linkcheck.geometry.mesh_io import MeshError
from linkcheck.geometry.polyhedron import (CLOSURE_TOL, Integral, encloses_no_volume, format_vector, integral_props,
                                           integrate, to_columns, why_impossible)
from linkcheck.inertia import MassProperties
from linkcheck.model import Finding


@dataclass
class MeshResult:
    props: MassProperties | None
    points: np.ndarray | None
    findings: list[Finding] = field(default_factory=list)
    upper_bound: bool = False
    triangles: int = 0
    up_axis: str | None = None


def closed_result(it: Integral, points: np.ndarray, n: int, findings: list[Finding]) -> MeshResult:
    if it.volume < 0:
        findings.append(Finding("mesh-inside-out", "info",
                                f"the surface is wound inward (signed volume {it.volume:.6g} m^3); integrated with flipped orientation",
                                data={"signed_volume": it.volume}))
        return MeshResult(integral_props(it, -1.0), points, findings, False, n)
    return MeshResult(integral_props(it), points, findings, False, n)


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


def repair(cols: np.ndarray, origin: np.ndarray, radius: float, points: np.ndarray, n: int,
            lo: np.ndarray, hi: np.ndarray) -> MeshResult:
    tris = cols.transpose(2, 1, 0)
    topo = topology(tris)
    findings: list[Finding] = []
    if topo.open_edges == 0:
        if topo.inconsistent_edges == 0:
            it = integrate(to_columns(tris[topo.keep]), origin, radius)
            if not encloses_no_volume(it, radius) and why_impossible(it, lo, hi) is None:
                return closed_result(it, points, n, findings)
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
                if encloses_no_volume(it, radius):
                    raise MeshError(f"the surface encloses no volume (signed volume {it.volume:.3g} m^3 "
                                    f"over extents {format_vector(hi - lo)} m)")
                bodies, turned = len(outward), int(outward.sum())
                impossible = why_impossible(it, lo, hi)
                if impossible is not None:
                    return MeshResult(None, None, [Finding(
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
                return closed_result(it, points, n, findings)
        if topo.inconsistent_edges == 0:  # closed and consistent, yet the faces cannot be paired into bodies
            return MeshResult(None, None, [Finding(
                "mesh-unavailable", "error",
                f"the surface is closed but integrates to no possible solid "
                f"({'no volume' if encloses_no_volume(it, radius) else why_impossible(it, lo, hi) or 'not closed once oriented'}) "
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
    return MeshResult(hull_props, hull_points, findings, True, n)


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
    return integral_props(it), hull.points[hull.vertices] + origin
