"""The largest pairwise distance of a set of points (a lot's largest pairwise Δu'v'), exactly.

The largest distance between points of a finite set is attained between two vertices of its
convex hull (the diameter of a convex polygon is a vertex pair: Preparata & Shamos (1985)
*Computational Geometry*, §4.2.3). :func:`max_pairwise_distance` filters the points that cannot
be hull vertices, finds the hull and its farthest vertex pair by rotating calipers; the
all-pairs search (:func:`max_pairwise_distance_bruteforce`) is the reference the tests compare
it with. Moved out of :mod:`lumeval.lots.statistics` (which re-exports the public names).
"""

from __future__ import annotations

import math

import numpy as np


def max_pairwise_distance(points) -> tuple[float, int, int]:
    """Largest Euclidean distance between any two of N points, exactly, in O(N log N).

    The maximum is attained between two vertices of the convex hull (Preparata & Shamos 1985,
    §4.2.3), so only points that may be hull vertices are compared. First every point strictly
    inside the octagon of the extreme points in eight directions is set aside (it cannot be a
    hull vertex: the Akl-Toussaint heuristic, Akl & Toussaint 1978), and while more than
    :data:`BRUTE_FORCE_POINTS` remain, every point strictly inside the polygons of the extreme
    points in 32, then 256 directions (:data:`FINE_DIRECTIONS`; the same argument). When at most
    :data:`BRUTE_FORCE_POINTS` are left, all their pairs are compared; else (points on a convex
    curve: nearly every point is a hull vertex) the convex hull is computed
    (scipy.spatial.ConvexHull, Qhull) and its diameter found by rotating calipers over the hull's
    antipodal pairs (Shamos 1978; Preparata & Shamos 1985, §4.2.3), in memory proportional to
    the number of vertices. Points with a non-finite coordinate are ignored.

    Parameters
    ----------
    points : array_like, shape (N, 2)

    Returns
    -------
    (distance, i, j)
        The distance and the indices (into ``points``) of one pair attaining it, i < j;
        (0.0, i, i) for a single defined point and (nan, -1, -1) for none.
    """
    P = np.atleast_2d(np.asarray(points, dtype=float))
    idx = np.flatnonzero(np.all(np.isfinite(P), axis=1))
    if idx.size == 0:
        return float("nan"), -1, -1
    if idx.size == 1:
        return 0.0, int(idx[0]), int(idx[0])
    Q = P[idx]
    cand = _outside_octagon(Q)
    for k in FINE_DIRECTIONS:
        if cand.size > BRUTE_FORCE_POINTS:
            cand = cand[_outside_polygon(Q[cand], k)]
    if cand.size > BRUTE_FORCE_POINTS:
        hull = cand[_hull_vertices(Q[cand])]
        if hull.size > BRUTE_FORCE_POINTS:
            p, q = _calipers(Q[hull])
            i, j = sorted((int(idx[hull[p]]), int(idx[hull[q]])))
            return float(np.hypot(*(P[i] - P[j]))), i, j
        cand = hull
    C = Q[cand]
    d2 = ((C[:, None, :] - C[None, :, :]) ** 2).sum(-1)
    a, b = np.unravel_index(int(np.argmax(d2)), d2.shape)
    i, j = sorted((int(idx[cand[a]]), int(idx[cand[b]])))
    if i == j:  # every defined point the same: any two of them attain 0 (one was named twice)
        i, j = int(idx[0]), int(idx[1])
    return float(np.sqrt(d2[a, b])), i, j


#: Points compared pair by pair without a convex hull (a 1,500 x 1,500 distance table: 18 MB).
BRUTE_FORCE_POINTS = 1500
#: Directions of the finer filter polygons, applied in turn to the survivors while more than
#: :data:`BRUTE_FORCE_POINTS` are left (a lot whose chromaticities fill a disc leaves a tenth
#: of its points around the octagon, about 0.6 % around the 32-gon).
FINE_DIRECTIONS = (32, 256)


def _outside_octagon(Q: np.ndarray) -> np.ndarray:
    """Indices of the points of ``Q`` (N, 2) that are not strictly inside the convex octagon
    whose corners are the extreme points along x, y, x + y and x - y (in counter-clockwise
    order), with a margin of rounding: every hull vertex is among them. Repeated corners are
    one corner; a degenerate octagon (a line, a point) keeps every point."""
    x, y = Q[:, 0], Q[:, 1]
    s, d = x + y, x - y
    corners = Q[[int(np.argmin(y)), int(np.argmax(d)), int(np.argmax(x)), int(np.argmax(s)),
                 int(np.argmax(y)), int(np.argmin(d)), int(np.argmin(x)), int(np.argmin(s))]]
    return _outside_corners(Q, corners)


