"""Losses: wall (conductor) loss by the power-loss method with surface roughness, and the loss of
a lossy fill; skin depth and surface resistance of the wall metal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.constants import MU0, NP_TO_DB
from femodes.errors import CONDUCTIVITY_RANGE, FemodesError, in_range
from femodes.geometry.walls import magnetic_lines, on_lines
from femodes.modes.loaded import LoadedMode
from femodes.quantities.common import (
    _beta,
    _field,
    _freq,
    _k,
    _nonnegative,
    _out,
    _require_propagating,
    _z_wave,
)
from femodes.solvers.fields import _transverse
from femodes.solvers.loaded import _partner

#: Bulk conductivities at room temperature (S/m).  From memory: the usual textbook round values
#: (cf. the conductivity tables in Pozar, *Microwave Engineering*, appendix); copper is the
#: International Annealed Copper Standard, 5.8e7 S/m.  Real walls (plating, alloys, machining,
#: temperature) are often lower: use a measured value where it matters.
METALS = {
    "silver": 6.17e7,
    "copper": 5.8e7,
    "gold": 4.10e7,
    "aluminium": 3.82e7,
    "brass": 2.56e7,          # varies with the alloy, roughly 1.5e7 .. 2.6e7
    "stainless steel": 1.4e6,  # typical of type 304; varies with the alloy
}


_ALIASES = {"aluminum": "aluminium", "stainless": "stainless steel", "steel": "stainless steel",
            "stainless_steel": "stainless steel", "ss": "stainless steel", "cu": "copper",
            "ag": "silver", "au": "gold", "al": "aluminium"}


def conductivity_of(conductivity):
    """Conductivity in S/m from a number or a metal name in :data:`METALS`."""
    if isinstance(conductivity, str):
        key = conductivity.strip().lower()
        key = _ALIASES.get(key, key)
        if key not in METALS:
            raise FemodesError(f"unknown metal {conductivity!r}; known: {', '.join(METALS)} "
                               "(or give the conductivity in S/m)")
        return METALS[key]
    return in_range("conductivity", conductivity, *CONDUCTIVITY_RANGE, unit="S/m",
                    why="the good-conductor surface impedance: metals, alloys, graphite")


def skin_depth(f, conductivity=5.8e7):
    """Skin depth delta_s = sqrt(2 / (omega mu0 sigma)) (m) of a non-magnetic metal."""
    fa = _freq(f)
    s = conductivity_of(conductivity)
    return _out(np.sqrt(2.0 / (2 * np.pi * fa * MU0 * s)))


def surface_resistance(f, conductivity=5.8e7):
    """Surface resistance R_s = sqrt(omega mu0 / (2 sigma)) = 1 / (sigma delta_s) (ohm) of a
    smooth, non-magnetic metal wall."""
    fa = _freq(f)
    s = conductivity_of(conductivity)
    return _out(np.sqrt(2 * np.pi * fa * MU0 / (2.0 * s)))


def roughness_factor(f, conductivity=5.8e7, roughness=0.0):
    """Hammerstad-Jensen surface-roughness factor K = 1 + (2/pi) arctan(1.4 (Delta / delta_s)^2).

    Delta is the rms surface roughness (m), delta_s the skin depth.  K multiplies the smooth-wall
    conductor loss; it goes from 1 (smooth) to 2 (very rough).  An empirical fit (Hammerstad &
    Jensen 1980, for microstrip), used for guides as a rule of thumb.
    """
    fa = _freq(f)
    r = _nonnegative("roughness", roughness, "m (rms)")
    d = np.asarray(skin_depth(fa, conductivity))
    return _out(1.0 + (2.0 / np.pi) * np.arctan(1.4 * (r / d) ** 2))


@dataclass(frozen=True)
class WallIntegrals:
    """Boundary integrals of the normalised mode over the walls (every conductor), for losses.

    tangential   : oint (h_t . t)^2 dl   (1/m; h_t the normalised transverse mode vector)
    longitudinal : oint psi^2 dl          (1/m; psi normalised, int psi^2 dA = 1; used for TE)
    length       : oint dl                (m; the perimeter of the mesh's walls)
    per_conductor: ((tangential, longitudinal, length), ...) per conductor, outer wall first
    """

    tangential: float
    longitudinal: float
    length: float
    per_conductor: tuple


def _gauss01(n):
    s, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (s + 1.0), 0.5 * w


_REF_VERTICES = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])


def _wall_edges(mesh):
    """Boundary facets, the element owning each, and the reference coordinates (2, n) of each
    facet's two end vertices in that element."""
    facets = mesh.boundary_facets()
    tind = mesh.f2t[0, facets]
    tv = mesh.t[:, tind]
    fv = mesh.facets[:, facets]
    i0 = np.argmax(tv == fv[0][None, :], axis=0)
    i1 = np.argmax(tv == fv[1][None, :], axis=0)
    return facets, tind, _REF_VERTICES[i0].T, _REF_VERTICES[i1].T


def _boundary_rule(basis, n=10):
    """A Gauss rule along every boundary facet of the mode's own mesh, in the reference
    coordinates of the element that owns the facet.

    Returns dict with tind (m,), X (2, m, n) reference points, xy (2, m, n) mapped points,
    t (2, m, n) unit tangents, nin (2, m, n) unit normals pointing into the guide, dl (m, n)
    length weights (Gauss weight x |dx/ds|), facets (m,).  Curved (isoparametric) edges are
    followed exactly: points come from mapping.F and the tangent from the mapping's Jacobian.
    """
    mesh = basis.mesh
    mapping = basis.mapping
    facets, tind, A, B = _wall_edges(mesh)  # A, B: (2, m)
    s, w = _gauss01(n)
    X = A[:, :, None] + (B - A)[:, :, None] * s[None, None, :]
    xy = mapping.F(X, tind=tind)
    DF = mapping.DF(X, tind=tind)  # (2, 2, m, n)
    d = B - A
    dx = DF[0, 0] * d[0][:, None] + DF[0, 1] * d[1][:, None]
    dy = DF[1, 0] * d[0][:, None] + DF[1, 1] * d[1][:, None]
    js = np.hypot(dx, dy)
    t = np.array([dx / js, dy / js])
    nin = np.array([-t[1], t[0]])
    # orient the normal into the element (towards its mapped centroid)
    cen = mapping.F(np.full((2, len(tind), 1), 1.0 / 3.0), tind=tind)[:, :, 0]
    mid = xy[:, :, n // 2]
    sgn = np.sign(np.sum(nin[:, :, n // 2] * (cen - mid), axis=0))
    sgn[sgn == 0] = 1.0
    nin = nin * sgn[None, :, None]
    return dict(tind=tind, X=X, xy=xy, t=t, nin=nin, dl=js * w[None, :], facets=facets)


def _eval_reference(field, tind, X):
    """psi, d psi/dx, d psi/dy at reference points X (2, m, q) of the elements tind (m,)."""
    basis = field.basis
    val = np.zeros(X.shape[1:])
    gx = np.zeros_like(val)
    gy = np.zeros_like(val)
    dofs = basis.element_dofs[:, tind]
    for k in range(basis.Nbfun):
        phi = basis.elem.gbasis(basis.mapping, X, k, tind=tind)[0]
        c = field.coeffs[dofs[k]][:, None]
        val += c * np.asarray(phi)
        gx += c * phi.grad[0]
        gy += c * phi.grad[1]
    return val, gx, gy


def _conductor_groups(mesh, facets):
    """Index arrays into ``facets`` per connected boundary piece, largest extent first."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    fv = mesh.facets[:, facets]
    nv = mesh.t.max() + 1
    g = coo_matrix((np.ones(fv.shape[1]), (fv[0], fv[1])), shape=(nv, nv))
    _, lab = connected_components(g, directed=False)
    comp = lab[fv[0]]
    groups = [np.flatnonzero(comp == c) for c in np.unique(comp)]
    p = mesh.p
    ext = [float(np.ptp(p[:, fv[:, gr].ravel()], axis=1).max()) for gr in groups]
    return [groups[i] for i in np.argsort(ext)[::-1]]


def _normal_flux(mode, rule):
    """d psi / dn (outward) at the boundary Gauss points of ``rule`` for a mode with psi constant
    on every wall (TM: psi = 0; TEM: phi = const per conductor), recovered from the residual of
    the weak form rather than from the gradient of the discrete psi.

    For every test function v of the basis, int_walls (d psi/dn) v dl = int grad psi . grad v dA
    - kc^2 int psi v dA (Green's formula; kc = 0 for TEM).  The right side, for the wall dofs, is
    the residual of the discrete eigenvector (same quadrature as the solver, on the elements that
    touch a wall); d psi/dn is taken in the trace space of the wall dofs:  M_wall g = r_wall.
    This flux converges much faster than the pointwise gradient at the wall (the wall loss of a
    TM mode and the charge of a TEM conductor depend only on it).
    """
    from scipy.sparse import coo_matrix
    from scipy.sparse.linalg import spsolve

    fld = _field(mode)
    basis = fld.basis
    mesh = basis.mesh
    c = fld.coeffs
    lam = mode.kc ** 2 if mode.family != "TEM" else 0.0
    bdofs = np.unique(basis.get_dofs(facets=rule["facets"]).flatten())
    on_wall = np.zeros(mesh.p.shape[1], dtype=bool)
    on_wall[np.unique(mesh.facets[:, rule["facets"]])] = True
    sel = np.flatnonzero(on_wall[mesh.t].any(axis=0))
    dofs = basis.element_dofs[:, sel]
    phi = np.array([np.asarray(b[0])[sel] for b in basis.basis])        # (nl, ns, nq)
    dphi = np.array([b[0].grad[:, sel] for b in basis.basis])     # (nl, 2, ns, nq)
    dx = basis.dx[sel]
    cl = c[dofs]                                                  # (nl, ns)
    u = np.einsum("ie,ieq->eq", cl, phi)
    gu = np.einsum("ie,ikeq->keq", cl, dphi)
    re = np.einsum("keq,ikeq,eq->ie", gu, dphi, dx) - lam * np.einsum("eq,ieq,eq->ie", u, phi, dx)
    r = np.zeros(basis.N)
    np.add.at(r, dofs.ravel(), re.ravel())
    # wall mass matrix on the Gauss rule of the walls
    tind, X, dl = rule["tind"], rule["X"], rule["dl"]
    vals = np.array([np.asarray(basis.elem.gbasis(basis.mapping, X, k, tind=tind)[0]) for k in range(basis.Nbfun)])
    edofs = basis.element_dofs[:, tind]                           # (nl, m)
    Me = np.einsum("iaq,jaq,aq->ija", vals, vals, dl)
    nl = edofs.shape[0]
    rows = np.broadcast_to(edofs[:, None, :], (nl, nl, edofs.shape[1])).ravel()
    cols = np.broadcast_to(edofs[None, :, :], (nl, nl, edofs.shape[1])).ravel()
    Mw = coo_matrix((Me.ravel(), (rows, cols)), shape=(basis.N, basis.N)).tocsr()[bdofs][:, bdofs]
    g = np.zeros(basis.N)
    g[bdofs] = spsolve(Mw.tocsc(), r[bdofs])
    return np.einsum("iaq,ia->aq", vals, g[edofs])


def _electric_walls(rule, mesh, section):
    """The part of a boundary ``rule`` on electric walls: the facets on sides the user marked
    magnetic (:meth:`Section.with_walls`) carry no wall current and are left out."""
    lines = magnetic_lines(section) if section is not None and getattr(section, "magnetic", ()) else ()
    if not lines:
        return rule
    fv = mesh.facets[:, rule["facets"]]
    keep = ~on_lines(lines, mesh.p[:, fv[0]], mesh.p[:, fv[1]], section.size)
    return {k: (v[:, keep] if v.ndim == 3 else v[keep]) for k, v in rule.items()}


def _wall_data(mode, n=10):
    """Rule, psi, h_t . t, h_x, h_y at the electric-wall Gauss points of the normalised mode."""
    fld = _field(mode)
    rule = _electric_walls(_boundary_rule(fld.basis, n), fld.basis.mesh, getattr(mode, "section", None))
    val, gx, gy = _eval_reference(fld, rule["tind"], rule["X"])
    if mode.family in ("TM", "TEM"):
        # grad psi = (d psi/dn) n_out on the wall: use the recovered flux (see _normal_flux)
        gn = _normal_flux(mode, rule)
        gx, gy = -gn * rule["nin"][0], -gn * rule["nin"][1]
    ex, ey, hx, hy = _transverse(mode.family, mode.kc, fld, gx, gy)
    ht = hx * rule["t"][0] + hy * rule["t"][1]
    return rule, val, ht, hx, hy


def wall_integrals(mode, quadrature_points=10):
    """The boundary integrals oint (h_t . t)^2 dl and oint psi^2 dl of the normalised mode over
    all walls (outer wall and inner conductors); see :class:`WallIntegrals`.

    Integrated facet by facet over the boundary of the mode's own finite-element mesh with a
    Gauss rule in the reference coordinates of the boundary element (exact along curved
    isoparametric edges); only the tangential part of h_t enters (the normal part vanishes on a
    perfect conductor and is discretisation error).
    """
    rule, val, ht, _, _ = _wall_data(mode, int(quadrature_points))
    dl = rule["dl"]
    a = np.sum(ht * ht * dl, axis=1)
    b = np.sum(val * val * dl, axis=1)
    L = np.sum(dl, axis=1)
    groups = _conductor_groups(_field(mode).basis.mesh, rule["facets"])
    per = tuple((float(a[g].sum()), float(b[g].sum()), float(L[g].sum())) for g in groups)
    return WallIntegrals(float(a.sum()), float(b.sum()), float(L.sum()), per)


def conductor_attenuation(mode, f, conductivity=5.8e7, roughness=0.0):
    """Wall-loss attenuation alpha_c (Np/m) by the power-loss method.

        alpha_c = P_loss / (2 P),   P_loss = (R_s / 2) oint |H_tan|^2 dl,   R_s = sqrt(omega mu0 / (2 sigma))

    over every wall (outer and inner conductors), with H_tan the field tangential to the wall: the
    in-plane part H_t . t and, for TE modes, H_z.  For amplitude V = 1 (P = 1 / (2 Z_w)):

        TE:       alpha_c = R_s / (2 Z_w) [ oint (h_t.t)^2 dl + (kc / beta)^2 oint psi^2 dl ]
        TM, TEM:  alpha_c = R_s / (2 Z_w)   oint (h_t.t)^2 dl

    ``conductivity`` in S/m or a metal name (:data:`METALS`); ``roughness`` the rms surface
    roughness (m), applied with the Hammerstad-Jensen factor (:func:`roughness_factor`).  Walls
    are taken as non-magnetic.  The method perturbs the lossless mode: it fails close to cutoff
    (alpha_c grows without bound as beta -> 0) and ignores coupling between degenerate modes.
    ``f`` (Hz) may be an array; every frequency must be above cutoff.  A loaded-guide mode
    (:class:`~femodes.modes.LoadedMode`) takes :func:`loaded_conductor_attenuation` at its own frequency.
    """
    if isinstance(mode, LoadedMode):
        mode.beta(f)  # a loaded mode is solved at one frequency: refuse any other
        return loaded_conductor_attenuation(mode, conductivity, roughness)
    fa = _freq(f)
    _require_propagating(mode, fa, "the conductor loss")
    sigma = conductivity_of(conductivity)
    W = wall_integrals(mode)
    Rs = np.asarray(surface_resistance(fa, sigma))
    K = np.asarray(roughness_factor(fa, sigma, roughness))
    zw = _z_wave(mode, fa)
    total = W.tangential + 0 * fa
    if mode.family == "TE":
        total = total + (mode.kc / _beta(mode, fa)) ** 2 * W.longitudinal
    return _out(K * Rs / (2 * zw) * total)


def _alpha_c_vector(vm, conductivity, roughness):
    """alpha_c = K R_s oint |H_tan|^2 dl / (4 P) of a VectorMode (Np/m)."""
    sigma = conductivity_of(conductivity)
    f = vm.frequency
    rs = float(surface_resistance(f, sigma)) * float(roughness_factor(f, sigma, roughness))
    return rs * vm.wall_integral() / (4.0 * vm.power())


def vector_mode_attenuation(vector_mode, conductivity=5.8e7, roughness=0.0):
    """(alpha_c, alpha_d) in Np/m of a full-vector mode of a loaded guide as solved at its
    frequency (a :class:`femodes.solvers.vector.VectorMode`, e.g. a point of a dispersion curve):
    the wall loss by the power-loss method (as :func:`loaded_conductor_attenuation`) and the
    loss of the fill's and regions' loss tangents (first order).  (NaN, NaN) unless it
    propagates.  No error estimate: a point of a curve has no lower-order partner solved."""
    if vector_mode.family == "complex" or not vector_mode.propagating:
        return math.nan, math.nan
    return _alpha_c_vector(vector_mode, conductivity, roughness), float(vector_mode.dielectric_attenuation)


def loaded_conductor_attenuation(mode, conductivity=5.8e7, roughness=0.0):
    """Wall-loss attenuation alpha_c (Np/m) of a loaded-guide mode (:class:`~femodes.modes.LoadedMode`)
    at the frequency it was solved at, by the power-loss method as for homogeneous modes
    (:func:`conductor_attenuation`):

        alpha_c = P_loss / (2 P),   P_loss = (K R_s / 2) oint |H_tan|^2 dl,

    P the Poynting flux of the hybrid mode and H_tan its field tangential to the walls (H_z
    and the tangential part of H_t), from the full-vector fields; ``conductivity`` in S/m or
    a metal name, ``roughness`` rms (m, Hammerstad-Jensen factor K).  A perturbation of the
    lossless mode: not valid close to cutoff, and it ignores the coupling of degenerate
    modes; NaN if evanescent.  Its error: :func:`loaded_conductor_attenuation_error`."""
    if not mode.propagating:
        return math.nan
    return _alpha_c_vector(mode.vector, conductivity, roughness)


def loaded_conductor_attenuation_error(mode, conductivity=5.8e7, roughness=0.0):
    """Estimated error (Np/m) of :func:`loaded_conductor_attenuation`: its difference from the
    same quantity with elements one order lower on the same mesh (solved on first use), as the
    scalar solver estimates on a fixed mesh.  Conservative by design: on the side-slab WR-90
    it was 100 to 1000 times the true error, while the Richardson difference of the last two
    meshes (the fields converge like h^p, irregularly, and a TEM mode's beta is exact on any
    mesh so its meshes stay coarse) came out below the true error.  NaN if no lower-order
    partner is found."""
    if not mode.propagating or mode.lower is None:
        return math.nan
    partner = _partner(mode.vector, mode.lower())
    if partner is None:
        return math.nan
    return abs(_alpha_c_vector(mode.vector, conductivity, roughness) - _alpha_c_vector(partner, conductivity, roughness))


def dielectric_attenuation(mode, f, tan_delta=0.0):
    """Attenuation alpha_d (Np/m) of the homogeneous fill with loss tangent tan_delta:

        alpha_d = k^2 tan_delta / (2 beta)    (TE, TM; TEM: beta = k, so k tan_delta / 2)

    the first-order result for eps = eps0 eps_r (1 - j tan_delta) (Pozar, Microwave Engineering,
    sec. 3.1, dielectric loss).  ``f`` may be an array; above cutoff.
    """
    fa = _freq(f)
    td = _nonnegative("tan_delta (loss tangent)", tan_delta, "")
    _require_propagating(mode, fa, "the dielectric loss")
    k = _k(mode, fa)
    b = k if mode.family == "TEM" else _beta(mode, fa)
    return _out(k * k * td / (2 * b))


def attenuation(mode, f, conductivity=5.8e7, roughness=0.0, tan_delta=0.0):
    """Total attenuation alpha_c + alpha_d (Np/m; multiply by :data:`NP_TO_DB` for dB/m)."""
    return _out(np.asarray(conductor_attenuation(mode, f, conductivity, roughness))
                + np.asarray(dielectric_attenuation(mode, f, tan_delta)))


def to_db(alpha):
    """Np/m -> dB/m (x 8.686)."""
    return _out(np.asarray(alpha, dtype=float) * NP_TO_DB)


@dataclass(frozen=True)
class Losses:
    """Attenuation of one mode (Np/m unless stated; arrays like f).  ``conductor_error``: the
    estimated error of the wall loss where one is computed (loaded guides: see
    :func:`loaded_conductor_attenuation_error`), else NaN (not estimated)."""

    f: object
    conductor: object
    dielectric: object
    total: object
    surface_resistance: object
    skin_depth: object
    roughness_factor: object
    conductor_error: object = math.nan

    @property
    def total_db(self):
        return to_db(self.total)

    @property
    def conductor_db(self):
        return to_db(self.conductor)

    @property
    def dielectric_db(self):
        return to_db(self.dielectric)


def losses(mode, f, conductivity=5.8e7, roughness=0.0, tan_delta=0.0):
    """Conductor and dielectric attenuation with the wall data used (see the functions above).

    A loaded-guide mode (:class:`~femodes.modes.LoadedMode`), at its own frequency: the wall loss
    of :func:`loaded_conductor_attenuation` with its error, and the dielectric loss of the loss
    tangents its fill and regions were solved with (``tan_delta`` here must then be 0: give the
    fill's loss tangent to the solve)."""
    if isinstance(mode, LoadedMode):
        mode.beta(float(_freq(f)))
        if tan_delta:
            raise FemodesError("a loaded guide's dielectric loss comes from the tan_delta of its fill and regions "
                               "given to the solve; pass tan_delta=0 here")
        fa = float(mode.frequency)
        c = loaded_conductor_attenuation(mode, conductivity, roughness)
        d = float(mode.dielectric_attenuation()) if mode.propagates() else math.nan
        return Losses(fa, c, d, c + d, float(surface_resistance(fa, conductivity)), float(skin_depth(fa, conductivity)),
                      float(roughness_factor(fa, conductivity, roughness)),
                      loaded_conductor_attenuation_error(mode, conductivity, roughness))
    fa = _freq(f)
    c = np.asarray(conductor_attenuation(mode, fa, conductivity, roughness))
    d = np.asarray(dielectric_attenuation(mode, fa, tan_delta))
    return Losses(_out(fa), _out(c), _out(d), _out(c + d), surface_resistance(fa, conductivity),
                  skin_depth(fa, conductivity), roughness_factor(fa, conductivity, roughness))
