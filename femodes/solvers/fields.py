"""Fields of a scalar finite-element solution: evaluation on reference points, at arbitrary points,
and the transverse mode vectors of TE / TM / TEM modes from the longitudinal potential.

Plain functions over a scikit-fem basis and a coefficient vector; the mode model
(:mod:`femodes.modes`) holds a :class:`ModeField` and calls these.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from femodes.geometry.locate import locate_straight


@dataclass(frozen=True, eq=False)
class ModeField:
    """The finite-element potential of one mode: a vector of coefficients on a scikit-fem basis."""

    basis: object
    coeffs: np.ndarray
    kind: str  # 'TE', 'TM' or 'TEM'
    kc: float
    scale: float = 1.0  # grad psi -> e_t factor: 1 / kc for TE and TM, 1 / sqrt(int |grad psi|^2) for TEM

    def sample(self, subdivisions=3):
        """Values on a refined plotting triangulation.

        Returns (x, y, triangles, psi, grad_x, grad_y): points are mapped reference points of every
        element (so curved edges are followed), triangles index into them.  The points come element
        by element: point j of element e is entry e * n_ref + j, with n_ref = (s + 1)(s + 2) / 2 for
        s subdivisions, the reference points (i/s, j/s) ordered by j then i.
        """
        n = int(subdivisions)
        ij = [(i, j) for j in range(n + 1) for i in range(n + 1 - j)]
        ref = np.array([[i / n, j / n] for i, j in ij]).T
        index = {p: k for k, p in enumerate(ij)}
        sub = []
        for j in range(n):
            for i in range(n - j):
                sub.append((index[(i, j)], index[(i + 1, j)], index[(i, j + 1)]))
                if i + j < n - 1:
                    sub.append((index[(i + 1, j)], index[(i + 1, j + 1)], index[(i, j + 1)]))
        sub = np.array(sub)
        val, gx, gy, xy = self._at_reference(ref)
        ne, npt = val.shape
        tris = (sub[None, :, :] + npt * np.arange(ne)[:, None, None]).reshape(-1, 3)
        return xy[0].ravel(), xy[1].ravel(), tris, val.ravel(), gx.ravel(), gy.ravel()

    def _at_reference(self, ref):
        basis = self.basis
        mapping = basis.mapping
        tind = np.arange(basis.mesh.t.shape[1])
        X = np.broadcast_to(ref[:, None, :], (2, len(tind), ref.shape[1]))
        xy = mapping.F(ref)
        val = np.zeros(X.shape[1:])
        gx = np.zeros_like(val)
        gy = np.zeros_like(val)
        dofs = basis.element_dofs
        for k in range(basis.Nbfun):
            phi = basis.elem.gbasis(mapping, ref, k, tind=tind)[0]
            c = self.coeffs[dofs[k]][:, None]
            val += c * np.asarray(phi)
            gx += c * phi.grad[0]
            gy += c * phi.grad[1]
        return val, gx, gy, xy

    def evaluate(self, points):
        """psi and grad psi at arbitrary points (2, n); NaN outside the mesh."""
        P, Gx, Gy, ok = interpolation_matrices(self.basis, points)
        val, gx, gy = P @ self.coeffs, Gx @ self.coeffs, Gy @ self.coeffs
        val[~ok] = gx[~ok] = gy[~ok] = np.nan
        return val, gx, gy


def interpolation_matrices(basis, points, gradients=True):
    """Sparse matrices giving psi, d psi/dx, d psi/dy at points (2, n) from a coefficient vector,
    and a mask of the points found inside the mesh (rows of the others are zero).  With
    ``gradients=False`` the two gradient matrices are None: the values of a Lagrange (H1) basis
    function at a point are those of the reference function at its reference coordinates, so the
    geometry map is not evaluated at all."""
    from scipy.sparse import coo_matrix
    from skfem.element import ElementH1

    pts = np.asarray(points, dtype=float).reshape(2, -1)
    cells, ref = _locate(basis, pts)
    ok = cells >= 0
    idx = np.flatnonzero(ok)
    c_ok = cells[ok]
    r = ref[:, ok][:, :, None]
    rows, cols, vals, dxs, dys = [], [], [], [], []
    shape = (pts.shape[1], basis.N)
    if not gradients and isinstance(basis.elem, ElementH1):
        r2 = ref[:, ok]
        for k in range(basis.Nbfun):
            rows.append(idx)
            cols.append(basis.element_dofs[k, c_ok])
            vals.append(np.asarray(basis.elem.lbasis(r2, k)[0]))
        P = coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=shape).tocsr()
        return P, None, None, ok
    # straight cells through the affine map of their vertices (exact there, and far cheaper than
    # the isoparametric map's Jacobian from the P3 / P4 geometry basis), curved ones isoparametric
    groups = [(np.arange(idx.size), basis.mapping)]
    if type(basis.mesh).__name__ != "MeshTri1":
        cache = basis.__dict__["_femodes_tree"]  # made by _locate
        if "affine" not in cache:
            from skfem import MeshTri1

            mesh = basis.mesh
            cache["affine"] = MeshTri1(np.ascontiguousarray(mesh.doflocs[:, : mesh.t.max() + 1]),
                                       np.ascontiguousarray(mesh.t)).mapping()
        st = ~cache["curved"][c_ok]
        groups = [(np.flatnonzero(st), cache["affine"]), (np.flatnonzero(~st), basis.mapping)]
    for sel, mapping in groups:
        if not sel.size:
            continue
        for k in range(basis.Nbfun):
            phi = basis.elem.gbasis(mapping, r[:, sel], k, tind=c_ok[sel])[0]
            rows.append(idx[sel])
            cols.append(basis.element_dofs[k, c_ok[sel]])
            vals.append(np.asarray(phi)[:, 0])
            dxs.append(phi.grad[0][:, 0])
            dys.append(phi.grad[1][:, 0])
    rows, cols = np.concatenate(rows), np.concatenate(cols)
    mats = [coo_matrix((np.concatenate(v), (rows, cols)), shape=shape).tocsr() for v in (vals, dxs, dys)]
    return mats[0], mats[1], mats[2], ok


def reference_points_matrix(basis, ref):
    """Sparse matrix of psi at the reference points ``ref`` (2, q) of every element, rows ordered
    element by element, and the global coordinates (2, n_elements, q) of those points."""
    from scipy.sparse import coo_matrix

    ne = basis.mesh.t.shape[1]
    q = ref.shape[1]
    tind = np.arange(ne)
    rows_base = (np.arange(ne)[:, None] * q + np.arange(q)[None, :])
    rows, cols, vals = [], [], []
    for k in range(basis.Nbfun):
        phi = basis.elem.gbasis(basis.mapping, ref, k, tind=tind)[0]
        rows.append(rows_base.ravel())
        cols.append(np.repeat(basis.element_dofs[k], q))
        vals.append(np.asarray(phi).ravel())
    P = coo_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                   shape=(ne * q, basis.N)).tocsr()
    return P, basis.mapping.F(ref)


def _locate(basis, pts):
    """Cell index (-1 if none) and reference coordinates of each point.

    Cells are found with straight-sided barycentric coordinates over the nearest candidates;
    on curved cells the reference point is then refined by the isoparametric inverse map.
    A point in the thin sliver between a curved edge and its chord goes to the nearest cell.
    """
    from scipy.spatial import cKDTree

    mesh = basis.mesh
    cache = basis.__dict__.setdefault("_femodes_tree", {})
    p = mesh.doflocs[:, : mesh.t.max() + 1]
    if "tree" not in cache:
        cache["tree"] = cKDTree(np.mean(p[:, mesh.t], axis=1).T)
    cells, ref, best = locate_straight(p, mesh.t, pts, 10, cache["tree"])
    cells[best < -0.25] = -1
    if type(mesh).__name__ != "MeshTri1":
        # only curved cells need the isoparametric inverse: on a cell whose map is affine the
        # straight-sided coordinates are exact (most cells of a curved mesh: only those along arcs bend)
        if "curved" not in cache:
            cache["curved"] = _curved_cells(basis.mapping, p, mesh.t)
        ok = np.flatnonzero(cells >= 0)
        ok = ok[cache["curved"][cells[ok]]]
        if ok.size:
            ref[:, ok] = _inverse_map(basis.mapping, pts[:, ok], cells[ok], ref[:, ok])
    inside = best >= -1e-9
    # accept sliver points only if the curved map brings them inside the reference triangle
    in_ref = (ref[0] >= -1e-9) & (ref[1] >= -1e-9) & (ref[0] + ref[1] <= 1 + 1e-9)
    cells[~(inside | in_ref)] = -1
    return cells, ref


def _inverse_map(mapping, x, tind, start, iterations=12, tol=1e-12):
    """Reference coordinates of the points ``x`` (2, n) in the cells ``tind`` of an isoparametric
    mapping: Newton's method from the straight-sided coordinates ``start`` (close: the cells bend
    only slightly), with the map's Jacobian uncached (scikit-fem's ``invF`` caches every iterate's
    Jacobian and starts from the centroid).  A point whose iteration does not settle keeps its
    straight-sided coordinates."""
    X = np.array(start, dtype=float)[:, :, None]
    xx = x[:, :, None]
    done = False
    p = mapping.mesh.doflocs
    t = mapping.mesh.dofs.element_dofs[:, tind]
    for _ in range(iterations):
        # the map and its Jacobian in one pass over the geometry's basis functions
        F = np.zeros((2,) + X.shape[1:])
        J = np.zeros((2, 2) + X.shape[1:])
        for k in range(t.shape[0]):
            phi, dphi = mapping.elem.lbasis(X, k)
            node = p[:, t[k]][:, :, None]
            F += node * phi
            J += node[:, None] * np.asarray(dphi)[None]
        det = J[0][0] * J[1][1] - J[0][1] * J[1][0]
        r = xx - F
        with np.errstate(divide="ignore", invalid="ignore"):
            d0 = (J[1][1] * r[0] - J[0][1] * r[1]) / det
            d1 = (-J[1][0] * r[0] + J[0][0] * r[1]) / det
        X[0] += d0
        X[1] += d1
        step = np.abs(d0[:, 0]) + np.abs(d1[:, 0])
        if np.all(step < tol):
            done = True
            break
    out = X[:, :, 0]
    if not done:
        bad = ~(step < 1e-9) | ~np.all(np.isfinite(out), axis=0)
        out[:, bad] = np.asarray(start)[:, bad]
    return out


def _curved_cells(mapping, p, t):
    """Mask of the cells whose isoparametric map is not affine: the map sampled at the 15 nodes of
    the quartic lattice (unisolvent for the polynomials of degree <= 4, the highest geometry order)
    against the affine map of the cell's vertices; equal at all of them means equal everywhere."""
    k = np.array([(i, j) for i in range(5) for j in range(5 - i)], dtype=float).T / 4.0  # (2, 15)
    xy = np.asarray(mapping.F(k))  # (2, nt, 15)
    v = p[:, t]  # (2, 3, nt)
    aff = v[:, 0, :, None] + (v[:, 1] - v[:, 0])[:, :, None] * k[0] + (v[:, 2] - v[:, 0])[:, :, None] * k[1]
    scale = float(np.max(np.ptp(p, axis=1))) if p.size else 1.0
    return np.max(np.abs(xy - aff), axis=(0, 2)) > 1e-12 * scale


def _transverse(family, kc, field, gx, gy):
    """(e_x, e_y, h_x, h_y) from grad psi, scaled by the ModeField's ``scale`` (int |e_t|^2 = 1)."""
    s = field.scale
    if family == "TE":
        ex, ey = -gy * s, gx * s      # z x grad psi = (-dpsi/dy, dpsi/dx)
    else:
        ex, ey = -gx * s, -gy * s     # -grad psi
    hx, hy = -ey, ex                  # z x e_t
    return ex, ey, hx, hy
