"""Point location in a triangle mesh (straight-sided barycentric test over the nearest centroids).
"""

from __future__ import annotations

import numpy as np


def locate_straight(p, t, pts, candidates=10, tree=None):
    """For points (2, n): the triangle of (p, t) that contains each, judged on straight sides
    among the ``candidates`` nearest centroids.  Returns (cells, reference coordinates (2, n),
    score): score >= 0 inside, the most negative barycentric coordinate otherwise."""
    from scipy.spatial import cKDTree

    v = p[:, t]  # (2, 3, nt)
    tree = cKDTree(np.mean(v, axis=1).T) if tree is None else tree
    kk = min(candidates, t.shape[1])
    _, cand = tree.query(pts.T, kk)
    cand = np.asarray(cand).reshape(pts.shape[1], kk)
    best = np.full(pts.shape[1], -np.inf)
    cells = -np.ones(pts.shape[1], dtype=np.int64)
    ref = np.zeros((2, pts.shape[1]))
    for j in range(kk):
        c = cand[:, j]
        a, b, d = v[:, 0, c], v[:, 1, c], v[:, 2, c]
        e1, e2, w = b - a, d - a, pts - a
        det = e1[0] * e2[1] - e1[1] * e2[0]
        X = (w[0] * e2[1] - w[1] * e2[0]) / det
        Y = (e1[0] * w[1] - e1[1] * w[0]) / det
        score = np.minimum(np.minimum(X, Y), 1 - X - Y)
        better = score > best
        best[better] = score[better]
        cells[better] = c[better]
        ref[0, better], ref[1, better] = X[better], Y[better]
    return cells, ref, best
