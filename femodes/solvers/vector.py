"""Full-vector guided modes of inhomogeneously filled PEC guides (hybrid modes).

The numerical core for dielectric- and magnetic-loaded guides: a cross-section meshed into
triangles, each with its own real, positive eps_r and mu_r (piecewise constant), PEC on every
boundary edge.  Fields vary as exp(j (omega t - beta z)); k0 = omega / c0.

Formulation (mixed transverse / longitudinal; Lee, Sun & Cendes, IEEE Trans. MTT 39(8), 1991)
------------------------------------------------------------------------------------------
Unknowns: the transverse field E_t in Nedelec (first kind) edge elements N_p and the scaled
longitudinal field  w = j beta E_z  in Lagrange elements P_p of the same order p (1, 2 or 3;
scikit-fem ElementTriN1..N3 with ElementTriP1..P3; grad P_p lies in N_p, which is what keeps the
discrete curl null-space exact).  Testing the vector wave equation
curl(mu_r^-1 curl E) = k0^2 eps_r E with the edge functions N_i and the nodal functions L_i gives
the pencil  A x = beta^2 B x,  x = (E_t, w), with

    A = [[ S_tt - k0^2 T_eps ,  -G     ],        B = [[ -T_mu ,  0 ],
         [ 0                 ,  C(k0)  ]]             [  G^T  ,  0 ]]

    S_tt[i, j] = int mu_r^-1 curl N_i curl N_j dA        (curl of a 2-D field: a scalar)
    T_eps[i,j] = int eps_r  N_i . N_j dA,   T_mu[i, j] = int mu_r^-1 N_i . N_j dA
    G[i, j]    = int mu_r^-1 N_i . grad L_j dA
    C(k0)      = S_zz - k0^2 T_zz,  S_zz[i,j] = int mu_r^-1 grad L_i . grad L_j dA,
                 T_zz[i, j] = int eps_r L_i L_j dA

(first row: the transverse equation; second row: the longitudinal one multiplied by j beta).
Lee, Sun & Cendes scale the other way (e_t = beta E_t, e_z = -j E_z), which makes both matrices
symmetric but puts the n_z null directions at beta^2 = 0, in the middle of the spectrum next to
every mode near its cutoff; with w = j beta E_z they go to beta^2 = infinity instead (below).
The six matrices are assembled once; a frequency only recombines them.  PEC: all boundary dofs of
both spaces are removed (tangential E_t = 0: the edge dofs of wall edges; E_z = 0: every nodal,
edge and face dof on the wall).  Quadrature is exact for the polynomial degree (2p) on straight
triangles; eps_r and mu_r enter as element-wise weights of the quadrature.

Why no spurious mode is returned
--------------------------------
B has rank n_t: its z-columns are zero, so the n_z directions (0, w) are eigenvalues beta^2 =
infinity of the pencil.  Every finite eigenvalue is a physical discrete mode: testing the first
row with the gradients grad L_j (which lie in N_p) and adding the second row gives exactly the
discrete Gauss law  int eps_r E_t . grad L_j dA + int eps_r w L_j dA = 0  for every j (k0 > 0),
so the gradient fields that make nodal or unconstrained formulations spurious cannot appear at a
finite beta^2 unless they are part of a TM-like mode.  Shift-invert with the operator
OP = (A - sigma B)^-1 B maps beta^2 to nu = 1 / (beta^2 - sigma): the infinite eigenvalues go to
nu = 0 (the same end as the strongly evanescent modes), and OP x depends only on E_t, so ARPACK is
run on the E_t block alone, where the (0, w) directions do not exist at all.  sigma is put just
above k0^2 max(eps_r mu_r), above every beta^2 (Rayleigh bound), so the largest |nu| are the
largest beta^2: propagating modes first, then the least attenuated evanescent ones.  We factorise
(A - sigma B) ourselves (SuperLU, on the symmetric form of the matrix, see ``_factor``) and
hand eigs a LinearOperator: scipy's generalised shift-invert mode is not usable with this
indefinite B (MEASURED.md), and sigma > 0 stays far from -k0^2 eps_r where it was slow.  Each returned mode also carries the
residual of the pencil and of the discrete Gauss law, so a stray vector would show.

Cutoffs (beta = 0)
------------------
At beta = 0 the two rows decouple: transverse fields with  S_tt e = k0^2 T_eps e  (E_z = 0, only
H_z: "TE-type" cutoff), and longitudinal ones with  S_zz e_z = k0^2 T_zz e_z  (E_t = 0: "TM-type").
Both are solved directly as symmetric generalised eigenproblems in k0^2; the curl-curl one with the
constraint int eps_r e . grad L_j = 0 imposed by a Lagrange multiplier, which removes its huge
null-space of gradients (k0 = 0) instead of shifting it.

Complex modes
-------------
A and B are real but the pencil is not symmetric-definite, so below cutoff eigenvalues can come
as complex-conjugate pairs beta^2, conj(beta^2) with complex eigenvectors (conjugate to each
other).  In lossless guides whose dielectric spans the section in no direction these are physical
"complex modes"; on coarse meshes two nearly equal evanescent eigenvalues can also merge into
such a pair.  ARPACK runs on the real operator; its complex Ritz pairs are kept (family
'complex', see :class:`VectorMode`) when they are converged eigenpairs of the pencil, and the
distinction physical / artefact is made by refinement in femodes.solvers.loaded.

All SI: metres, hertz, rad/m.
"""

