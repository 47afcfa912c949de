"""Modes: eigenpairs -> Mode objects with cutoffs, labels and field evaluators.

Conventions (homogeneous fill eps_r, mu_r; fields vary as exp(j (omega t - beta z))):

* ``psi`` is the longitudinal potential: E_z for TM modes, H_z for TE modes, normalised so that
  int psi^2 dA = 1 (units 1/m).  For a TEM mode psi is the electrostatic potential (1 V on the
  inner conductor, 0 on the outer wall) and e_t = -grad psi, normalised to int |e_t|^2 dA = 1.
* The transverse mode vectors are normalised to int |e_t|^2 dA = 1 (units 1/m):
      TM:  e_t = -grad_t psi / kc,            h_t = z x e_t
      TE:  e_t =  z x grad_t psi / kc,        h_t = z x e_t
  The physical fields of a mode of amplitude V are E_t = V e_t, H_t = (V / Z_w) h_t with the wave
  impedance Z_w (TE: omega mu / beta, TM: beta / (omega eps)), carrying power |V|^2 / (2 Re Z_w).
* beta = sqrt(k^2 - kc^2), k = omega sqrt(mu eps); below cutoff beta is returned as -j alpha.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field as _dcfield

import numpy as np

from .errors import FemodesError

C0 = 299792458.0
MU0 = 1.25663706212e-6
EPS0 = 1.0 / (MU0 * C0 * C0)

__all__ = ["Mode", "ModeSet", "ModeField", "C0", "MU0", "EPS0"]


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


def interpolation_matrices(basis, points):
    """Sparse matrices giving psi, d psi/dx, d psi/dy at points (2, n) from a coefficient vector,
    and a mask of the points found inside the mesh (rows of the others are zero)."""
    from scipy.sparse import coo_matrix

    pts = np.asarray(points, dtype=float).reshape(2, -1)
    cells, ref = _locate(basis, pts)
    ok = cells >= 0
    idx = np.flatnonzero(ok)
    c_ok = cells[ok]
    r = ref[:, ok][:, :, None]
    rows, cols, vals, dxs, dys = [], [], [], [], []
    for k in range(basis.Nbfun):
        phi = basis.elem.gbasis(basis.mapping, r, k, tind=c_ok)[0]
        rows.append(idx)
        cols.append(basis.element_dofs[k, c_ok])
        vals.append(np.asarray(phi)[:, 0])
        dxs.append(phi.grad[0][:, 0])
        dys.append(phi.grad[1][:, 0])
    rows, cols = np.concatenate(rows), np.concatenate(cols)
    shape = (pts.shape[1], basis.N)
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
        ok = np.flatnonzero(cells >= 0)
        if ok.size:
            try:
                ref[:, ok] = basis.mapping.invF(pts[:, ok][:, :, None], tind=cells[ok])[:, :, 0]
            except Exception:  # Newton did not converge somewhere: keep straight-sided coordinates
                pass
    inside = best >= -1e-9
    # accept sliver points only if the curved map brings them inside the reference triangle
    in_ref = (ref[0] >= -1e-9) & (ref[1] >= -1e-9) & (ref[0] + ref[1] <= 1 + 1e-9)
    cells[~(inside | in_ref)] = -1
    return cells, ref


@dataclass(frozen=True, eq=False)
class Mode:
    """One guided mode of a homogeneously filled guide.

    family    : 'TE', 'TM' or 'TEM'
    kc        : cutoff wavenumber (rad/m), independent of the filling
    kc_error  : estimated absolute error of kc (rad/m), from a second discretisation
    eps_r, mu_r : relative permittivity and permeability of the filling
    label     : what an engineer calls it ('TE10', 'TM01', 'TE1 (x odd, y even)', ...)
    index     : position in its ModeSet (0-based, ascending cutoff)
    ordinal   : 1-based position within its family
    indices   : (m, n) for rectangles, (n, m) azimuthal/radial for circles and coax, else None
    symmetry  : parity of psi under x -> -x and y -> -y about the section's own axes,
                e.g. {'x': 'odd', 'y': 'even'}; empty if the section has no such symmetry
    degenerate_with : indices of the other modes with the same cutoff (within the error estimate)
    multiplicity : how many modes share this cutoff, counting partners beyond the ``modes`` asked
    potential : the finite-element potential psi (:class:`ModeField`)
    section   : the Section it was solved on (None for a mesh file)
    partner   : for a two-fold degenerate pair of the same family (a circle's TE11, a square's
                TE10/TE01), the other member; else None
    """

    family: str
    kc: float
    kc_error: float
    eps_r: float = 1.0
    mu_r: float = 1.0
    label: str = ""
    index: int = 0
    ordinal: int = 0
    indices: tuple | None = None
    symmetry: dict = _dcfield(default_factory=dict)
    nodal_domains: int | None = None
    degenerate_with: tuple = ()
    multiplicity: int = 1
    residual: float = 0.0
    potential: ModeField | None = _dcfield(default=None, repr=False)
    partner: "Mode | None" = _dcfield(default=None, repr=False)
    section: object = _dcfield(default=None, repr=False, compare=False)

    # -- cutoff -------------------------------------------------------------
    @property
    def fc(self):
        """Cutoff frequency (Hz) in the filling: c0 kc / (2 pi sqrt(eps_r mu_r))."""
        return C0 * self.kc / (2 * math.pi * math.sqrt(self.eps_r * self.mu_r))

    @property
    def fc_error(self):
        return C0 * self.kc_error / (2 * math.pi * math.sqrt(self.eps_r * self.mu_r))

    @property
    def rel_error(self):
        """Estimated relative error of kc (and fc)."""
        return self.kc_error / self.kc if self.kc > 0 else 0.0

    @property
    def cutoff_wavelength(self):
        """Cutoff wavelength 2 pi / kc (m): the wavelength in the filling at the cutoff frequency
        (equal to the free-space wavelength c0 / fc for an air-filled guide)."""
        return 2 * math.pi / self.kc if self.kc > 0 else math.inf

    # -- propagation at a frequency ------------------------------------------
    def _k(self, f):
        f = np.asarray(f, dtype=float)
        if not np.all(f > 0) or not np.all(np.isfinite(f)):
            raise FemodesError(f"frequency must be positive (Hz), got {f!r}")
        return 2 * np.pi * f * np.sqrt(self.eps_r * self.mu_r) / C0

    def beta(self, f):
        """Propagation constant beta (rad/m) at frequency f (Hz): sqrt(k^2 - kc^2).

        Below cutoff the mode is evanescent and the result is -1j * alpha (alpha in Np/m).
        """
        k = self._k(f)
        d = k * k - self.kc ** 2
        out = np.where(d >= 0, np.sqrt(np.abs(d)) + 0j, -1j * np.sqrt(np.abs(d)))
        if np.ndim(out) == 0:
            out = complex(out)
            return out.real if out.imag == 0 else out
        return out if np.any(out.imag != 0) else out.real

    def propagates(self, f):
        """True where the frequency f (Hz) is above cutoff."""
        return np.asarray(self._k(f)) > self.kc

    def _beta_real(self, f):
        """beta where the mode propagates, 0 at or below cutoff (array)."""
        k = np.asarray(self._k(f), dtype=float)
        return np.sqrt(np.maximum(k * k - self.kc ** 2, 0.0))

    def guide_wavelength(self, f):
        """Guide wavelength 2 pi / beta (m); inf at or below cutoff."""
        b = self._beta_real(f)
        with np.errstate(divide="ignore"):
            return np.where(b > 0, 2 * np.pi / np.where(b > 0, b, 1.0), np.inf)[()]

    def phase_velocity(self, f):
        """omega / beta (m/s); inf at or below cutoff."""
        return (np.asarray(f, float) * self.guide_wavelength(f))[()]

    def group_velocity(self, f):
        """d omega / d beta = (c^2 / (eps_r mu_r)) beta / omega (m/s); 0 at or below cutoff."""
        v = C0 / math.sqrt(self.eps_r * self.mu_r)
        return (v * v * self._beta_real(f) / (2 * np.pi * np.asarray(f, float)))[()]

    def wave_impedance(self, f):
        """Transverse wave impedance E_t / H_t (ohm): TE omega mu / beta, TM beta / (omega eps),
        TEM eta; imaginary below cutoff."""
        w = 2 * np.pi * np.asarray(f, float)
        mu, eps = MU0 * self.mu_r, EPS0 * self.eps_r
        if self.family == "TEM":
            return math.sqrt(mu / eps) + 0 * w
        b = self.beta(f)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = w * mu / b if self.family == "TE" else b / (w * eps)
        return z

    # -- fields ----------------------------------------------------------------
    def fields(self, points):
        """Transverse mode vectors (e_x, e_y, h_x, h_y) at points (2, n), normalised as in the
        module docstring (int |e_t|^2 dA = 1); NaN outside the cross-section.

        These are pointwise gradients of the finite-element potential: they converge one order
        more slowly than the cutoffs (expect relative errors near 1e-4 where cutoffs are good to
        1e-6, worst next to walls and corners).  Integrated quantities (power, losses) are better.
        """
        if self.potential is None:
            raise FemodesError("this mode carries no field data")
        _, gx, gy = self.potential.evaluate(points)
        return _transverse(self.family, self.kc, self.potential, gx, gy)

    def longitudinal(self, points):
        """psi (E_z for TM, H_z for TE, potential for TEM) at points (2, n), int psi^2 dA = 1."""
        if self.potential is None:
            raise FemodesError("this mode carries no field data")
        return self.potential.evaluate(points)[0]

    # -- engineering quantities (femodes.quantities) ----------------------------
    def attenuation(self, f, conductivity=5.8e7, roughness=0.0, tan_delta=0.0):
        """Attenuation (Np/m) at f (Hz): wall loss by the power-loss method (conductivity in S/m
        or a metal name, rms roughness in m via the Hammerstad-Jensen factor) plus the loss of
        the fill with loss tangent tan_delta.  See :func:`femodes.quantities.attenuation`."""
        from .quantities import attenuation
        return attenuation(self, f, conductivity, roughness, tan_delta)

    def impedance(self, f, kind="PV", path=None, section=None):
        """Characteristic impedance (ohm) at f (Hz): kind 'PV', 'PI' or 'VI'; TEM modes from the
        electrostatic capacitance.  See :func:`femodes.quantities.impedance`."""
        from .quantities import impedance
        return impedance(self, f, kind, path=path, section=section)

    def power_handling(self, f, breakdown_field=3e6, safety_factor=2.0, section=None):
        """Peak field per sqrt(W) and breakdown power at f (Hz), with the cautions that must be
        shown with them.  See :func:`femodes.quantities.power_handling`."""
        from .quantities import power_handling
        return power_handling(self, f, breakdown_field, safety_factor, section=section)

    def summary(self):
        return f"{self.label}: fc = {self.fc / 1e9:.6f} GHz (+/- {self.fc_error / 1e9:.1e})"


def _transverse(family, kc, field, gx, gy):
    """(e_x, e_y, h_x, h_y) from grad psi, scaled by the ModeField's ``scale`` (int |e_t|^2 = 1)."""
    s = field.scale
    if family == "TE":
        ex, ey = -gy * s, gx * s      # z x grad psi = (-dpsi/dy, dpsi/dx)
    else:
        ex, ey = -gx * s, -gy * s     # -grad psi
    hx, hy = -ey, ex                  # z x e_t
    return ex, ey, hx, hy


