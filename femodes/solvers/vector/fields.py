"""Fields of full-vector modes: E and H at reference points of every element, at arbitrary
points, sampled for figures and files; the Poynting flux and the wall integral of |H_tan|^2 that
the power-loss method needs.  A mixin of :class:`femodes.solvers.vector.VectorProblem`."""

from __future__ import annotations

import math

import numpy as np

from femodes.constants import MU0
from femodes.errors import FemodesError
from femodes.geometry.locate import locate_straight


class FieldsMixin:
    """Field evaluation for :class:`VectorProblem` (which holds the bases and the materials)."""

    # -- fields at reference points, power flow and wall loss ------------------------
    def _reference_fields(self, mode, X, cells=None):
        """(E_t (2, ne, q), curl E_t (ne, q), E_z (ne, q), grad E_z (2, ne, q)) of ``mode`` at the
        reference points X (2, q) of ``cells`` (default all), through the (curved) mapping: the
        same points in every element, so each basis function is evaluated once for all of them."""
        bt, bz = self.basis_t, self.basis_z
        kw = {} if cells is None else {"tind": cells}
        rows = slice(None) if cells is None else cells
        ne, q = (self.mesh.t.shape[1] if cells is None else len(cells)), X.shape[1]
        dt = np.result_type(mode.et.dtype, float)
        ev, ec = np.zeros((2, ne, q), dtype=dt), np.zeros((ne, q), dtype=dt)
        zv, zg = np.zeros((ne, q), dtype=complex), np.zeros((2, ne, q), dtype=complex)
        for k in range(bt.Nbfun):
            fk = bt.elem.gbasis(bt.mapping, X, k, **kw)[0]
            ck = mode.et[bt.element_dofs[k][rows]][:, None]
            ev += ck[None] * np.asarray(fk)
            ec += ck * np.asarray(fk.curl)
        for k in range(bz.Nbfun):
            fk = bz.elem.gbasis(bz.mapping, X, k, **kw)[0]
            ck = mode.ez[bz.element_dofs[k][rows]][:, None]
            zv += ck * np.asarray(fk)
            zg += ck[None] * np.asarray(fk.grad)
        return ev, ec, zv, zg

    def _magnetic(self, mode, ev, ec, zg, cells=None):
        """(H_t (2, ...), H_z (...)) by Faraday's law H = j curl E / (omega mu) with d/dz = -j beta:
        curl E = z curl_t E_t - z x (grad E_z + j beta E_t), -z x (g_x, g_y) = (g_y, -g_x); from
        E_t, curl E_t and grad E_z of ``cells`` (default all), shaped (2, ne, q) / (ne, q) or, one
        point per cell, (2, n) / (n,)."""

        mu = self.mu_r if cells is None else self.mu_r[cells]
        mu = mu.reshape(mu.shape + (1,) * (np.ndim(ec) - 1)) * MU0
        w_mu = 2 * math.pi * mode.frequency * mu
        g = zg + 1j * mode.beta * ev
        return np.array([1j * g[1], -1j * g[0]]) / w_mu, 1j * ec / w_mu

    def power(self, mode):
        """P = 1/2 Re int (E_x H_y* - E_y H_x*) dA (W) for the mode's normalised fields (common
        practice: the Poynting flux along the guide; Pozar, Microwave Engineering, sec. 3.1)."""
        ev, ec, _, zg = self._reference_fields(mode, self.basis_t.X)
        H_t, _ = self._magnetic(mode, ev, ec, zg)
        s_z = 0.5 * np.real(ev[0] * np.conj(H_t[1]) - ev[1] * np.conj(H_t[0]))
        return float(np.sum(s_z * self.basis_t.dx))

    def wall_integral(self, mode):
        """oint |H_tan|^2 dl over every wall (all boundary edges are PEC), H_tan = H_z z + (H_t . t) t
        with t the unit tangent of the wall.  Gauss quadrature on each boundary edge, evaluated in
        its element on the (curved) geometry: the wall edges are grouped by which local edge of
        their element they are, so each group shares its reference points (scikit-fem's facet
        bases do not take the third-order edge elements)."""
        skm = self.mesh
        facets = skm.boundary_facets()
        cells = skm.f2t[0, facets]
        local = np.argmax(skm.t2f[:, cells] == facets[None, :], axis=0)
        s, w = np.polynomial.legendre.leggauss(self.order + 3)
        s, w = 0.5 * (s + 1.0), 0.5 * w
        # reference edges of scikit-fem's triangle: (0,1), (1,2), (0,2): start point, direction
        edges = {0: ((0.0, 0.0), (1.0, 0.0)), 1: ((1.0, 0.0), (-1.0, 1.0)), 2: ((0.0, 0.0), (0.0, 1.0))}
        total = 0.0
        for l, (start, d) in edges.items():
            c = cells[local == l]
            if c.size == 0:
                continue
            X = np.array([start[0] + s * d[0], start[1] + s * d[1]])
            ev, ec, _, zg = self._reference_fields(mode, X, c)
            H_t, H_z = self._magnetic(mode, ev, ec, zg, c)
            DF = self.basis_t.mapping.DF(X, tind=c)               # (2, 2, ne, q)
            tan = DF[:, 0] * d[0] + DF[:, 1] * d[1]               # (2, ne, q): d x / d s
            dl = np.hypot(tan[0], tan[1])
            h_tan = (H_t[0] * tan[0] + H_t[1] * tan[1]) / dl
            total += float(np.sum((np.abs(h_tan) ** 2 + np.abs(H_z) ** 2) * dl * w[None, :]))
        return total

    # -- fields -------------------------------------------------------------------------
    def sample(self, mode, subdivisions=3):
        """The fields of ``mode`` on every element, each cut into ``subdivisions^2`` triangles
        (the same reference points in every element, so each basis function is evaluated once
        for all elements): returns (x (P,), y (P,), triangles (T, 3), F (6, P)) with F the
        components of :meth:`VectorMode.fields`.  Points are per element (the normal E jumps
        across material interfaces and is kept so); curved elements are followed."""
        n = max(1, int(subdivisions))
        ij = [(i, j) for j in range(n + 1) for i in range(n + 1 - j)]
        X = np.array(ij, dtype=float).T / n                       # (2, q) reference points
        num = {p: k for k, p in enumerate(ij)}
        tri = []
        for j in range(n):
            for i in range(n - j):
                tri.append((num[(i, j)], num[(i + 1, j)], num[(i, j + 1)]))
                if i + j + 1 < n:
                    tri.append((num[(i + 1, j)], num[(i + 1, j + 1)], num[(i, j + 1)]))
        tri = np.array(tri)
        ne, q = self.mesh.t.shape[1], X.shape[1]
        ev, ec, zv, zg = self._reference_fields(mode, X)
        H_t, H_z = self._magnetic(mode, ev, ec, zg)
        xy = self.basis_t.mapping.F(X)                            # (2, ne, q)
        F = np.array([ev[0], ev[1], zv, H_t[0], H_t[1], H_z], dtype=complex)
        triangles = (tri[None, :, :] + q * np.arange(ne)[:, None, None]).reshape(-1, 3)
        return xy[0].ravel(), xy[1].ravel(), triangles, F.reshape(6, -1)

    def fields_at_reference(self, mode, cells, ref):
        """(E_x, E_y, E_z, H_x, H_y, H_z) of ``mode`` (complex, as :meth:`VectorMode.fields`) at
        the reference coordinates ``ref`` (2, n) of the triangles ``cells`` (n,), one point per
        cell: the one-sided values in those triangles, through the element's own (possibly
        curved, isoparametric) map, so points on a curved wall or interface are evaluated
        exactly where they lie.  For quadrature along walls and paths and for peak searches."""
        cells = np.asarray(cells, dtype=np.int64).ravel()
        ref = np.asarray(ref, dtype=float).reshape(2, -1)
        if cells.shape != (ref.shape[1],):
            raise FemodesError(f"cells (shape {cells.shape}) must hold one triangle index per reference point "
                               f"({ref.shape[1]})")
        et_val, et_curl = _eval_hcurl(self.basis_t, mode.et, cells, ref)
        ez_val, ez_grad = _eval_h1(self.basis_z, mode.ez, cells, ref)
        H_t, H_z = self._magnetic(mode, np.asarray(et_val), np.asarray(et_curl), np.asarray(ez_grad), cells)
        return (np.asarray(et_val[0], dtype=complex), np.asarray(et_val[1], dtype=complex),
                np.asarray(ez_val, dtype=complex), H_t[0], H_t[1], H_z)

    def _fields(self, mode, points, cells=None):
        pts = np.asarray(points, dtype=float).reshape(2, -1)
        if cells is None:
            cells, ref = _locate(self.mesh, pts)
        else:
            cells = np.asarray(cells, dtype=np.int64).ravel()
            if cells.shape != (pts.shape[1],) or np.any((cells < 0) | (cells >= self.mesh.t.shape[1])):
                raise FemodesError(f"cells must hold one triangle index (0..{self.mesh.t.shape[1] - 1}) per "
                                   f"point ({pts.shape[1]}), got {np.shape(cells)}")
            ref = _reference_coordinates(self.mesh, pts, cells)
        ok = cells >= 0
        n = pts.shape[1]
        et_val, et_curl = _eval_hcurl(self.basis_t, mode.et, cells[ok], ref[:, ok])
        ez_val, ez_grad = _eval_h1(self.basis_z, mode.ez, cells[ok], ref[:, ok])
        out = np.full((6, n), np.nan + 0j)
        out[0, ok], out[1, ok], out[2, ok] = et_val[0], et_val[1], ez_val
        H_t, H_z = self._magnetic(mode, np.asarray(et_val), np.asarray(et_curl), np.asarray(ez_grad), cells[ok])
        out[3, ok], out[4, ok], out[5, ok] = H_t[0], H_t[1], H_z
        return tuple(out)


