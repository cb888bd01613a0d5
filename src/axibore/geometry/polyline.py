"""Queries on polylines (a profile's sampled chains) that scale with the points, not their product.

A smooth CSV outline is sampled to a few thousand points, and the wall tables, the 1D model and the
wall layer ask for a radius or an arc length at every wall face or station. Comparing every query
with every segment costs (queries x segments): 0.6 s of a 50k-cell run. Here the candidate pairs
come from sorting (``crossings``) or from a k-d tree (``arc_length``), and the arithmetic on each
pair is the all-pairs formula, so the answers are the same numbers.
"""

from __future__ import annotations

import numpy as np


def _pairs(first: np.ndarray, stop: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(owner, position) for every position in first[k] .. stop[k] - 1 of every owner k."""
    counts = np.maximum(stop - first, 0)
    owner = np.repeat(np.arange(counts.size), counts)
    offset = np.arange(owner.size) - np.repeat(np.cumsum(counts) - counts, counts)
    return owner, np.repeat(first, counts) + offset


def crossings(pts: np.ndarray, x: np.ndarray, reduce, fill: float) -> np.ndarray:
    """Reduce (``np.minimum`` or ``np.maximum``) the r of every crossing of the polyline ``pts``
    with each vertical line x; ``fill`` where none crosses. Segments parallel to r do not count."""
    x = np.asarray(x, float)
    x0, x1 = pts[:-1, 0], pts[1:, 0]
    r0, r1 = pts[:-1, 1], pts[1:, 1]
    lo, hi = np.minimum(x0, x1), np.maximum(x0, x1)
    seg = np.flatnonzero(hi - lo > 0)
    flat = x.ravel()
    order = np.argsort(flat, kind="stable")
    xs = flat[order]
    # queries with lo - 1e-12 <= x <= hi + 1e-12, from the sorted queries
    k, pos = _pairs(np.searchsorted(xs, lo[seg] - 1e-12, "left"), np.searchsorted(xs, hi[seg] + 1e-12, "right"))
    j = seg[k]
    t = np.clip((xs[pos] - lo[j]) / (hi[j] - lo[j]), 0.0, 1.0)
    r = np.where(x0[j] <= x1[j], r0[j] + t * (r1[j] - r0[j]), r1[j] + t * (r0[j] - r1[j]))
    out = np.full(flat.size, fill)
    reduce.at(out, order[pos], r)
    return out.reshape(x.shape)


def arc_length(points: np.ndarray, polyline: np.ndarray) -> np.ndarray:
    """Arc-length coordinate along ``polyline`` of the nearest point to each of ``points`` (the
    first segment wins a tie).

    Exact, not approximate: the segments are cut into pieces no longer than h (twice the mean
    segment), so the nearest vertex is within the distance d to the polyline plus h/2; a piece with
    midpoint m and length L lies at least |p - m| - L/2 from p, so only pieces with midpoints within
    (nearest-vertex distance + h/2) can be nearest, and a k-d tree finds those."""
    from scipy.spatial import cKDTree  # here: `import axibore` stays without scipy.spatial

    points = np.asarray(points, float).reshape(-1, 2)
    polyline = np.asarray(polyline, float)
    if points.size == 0 or not np.all(np.isfinite(polyline)) or len(polyline) < 2:
        return _arc_length_all_pairs(points, polyline)
    a, b = polyline[:-1], polyline[1:]
    d = b - a
    seg_len = np.linalg.norm(d, axis=1)
    cum = np.r_[0.0, np.cumsum(seg_len)]
    h = 2.0 * cum[-1] / max(seg_len.size, 1)
    cuts = np.maximum(np.ceil(seg_len / h), 1).astype(int) if h > 0 else np.ones(seg_len.size, int)
    seg, step = _pairs(np.zeros(seg_len.size, int), cuts)
    u0, u1 = step / cuts[seg], (step + 1) / cuts[seg]  # each piece as a fraction of its segment
    start = a[seg] + u0[:, None] * d[seg]
    end = a[seg] + u1[:, None] * d[seg]
    finite = np.all(np.isfinite(points), axis=1)
    # the bound plus a margin for the round-off of the distances (relative to the coordinates)
    scale = float(np.abs(polyline).max()) + float(np.abs(points[finite]).max(initial=0.0))
    reach = cKDTree(np.vstack([start, end[-1:]])).query(np.where(finite[:, None], points, 0.0))[0]
    reach = reach * (1 + 1e-9) + 0.5 * h + 1e-9 * (scale + h) + 1e-300
    near = cKDTree(0.5 * (start + end)).query_ball_point(np.where(finite[:, None], points, 0.0), reach,
                                                         return_sorted=False)
    counts = np.fromiter((len(n) for n in near), int, len(near))
    owner = np.repeat(np.arange(len(points)), counts)
    piece = np.fromiter((i for n in near for i in n), int, owner.size)
    # the all-pairs arithmetic on the whole segment of each candidate piece
    j = seg[piece]
    dd = np.where(seg_len[j] > 0, seg_len[j] ** 2, 1.0)
    rel = points[owner] - a[j]
    t = np.clip((rel[:, 0] * d[j, 0] + rel[:, 1] * d[j, 1]) / dd, 0.0, 1.0)
    gap = points[owner] - (a[j] + t[:, None] * d[j])
    dist = (gap**2).sum(-1)
    first = np.lexsort((j, dist, owner))  # per point: smallest distance, then the first segment
    keep = first[np.r_[True, owner[first][1:] != owner[first][:-1]]]
    out = np.full(len(points), np.nan)
    out[owner[keep]] = cum[j[keep]] + t[keep] * seg_len[j[keep]]
    lost = np.flatnonzero(~finite | (np.bincount(owner, minlength=len(points)) == 0))
    if lost.size:  # no candidate (round-off at extreme scale ratios) or not a finite point: all pairs
        out[lost] = _arc_length_all_pairs(points[lost], polyline)
    return out


def _all_pairs(p: np.ndarray, poly: np.ndarray):
    """Projection of every point of ``p`` on every segment of ``poly``: (t along it, squared distance),
    each (len(p), segments)."""
    a, d = poly[:-1], poly[1:] - poly[:-1]
    dd = np.einsum("ij,ij->i", d, d)
    dd = np.where(dd > 0, dd, 1.0)
    t = np.clip(((p[:, None, :] - a[None]) * d[None]).sum(-1) / dd[None], 0.0, 1.0)
    q = a[None] + t[..., None] * d[None]
    return t, ((p[:, None, :] - q) ** 2).sum(-1)


def _arc_length_all_pairs(points: np.ndarray, polyline: np.ndarray) -> np.ndarray:
    """``arc_length`` by comparing every point with every segment (the definition)."""
    seg_len = np.linalg.norm(np.diff(polyline, axis=0), axis=1)
    cum = np.r_[0.0, np.cumsum(seg_len)]
    out = np.empty(len(points))
    for s in range(0, len(points), 512):  # blocks keep memory bounded
        t, dist = _all_pairs(points[s : s + 512], polyline)
        k = np.argmin(dist, axis=1)
        out[s : s + 512] = cum[k] + t[np.arange(len(k)), k] * seg_len[k]
    return out


def points_to_segments(p: np.ndarray, poly: np.ndarray) -> np.ndarray:
    """Distance from each point of ``p`` to the polyline ``poly`` (all pairs: short polylines)."""
    return np.sqrt(_all_pairs(p, poly)[1].min(axis=1))


def min_distance(a: np.ndarray, b: np.ndarray) -> float:
    """Smallest distance between two polylines (points of each to segments of the other)."""
    return min(points_to_segments(a, b).min(), points_to_segments(b, a).min())