from __future__ import annotations

import cmath
import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from femodes.constants import MU0
from femodes.errors import FemodesError, check_positive
from femodes.geometry.locate import locate_straight
from femodes.geometry.mesh import Mesh, _mesh_from_connectivity, gmsh_session
from femodes.solvers.eigen import lowest_eigenpairs, single_thread

__all__ = ["VectorProblem", "VectorMode", "VectorCutoff", "Dispersion", "layered_rectangle_mesh",
           "VECTOR_ORDERS", "FAMILY_THRESHOLD"]

C0 = 299792458.0
VECTOR_ORDERS = (1, 2, 3)
#: a mode is 'TE' when the longitudinal share of its electric energy, int eps |E_z|^2 /
#: int eps |E|^2, is below this; 'TM' when the longitudinal share of its magnetic energy
#: int mu |H_z|^2 / int mu |H|^2 is below it; 'TEM' when both are; else 'hybrid'.
FAMILY_THRESHOLD = 1e-6
_SHIFT_FACTOR = 1.02  # sigma = _SHIFT_FACTOR * k0^2 max(eps mu)
_COMPLEX_TOL = 1e-8   # |Im nu| / |nu| above which a shift-invert eigenvalue counts as complex
#: a complex pair of the discrete pencil is kept as a mode when its relative residual and its
#: discrete Gauss-law residual are below this (physical modes show ~1e-12, see VectorMode)
COMPLEX_RESIDUAL = 1e-7


def _is_complex(b2):
    """True for a complex beta^2 (a member of a complex pair), False for a real one."""
    return isinstance(b2, complex) or np.iscomplexobj(b2)