def _outside_polygon(Q: np.ndarray, k: int) -> np.ndarray:
    """:func:`_outside_octagon` with the extreme points in ``k`` directions at equal angles
    (counter-clockwise: the support point of a convex set moves counter-clockwise along its
    boundary as the direction turns so, ties included)."""
    t = 2.0 * np.pi * np.arange(k) / k
    D = np.column_stack([np.cos(t), np.sin(t)])  # (k, 2)
    best = np.full(k, -np.inf)
    arg = np.zeros(k, dtype=np.int64)
    step = max(1, _TEMP_ELEMENTS // k)
    for s in range(0, Q.shape[0], step):  # blocks of points: (k, step) projections at a time
        proj = D @ Q[s: s + step].T  # rows contiguous
        j = np.argmax(proj, axis=1)
        v = proj[np.arange(k), j]
        better = v > best  # strictly: the first of equal extremes, as one argmax over all
        best[better], arg[better] = v[better], j[better] + s
    return _outside_corners(Q, Q[arg])


#: Elements of the (points x edges) temporaries of the filter polygons (16 MB of float64).
_TEMP_ELEMENTS = 1 << 21


def _outside_corners(Q: np.ndarray, corners: np.ndarray) -> np.ndarray:
    """Indices of the points of ``Q`` not strictly inside the convex polygon of ``corners``
    (points of ``Q``, counter-clockwise; repeats allowed), beyond a margin of rounding. A
    polygon of fewer than three edges (a line, a point) has no inside: every point is kept."""
    x, y = Q[:, 0], Q[:, 1]
    scale = float(np.max(np.abs(Q - Q.mean(axis=0)))) or 1.0
    a = corners
    e = np.roll(corners, -1, axis=0) - a
    keep = e.any(axis=1)  # a repeated corner: no edge
    if int(keep.sum()) < 3:
        return np.arange(Q.shape[0])
    a, e = a[keep], e[keep]
    inside = np.ones(Q.shape[0], dtype=bool)
    step = max(1, min(16, _TEMP_ELEMENTS // max(1, Q.shape[0])))  # edges at a time: bounded temporaries
    for k in range(0, a.shape[0], step):
        ak, ek = a[k: k + step], e[k: k + step]
        # > 0: left of the edge a -> a + e (inside for a counter-clockwise polygon), beyond rounding
        cross = ek[:, 0] * (y[:, None] - ak[:, 1]) - ek[:, 1] * (x[:, None] - ak[:, 0])
        inside &= (cross > 1e-9 * scale * scale).all(axis=1)
    return np.flatnonzero(~inside)


def _hull_vertices(Q: np.ndarray) -> np.ndarray:
    """Indices of candidate diameter endpoints: the convex hull's vertices in counter-clockwise
    order, or for collinear / coincident sets the two extreme points along the set's direction."""
    from scipy.spatial import ConvexHull, QhullError

    span = Q.max(axis=0) - Q.min(axis=0)
    if not np.any(span > 0):
        return np.array([0, 0])
    try:
        if Q.shape[0] >= 3:
            return np.asarray(ConvexHull(Q).vertices)  # counter-clockwise in 2-D (scipy's documentation)
    except QhullError:
        pass
    # Collinear (or 2 points): project on the direction between two distinct points.
    k = int(np.argmax(span))
    lo, hi = int(np.argmin(Q[:, k])), int(np.argmax(Q[:, k]))
    direction = Q[hi] - Q[lo]
    t = (Q - Q[lo]) @ direction
    return np.array([int(np.argmin(t)), int(np.argmax(t))])


def _calipers(H: np.ndarray) -> tuple[int, int]:
    """Indices of the farthest pair of the vertices ``H`` (h, 2) of a convex polygon in
    counter-clockwise order, by rotating calipers (Shamos 1978): for each edge, the vertex
    farthest from its line is found by advancing one pointer around the polygon (the distance
    grows then falls), and each edge's endpoints are compared with it and the vertex after it
    (an edge parallel to the first gives two farthest vertices): every antipodal pair is visited,
    the diameter among them. O(h) steps."""
    h = H.shape[0]
    xs, ys = H[:, 0].tolist(), H[:, 1].tolist()

    def area2(i: int, k: int, j: int) -> float:  # twice the area of the triangle (i, k, j)
        return (xs[k] - xs[i]) * (ys[j] - ys[i]) - (ys[k] - ys[i]) * (xs[j] - xs[i])

    best, pair = -1.0, (0, 0)
    j = 1
    for i in range(h):
        k = (i + 1) % h
        steps = 0
        while steps < h and area2(i, k, (j + 1) % h) > area2(i, k, j):
            j = (j + 1) % h
            steps += 1
        for p in (i, k):
            for q in (j, (j + 1) % h):  # the next vertex too: an edge parallel to (i, k) ties
                d = (xs[p] - xs[q]) ** 2 + (ys[p] - ys[q]) ** 2
                if d > best:
                    best, pair = d, (p, q)
    return pair


def max_pairwise_distance_bruteforce(points, *, chunk: int = 2048) -> float:
    """Largest pairwise distance by comparing all pairs, chunked to bound memory (O(N²) time).

    Kept as an independent cross-check of :func:`max_pairwise_distance`; NaN points ignored.
    """
    P = np.atleast_2d(np.asarray(points, dtype=float))
    P = P[np.all(np.isfinite(P), axis=1)]
    if P.shape[0] == 0:
        return float("nan")
    best = 0.0
    for s in range(0, P.shape[0], chunk):
        A = P[s : s + chunk]
        d2 = ((A[:, None, :] - P[None, :, :]) ** 2).sum(-1)
        best = max(best, float(d2.max()))
    return math.sqrt(best)
