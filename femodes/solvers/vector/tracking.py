"""Dispersion: modes followed along frequency by field overlap (bi-orthogonal projection and the
perturbation slope), from full solves at a few snapshot frequencies and reduced-basis solves in
between.  A mixin of :class:`femodes.solvers.vector.VectorProblem`."""

from __future__ import annotations

import math
import warnings

import numpy as np

from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.solvers.vector.common import _count, _frequency
from femodes.solvers.vector.modes import Dispersion


class TrackingMixin:
    """:meth:`dispersion` for :class:`VectorProblem` (which holds the matrices and the solves)."""

    def dispersion(self, frequencies, modes=4, extra=None, method="reduced", tol=1e-6):
        """beta(f) of the ``modes`` modes of largest beta^2 at the first frequency, followed along
        ``frequencies`` by field overlap with the previous frequency (an assignment maximising
        the weight of each candidate in the expansion of the previous mode, by the modes'
        reciprocity bi-orthogonality, see ``_track``; not by sorting), so that crossing curves keep their
        identities.  Candidates at each frequency: the ``modes + extra`` modes of largest beta^2
        (default extra = max(4, modes)); evanescent modes are kept.

        method="direct": one factorisation and shift-invert solve per frequency.
        method="reduced" (default): full solves only at a few "snapshot" frequencies (first,
        middle, last to start with); the stored matrices are projected once on their fields and
        every frequency is then a dense Petrov-Galerkin pencil of a few dozen unknowns (see
        :meth:`_reduced_candidates`).  Each reduced eigenpair is checked in the full space:
        wherever a tracked mode's relative residual (backward error) exceeds ``tol``, or the
        tracking had to accept an overlap below 0.9, a snapshot is added at that frequency and
        the tracking is redone; if that does not converge it falls back to "direct" with a
        warning.  Every returned beta^2 is polished by the two-sided Rayleigh quotient in the
        full space, whose error is of the order of the residual squared: the default ``tol``
        1e-6 leaves beta^2 good to ~1e-12 relative, far below the discretisation error, while
        spurious reduced pairs show residuals >= 2e-4.  (1e-8 made finer meshes ask for a full
        solve at nearly every frequency.)  The cost is a handful of factorisations instead of one per frequency.
        Complex modes are followed like the others (the reduced basis spans the real and
        imaginary parts of their fields).  Where two real curves meet and turn into a complex pair
        (or a pair turns back into two real curves) the two eigenvectors coincide: which real
        curve continues as which member is arbitrary there, and the overlap dips.
        Returns a :class:`Dispersion`.
        """
        from scipy.optimize import linear_sum_assignment

        try:
            fs = np.array([_frequency(f) for f in np.atleast_1d(np.asarray(frequencies, dtype=object))],
                          dtype=float)
        except FemodesError as exc:
            raise FemodesError(f"frequencies: {exc}") from None
        if fs.size < 1:
            raise FemodesError("frequencies must hold at least one frequency (Hz)")
        if method not in ("reduced", "direct"):
            raise FemodesError(f"method must be 'reduced' or 'direct', got {method!r}")
        try:
            tol = float(tol)
        except (TypeError, ValueError):
            tol = float("nan")
        if not (1e-13 <= tol <= 1e-2):
            raise FemodesError(f"tol (full-space relative residual accepted from the reduced solve) must "
                               f"lie in [1e-13, 1e-2], got {tol!r}")
        n = _count("modes", modes)
        extra = max(4, n) if extra is None else _count("extra", extra, 0)
        nev = n + extra
        if method == "reduced":
            snaps = {}  # frequency index -> (beta2, E, W) of a direct solve
            nev_at = {}
            todo = sorted({0, fs.size // 2, fs.size - 1})
            cands = [None] * fs.size
            redo = np.arange(fs.size)
            while True:
                for i in todo:
                    nev_at[i] = nev_at.get(i, nev)
                    snaps[i] = self._eig(2 * math.pi * fs[i] / C0, nev_at[i])
                # only the points that failed are reduced again on the enlarged basis: the others
                # already passed the full-space residual check, which does not depend on the basis
                for i, c in zip(redo, self._reduced_candidates(fs[redo], snaps, nev, fs_max=float(fs.max()))):
                    cands[i] = c
                for i in snaps:  # at a snapshot the full solve itself is the candidate list
                    b2_, E_, W_ = snaps[i]
                    cands[i] = (b2_, E_, W_, np.zeros(b2_.size))
                picks, overlap, ok = self._track(cands, n, linear_sum_assignment, 2 * math.pi * fs / C0)
                worst = np.array([np.max(cands[i][3][picks[i]]) if np.all(picks[i] >= 0) else np.inf
                                  for i in range(fs.size)])
                # a point fails if a tracked pair misses tol, or if tracking had to take a poorly
                # matching candidate (the right one missing: a snapshot there; at a snapshot,
                # whose candidates are exact, only a match below 0.5 asks for more of them)
                weak = np.array([np.min(overlap[i]) < (0.5 if i in snaps else 0.9) for i in range(fs.size)])
                score = np.where(worst > tol, worst, 0.0) + np.where(weak, 1.0, 0.0)
                if not np.any(score > 0):
                    break
                i = int(np.argmax(score))
                redo = np.flatnonzero(score > 0)
                if i in snaps:
                    if nev_at[i] >= 4 * nev or nev_at[i] >= self.interior_t.size - 2:
                        warnings.warn(f"dispersion: the reduced solve could not resolve the tracked modes at "
                                      f"{fs[i]:.6g} Hz; falling back to one direct solve per frequency")
                        method = "direct"
                        break
                    nev_at[i] *= 2
                todo = [i]
            snapshots = np.array(sorted(snaps))
        if method == "direct":
            cands = [self._eig(2 * math.pi * f / C0, nev) for f in fs]
            cands = [(b2, E, W, np.zeros(b2.size)) for b2, E, W in cands]
            picks, overlap, ok = self._track(cands, n, linear_sum_assignment, 2 * math.pi * fs / C0)
            if not ok:
                raise FemodesError("the mesh is too coarse for the number of modes asked; refine it")
            snapshots = np.arange(fs.size)
        if fs.size > 1 and np.min(overlap) < 0.5:
            i, k = np.unravel_index(np.argmin(overlap), overlap.shape)
            warnings.warn(f"dispersion: tracked mode {k + 1} is uncertain at {fs[i]:.6g} Hz (match {overlap[i, k]:.2f} "
                          "with the previous frequency); take more frequencies there", RuntimeWarning)
        cx = any(np.iscomplexobj(cands[i][0]) and np.any(cands[i][0][picks[i]].imag != 0)
                 for i in range(fs.size))
        beta2 = np.zeros((fs.size, n), dtype=complex if cx else float)
        family = np.empty((fs.size, n), dtype=object)
        modes_out = []
        for i, f in enumerate(fs):
            k0 = 2 * math.pi * f / C0
            b2, E, W, _ = cands[i]
            ms = self._modes(k0, b2[picks[i]], E[:, picks[i]], W[:, picks[i]])
            modes_out.append(ms)
            beta2[i] = [m.beta2 for m in ms]
            family[i] = [m.family for m in ms]
        return Dispersion(fs, beta2, overlap, family, tuple(modes_out), fs[snapshots])

    def _track(self, cands, n, assign, k0s):
        """Follow the first ``n`` candidates of the first frequency through the others by maximal
        field overlap.  Returns (picks (F, n) candidate indices, overlaps (F, n), ok)."""
        tt, tz, zz = self.mats["tt"], self.mats["tz"], self.mats["zz"]

        def unit(b2, E, W):
            # fields normalised in int eps |E|^2 (E_z = w / (j beta)), and the reciprocity vectors
            # V_j = b2_j T_mu E_j - G_mu w_j with their self products d_j = E_j^T V_j
            # (|.|^2 for complex modes; the reciprocity product below stays bilinear, which is
            # the bi-orthogonality of the real pencil's eigenvectors, complex ones included)
            nrm = np.sqrt(np.real(np.einsum("ij,ij->j", E.conj(), tt["T_eps"] @ E)
                                  + np.einsum("ij,ij->j", W.conj(), zz["T_zz"] @ W) / np.abs(b2)))
            E, W = E / nrm, W / nrm
            V = (tt["T_mu"] @ E) * b2[None, :] - tz["G_mu"] @ W
            d = np.einsum("ij,ij->j", E, V)
            return E, V, np.where(d != 0, d, 1e-300)

        F = len(cands)
        miss = np.full(n, np.nan)
        prev_b2 = slope = None  # set from the first frequency on
        picks = -np.ones((F, n), dtype=np.int64)
        overlap = np.ones((F, n))
        prev = None
        for i, (b2, E, W, _) in enumerate(cands):
            if b2.size < n:
                return picks, overlap, False
            X, V, d = unit(b2, E, W)
            if prev is None:
                pick = np.arange(n)
            else:
                # coefficient of candidate j in the expansion of the previous mode i over the
                # current eigenvectors, by their bi-orthogonality: c_ij = E_i^T V_j / d_j (the
                # reciprocity product int (E_t,i x H_t,j) . z dA, zero between distinct modes at
                # one frequency, propagating or evanescent; Collin, Field Theory of Guided Waves,
                # ch. 5, from memory).  Energy-norm overlaps cannot tell apart modes whose
                # eigenvectors are nearly parallel, as the evanescent LSE_11 and LSM_11 of a
                # slab-loaded guide where they cross (overlap 0.998 between the two, seen)
                O = np.minimum(np.abs(prev.T @ V) / np.abs(d)[None, :], 1.0)
                # Where the fields are nearly parallel that expansion is ill-conditioned (seen:
                # a mode weighing 0.24 in its own continuation and 0.81 in the other's), so the
                # candidates are also weighed by how well they sit on the predicted curve
                # beta^2 + (d beta^2 / d k0^2) (k0^2 - k0_prev^2), the slope from the same
                # perturbation formula as the group velocity (curves that cross have distinct
                # slopes).  The weight P falls off over 4 times the last step's prediction
                # error (5 % of the predicted change before there is one).
                step = slope * (k0s[i] ** 2 - k0s[i - 1] ** 2)
                width = np.maximum(np.where(np.isfinite(miss), 4.0 * miss, 0.05 * np.abs(step)),
                                   1e-9 * k0s[i] ** 2 * self.emu_max)
                pred = prev_b2 + step
                P = np.exp(-(np.abs(pred[:, None] - b2[None, :]) / width[:, None]) ** 2)
                rows, cols = assign(-(O * (0.05 + P)))
                pick = cols[np.argsort(rows)]
                overlap[i] = np.maximum(O[np.arange(n), pick], P[np.arange(n), pick])
                miss = np.abs(b2[pick] - pred)
            picks[i] = pick
            prev = X[:, pick]
            prev_b2 = b2[pick]
            slope = self._slope(b2[pick], E[:, pick], W[:, pick])[0]
        return picks, overlap, True

    def _reduced_candidates(self, fs, snaps, nev, fs_max=None):
        """Per frequency: (beta2, E, W, rho) of the eigenpairs of the pencil reduced on the
        snapshot fields, largest beta^2 first, at most nev of them; rho is the full-space
        relative residual (backward error) of each pair.

        Petrov-Galerkin: trial space V = span of the snapshot eigenvectors (E_i, w_i) (each obeys
        the discrete Gauss law exactly, so every trial field does), test space W = span of the
        exact left eigenvectors (beta_i^2 E_i, w_i).  A split trial space (E and w separately)
        was tried first: its reduced pencil has spurious eigenvalues among the physical ones
        (E fields whose divergence the few w test fields cannot see).  Here such solutions still
        exist lower down; they have rho >= 2e-4 against <= 5e-8 for physical ones, and pairs with
        rho >= 1e-6 are dropped.  beta^2 is then polished in the full space (:meth:`_polish`).
        """
        import scipy.linalg as sl

        tt, tz, zz = self.mats["tt"], self.mats["tz"], self.mats["zz"]
        nt = self.interior_t.size
        keys = sorted(snaps)
        # w = j beta E_z is ~ k times E: scale it to E's size, or the orthonormal bases are all w
        # and the E parts of their combinations lose their digits
        f_top = float(np.max(fs)) if fs_max is None else float(fs_max)
        sc = 1.0 / (2 * math.pi * f_top / C0 * math.sqrt(self.emu_max))
        # complex modes: the real and imaginary parts of their eigenvectors span the same space
        # (the pencil is real, so its reduced form stays real and returns their pairs again)
        ri = lambda M: np.hstack([M.real, M.imag]) if np.iscomplexobj(M) else M
        R = np.hstack([ri(np.vstack([snaps[i][1], sc * snaps[i][2]])) for i in keys])
        L = np.hstack([ri(np.vstack([snaps[i][1] * (sc * sc * snaps[i][0][None, :]), sc * snaps[i][2]]))
                       for i in keys])

        def orth(M):  # orthonormal basis of the columns, rank by pivoted QR
            Q, Rm, _ = sl.qr(M, mode="economic", pivoting=True)
            d = np.abs(np.diag(Rm))
            return Q[:, d > 1e-11 * d[0]]

        V, Wl = orth(R), orth(L)
        r = min(V.shape[1], Wl.shape[1])
        V, Wl = V[:, :r], Wl[:, :r]
        V[nt:] /= sc             # back to the unknowns (E_t, w) ...
        Wl[:nt] /= sc * sc       # ... and to the span of (beta^2 E_t, w) for the test space
        Wl[nt:] /= sc
        Vt, Vz = V[:nt], V[nt:]
        AV0 = np.vstack([tt["S_tt"] @ Vt - tz["G_mu"] @ Vz, zz["S_zz"] @ Vz])
        AV2 = np.vstack([tt["T_eps"] @ Vt, zz["T_zz"] @ Vz])
        BV = np.vstack([-(tt["T_mu"] @ Vt), tz["G_mu"].T @ Vt])
        Ar0, Ar2, Br = Wl.T @ AV0, Wl.T @ AV2, Wl.T @ BV
        scale = self.emu_max * (2 * math.pi * f_top / C0) ** 2

        def real_cols(X):
            X = X * np.exp(-1j * np.angle(X[np.argmax(np.abs(X), axis=0), np.arange(X.shape[1])]))
            return np.ascontiguousarray(X.real)

        out = []
        for f in fs:
            k0 = 2 * math.pi * f / C0
            lam, XR = sl.eig(Ar0 - (k0 * k0) * Ar2, Br)
            fin = np.isfinite(lam)
            lam, XR = lam[fin], XR[:, fin]
            real = np.abs(lam.imag) <= 1e-8 * (np.abs(lam) + scale)
            if np.all(real):
                lam, XR = lam.real, XR
                order = np.argsort(-lam)[: nev + 4]
                lam, XR = lam[order], real_cols(XR[:, order])
            else:  # complex pairs among them (complex modes): complex columns, real ones rotated real
                lam = np.where(real, lam.real, lam)
                XR = XR.astype(complex)
                XR[:, real] = real_cols(XR[:, real])
                order = np.lexsort((-lam.imag, -lam.real))[: nev + 4]
                lam, XR = lam[order], XR[:, order]
            X = V @ XR
            AX = AV0 @ XR - (k0 * k0) * (AV2 @ XR)   # full-space products from the projected
            BX = BV @ XR                             # ones: no A x, B x per frequency
            rho_r = self._residual(k0, lam, X, AX, BX)
            keep = np.flatnonzero(rho_r < 1e-6)[:nev]
            lam, X, rho_r, AX, BX = lam[keep], X[:, keep], rho_r[keep], AX[:, keep], BX[:, keep]
            out.append((self._polish(k0, lam, X[:nt], X[nt:], AX, BX), X[:nt], X[nt:], rho_r))
        return out