# ---------------------------------------------------------------------------- results
@dataclass(frozen=True, eq=False)
class VectorMode:
    """One guided mode at one frequency.

    beta2     : beta^2 (rad^2/m^2); negative for an evanescent mode; complex (a Python complex)
                for a member of a complex pair (below)
    frequency : Hz
    family    : 'TE', 'TM', 'TEM' or 'hybrid', from e_share / h_share and FAMILY_THRESHOLD;
                'complex' for a complex mode

    Complex modes: the pencil is real but not symmetric-definite, so besides real beta^2
    (propagating > 0, evanescent < 0) it can have complex-conjugate pairs beta^2, conj(beta^2).
    In a lossless guide loaded with dielectric such pairs are physical "complex modes" below
    cutoff (they carry no net power each, and exist in coupled pairs; Omar & Schuenemann, IEEE
    Trans. MTT, 1985/1987, from memory).  For them ``et`` and ``ez`` are complex, beta =
    sqrt(beta^2) on the principal branch (Re beta >= 0; with exp(j(w t - beta z)) the member with
    Im beta < 0 decays toward +z while its phase advances, its partner with Im beta > 0 decays
    toward -z), e_share uses |E|^2, h_share is NaN, and v_g, alpha_d are NaN.
    e_share   : int eps_r |E_z|^2 dA / int eps_r |E|^2 dA  (longitudinal share of electric energy)
    h_share   : int mu_r |H_z|^2 dA / int mu_r |H|^2 dA    (longitudinal share of magnetic energy)
    et        : coefficients of E_t on the Nedelec basis (real, all dofs; zero on the wall)
    ez        : coefficients of E_z on the Lagrange basis (complex: E_z = w / (j beta))
                normalised with int (|E_t|^2 + |E_z|^2) dA = 1 (units 1/m)
    residual  : ||A x - beta^2 B x|| / (||A x|| + |beta^2| ||B x||)
    divergence: residual of the discrete Gauss law (module docstring), relative to the same sums
                taken in absolute value: ~1e-12 for a physical mode, O(1) for a spurious vector
    """

    beta2: float | complex
    frequency: float
    family: str
    e_share: float
    h_share: float
    et: np.ndarray = field(repr=False)
    ez: np.ndarray = field(repr=False)
    residual: float = 0.0
    divergence: float = 0.0
    problem: "VectorProblem" = field(default=None, repr=False)

    @property
    def propagating(self):
        return not _is_complex(self.beta2) and self.beta2 > 0

    @property
    def beta(self):
        """beta (rad/m) if propagating, else -1j * alpha (alpha in Np/m); for a complex mode the
        principal square root of the complex beta^2 (Re beta >= 0)."""
        if _is_complex(self.beta2):
            return cmath.sqrt(self.beta2)
        if self.beta2 >= 0:
            return math.sqrt(self.beta2)
        return -1j * math.sqrt(-self.beta2)

    @property
    def k0(self):
        return 2 * math.pi * self.frequency / C0

    @property
    def effective_permittivity(self):
        """(beta / k0)^2: eps_r mu_r of the homogeneous fill with the same beta."""
        return self.beta2 / self.k0 ** 2

    @property
    def guide_wavelength(self):
        """2 pi / beta (m); inf for an evanescent mode."""
        return 2 * math.pi / math.sqrt(self.beta2) if self.propagating else math.inf

    @property
    def group_velocity(self):
        """v_g / c0 = (1 / c0) d omega / d beta, from the fields at this one frequency.

        Differentiating the pencil (A0 - k0^2 A2) x = beta^2 B x in k0^2 and multiplying by its
        left eigenvector y (module docstring, ``_polish``) gives d beta^2 / d k0^2 =
        -y^T A2 x / y^T B x (first-order perturbation theory; for a homogeneous fill it is
        eps_r mu_r exactly), and v_g / c0 = beta / (k0 d beta^2 / d k0^2).  NaN if evanescent."""
        return self.problem._sensitivity(self)[0]

    @property
    def dielectric_attenuation(self):
        """Attenuation (Np/m) by the dielectric losses of the regions: eps_r -> eps_r (1 - j
        tan_delta) changes A by j k0^2 L (L: the mass matrices weighted with eps_r tan_delta), so
        d beta^2 = j k0^2 y^T L x / y^T B x and alpha_d = -Im(d beta^2) / (2 beta), to first order
        in tan_delta.  For a homogeneous fill this is the handbook k^2 tan_delta / (2 beta)
        (Pozar, Microwave Engineering, sec. 3.1).  0 without losses; NaN if evanescent."""
        return self.problem._sensitivity(self)[1]

    def power(self):
        """Time-average power P = 1/2 Re int (E_t x H_t*) . z dA (W) of the mode as normalised
        (int (|E_t|^2 + |E_z|^2) dA = 1, E in units 1/m): :meth:`VectorProblem.power`."""
        return self.problem.power(self)

    def wall_integral(self):
        """oint |H_tan|^2 dl over every wall (PEC boundary), for the normalisation of
        :meth:`power`: :meth:`VectorProblem.wall_integral`."""
        return self.problem.wall_integral(self)

    def fields(self, points, cells=None):
        """(E_x, E_y, E_z, H_x, H_y, H_z) at points (2, n), complex, NaN outside the mesh.

        E as normalised above (1/m); H = j curl E / (omega mu0 mu_r) in the same scale
        (A/(V m), i.e. the H of a mode whose E is the one given).  ``cells`` (n,) evaluates each
        point in the given triangle instead of locating it: the one-sided limit on a triangle's
        edge (fields are only tangentially continuous across edges, and not at all at vertices).
        """
        return self.problem._fields(self, points, cells)


