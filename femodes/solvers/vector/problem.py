"""The assembled full-vector problem (:class:`VectorProblem`): the pencil A x = beta^2 B x of one
meshed, loaded cross-section (see femodes.solvers.vector), its shift-invert solves at a
frequency and at cutoff, and the perturbation formulas for v_g and the dielectric loss.
"""

from __future__ import annotations

import cmath
import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.solvers.backends import factorize
from femodes.solvers.eigen import lowest_eigenpairs, single_thread
from femodes.solvers.vector.common import _coo, _count, _elements, _frequency, _material, _skfem_mesh
from femodes.solvers.vector.fields import FieldsMixin
from femodes.solvers.vector.modes import _COMPLEX_TOL, _SHIFT_FACTOR, COMPLEX_RESIDUAL, FAMILY_THRESHOLD, VectorCutoff, VectorMode, _is_complex
from femodes.solvers.vector.tracking import TrackingMixin

__all__ = ["VectorProblem"]

#: the full-size matrices of a mesh, before the wall dofs are removed (shared by ``assembled=``)
_FULL = ("S_tt", "T_eps", "T_mu", "T_t1", "G_mu", "G_eps", "S_zz", "T_zz", "T_z1", "L_tt", "L_zz")


# ---------------------------------------------------------------------------- problem
@dataclass(frozen=True, eq=False)
class VectorProblem(FieldsMixin, TrackingMixin):
    """The assembled full-vector problem of one meshed, loaded cross-section.

    VectorProblem(mesh, eps_r=1, mu_r=1, order=2): ``mesh`` is a scikit-fem triangle mesh (vertex
    order sorted per triangle, as femodes.Mesh.to_skfem gives) or a femodes Mesh; ``eps_r`` and
    ``mu_r`` a number or one real value per triangle; ``order`` 1, 2 or 3; ``tan_delta`` the
    dielectric loss tangent, a number or one value per triangle (the modes are solved lossless; the
    loss is a first-order perturbation, :meth:`VectorMode.dielectric_attenuation`).  Assembly happens once,
    here; :meth:`solve`, :meth:`cutoffs` and :meth:`dispersion` only recombine the matrices.

    ``magnetic``: None (every wall PEC), or a function of boundary-facet end points ``(a, b)``
    (each (2, m), in the mesh's coordinates) returning True for the facets that are magnetic walls
    (PMC, n x H = 0; a symmetry plane of :func:`femodes.solvers.loaded_mirror.solve_loaded_mirror`).
    There n x H = 0 is the natural condition of the curl-curl form (its boundary term is
    int (n x mu_r^-1 curl E) . v dl, i.e. n x H) and n . eps E = 0 that of the Gauss law, so the
    edge and nodal dofs of those facets stay free; on the PEC facets they are removed as before
    (a dof where the two meet is a PEC dof: E_z and the tangential E vanish on the PEC side).
    ``assembled``: a VectorProblem of the same mesh, materials and order whose bases and
    full-size matrices are taken instead of assembling them again (another wall set: the
    symmetry classes of one reduced mesh); ``mesh``, ``eps_r``, ``mu_r``, ``tan_delta`` are then
    its.
    """

    mesh: object = field(repr=False)
    eps_r: object = field(default=1.0, repr=False)
    mu_r: object = field(default=1.0, repr=False)
    order: int = 2
    tan_delta: object = field(default=0.0, repr=False)
    magnetic: object = field(default=None, repr=False)
    assembled: object = field(default=None, repr=False)
    # assembled data (set in __post_init__)
    basis_t: object = field(init=False, repr=False)
    basis_z: object = field(init=False, repr=False)
    mats: dict = field(init=False, repr=False)
    interior_t: np.ndarray = field(init=False, repr=False)
    interior_z: np.ndarray = field(init=False, repr=False)
    emu_max: float = field(init=False)

    def _assemble(self):
        """Bases and full-size matrices of the mesh (before any wall dofs are removed)."""
        from skfem import Basis

        elem_t, elem_z, p = _elements(self.order)
        skm = _skfem_mesh(self.mesh, p)
        nt = skm.t.shape[1]
        eps = _material("eps_r", self.eps_r, nt)
        mu = _material("mu_r", self.mu_r, nt)
        tand = np.broadcast_to(np.asarray(self.tan_delta, dtype=float), (nt,)).copy()
        if not np.all(np.isfinite(tand) & (tand >= 0) & (tand < 1)):
            raise FemodesError("tan_delta must be a loss tangent in [0, 1), a number or one per triangle")
        curved = type(skm).__name__ != "MeshTri1"
        q = 2 * p + (2 if curved else 0)
        bt = Basis(skm, elem_t, intorder=q)
        bz = Basis(skm, elem_z, intorder=q)
        phi = np.array([b[0] for b in bt.basis])    # (nt_loc, 2, ne, nq)
        curl = np.array([b[0].curl for b in bt.basis])    # (nt_loc, ne, nq)
        lz = np.array([b[0] for b in bz.basis])     # (nz_loc, ne, nq)
        gz = np.array([b[0].grad for b in bz.basis])      # (nz_loc, 2, ne, nq)
        dx = bt.dx
        dxe, dxm = dx * eps[:, None], dx / mu[:, None]
        dt, dz = bt.element_dofs, bz.element_dofs
        Nt, Nz = bt.N, bz.N
        ein = lambda s, *a: np.einsum(s, *a, optimize=True)
        mats = {
            "S_tt": _coo(dt, dt, ein("ieq,jeq,eq->ije", curl, curl, dxm), (Nt, Nt)),
            "T_eps": _coo(dt, dt, ein("ikeq,jkeq,eq->ije", phi, phi, dxe), (Nt, Nt)),
            "T_mu": _coo(dt, dt, ein("ikeq,jkeq,eq->ije", phi, phi, dxm), (Nt, Nt)),
            "T_t1": _coo(dt, dt, ein("ikeq,jkeq,eq->ije", phi, phi, dx), (Nt, Nt)),
            "G_mu": _coo(dt, dz, ein("ikeq,jkeq,eq->ije", phi, gz, dxm), (Nt, Nz)),
            "G_eps": _coo(dt, dz, ein("ikeq,jkeq,eq->ije", phi, gz, dxe), (Nt, Nz)),
            "S_zz": _coo(dz, dz, ein("ikeq,jkeq,eq->ije", gz, gz, dxm), (Nz, Nz)),
            "T_zz": _coo(dz, dz, ein("ieq,jeq,eq->ije", lz, lz, dxe), (Nz, Nz)),
            "T_z1": _coo(dz, dz, ein("ieq,jeq,eq->ije", lz, lz, dx), (Nz, Nz)),
        }
        if np.any(tand > 0):  # eps_r tan_delta weighted masses, for the dielectric loss
            dxl = dxe * tand[:, None]
            mats["L_tt"] = _coo(dt, dt, ein("ikeq,jkeq,eq->ije", phi, phi, dxl), (Nt, Nt))
            mats["L_zz"] = _coo(dz, dz, ein("ieq,jeq,eq->ije", lz, lz, dxl), (Nz, Nz))
        return skm, bt, bz, p, eps, mu, tand, mats

    def __post_init__(self):
        if self.assembled is not None:  # the same mesh, materials and order: no assembly
            src = self.assembled
            if src.order != int(self.order):
                raise AssertionError("assembled= must be a VectorProblem of the same element order")
            skm, bt, bz, p = src.mesh, src.basis_t, src.basis_z, src.order
            eps, mu, tand = src.eps_r, src.mu_r, src.tan_delta
            mats = {k: v for k, v in src.mats.items() if k in _FULL}
            Nt, Nz = bt.N, bz.N
        else:
            skm, bt, bz, p, eps, mu, tand, mats = self._assemble()
            Nt, Nz = bt.N, bz.N
        pec = skm.boundary_facets()
        if self.magnetic is not None:  # PMC facets: their dofs stay free (natural conditions)
            fv = skm.facets[:, pec]
            pec = pec[~np.asarray(self.magnetic(skm.p[:, fv[0]], skm.p[:, fv[1]]), dtype=bool)]
        it = np.setdiff1d(np.arange(Nt), np.unique(bt.get_dofs(facets=pec).flatten()))
        iz = np.setdiff1d(np.arange(Nz), np.unique(bz.get_dofs(facets=pec).flatten()))
        if it.size < 2:
            raise FemodesError("the mesh is too coarse: no interior edge unknowns; refine it")
        # interior blocks, used by every solve
        sub = lambda M, r, c: M[r][:, c].tocsr()
        mats["tt"] = {k: sub(mats[k], it, it) for k in ("S_tt", "T_eps", "T_mu", "T_t1")}
        mats["tz"] = {k: sub(mats[k], it, iz) for k in ("G_mu", "G_eps")}
        mats["zz"] = {k: sub(mats[k], iz, iz) for k in ("S_zz", "T_zz", "T_z1")}
        # entry-wise absolute values, for residuals measured against the sizes of their terms
        mats["abs"] = {k: abs(v) for blk in ("tt", "tz", "zz") for k, v in mats[blk].items()}
        # the pencil as full-size blocks: A(k0) = A0 - k0^2 A2, and B (module docstring)
        import scipy.sparse as sp

        tt_, tz_, zz_ = mats["tt"], mats["tz"], mats["zz"]
        A0 = sp.bmat([[tt_["S_tt"], -tz_["G_mu"]], [None, zz_["S_zz"]]], format="csr")
        A2 = sp.bmat([[tt_["T_eps"], None], [None, zz_["T_zz"]]], format="csr")
        B = sp.bmat([[-tt_["T_mu"], sp.csr_matrix((it.size, iz.size))], [tz_["G_mu"].T, None]],
                    format="csr")
        mats["pencil"] = {"A0": A0, "A2": A2, "B": B, "|A0|": abs(A0), "|A2|": abs(A2), "|B|": abs(B)}
        if "L_tt" in mats:
            mats["pencil"]["L"] = sp.bmat([[sub(mats["L_tt"], it, it), None], [None, sub(mats["L_zz"], iz, iz)]],
                                          format="csr")
        set_ = lambda k, v: object.__setattr__(self, k, v)
        set_("mesh", skm)
        set_("eps_r", eps)
        set_("mu_r", mu)
        set_("tan_delta", tand)
        set_("order", p)
        set_("basis_t", bt)
        set_("basis_z", bz)
        set_("mats", mats)
        set_("interior_t", it)
        set_("interior_z", iz)
        set_("emu_max", float(np.max(eps * mu)))

    # -- sizes ----------------------------------------------------------------------
    @property
    def n_dofs(self):
        """Number of unknowns of the pencil (interior edge + nodal dofs)."""
        return self.interior_t.size + self.interior_z.size

    # -- the frequency-dependent operator -------------------------------------------
    def _factor(self, k0, sigma):
        """Factors of the symmetric (indefinite) form of (A - sigma B) at k0 (see backends).

        With w = -v and the second row divided by -sigma, (A - sigma B) becomes the symmetric
            M = [[S_tt + sigma T_mu - k0^2 T_eps , G              ],
                 [G^T                             , C(k0) / sigma  ]]
        i.e. (A - sigma B) = diag(I, -sigma I) M diag(I, -I).

        Its inertia is (n_t positive, n_z negative) eigenvalues: the same matrix at shift lam,
        M(lam), has that inertia as lam -> infinity (the top block ~ lam T_mu is positive definite,
        and its Schur complement (C - G^T T_mu^-1 G) / lam + O(lam^-2) = -k0^2 T_zz / lam + ...
        is negative definite, because grad P_p lies in N_p, so G^T T_mu^-1 G = S_zz exactly), and
        it changes only where M(lam) is singular, at a real eigenvalue beta^2 = lam of the pencil.
        sigma lies above every real beta^2 (Rayleigh bound k0^2 max(eps_r mu_r)), so none is
        crossed.  A factorisation reporting another inertia (PARDISO) is not used.
        """
        import scipy.sparse as sp

        tt, tz, zz = self.mats["tt"], self.mats["tz"], self.mats["zz"]
        K = tt["S_tt"] + sigma * tt["T_mu"] - (k0 * k0) * tt["T_eps"]
        C = (zz["S_zz"] - (k0 * k0) * zz["T_zz"]) / sigma
        M = sp.bmat([[K, tz["G_mu"]], [tz["G_mu"].T, C]], format="csc")
        return factorize(M, spd=False, symmetric=True, inertia=(K.shape[0], C.shape[0]))

    def _apply_op(self, lu, sigma, V):
        """OP (E_t, *) = (A - sigma B)^-1 B (E_t, 0) for the columns of V (interior E_t);
        returns (E_t part, w part)."""
        tt, tz = self.mats["tt"], self.mats["tz"]
        nt = self.interior_t.size
        V = np.atleast_2d(V.T).T
        rhs = np.vstack([-(tt["T_mu"] @ V), -(tz["G_mu"].T @ V) / sigma])
        y = lu.solve(np.asfortranarray(rhs))
        return y[:nt], -y[nt:]

    def _eig(self, k0, nev, v0=None, tol=0.0):
        """The nev eigenpairs of largest beta^2 at k0: (beta2, E (nt, nev), w (nz, nev)), by
        descending Re beta^2 (the Im > 0 member of a complex pair first).  Real arrays when every
        eigenvalue is real; complex ones when complex pairs are among them (both members always:
        the conjugate of a pair's eigenvector is the partner's, the pencil being real)."""
        from scipy.sparse.linalg import LinearOperator, eigs


        nt = self.interior_t.size
        nev = min(nev, nt - 2)
        if nev < 1:
            raise FemodesError("the mesh is too coarse for the number of modes asked; refine it")
        sigma = _SHIFT_FACTOR * k0 * k0 * self.emu_max
        with single_thread():
            lu = self._factor(k0, sigma)
            op = LinearOperator((nt, nt), matvec=lambda v: self._apply_op(lu, sigma, v)[0][:, 0],
                                dtype=float)
            if v0 is None:
                v0 = np.random.default_rng(12345).standard_normal(nt)
            ncv = min(nt - 1, max(2 * nev + 1, nev + 16))
            nu, V = eigs(op, k=nev, which="LM", v0=v0, ncv=ncv, tol=tol, maxiter=50 * nt)
            # Complex beta^2 come in conjugate pairs (the pencil is real but not definite).  They
            # are either "complex modes", which lossless inhomogeneously filled guides can carry
            # below cutoff (Omar & Schuenemann, IEEE Trans. MTT 33(12), 1985, from memory), or,
            # as seen deep in the evanescent spectrum of coarse meshes, two nearly equal discrete
            # eigenvalues that merged.  Both are kept here with their complex eigenvectors; which
            # is which is decided from the residual (``solve``) and from refinement
            # (femodes.solvers.loaded: a physical pair persists with a stable imaginary part).
            cplx = np.abs(nu.imag) > _COMPLEX_TOL * np.abs(nu)
            Vr = V[:, ~cplx]
            Vr = Vr * np.exp(-1j * np.angle(Vr[np.argmax(np.abs(Vr), axis=0), np.arange(Vr.shape[1])]))
            Vr = np.ascontiguousarray(Vr.real)
            nur = nu[~cplx].real
            Wr = self._apply_op(lu, sigma, Vr)[1] / nur
            if np.any(cplx):
                nuc, Vc = nu[cplx], V[:, cplx]
                # both members of every pair: add the conjugate of a member whose partner ARPACK
                # left out (its eigenvector is the conjugate one)
                miss = [j for j in range(nuc.size)
                        if np.min(np.abs(nuc - np.conj(nuc[j]))) > 1e-6 * abs(nuc[j])]
                if miss:
                    nuc = np.concatenate([nuc, np.conj(nuc[miss])])
                    Vc = np.hstack([Vc, np.conj(Vc[:, miss])])
                Wa = self._apply_op(lu, sigma, np.ascontiguousarray(Vc.real))[1]
                Wb = self._apply_op(lu, sigma, np.ascontiguousarray(Vc.imag))[1]
                Wc = (Wa + 1j * Wb) / nuc
                nu_all = np.concatenate([nur, nuc])
                E = np.hstack([Vr.astype(complex), Vc])
                W = np.hstack([Wr.astype(complex), Wc])
                beta2 = self._polish(k0, sigma + 1.0 / nu_all, E, W)
            else:
                E, W = Vr, Wr
                beta2 = self._polish(k0, sigma + 1.0 / nur, E, W)
        order = np.lexsort((-beta2.imag, -beta2.real)) if np.iscomplexobj(beta2) else np.argsort(-beta2)
        return beta2[order], E[:, order], W[:, order]

    def _polish(self, k0, b2, E, W, AX=None, BX=None):
        """Two-sided Rayleigh quotients y^T A x / y^T B x with the exact left eigenvector
        y = (beta^2 E_t, w) of the pencil (A^T y = beta^2 B^T y): error quadratic in the
        eigenvector's.  Kept only where it moves beta^2 by less than 1e-8 k0^2 max(eps mu) (near
        beta = 0 with w = 0 the quotient is 0/0).  ``AX``, ``BX``: A(k0) x and B x if known."""
        pm = self.mats["pencil"]
        X = np.vstack([E, W])
        Y = np.vstack([E * b2[None, :], W])
        if AX is None:
            AX = pm["A0"] @ X - (k0 * k0) * (pm["A2"] @ X)
        if BX is None:
            BX = pm["B"] @ X
        num = np.einsum("ij,ij->j", Y, AX)
        den = np.einsum("ij,ij->j", Y, BX)
        with np.errstate(divide="ignore", invalid="ignore"):
            q = num / den
        scale = k0 * k0 * self.emu_max
        good = np.isfinite(q) & (np.abs(q - b2) <= 1e-8 * scale)
        return np.where(good, q, b2)

    def _slope(self, b2, E, W):
        """d beta^2 / d k0^2 = -y^T A2 x / y^T B x of eigenpairs (columns of E, W), and y^T B x:
        first-order perturbation with the left eigenvector y = (beta^2 E_t, w) (see _polish)."""
        pm = self.mats["pencil"]
        X = np.vstack([E, W])
        Y = np.vstack([E * np.asarray(b2)[None, :], W])
        yBx = np.einsum("ij,ij->j", Y, pm["B"] @ X)
        return -np.einsum("ij,ij->j", Y, pm["A2"] @ X) / yBx, Y, X, yBx

    def _sensitivity(self, mode):
        """(v_g / c0, alpha_d in Np/m) of a mode from its right and left eigenvectors (see
        VectorMode.group_velocity and .dielectric_attenuation)."""
        b2 = mode.beta2
        if _is_complex(b2) or not b2 > 0:
            return math.nan, math.nan
        pm = self.mats["pencil"]
        beta = math.sqrt(b2)
        E = mode.et[self.interior_t][:, None]
        W = (mode.ez[self.interior_z] * (1j * beta)).real[:, None]   # w = j beta E_z, real
        db2, Y, X, yBx = self._slope(np.array([b2]), E, W)
        k0 = mode.k0
        vg = beta / (k0 * db2[0])
        if "L" not in pm:
            return float(vg), 0.0
        alpha = (k0 * k0) * float(np.einsum("ij,ij->j", Y, pm["L"] @ X)[0]) / yBx[0] / (2 * beta)
        return float(vg), float(-alpha)

    def _residual(self, k0, lam, X, AX=None, BX=None):
        """Relative residuals of eigenpairs (lam[j], X[:, j]) of A x = lam B x, X = (E_t; w) on
        interior dofs: ||A x - lam B x|| / ||s||, s the same products taken with |A|, |B|, |x|
        (no cancellation: robust where A x itself is ~0, as near a cutoff).  ``AX``, ``BX``:
        A(k0) X and B X if known."""
        pm = self.mats["pencil"]
        k2 = k0 * k0
        lam = np.asarray(lam)[None, :]
        aX = np.abs(X)
        if AX is None:
            AX = pm["A0"] @ X - k2 * (pm["A2"] @ X)
        if BX is None:
            BX = pm["B"] @ X
        r = AX - lam * BX
        sc = pm["|A0|"] @ aX + k2 * (pm["|A2|"] @ aX) + np.abs(lam) * (pm["|B|"] @ aX)
        num = np.linalg.norm(r, axis=0)
        den = np.linalg.norm(sc, axis=0)
        return num / np.where(den > 0, den, 1.0)

    def _modes(self, k0, b2, E, W):
        """Normalise eigenvectors (columns of E, W; beta^2 in b2), measure them, and wrap them as
        VectorMode objects (all columns at once: one sparse product per matrix).  Columns with a
        complex beta^2 (complex arrays) become complex modes (:meth:`_complex_modes`)."""
        b2 = np.asarray(b2)
        if np.iscomplexobj(b2) or np.iscomplexobj(E):
            cx = np.abs(b2.imag) > 0
            out = [None] * b2.size
            rr, cc = np.flatnonzero(~cx), np.flatnonzero(cx)
            for idx, ms in ((rr, self._modes(k0, b2.real[rr], np.real(E[:, rr]), np.real(W[:, rr]))),
                            (cc, self._complex_modes(k0, b2[cc], E[:, cc], W[:, cc]))):
                for j, m in zip(idx, ms):
                    out[j] = m
            return tuple(out)
        tt, tz, zz, ab = self.mats["tt"], self.mats["tz"], self.mats["zz"], self.mats["abs"]
        b2 = np.asarray(b2, dtype=float)
        if b2.size == 0:
            return ()
        E = np.array(E, dtype=float).reshape(self.interior_t.size, -1)
        W = np.array(W, dtype=float).reshape(self.interior_z.size, -1)
        col = lambda X, Y: np.einsum("ij,ij->j", X, Y)
        aB = np.abs(b2)
        # int |E_t|^2 + |E_z|^2 = 1, |E_z|^2 = w^2 / |beta^2|
        norm = np.sqrt(col(E, tt["T_t1"] @ E) + col(W, zz["T_z1"] @ W) / aB)
        sign = np.sign(E[np.argmax(np.abs(E), axis=0), np.arange(E.shape[1])])
        sign[sign == 0] = 1.0
        E, W = E * (sign / norm), W * (sign / norm)
        residual = self._residual(k0, b2, np.vstack([E, W]))
        # discrete Gauss law r_j = int eps E_t . grad L_j + int eps w L_j, relative to the same sums
        # taken in absolute value (no cancellation), so that 0 means exactly satisfied
        r = tz["G_eps"].T @ E + zz["T_zz"] @ W
        scale = ab["G_eps"].T @ np.abs(E) + ab["T_zz"] @ np.abs(W)
        divergence = np.linalg.norm(r, axis=0) / np.maximum(np.linalg.norm(scale, axis=0), 1e-300)
        # energy shares: electric int eps |E|^2, magnetic int mu |H|^2 (common factors dropped)
        we_t = col(E, tt["T_eps"] @ E)
        we_z = col(W, zz["T_zz"] @ W) / aB
        wm_z = col(E, tt["S_tt"] @ E)
        wm_t = (b2 * b2 * col(E, tt["T_mu"] @ E) - 2 * b2 * col(E, tz["G_mu"] @ W)
                + col(W, zz["S_zz"] @ W)) / aB
        e_share = we_z / (we_t + we_z)
        h_share = wm_z / np.maximum(wm_t + wm_z, 1e-300)
        t = FAMILY_THRESHOLD
        f = C0 * k0 / (2 * math.pi)
        out = []
        for j in range(b2.size):
            es, hs = float(e_share[j]), float(h_share[j])
            family = "TEM" if (es < t and hs < t) else "TE" if es < t else "TM" if hs < t else "hybrid"
            et = np.zeros(self.basis_t.N)
            et[self.interior_t] = E[:, j]
            ez = np.zeros(self.basis_z.N, dtype=complex)
            # E_z = w / (j beta); beta = -j alpha below cutoff, so j beta = alpha there
            jbeta = 1j * math.sqrt(b2[j]) if b2[j] >= 0 else math.sqrt(-b2[j])
            ez[self.interior_z] = W[:, j] / jbeta
            out.append(VectorMode(float(b2[j]), f, family, es, hs, et, ez, float(residual[j]),
                                  float(divergence[j]), self))
        return tuple(out)

    def _complex_modes(self, k0, b2, E, W):
        """VectorModes of family 'complex' for the complex eigenpairs (b2 complex, E, W complex
        columns): normalised with int (|E_t|^2 + |E_z|^2) dA = 1, the largest E_t coefficient
        real and positive, E_z = w / (j beta) with beta the principal root; residual, Gauss law
        and the electric longitudinal share with |.|^2 (h_share NaN)."""
        tt, tz, zz, ab = self.mats["tt"], self.mats["tz"], self.mats["zz"], self.mats["abs"]
        b2 = np.asarray(b2, dtype=complex)
        if b2.size == 0:
            return ()
        E = np.array(E, dtype=complex).reshape(self.interior_t.size, -1)
        W = np.array(W, dtype=complex).reshape(self.interior_z.size, -1)
        herm = lambda X, M: np.real(np.einsum("ij,ij->j", X.conj(), M @ X))
        aB = np.abs(b2)
        norm = np.sqrt(herm(E, tt["T_t1"]) + herm(W, zz["T_z1"]) / aB)
        ph = E[np.argmax(np.abs(E), axis=0), np.arange(E.shape[1])]
        rot = np.exp(-1j * np.angle(ph)) / norm
        E, W = E * rot, W * rot
        residual = self._residual(k0, b2, np.vstack([E, W]))
        r = tz["G_eps"].T @ E + zz["T_zz"] @ W
        scale = ab["G_eps"].T @ np.abs(E) + ab["T_zz"] @ np.abs(W)
        divergence = np.linalg.norm(r, axis=0) / np.maximum(np.linalg.norm(scale, axis=0), 1e-300)
        we_t, we_z = herm(E, tt["T_eps"]), herm(W, zz["T_zz"]) / aB
        f = C0 * k0 / (2 * math.pi)
        out = []
        for j in range(b2.size):
            et = np.zeros(self.basis_t.N, dtype=complex)
            et[self.interior_t] = E[:, j]
            ez = np.zeros(self.basis_z.N, dtype=complex)
            ez[self.interior_z] = W[:, j] / (1j * cmath.sqrt(complex(b2[j])))
            out.append(VectorMode(complex(b2[j]), f, "complex", float(we_z[j] / (we_t[j] + we_z[j])),
                                  math.nan, et, ez, float(residual[j]), float(divergence[j]), self))
        return tuple(out)

    # -- public ----------------------------------------------------------------------
    def solve(self, frequency, modes=4, evanescent=False, tol=0.0):
        """The ``modes`` modes of largest beta^2 at ``frequency`` (Hz), descending beta^2.

        evanescent=False: only the propagating ones among them (possibly fewer than ``modes``);
        evanescent=True: ``modes`` of them, the propagating ones followed by the least attenuated
        evanescent ones (beta = -j alpha) and the complex pairs (family 'complex', both members,
        by descending Re beta^2 among the evanescent ones; one more than ``modes`` when the last
        is a pair).  A complex pair is kept when it is a converged eigenpair of the discrete
        pencil (relative residual and Gauss-law residual below COMPLEX_RESIDUAL); one that is not
        is dropped with a warning.  Whether a kept pair is physical or two near-equal evanescent
        eigenvalues merged by a coarse mesh only refinement tells (femodes.solvers.loaded does
        it).  ``tol`` is ARPACK's relative tolerance (0: machine).  Returns a tuple of
        :class:`VectorMode`.
        """
        f = _frequency(frequency)
        n = _count("modes", modes)
        k0 = 2 * math.pi * f / C0
        beta2, V, W = self._eig(k0, n, tol=tol)
        out = self._modes(k0, beta2, V, W)
        loose = [m for m in out if m.family == "complex"
                 and not (m.residual < COMPLEX_RESIDUAL and m.divergence < COMPLEX_RESIDUAL)]
        if loose:
            warnings.warn(f"{len(loose)} complex-beta^2 eigenvalue(s) that are not converged eigenpairs of the "
                          f"pencil (residual {max(m.residual for m in loose):.1e}; beta^2 = "
                          f"{loose[0].beta2.real:.4g} {loose[0].beta2.imag:+.3g}j rad^2/m^2 the first: "
                          "numerical artefacts, not modes) were left out", RuntimeWarning)
            out = [m for m in out if m not in loose]
        bad = [m for m in out if not (m.residual < 1e-7 and m.divergence < 1e-7)]
        if bad:  # never seen; a guard for the claim in the module docstring
            warnings.warn(f"{len(bad)} of the {len(out)} computed pairs fail the residual / Gauss-law check "
                          f"(worst residual {max(m.residual for m in bad):.1e}, divergence "
                          f"{max(m.divergence for m in bad):.1e}); try a finer mesh or a smaller tol")
        if not evanescent:
            out = [m for m in out if m.propagating]
        return tuple(out)

    def cutoffs(self, modes=6):
        """The ``modes`` lowest cutoff frequencies (beta = 0), ascending, computed directly.

        TE-type: S_tt e = k0^2 T_eps e with int eps_r e . grad L_j = 0 (Lagrange multiplier);
        TM-type: S_zz e_z = k0^2 T_zz e_z.  Returns a tuple of :class:`VectorCutoff`.
        """
        import scipy.sparse as sp
        from scipy.sparse.linalg import LinearOperator, eigsh


        n = _count("modes", modes)
        tt, tz, zz = self.mats["tt"], self.mats["tz"], self.mats["zz"]
        p = self.mesh.p
        size = float(np.max(np.ptp(p, axis=1)))
        sigma = -0.5 * (math.pi / size) ** 2 / self.emu_max
        nt, nz = self.interior_t.size, self.interior_z.size
        out = []
        with single_thread():
            # TE-type, constrained curl-curl
            G = tz["G_eps"]
            Kaug = sp.bmat([[tt["S_tt"] - sigma * tt["T_eps"], G], [G.T, None]], format="csc")
            # a saddle-point matrix, indefinite: inertia (n_t positive, n_z negative), the top block
            # S_tt - sigma T_eps being positive definite (sigma < 0) and G of full column rank
            # (grad is one-to-one on the interior nodal space)
            lu = factorize(Kaug, spd=False, symmetric=True, inertia=(nt, nz))

            def opinv(v):
                return lu.solve(np.concatenate([v, np.zeros(nz)]))[:nt]

            k = min(n, nt - 2)
            v0 = opinv(tt["T_eps"] @ np.random.default_rng(12345).standard_normal(nt))
            lam, X = eigsh(tt["S_tt"], k=k, M=tt["T_eps"], sigma=sigma, which="LM",
                           OPinv=LinearOperator((nt, nt), matvec=opinv, dtype=float), v0=v0,
                           ncv=min(nt - 1, max(2 * k + 2, k + 16)))
            for i in range(len(lam)):
                x = X[:, i]
                r = np.linalg.norm(tt["S_tt"] @ x - lam[i] * (tt["T_eps"] @ x)) / max(
                    np.linalg.norm(tt["S_tt"] @ x), 1e-300)
                c = np.zeros(self.basis_t.N)
                c[self.interior_t] = x
                out.append(VectorCutoff(math.sqrt(max(lam[i], 0.0)), "TE", c, float(r)))
            # TM-type, Dirichlet problem for E_z
            if nz >= 3:
                lam, X, res = lowest_eigenpairs(zz["S_zz"], zz["T_zz"], min(n, nz - 2), sigma)
                for i in range(len(lam)):
                    c = np.zeros(self.basis_z.N)
                    c[self.interior_z] = X[:, i]
                    out.append(VectorCutoff(math.sqrt(max(lam[i], 0.0)), "TM", c, float(res[i])))
        out.sort(key=lambda c: c.k0)
        return tuple(out[:n])