def _locate(mesh, pts):
    """Cell (-1 outside) and reference coordinates of points (2, n) on straight triangles
    (curved meshes: by their straight-sided vertices, good away from curved walls)."""

    cells, ref, best = locate_straight(mesh.p, mesh.t, pts, 12)
    cells[best < -1e-9] = -1
    return cells, ref


def _reference_coordinates(mesh, pts, cells):
    """Reference coordinates of points in given (straight) triangles."""
    v = mesh.p[:, mesh.t[:, cells]]  # (2, 3, n)
    e1, e2, w = v[:, 1] - v[:, 0], v[:, 2] - v[:, 0], pts - v[:, 0]
    det = e1[0] * e2[1] - e1[1] * e2[0]
    return np.array([(w[0] * e2[1] - w[1] * e2[0]) / det, (e1[0] * w[1] - e1[1] * w[0]) / det])


def _eval_chunks(basis, coeffs, cells, ref, kind):
    """Sum_k c_k phi_k at each (cell, reference point) pair; diagonal of scikit-fem's gbasis
    evaluated on chunks of points (works for every element, including N3's own gbasis)."""
    n = cells.size
    if kind == "hcurl":
        val = np.zeros((2, n), dtype=coeffs.dtype)
        der = np.zeros(n, dtype=coeffs.dtype)
    else:
        val = np.zeros(n, dtype=coeffs.dtype)
        der = np.zeros((2, n), dtype=coeffs.dtype)
    chunk = 128
    dofs = basis.element_dofs
    for s in range(0, n, chunk):
        c = cells[s:s + chunk]
        X = ref[:, s:s + chunk]
        m = c.size
        idx = np.arange(m)
        for k in range(basis.Nbfun):
            fk = basis.elem.gbasis(basis.mapping, X, k, tind=c)[0]
            ck = coeffs[dofs[k, c]]
            if kind == "hcurl":
                val[:, s:s + m] += ck * np.asarray(fk)[:, idx, idx]
                der[s:s + m] += ck * fk.curl[idx, idx]
            else:
                val[s:s + m] += ck * np.asarray(fk)[idx, idx]
                der[:, s:s + m] += ck * fk.grad[:, idx, idx]
    return val, der


def _eval_hcurl(basis, coeffs, cells, ref):
    return _eval_chunks(basis, coeffs, cells, ref, "hcurl")


def _eval_h1(basis, coeffs, cells, ref):
    return _eval_chunks(basis, coeffs, cells, ref, "h1")