@dataclass(frozen=True, eq=False)
class VectorCutoff:
    """A cutoff (beta = 0) of the loaded guide.

    field : 'TE' (only transverse E at cutoff, with H_z) or 'TM' (only E_z at cutoff)
    coeffs: the field at cutoff, on the Nedelec basis (TE) or the Lagrange basis (TM)
    """

    k0: float
    field: str
    coeffs: np.ndarray = field(repr=False)
    residual: float = 0.0

    @property
    def frequency(self):
        return C0 * self.k0 / (2 * math.pi)


@dataclass(frozen=True, eq=False)
class Dispersion:
    """beta(f) of tracked modes.

    frequencies : (F,) Hz, as given
    beta2       : (F, N) beta^2 (rad^2/m^2) of each tracked mode (column) at each frequency;
                  a complex array when a tracked mode is a member of a complex pair somewhere
                  (family 'complex' there; see VectorMode)
    overlap     : (F, N) how surely each point continues the curve: the larger of the mode's
                  weight in the expansion of the same mode at the previous frequency (bi-orthogonal
                  projection, 1 for identical fields) and its agreement with the beta^2 predicted
                  from the previous point's slope (see ``_track``) (1 at the
                  first); low values (say < 0.9) mean the frequency step was too coarse to be sure
    family      : (F, N) family guess of each mode at each frequency
    modes       : the VectorMode objects, modes[i][k] for frequency i and tracked mode k
    snapshots   : the frequencies at which a full shift-invert solve was made
    labels      : a name per tracked mode ('' where none), set by femodes.dispersion
    """

    frequencies: np.ndarray
    beta2: np.ndarray
    overlap: np.ndarray
    family: np.ndarray
    modes: tuple = field(repr=False)
    snapshots: np.ndarray = field(default_factory=lambda: np.zeros(0))
    labels: tuple = ()

    @property
    def beta(self):
        """(F, N) beta (rad/m), -1j alpha where evanescent, the principal square root (Re beta
        >= 0) of a complex beta^2 where the mode is a member of a complex pair."""
        b2 = np.asarray(self.beta2)
        cplx = np.abs(b2.imag) > 0
        re = b2.real
        real_beta = np.where(re >= 0, np.sqrt(np.abs(re)) + 0j, -1j * np.sqrt(np.abs(re)))
        return np.where(cplx, np.sqrt(b2.astype(complex)), real_beta)


# ---------------------------------------------------------------------------- helpers
def _elements(order):
    import skfem

    try:
        p = int(order)
    except (TypeError, ValueError):
        p = None
    if p not in VECTOR_ORDERS or isinstance(order, bool):
        raise FemodesError(f"element order must be one of {VECTOR_ORDERS} (Nedelec N_p with Lagrange "
                           f"P_p), got {order!r}")
    return ({1: skfem.ElementTriN1, 2: skfem.ElementTriN2, 3: skfem.ElementTriN3}[p](),
            {1: skfem.ElementTriP1, 2: skfem.ElementTriP2, 3: skfem.ElementTriP3}[p](), p)


def _material(name, value, n):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number or one real number per triangle, got {value!r}") from None
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    arr = arr.ravel()
    if arr.shape != (n,):
        raise FemodesError(f"{name} must be a number or an array of one value per triangle ({n}), "
                           f"got shape {np.shape(value)}")
    bad = ~(np.isfinite(arr) & (arr > 0))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise FemodesError(f"{name} must be real, finite and positive on every triangle; triangle {i} "
                           f"has {arr[i]!r}")
    return arr