class ModeSet(tuple):
    """The modes of one solve, ascending in cutoff: a tuple of :class:`Mode` with extras.

    Attributes: section, mesh (the mesh used), eps_r, mu_r, accuracy (asked), n_dofs, order,
    mesh_size, family (None, or 'TE'/'TM' for a one-family solve).
    """

    def __new__(cls, modes, **info):
        obj = super().__new__(cls, modes)
        obj.info = info
        return obj

    def __getattr__(self, name):
        try:
            return self.info[name]
        except KeyError:
            raise AttributeError(name) from None

    def by_label(self, label):
        """All modes with this label (a degenerate pair gives two)."""
        hits = [m for m in self if m.label == label]
        if not hits:
            raise FemodesError(f"no mode labelled {label!r}; labels here: {', '.join(m.label for m in self)}")
        return hits

    def single_mode_band(self):
        """(f_low, f_high): from the lowest cutoff to the next cutoff of a mode that is not
        degenerate with the lowest (Hz).  For a guide with a TEM mode the band starts at 0 Hz.
        With a one-family solve (``family='TE'``) the band is among that family only."""
        if not self:
            raise FemodesError("no modes: solve for at least two modes to find the single-mode band")
        first = self[0]
        same = set(first.degenerate_with) | {first.index}
        rest = [m for m in self if m.index not in same]
        if not rest:
            raise FemodesError("solve for more modes: all modes found share the lowest cutoff, "
                               "so the upper edge of the single-mode band is not known")
        return first.fc, rest[0].fc
