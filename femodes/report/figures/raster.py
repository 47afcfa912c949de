"""Piecewise-linear fields on a triangulation, sampled on a regular grid (numpy only).

A field pattern's colours are drawn as one image rather than tens of thousands of Gouraud
triangles, and its arrows and field lines are read from the same kind of grid, so that no
triangle finder has to be built: each triangle visits the grid points inside its bounding box,
and a grid point takes the linear (barycentric) interpolant of the triangle that contains it.
"""

from __future__ import annotations

import numpy as np

#: candidate (triangle, grid point) pairs handled at once: bounds the memory to some tens of MB
_CHUNK = 600_000


def _axis(v):
    """(origin, step) of a uniform axis; a single value gets a unit step."""
    v = np.asarray(v, dtype=float)
    if v.size > 1:
        return float(v[0]), float(v[1] - v[0])
    return float(v[0]), 1.0


def sample_on_grid(x, y, triangles, values, xs, ys):
    """Values of piecewise-linear fields at the points of a regular grid.

    x, y      : vertex coordinates (n,);  triangles : (m, 3) vertex indices
    values    : a sequence of (n,) arrays, one per field
    xs, ys    : the grid's axes, ascending and uniformly spaced (a single value is allowed)

    Returns a list of (len(ys), len(xs)) arrays, one per field, NaN at grid points that lie in no
    triangle (outside the cross-section or inside a conductor).  A point on an edge shared by two
    triangles takes the value of one of them (the interpolant is continuous there).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    t = np.asarray(triangles, dtype=np.int64).reshape(-1, 3)
    vals = [np.asarray(v, dtype=float) for v in values]
    xs = np.asarray(xs, dtype=float)
    ys = np.asarray(ys, dtype=float)
    nx, ny = xs.size, ys.size
    out = [np.full((ny, nx), np.nan) for _ in vals]
    if t.size == 0 or nx == 0 or ny == 0:
        return out
    x0, dx = _axis(xs)
    y0, dy = _axis(ys)
    px, py = (x[t] - x0) / dx, (y[t] - y0) / dy            # vertices in grid units, (m, 3)
    i0 = np.clip(np.ceil(px.min(axis=1) - 1e-9), 0, nx).astype(np.int64)
    i1 = np.clip(np.floor(px.max(axis=1) + 1e-9), -1, nx - 1).astype(np.int64)
    j0 = np.clip(np.ceil(py.min(axis=1) - 1e-9), 0, ny).astype(np.int64)
    j1 = np.clip(np.floor(py.max(axis=1) + 1e-9), -1, ny - 1).astype(np.int64)
    ni = np.maximum(i1 - i0 + 1, 0)
    nj = np.maximum(j1 - j0 + 1, 0)
    count = ni * nj
    # barycentric coordinates: l1, l2 from the inverse of [p1 - p0, p2 - p0]
    ax_, ay_ = px[:, 1] - px[:, 0], py[:, 1] - py[:, 0]
    bx_, by_ = px[:, 2] - px[:, 0], py[:, 2] - py[:, 0]
    det = ax_ * by_ - bx_ * ay_
    ok = np.abs(det) > 1e-14 * (np.abs(ax_ * by_) + np.abs(bx_ * ay_) + 1e-300)
    count = np.where(ok, count, 0)
    active = np.flatnonzero(count)
    if active.size == 0:
        return out
    ends = np.cumsum(count[active])
    start = 0
    while start < active.size:
        base = ends[start - 1] if start else 0
        stop = int(np.searchsorted(ends, base + _CHUNK, side="right"))
        stop = max(stop, start + 1)
        tri = active[start:stop]
        c = count[tri]
        k = np.repeat(np.arange(tri.size), c)
        local = np.arange(int(c.sum())) - np.repeat(np.cumsum(c) - c, c)
        tk = tri[k]
        ii = i0[tk] + local % ni[tk]
        jj = j0[tk] + local // ni[tk]
        rx, ry = ii - px[tk, 0], jj - py[tk, 0]
        l1 = (rx * by_[tk] - bx_[tk] * ry) / det[tk]
        l2 = (ax_[tk] * ry - rx * ay_[tk]) / det[tk]
        l0 = 1.0 - l1 - l2
        tol = -1e-9
        keep = (l0 >= tol) & (l1 >= tol) & (l2 >= tol)
        ii, jj, tk = ii[keep], jj[keep], tk[keep]
        l0, l1, l2 = l0[keep], l1[keep], l2[keep]
        vt = t[tk]
        for o, v in zip(out, vals):
            o[jj, ii] = l0 * v[vt[:, 0]] + l1 * v[vt[:, 1]] + l2 * v[vt[:, 2]]
        start = stop
    return out


def fill_edges(image, steps=2):
    """``image`` with NaN pixels next to valid ones given a neighbour's value, ``steps`` times:
    closes the sub-pixel gap between the colours and a wall drawn over the boundary."""
    img = np.array(image, dtype=float)
    for _ in range(steps):
        nan = np.isnan(img)
        if not nan.any():
            break
        for shift, axis in ((1, 0), (-1, 0), (1, 1), (-1, 1)):
            nb = np.roll(img, shift, axis=axis)
            if axis == 0:
                nb[0 if shift == 1 else -1, :] = np.nan
            else:
                nb[:, 0 if shift == 1 else -1] = np.nan
            take = nan & ~np.isnan(nb)
            img[take] = nb[take]
            nan &= ~take
    return img