def _frequency(f):
    try:
        v = float(f)
    except (TypeError, ValueError):
        raise FemodesError(f"frequency must be a number of Hz, got {f!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise FemodesError(f"frequency must be a positive finite number of Hz, got {f!r}")
    return v


def _count(name, n, minimum=1):
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < minimum:
        raise FemodesError(f"{name} must be an integer >= {minimum}, got {n!r}")
    return int(n)


def _coo(rows_dofs, cols_dofs, blocks, shape):
    from scipy.sparse import coo_matrix

    nr, nc, ne = blocks.shape
    rows = np.broadcast_to(rows_dofs[:, None, :], (nr, nc, ne)).ravel()
    cols = np.broadcast_to(cols_dofs[None, :, :], (nr, nc, ne)).ravel()
    return coo_matrix((blocks.ravel(), (rows, cols)), shape=shape).tocsr()


def _skfem_mesh(mesh, order):
    """A scikit-fem triangle mesh with sorted vertex order (see DEVELOPERS.md)."""
    from skfem import MeshTri1


    if isinstance(mesh, Mesh):
        return mesh.to_skfem(order=max(2, order)) if mesh.is_curved else mesh.to_skfem()
    if not hasattr(mesh, "t") or not hasattr(mesh, "p") or getattr(mesh, "t").shape[0] != 3:
        raise FemodesError(f"expected a scikit-fem triangle mesh or a femodes Mesh, got {type(mesh).__name__}")
    t = np.asarray(mesh.t)
    if np.all(np.diff(t, axis=0) > 0):
        return mesh
    if type(mesh) is MeshTri1:  # straight triangles: reordering the vertices changes nothing else
        return MeshTri1(np.ascontiguousarray(mesh.p), np.ascontiguousarray(np.sort(t, axis=0)))
    raise FemodesError("the curved mesh's triangle vertices are not sorted; Nedelec and higher-order "
                       "elements give wrong answers on it.  Build it with femodes.Mesh.to_skfem, which "
                       "sorts them")


# ---------------------------------------------------------------------------- problem
@dataclass(frozen=True, eq=False)
class VectorProblem:
    """The assembled full-vector problem of one meshed, loaded cross-section.

    VectorProblem(mesh, eps_r=1, mu_r=1, order=2): ``mesh`` is a scikit-fem triangle mesh (vertex
    order sorted per triangle, as femodes.Mesh.to_skfem gives) or a femodes Mesh; ``eps_r`` and
    ``mu_r`` a number or one real value per triangle; ``order`` 1, 2 or 3; ``tan_delta`` the
    dielectric loss tangent, a number or one value per triangle (the modes are solved lossless; the
    loss is a first-order perturbation, :meth:`VectorMode.dielectric_attenuation`).  Assembly happens once,
    here; :meth:`solve`, :meth:`cutoffs` and :meth:`dispersion` only recombine the matrices.
    """

    mesh: object = field(repr=False)
    eps_r: object = field(default=1.0, repr=False)
    mu_r: object = field(default=1.0, repr=False)
    order: int = 2
    tan_delta: object = field(default=0.0, repr=False)
    # assembled data (set in __post_init__)
    basis_t: object = field(init=False, repr=False)
    basis_z: object = field(init=False, repr=False)
    mats: dict = field(init=False, repr=False)
    interior_t: np.ndarray = field(init=False, repr=False)
    interior_z: np.ndarray = field(init=False, repr=False)
    emu_max: float = field(init=False)

    def __post_init__(self):
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
        it = np.setdiff1d(np.arange(Nt), np.unique(bt.get_dofs().flatten()))
        iz = np.setdiff1d(np.arange(Nz), np.unique(bz.get_dofs().flatten()))
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
        """SuperLU factors of the symmetric form of (A - sigma B) at k0.

        With w = -v and the second row divided by -sigma, (A - sigma B) becomes the symmetric
            M = [[S_tt + sigma T_mu - k0^2 T_eps , G              ],
                 [G^T                             , C(k0) / sigma  ]]
        i.e. (A - sigma B) = diag(I, -sigma I) M diag(I, -I).
        """
        import scipy.sparse as sp
        from scipy.sparse.linalg import splu

        tt, tz, zz = self.mats["tt"], self.mats["tz"], self.mats["zz"]
        K = tt["S_tt"] + sigma * tt["T_mu"] - (k0 * k0) * tt["T_eps"]
        C = (zz["S_zz"] - (k0 * k0) * zz["T_zz"]) / sigma
        M = sp.bmat([[K, tz["G_mu"]], [tz["G_mu"].T, C]], format="csc")
        return splu(M, permc_spec="MMD_AT_PLUS_A", options={"SymmetricMode": True})

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
        from scipy.sparse.linalg import LinearOperator, eigsh, splu


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
            lu = splu(Kaug, permc_spec="MMD_AT_PLUS_A", options={"SymmetricMode": True})

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


# ---------------------------------------------------------------------------- evaluation
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


# ---------------------------------------------------------------------------- test meshes
def layered_rectangle_mesh(width, height, interfaces_y=(), interfaces_x=(), h=None):
    """Triangle mesh of the rectangle [0, width] x [0, height] cut into regions by the lines
    y = c (interfaces_y) and x = c (interfaces_x), conforming to every interface.

    gmsh's built-in kernel: one rectangle per region, neighbours sharing their edges, one
    physical group per region.  Returns (femodes.Mesh, region) where region[i] is the region of
    triangle i: ix + nx * iy, counting from x = 0 and y = 0 (nx = len(interfaces_x) + 1), so for
    layers stacked in y it is simply the layer index from the bottom.  ``h``: maximum element size
    (m), default height / 8.
    """

    W = check_positive("width", width)
    H = check_positive("height", height)
    hh = H / 8 if h is None else check_positive("h (element size)", h)

    def cuts(name, values, L):
        try:
            vals = sorted(float(v) for v in values)
        except (TypeError, ValueError):
            raise FemodesError(f"{name} must be a list of coordinates in metres, got {values!r}") from None
        for v in vals:
            if not (0 < v < L):
                raise FemodesError(f"{name}: every interface must lie strictly inside (0, {L!r}) m, got {v!r}")
        if any(b - a <= 1e-12 * L for a, b in zip(vals, vals[1:])):
            raise FemodesError(f"{name}: interfaces must be distinct, got {vals!r}")
        return [0.0] + vals + [L]

    xs = cuts("interfaces_x", interfaces_x, W)
    ys = cuts("interfaces_y", interfaces_y, H)
    nx, ny = len(xs) - 1, len(ys) - 1
    if (W * H) / (hh * hh) > 2e6:
        raise FemodesError(f"element size h = {hh!r} m would give millions of triangles on a "
                           f"{W!r} x {H!r} m rectangle; use a larger h")
    with gmsh_session("femodes-layers") as gmsh:
        geo = gmsh.model.geo
        pt = {(i, j): geo.addPoint(xs[i], ys[j], 0.0, hh) for i in range(nx + 1) for j in range(ny + 1)}
        hl = {(i, j): geo.addLine(pt[i, j], pt[i + 1, j]) for i in range(nx) for j in range(ny + 1)}
        vl = {(i, j): geo.addLine(pt[i, j], pt[i, j + 1]) for i in range(nx + 1) for j in range(ny)}
        surfaces = []
        for j in range(ny):
            for i in range(nx):
                loop = geo.addCurveLoop([hl[i, j], vl[i + 1, j], -hl[i, j + 1], -vl[i, j]])
                surfaces.append(geo.addPlaneSurface([loop]))
        geo.synchronize()
        for r, s in enumerate(surfaces):
            gmsh.model.addPhysicalGroup(2, [s], r + 1)
        gmsh.option.setNumber("Mesh.MeshSizeMax", hh)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.option.setNumber("Mesh.RandomFactor", 1e-9)
        gmsh.model.mesh.generate(2)
        tags, coords, _ = gmsh.model.mesh.getNodes()
        coords = np.asarray(coords).reshape(-1, 3)[:, :2].T
        lookup = np.zeros(int(tags.max()) + 1, dtype=np.int64)
        lookup[tags] = np.arange(len(tags))
        conns, regions = [], []
        for r, s in enumerate(surfaces):
            _, _, enodes = gmsh.model.mesh.getElements(2, s)
            c = np.asarray(enodes[0], dtype=np.int64).reshape(-1, 3).T
            conns.append(lookup[c])
            regions.append(np.full(c.shape[1], r, dtype=np.int64))
    mesh = _mesh_from_connectivity(coords, np.hstack(conns))
    return mesh, np.concatenate(regions)
