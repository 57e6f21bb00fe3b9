"""The topology pass for meshes the cheap test does not pass: merge, count edges, orient, or fall back to the hull.

Vertices are merged by exact bit pattern before topology is judged (STL repeats them); a closed
surface is oriented consistently and its bodies turned outward unless they are cavities; an open
surface is estimated by its convex hull (scipy), an upper bound the finding says so.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from linkcheck.geometry.mesh_io import MeshError
from linkcheck.geometry.polyhedron import (CLOSURE_TOL, Integral, encloses_no_volume, faces_out_at_extremes, format_vector,
                                           integral_props, integrate, to_columns, why_impossible, winding_dips_below_zero,
                                           winding_numbers)
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


#: Solid-angle evaluations (test points x triangles) the nesting test may spend on one mesh
#: (a second or two); beyond it, which body encloses which is judged by bounding boxes.
NESTING_BUDGET = 20_000_000


def repair(cols: np.ndarray, origin: np.ndarray, radius: float, points: np.ndarray, n: int,
           lo: np.ndarray, hi: np.ndarray, suspect: bool = False) -> MeshResult:
    """``suspect``: the cheap tests found the surface closed but some body in it wound inward."""
    tris = cols.transpose(2, 1, 0)
    topo = topology(tris)
    findings: list[Finding] = []
    if topo.open_edges == 0:
        if topo.inconsistent_edges == 0:
            kept = to_columns(tris[topo.keep])
            it = integrate(kept, origin, radius)
            if (not suspect and it.volume > 0 and not encloses_no_volume(it, radius)
                    and why_impossible(it, lo, hi) is None and _looks_outward(kept, it, origin)):
                return closed_result(it, points, n, findings)
        oriented = orient(topo.faces)
        if oriented is not None:
            flip, labels = oriented
            fixed = tris[topo.keep]
            fixed[flip] = fixed[flip][:, [0, 2, 1]]
            faces = topo.faces.copy()
            faces[flip] = faces[flip][:, [0, 2, 1]]
            bodies = _orient_bodies(fixed, labels, faces)
            outward = bodies.flip
            fixed[outward[labels]] = fixed[outward[labels]][:, [0, 2, 1]]
            it = integrate(to_columns(fixed), origin, radius)
            if it.closure <= CLOSURE_TOL * 10:
                if encloses_no_volume(it, radius):
                    raise MeshError(f"the surface encloses no volume (signed volume {it.volume:.3g} m^3 "
                                    f"over extents {format_vector(hi - lo)} m)")
                count, turned = bodies.bodies, int(outward.sum())
                impossible = why_impossible(it, lo, hi)
                if impossible is not None:
                    return MeshResult(None, None, [Finding(
                        "mesh-unavailable", "error",
                        f"the surface is closed but integrates to no possible solid ({impossible}) even with its "
                        f"{count} bodies oriented; which are bodies and which are cavities cannot be decided "
                        f"({bodies.why or 'bodies through each other'}), so the mesh gives no estimate",
                        data={"bodies": count})], False, n)
                if turned and turned == len(outward) and not flip.any():
                    # every body inside-out: the surface as a whole is wound inward
                    return closed_result(integrate(to_columns(tris[topo.keep]), origin, radius), points, n, findings)
                wound = []
                if flip.any():
                    wound.append(f"{int(flip.sum())} of {n} triangles were wound against their neighbours "
                                 f"and were re-oriented consistently")
                if turned or bodies.why:
                    rule = (f"judged by bounding boxes, as {bodies.why}: a surface inside the boxes of an odd "
                            f"number of others was taken as a cavity" if bodies.why else
                            "a body must face outward, and a cavity, a surface inside an odd number of others, inward")
                    wound.append(f"{turned} of {count} bodies {'was' if turned == 1 else 'were'} wound inside-out "
                                 f"and flipped ({rule})")
                if wound:
                    findings.append(Finding("mesh-inside-out", "info", "; ".join(wound) + " before integrating",
                                            data={"reoriented": int((flip ^ outward[labels]).sum()),
                                                  "bodies_flipped": turned, "bodies": count,
                                                  "nesting": "bounding boxes" if bodies.why else "exact"}))
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


def _looks_outward(cols: np.ndarray, it: Integral, origin: np.ndarray) -> bool:
    """The cheap tests of the fast path, on a surface that only the exact topology found closed."""
    flat = cols.reshape(3, -1)
    extremes = np.array([f(flat[k]) for k in range(3) for f in (np.argmin, np.argmax)])
    extent = flat.max(axis=1) - flat.min(axis=1)
    return faces_out_at_extremes(cols, extremes) and not winding_dips_below_zero(cols, it.com - origin, extent)


@dataclass(frozen=True)
class Bodies:
    flip: np.ndarray  # per patch: turn it over
    bodies: int  # patches closed on their own
    why: str | None = None  # set when nesting was judged by bounding boxes: the reason


def _orient_bodies(tris: np.ndarray, labels: np.ndarray, faces: np.ndarray) -> Bodies:
    """Patches to flip so every body faces outward and every cavity inward.

    The winding of a patch is only known relative to itself. Only a patch closed on its own (every
    edge of it used once each way by its own faces, ``faces`` being the merged ids wound as
    ``tris``) has a signed volume that means anything, so only those are bodies or cavities;
    pieces of a non-manifold surface are left as wound. A closed patch's nesting depth is the
    number of other closed patches that contain it, tested exactly with the winding number of
    each candidate container (one whose bounding box holds the patch's box) at a vertex of the
    patch, and at its other extreme vertices where that one is inside: even depth (a body, or an
    island in a cavity) must face outward, odd depth (a cavity) inward. When that cannot be
    decided (patches that cross or touch, a patch inside the box of non-manifold pieces, or more
    work than ``NESTING_BUDGET``), bounding boxes stand in for the surfaces as a fallback (a patch
    inside another's box counts as inside it; wrong for a body in a ring's hole) and ``why`` says so.
    """
    count = int(labels.max()) + 1
    out = np.zeros(count, dtype=bool)
    if count == 1:
        return Bodies(out, 1)  # one body: an inward result is flipped as a whole
    d = np.einsum("ij,ij->i", tris[:, 0], np.cross(tris[:, 1], tris[:, 2]))
    vol = np.bincount(labels, weights=d, minlength=count)
    key, sign, owner = _edges(faces)
    lab = labels[owner]
    order = np.lexsort((key, lab))
    sk, sl = key[order], lab[order]
    starts = np.flatnonzero(np.r_[True, (sk[1:] != sk[:-1]) | (sl[1:] != sl[:-1])])
    closed = np.ones(count, dtype=bool)
    closed[sl[starts[np.add.reduceat(sign[order], starts) != 0]]] = False
    by_label = np.argsort(labels, kind="stable")
    first = np.r_[0, np.cumsum(np.bincount(labels, minlength=count))]
    grouped = tris[by_label]  # the triangles of patch p are grouped[first[p]:first[p + 1]]
    lo = np.minimum.reduceat(grouped.min(axis=1), first[:-1])
    hi = np.maximum.reduceat(grouped.max(axis=1), first[:-1])
    shells = np.flatnonzero(closed)
    pairs = []  # (contained, container) candidates: box inside box (of equal boxes, the later one inside)
    step = max(1, 1_000_000 // max(len(shells), 1))  # bounded memory, no Python loop per patch
    for s in range(0, len(shells), step):
        i = shells[s:s + step]
        inside = ((lo[shells][None] <= lo[i][:, None]) & (hi[shells][None] >= hi[i][:, None])).all(axis=2)
        same = ((lo[shells][None] == lo[i][:, None]) & (hi[shells][None] == hi[i][:, None])).all(axis=2)
        inside &= ~same | (shells[None] < i[:, None])
        a, b = np.nonzero(inside)
        pairs.append(np.stack((i[a], shells[b]), axis=1))
    pairs = np.concatenate(pairs) if pairs else np.zeros((0, 2), dtype=np.int64)
    why = _nesting(grouped, first, lo, hi, closed, pairs)
    if isinstance(why, str):
        depth = np.bincount(pairs[:, 0], minlength=count)  # boxes stand in for the surfaces
    else:
        depth, why = why, None
    want_out = depth[shells] % 2 == 0
    out[shells] = (vol[shells] != 0) & ((vol[shells] > 0) != want_out)
    return Bodies(out, len(shells), why)


def _nesting(grouped: np.ndarray, first: np.ndarray, lo: np.ndarray, hi: np.ndarray, closed: np.ndarray,
             pairs: np.ndarray) -> np.ndarray | str:
    """Nesting depth of every patch (closed ones in closed ones), or why it cannot be decided."""
    shells, pieces = np.flatnonzero(closed), np.flatnonzero(~closed)
    if len(pieces) and ((lo[pieces].min(axis=0) <= lo[shells]) & (hi[pieces].max(axis=0) >= hi[shells])).all(axis=1).any():
        return "a body lies within the box of pieces of non-manifold surface, which may enclose it"
    size = np.diff(first)
    budget = NESTING_BUDGET - int(size[pairs[:, 1]].sum())
    if budget < 0:
        return (f"its {len(shells)} bodies lie too many inside one another's boxes to test which encloses which "
                f"within {NESTING_BUDGET // 1_000_000} million solid angles")
    w = _container_winding(grouped, first, pairs, grouped[first[pairs[:, 0]], 0][:, None])
    if w is None:
        return "bodies touch or cross one another"
    held = pairs[w[:, 0] > 0.5]
    # a patch that crosses its container has some extreme vertex outside it: test those too
    if len(held) and 6 * int(size[held[:, 1]].sum()) <= budget:
        owner = np.repeat(np.arange(len(lo)), size)
        extreme = np.empty((len(lo), 6, 3))
        for c in range(3):
            for e, bound in enumerate((lo, hi)):
                face, corner = np.nonzero(grouped[:, :, c] == bound[owner, c][:, None])
                patch, at = np.unique(owner[face], return_index=True)
                extreme[patch, 2 * c + e] = grouped[face[at], corner[at]]
        w = _container_winding(grouped, first, held, extreme[held[:, 0]])
        if w is None or not (w > 0.5).all():
            return "bodies cross one another"
    return np.bincount(held[:, 0], minlength=len(lo))


def _container_winding(grouped: np.ndarray, first: np.ndarray, pairs: np.ndarray, points: np.ndarray) -> np.ndarray | None:
    """|winding number| of each pair's container at its points (pairs x k); None if any point lies
    on a container's surface (|w| not near 0 or 1) or a container covers space twice."""
    w = np.zeros(points.shape[:2])
    if len(pairs) == 0:
        return w
    order = np.argsort(pairs[:, 1], kind="stable")
    bounds = np.flatnonzero(np.r_[True, pairs[order[1:], 1] != pairs[order[:-1], 1], True])
    for s, e in zip(bounds[:-1], bounds[1:]):  # one container at a time, all its points at once
        rows = order[s:e]
        container = pairs[rows[0], 1]
        w[rows] = winding_numbers(grouped[first[container]:first[container + 1]],
                                  points[rows].reshape(-1, 3)).reshape(len(rows), -1)
    w = np.abs(w)
    if np.any(np.abs(w - np.round(w)) > 0.25) or np.any(w > 1.5):
        return None
    return w


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
