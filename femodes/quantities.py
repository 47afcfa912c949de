"""Engineering quantities of a solved mode: propagation, bands, losses, impedance, power handling.

Pure functions of a :class:`~femodes.modes.Mode` or :class:`~femodes.modes.ModeSet`; SI units in
and out (Hz, m, rad/m, Np/m, ohm, W, V/m).  Homogeneous fill eps = eps0 eps_r, mu = mu0 mu_r;
fields vary as exp(j (omega t - beta z)).

Normalisation (see femodes.modes).  A mode is carried by its transverse mode vectors with
int |e_t|^2 dA = 1 and h_t = z x e_t.  A mode of amplitude V (volts) has

    E_t = V e_t,   H_t = (V / Z_w) h_t,   P = |V|^2 / (2 Z_w)   (Z_w real above cutoff),

with the wave impedance Z_w = omega mu / beta (TE), beta / (omega eps) (TM), eta (TEM).
psi is the longitudinal potential with int psi^2 dA = 1:

    TE:  e_t =  z x grad psi / kc,   so  h_t = -grad psi / kc
    TM:  e_t = -grad psi / kc,       so  h_t = -z x grad psi / kc
    TEM: e_t = -grad phi * scale,    phi = 1 V on the inner conductor, scale = 1/sqrt(int |grad phi|^2)

Longitudinal fields (derived in :func:`longitudinal_factor`):

    TE:  H_z = -j (kc / beta) (V / Z_w) psi          (E_z = 0)
    TM:  E_z = -j (kc / beta)  V        psi          (H_z = 0)

Losses use the power-loss (perturbation) method on the lossless mode; impedances use the usual
power-voltage, power-current and voltage-current definitions; power handling reports the peak
field and the power at which it reaches a breakdown field, with the cautions that belong to it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import FemodesError, nonnegative_number, positive_number
from .modes import C0, EPS0, MU0, _transverse

__all__ = [
    "NP_TO_DB", "METALS", "RECOMMENDED_LOW", "RECOMMENDED_HIGH", "DRY_AIR_BREAKDOWN", "CAUTIONS",
    "WaveQuantities", "Band", "WallIntegrals", "Losses", "PowerHandling", "FieldPhasors",
    "wave_quantities", "band", "propagating", "longitudinal_factor", "field_phasors",
    "conductivity_of", "skin_depth", "surface_resistance", "roughness_factor", "wall_integrals",
    "conductor_attenuation", "dielectric_attenuation", "attenuation", "losses", "to_db",
    "voltage_path", "path_voltage", "wall_current", "impedance", "power_handling",
]

ETA0 = math.sqrt(MU0 / EPS0)
#: nepers to decibels: 20 / ln(10) = 8.686 dB per neper
NP_TO_DB = 20.0 / math.log(10.0)

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

#: Rule of thumb for the recommended operating band of a guide (common practice, close to the EIA
#: rectangular-guide bands, e.g. WR-90 8.2 - 12.4 GHz): from 1.25 x the dominant cutoff (away from
#: the steep dispersion and loss near cutoff) to 0.95 x the next cutoff (the next mode stays
#: well below cutoff, so it is not excited and carried).
RECOMMENDED_LOW = 1.25
RECOMMENDED_HIGH = 0.95

#: Breakdown field of dry air at sea level, about 3 MV/m (common practice; a round figure for
#: uniform fields in dry air at one atmosphere, not a guarantee).
DRY_AIR_BREAKDOWN = 3.0e6

#: Cautions that every report of power handling must show with the numbers.
CAUTIONS = (
    "Breakdown is not a fixed number: it depends on gas and pressure (altitude), humidity, pulse "
    "length and repetition rate, surface finish, contamination and dust; in vacuum or at low "
    "pressure, multipaction can set in far below the gas-breakdown figure.",
    "3 MV/m, the default breakdown field, is the usual figure for dry air at sea level (common "
    "practice); any other value given is the user's own, and so is the safety factor: neither is "
    "a standard.",
    "These are estimates from an ideal, lossless, matched model: mismatch (standing waves), joints, "
    "flanges, bends and heating lower the real limit.",
    "High RF power is hazardous to people (burns, RF exposure): defer to local codes, standards "
    "and licensed practice, which take precedence over these figures.",
)


# ----------------------------------------------------------------------------- checks

def _freq(f, name="frequency"):
    try:
        a = np.asarray(f, dtype=float)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number or an array of numbers in Hz, got {f!r}") from None
    if a.size == 0 or not np.all(np.isfinite(a)) or np.any(a <= 0):
        raise FemodesError(f"{name} must be positive and finite (Hz), got {f!r}")
    return a


_positive = positive_number
_nonnegative = nonnegative_number


def _field(mode):
    if getattr(mode, "potential", None) is None:
        raise FemodesError(f"mode {mode.label or mode.family!r} carries no field data; use a mode returned by "
                           "femodes.solve()")
    return mode.potential


def _material(mode):
    return MU0 * mode.mu_r, EPS0 * mode.eps_r


def _k(mode, f):
    return 2 * np.pi * f * math.sqrt(mode.eps_r * mode.mu_r) / C0


def _require_propagating(mode, f, what):
    if mode.family == "TEM":
        return
    bad = _k(mode, f) <= mode.kc
    if np.any(bad):
        fb = float(np.atleast_1d(f)[np.atleast_1d(bad)][0])
        raise FemodesError(f"{what} needs a propagating mode: {mode.label or mode.family} is at or below cutoff at "
                           f"{fb / 1e9:.6g} GHz (cutoff {mode.fc / 1e9:.6g} GHz); give frequencies above cutoff")


def _beta(mode, f):
    """Real beta (rad/m) for f above cutoff (checked by the caller)."""
    k = _k(mode, f)
    return np.sqrt(np.maximum(k * k - mode.kc ** 2, 0.0))


def _z_wave(mode, f):
    """Real wave impedance above cutoff (ohm), array like f."""
    mu, eps = _material(mode)
    if mode.family == "TEM":
        return math.sqrt(mu / eps) + 0 * f
    w = 2 * np.pi * f
    b = _beta(mode, f)
    return w * mu / b if mode.family == "TE" else b / (w * eps)


def _out(a):
    """0-d arrays back to Python floats (scalars in, scalars out)."""
    a = np.asarray(a)
    return float(a) if a.ndim == 0 and np.isrealobj(a) else (complex(a) if a.ndim == 0 else a)


# ----------------------------------------------------------------------------- 1. propagation

@dataclass(frozen=True)
class WaveQuantities:
    """Propagation quantities of one mode at the frequencies ``f`` (scalars or arrays like ``f``).

    beta             : phase constant (rad/m), 0 at and below cutoff
    alpha            : attenuation of the evanescent (below-cutoff) mode, sqrt(kc^2 - k^2) (Np/m),
                       0 above cutoff; wall and dielectric losses are in :func:`losses`
    guide_wavelength : 2 pi / beta (m), inf at and below cutoff
    phase_velocity   : omega / beta (m/s), inf at and below cutoff
    group_velocity   : d omega / d beta = v^2 beta / omega (m/s), v = c0 / sqrt(eps_r mu_r); 0 below
    wave_impedance   : E_t / H_t (ohm), purely imaginary below cutoff (reactive)
    group_delay      : 1 / v_g (s/m), inf at and below cutoff
    propagates       : True above cutoff
    """

    f: object
    beta: object
    alpha: object
    guide_wavelength: object
    phase_velocity: object
    group_velocity: object
    wave_impedance: object
    group_delay: object
    propagates: object


def wave_quantities(mode, f):
    """Propagation quantities of ``mode`` at frequency ``f`` (Hz; scalar or array).

    Homogeneous fill: k = omega sqrt(mu eps), beta = sqrt(k^2 - kc^2); below cutoff the field
    decays as exp(-alpha z) with alpha = sqrt(kc^2 - k^2).  v_p v_g = c0^2 / (eps_r mu_r).
    """
    fa = _freq(f)
    k = _k(mode, fa)
    d = k * k - mode.kc ** 2
    prop = d > 0 if mode.family != "TEM" else np.ones_like(d, dtype=bool)
    beta = np.where(prop, np.sqrt(np.abs(d)), 0.0)
    alpha = np.where(prop, 0.0, np.sqrt(np.abs(d)))
    mu, eps = _material(mode)
    w = 2 * np.pi * fa
    v = C0 / math.sqrt(mode.eps_r * mode.mu_r)
    safe = np.where(beta > 0, beta, 1.0)
    lam_g = np.where(beta > 0, 2 * np.pi / safe, np.inf)
    vp = np.where(beta > 0, w / safe, np.inf)
    vg = v * v * beta / w
    with np.errstate(divide="ignore"):
        tau = np.where(vg > 0, 1.0 / np.where(vg > 0, vg, 1.0), np.inf)
    gamma_b = np.where(prop, beta + 0j, -1j * alpha)  # beta, or -j alpha below cutoff
    if mode.family == "TEM":
        zw = math.sqrt(mu / eps) + 0j * w
    elif mode.family == "TE":
        zw = np.where(np.abs(gamma_b) > 0, w * mu / np.where(np.abs(gamma_b) > 0, gamma_b, 1.0), np.inf)
    else:
        zw = gamma_b / (w * eps)
    if np.all(prop):
        zw = zw.real
    return WaveQuantities(f=_out(fa), beta=_out(beta), alpha=_out(alpha), guide_wavelength=_out(lam_g),
                          phase_velocity=_out(vp), group_velocity=_out(vg), wave_impedance=_out(zw),
                          group_delay=_out(tau), propagates=bool(prop) if prop.ndim == 0 else prop)


# ----------------------------------------------------------------------------- 2. bands

@dataclass(frozen=True)
class Band:
    """Single-mode band of a guide and the recommended operating band (rule of thumb).

    low, high   : the dominant cutoff fc1 and the next cutoff fc2 (Hz); low = 0 with a TEM mode
    ratio       : high / low (inf with a TEM mode)
    recommended_low, recommended_high : 1.25 fc1 and 0.95 fc2 (Hz): a rule of thumb (common
                  practice), not a standard; None when the band is too narrow for it (fc2/fc1 < 1.316)
    dominant, next : labels of the dominant mode and of the mode that sets ``high``
    """

    low: float
    high: float
    ratio: float
    recommended_low: float | None
    recommended_high: float | None
    dominant: str
    next: str

    @property
    def single_mode(self):
        return (self.low, self.high)

    @property
    def recommended(self):
        """(1.25 fc1, 0.95 fc2) or None if that interval is empty (rule of thumb)."""
        if self.recommended_low is None:
            return None
        return (self.recommended_low, self.recommended_high)


def band(modeset):
    """The single-mode band [fc1, fc2] of a solved guide, its ratio, and the recommended operating
    band 1.25 fc1 .. 0.95 fc2.

    The recommended band is a rule of thumb (common practice; it reproduces the usual rectangular
    guide bands such as WR-90, 8.2 - 12.4 GHz): above 1.25 fc1 the dispersion and wall loss of the
    dominant mode are moderate, below 0.95 fc2 the next mode is well below cutoff.  For a guide
    with a TEM mode fc1 = 0 and the lower limit does not apply (it comes out as 0 Hz).
    """
    lo, hi = modeset.single_mode_band()
    first = modeset[0]
    same = set(first.degenerate_with) | {first.index}
    nxt = next(m for m in modeset if m.index not in same)
    r_lo, r_hi = RECOMMENDED_LOW * lo, RECOMMENDED_HIGH * hi
    if r_lo >= r_hi:
        r_lo = r_hi = None
    ratio = hi / lo if lo > 0 else math.inf
    return Band(low=lo, high=hi, ratio=ratio, recommended_low=r_lo, recommended_high=r_hi,
                dominant=first.label, next=nxt.label)


def propagating(modeset, f, strict=True):
    """The modes of ``modeset`` above cutoff at frequency ``f`` (Hz), a tuple in ascending cutoff.

    With ``strict`` (default) a frequency at or above the highest cutoff in the set is refused:
    modes that were not computed could propagate there too (solve for more modes).
    """
    fa = _freq(f)
    if fa.ndim != 0:
        raise FemodesError(f"propagating() takes one frequency (Hz), got an array of shape {fa.shape}")
    f = float(fa)
    if not len(modeset):
        raise FemodesError("the mode set is empty: solve for at least one mode")
    top = max(m.fc for m in modeset)
    if strict and f >= top:
        raise FemodesError(f"{f / 1e9:.6g} GHz is at or above the highest cutoff computed ({top / 1e9:.6g} GHz): "
                           "modes not computed may propagate too; solve for more modes, or pass strict=False")
    return tuple(m for m in modeset if m.family == "TEM" or m.fc < f)


# ----------------------------------------------------------------------------- 3. longitudinal fields

def longitudinal_factor(mode, f):
    """The factor c with H_z = c psi (TE) or E_z = c psi (TM) for a mode of amplitude V = 1 V.

    TE.  E_t = V e_t = (V / kc) z x grad psi = (V / kc) (-d psi/dy, d psi/dx).  Faraday,
    curl E = -j omega mu H, z component:  dE_y/dx - dE_x/dy = (V / kc) laplace_t psi = -V kc psi
    (since laplace_t psi = -kc^2 psi), so -j omega mu H_z = -V kc psi and

        H_z = V kc psi / (j omega mu) = -j (kc / beta) (V / Z_TE) psi,     Z_TE = omega mu / beta.

    Check: the transverse field that follows from this H_z, H_t = -(j beta / kc^2) grad H_z, is
    -(V / Z_TE) grad psi / kc = (V / Z_TE) h_t, as it must be.  |H_z| / |H_t| ~ kc / beta: H_z
    dominates near cutoff, which is why it must be kept in the wall loss.

    TM.  H_t = (V / Z_TM) h_t with h_t = z x e_t = -(1 / kc) z x grad psi.  Ampere,
    curl H = j omega eps E, z component:  (V / Z_TM) (dh_y/dx - dh_x/dy) = (V / Z_TM) kc psi, so

        E_z = (V / Z_TM) kc psi / (j omega eps) = -j (kc / beta) V psi,     Z_TM = beta / (omega eps).

    TEM: no longitudinal field (c = 0).  Returns c (complex; array like f), for f above cutoff.
    """
    fa = _freq(f)
    _require_propagating(mode, fa, "the longitudinal field")
    if mode.family == "TEM":
        return _out(0j * fa)
    b = _beta(mode, fa)
    c = -1j * mode.kc / b
    if mode.family == "TE":
        c = c / _z_wave(mode, fa)
    return _out(c)


@dataclass(frozen=True)
class FieldPhasors:
    """Complex field phasors (V/m, A/m) at points (2, n) for a mode carrying ``power`` watts.

    E = (ex, ey, ez), H = (hx, hy, hz); the voltage amplitude V = sqrt(2 Z_w P) is real, so the
    transverse fields are real and the longitudinal one is in quadrature with them.
    """

    ex: np.ndarray
    ey: np.ndarray
    ez: np.ndarray
    hx: np.ndarray
    hy: np.ndarray
    hz: np.ndarray
    voltage: float
    power: float


def field_phasors(mode, f, points, power=1.0):
    """E and H phasors of ``mode`` at frequency ``f`` (Hz, above cutoff) at ``points`` (2, n) for a
    travelling wave carrying ``power`` watts: E_t = V e_t, H_t = (V / Z_w) h_t, V = sqrt(2 Z_w P),
    and H_z (TE) or E_z (TM) from :func:`longitudinal_factor`.  NaN outside the cross-section."""
    fa = _freq(f)
    if fa.ndim != 0:
        raise FemodesError("field_phasors() takes one frequency (Hz)")
    P = _positive("power", power, "W")
    _require_propagating(mode, fa, "field_phasors()")
    fld = _field(mode)
    zw = float(_z_wave(mode, fa))
    V = math.sqrt(2 * zw * P)
    val, gx, gy = fld.evaluate(points)
    ex, ey, hx, hy = _transverse(mode.family, mode.kc, fld, gx, gy)
    c = complex(longitudinal_factor(mode, float(fa)))
    zero = np.zeros_like(val) + 0j
    ez = c * V * val if mode.family == "TM" else zero
    hz = c * V * val if mode.family == "TE" else zero
    return FieldPhasors(V * ex + 0j, V * ey + 0j, ez, V / zw * hx + 0j, V / zw * hy + 0j, hz, V, P)


# ----------------------------------------------------------------------------- 4. losses

def conductivity_of(conductivity):
    """Conductivity in S/m from a number or a metal name in :data:`METALS`."""
    if isinstance(conductivity, str):
        key = conductivity.strip().lower()
        key = _ALIASES.get(key, key)
        if key not in METALS:
            raise FemodesError(f"unknown metal {conductivity!r}; known: {', '.join(METALS)} "
                               "(or give the conductivity in S/m)")
        return METALS[key]
    return _positive("conductivity", conductivity, "S/m")


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


def _wall_data(mode, n=10):
    """Rule, psi, h_t . t, h_x, h_y at the wall Gauss points of the normalised mode."""
    fld = _field(mode)
    rule = _boundary_rule(fld.basis, n)
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
    ``f`` (Hz) may be an array; every frequency must be above cutoff.
    """
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
    """Attenuation of one mode (Np/m unless stated; arrays like f)."""

    f: object
    conductor: object
    dielectric: object
    total: object
    surface_resistance: object
    skin_depth: object
    roughness_factor: object

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
    """Conductor and dielectric attenuation with the wall data used (see the functions above)."""
    fa = _freq(f)
    c = np.asarray(conductor_attenuation(mode, fa, conductivity, roughness))
    d = np.asarray(dielectric_attenuation(mode, fa, tan_delta))
    return Losses(_out(fa), _out(c), _out(d), _out(c + d), surface_resistance(fa, conductivity),
                  skin_depth(fa, conductivity), roughness_factor(fa, conductivity, roughness))


# ----------------------------------------------------------------------------- 5. impedance

def _section_of(mode, section):
    """The section given, else the one the mode was solved on (None for a mesh file)."""
    return section if section is not None else getattr(mode, "section", None)


def _frame(mode, section):
    """(centre (2,), unit direction 'up' (2,)) of the default voltage path."""
    section = _section_of(mode, section)
    if section is not None:
        x0, y0, th = section.frame
        c, s = math.cos(th), math.sin(th)
        p = section.outer.polyline(64)
        loc = np.array([c * (p[0] - x0) + s * (p[1] - y0), -s * (p[0] - x0) + c * (p[1] - y0)])
        lc = 0.5 * (loc.min(axis=1) + loc.max(axis=1))
        centre = np.array([x0 + c * lc[0] - s * lc[1], y0 + s * lc[0] + c * lc[1]])
        return centre, np.array([-s, c])
    p = _field(mode).basis.mesh.p
    return 0.5 * (p.min(axis=1) + p.max(axis=1)), np.array([0.0, 1.0])


def _inside(mode, pts):
    val, _, _ = _field(mode).evaluate(pts)
    return np.isfinite(val)


def voltage_path(mode, section=None):
    """Default voltage path (2 points, each (x, y)): the line through the section's centre along
    its own y axis (vertical for unrotated shapes), from wall to wall: for a rectangle the full
    height at x = x_c, for a ridge guide across the ridge gap.  The walls are found on the mode's
    own mesh; where the centre lies in a hole (coax) the longest wall-to-wall piece is used.
    Without ``section`` the centre of the mesh's bounding box and the y direction are used."""
    fld = _field(mode)
    c, d = _frame(mode, section)
    nrm = np.array([d[1], -d[0]])
    basis = fld.basis
    mesh = basis.mesh
    facets, tind, A, B = _wall_edges(mesh)
    s = np.linspace(0.0, 1.0, 33)
    X = A[:, :, None] + (B - A)[:, :, None] * s[None, None, :]
    xy = basis.mapping.F(X, tind=tind)  # (2, m, 33) points along each curved boundary edge
    sd = nrm[0] * (xy[0] - c[0]) + nrm[1] * (xy[1] - c[1])
    along = d[0] * (xy[0] - c[0]) + d[1] * (xy[1] - c[1])
    hits = []
    a0, a1 = sd[:, :-1], sd[:, 1:]
    cross = (a0 * a1 < 0) | (a0 == 0)
    for m, j in zip(*np.nonzero(cross)):
        u0, u1 = a0[m, j], a1[m, j]
        r = 0.0 if u0 == 0 else u0 / (u0 - u1)
        hits.append(along[m, j] + r * (along[m, j + 1] - along[m, j]))
    end0 = sd[:, -1] == 0
    hits.extend(along[end0, -1].tolist())
    size = float(np.max(np.ptp(mesh.p, axis=1)))
    hits = np.unique(np.round(np.array(hits) / (1e-10 * size)) * (1e-10 * size))
    if hits.size < 2:
        raise FemodesError("could not find the walls along the default voltage path; give path=[(x0, y0), (x1, y1)]")
    mids = 0.5 * (hits[:-1] + hits[1:])
    mpts = c[:, None] + d[:, None] * mids[None, :]
    ok = _inside(mode, mpts) & (np.diff(hits) > 1e-9 * size)
    if not np.any(ok):
        raise FemodesError("the default voltage path does not cross the guide; give path=[(x0, y0), (x1, y1)]")
    idx = np.flatnonzero(ok)
    containing = [i for i in idx if hits[i] <= 0.0 <= hits[i + 1]]
    i = containing[0] if containing else idx[np.argmax(np.diff(hits)[idx])]
    p0, p1 = c + d * hits[i], c + d * hits[i + 1]
    return [(float(p0[0]), float(p0[1])), (float(p1[0]), float(p1[1]))]


def _check_path(path):
    try:
        p = np.asarray(path, dtype=float)
    except (TypeError, ValueError):
        raise FemodesError(f"path must be a list of (x, y) points in metres, got {path!r}") from None
    if p.ndim != 2 or p.shape[1] != 2 or p.shape[0] < 2 or not np.all(np.isfinite(p)):
        raise FemodesError(f"path must be a list of at least two (x, y) points in metres, got {path!r}")
    if np.any(np.linalg.norm(np.diff(p, axis=0), axis=1) == 0):
        raise FemodesError("path has two consecutive equal points: remove the repeat")
    return p


def _edge_crossings(mesh, a, b):
    """Parameters u in (0, 1) where the segment a -> b crosses a mesh edge (edges as straight
    chords between their vertices: exact for interior edges, which are straight)."""
    p = mesh.p
    e = mesh.facets
    p0, p1 = p[:, e[0]], p[:, e[1]]
    d = b - a
    q = p1 - p0
    den = d[0] * q[1] - d[1] * q[0]
    w = p0 - a[:, None]
    ok = np.abs(den) > 1e-14 * (np.hypot(*d) * np.hypot(*q) + 1e-300)
    den = np.where(ok, den, 1.0)
    u = (w[0] * q[1] - w[1] * q[0]) / den
    v = (w[0] * d[1] - w[1] * d[0]) / den
    hit = ok & (u > 1e-12) & (u < 1 - 1e-12) & (v >= -1e-12) & (v <= 1 + 1e-12)
    return np.unique(u[hit])


def path_voltage(mode, path, points=None):
    """Line integral int e_t . dl of the normalised mode vector along the polyline ``path``
    (list of (x, y), metres).  Each straight piece is cut where it crosses an element edge and
    integrated element by element with a Gauss rule (exact for the polynomial field of a
    straight element).  The physical voltage is V times this."""
    fld = _field(mode)
    p = _check_path(path)
    basis = fld.basis
    if points is None:
        points = basis.elem.maxdeg + 4
    s, w = _gauss01(int(points))
    total = 0.0
    for k in range(len(p) - 1):
        a, b = p[k], p[k + 1]
        cuts = np.concatenate([[0.0], _edge_crossings(basis.mesh, a, b), [1.0]])
        lo, hi = cuts[:-1], cuts[1:]
        u = (lo[:, None] + (hi - lo)[:, None] * s[None, :]).ravel()
        wt = ((hi - lo)[:, None] * w[None, :]).ravel()
        seg = b - a
        pts = a[:, None] + seg[:, None] * u[None, :]
        _, gx, gy = fld.evaluate(pts)
        ex, ey, _, _ = _transverse(mode.family, mode.kc, fld, gx, gy)
        bad = ~np.isfinite(ex)
        if np.any(bad):
            q = pts[:, np.flatnonzero(bad)[0]]
            raise FemodesError(f"the voltage path leaves the cross-section near ({q[0] * 1e3:.6g}, {q[1] * 1e3:.6g}) mm: "
                               "give points inside the guide, from wall to wall")
        total += float(np.sum((ex * seg[0] + ey * seg[1]) * wt))
    return total


def wall_current(mode, wall=None, section=None):
    """Longitudinal wall current int J_z dl of the normalised mode (amplitude V = 1 V, divided by
    1 / Z_w: the physical current is (V / Z_w) times this), J_s = n x H_t with n the wall normal
    pointing into the guide, so J_z = n_x h_y - n_y h_x.

    ``wall`` selects the wall points: a function (x, y) -> bool array.  Default: the half of the
    walls on the positive side of the default voltage path's centre (for a rectangle the top wall
    and the upper halves of the side walls; for TE10 only the top wall carries J_z).  Facets cut
    by the selection are split at their Gauss points (a small quadrature error there).
    """
    rule, _, _, hx, hy = _wall_data(mode)
    jz = rule["nin"][0] * hy - rule["nin"][1] * hx
    x, y = rule["xy"]
    if wall is None:
        c, d = _frame(mode, section)
        sel = d[0] * (x - c[0]) + d[1] * (y - c[1]) > 0
    else:
        try:
            sel = np.asarray(wall(x, y), dtype=bool)
        except Exception as exc:  # the user's function failed
            raise FemodesError(f"the wall selection function failed on arrays of wall points: {exc}") from None
        if sel.shape != x.shape:
            raise FemodesError(f"the wall selection function must return a bool array shaped like x "
                               f"{x.shape}, got shape {sel.shape}")
    if not np.any(sel):
        raise FemodesError("the wall selection contains no wall points")
    return float(np.sum(jz * rule["dl"] * sel))


def impedance(mode, f, kind="PV", path=None, section=None, wall=None):
    """Characteristic impedance (ohm) of ``mode`` at ``f`` (Hz; array allowed, above cutoff).

    kind "PV": Z = |V|^2 / (2 P), V the line integral of E along ``path`` (default
               :func:`voltage_path`: through the centre, wall to wall; across the gap of a ridge guide)
    kind "PI": Z = 2 P / |I|^2, I the longitudinal current on one wall (:func:`wall_current`;
               default the top half of the walls, i.e. the top wall of a rectangle)
    kind "VI": Z = |V| / |I|
    With the normalisation of this module (P = 1 / (2 Z_w) for V = 1) these are
    Z_PV = v^2 Z_w, Z_PI = Z_w / i^2, Z_VI = |v| Z_w / |i|, v = int e_t . dl, i = int J_z dl of
    the normalised mode.  For TE10 of an a x b rectangle they give 2 (b/a) Z_TE, (pi^2 b / 8a) Z_TE
    and (pi b / 2a) Z_TE.

    TEM modes: the line impedance from the electrostatic problem, Z = 1 / (v C) with
    C = eps int |grad phi|^2 dA for phi = 1 V on the inner conductor (and 0 V on the others), so
    Z = eta / int |grad phi|^2 dA, for every ``kind`` unless a ``path`` is given with kind "PV".
    With several inner conductors this is the self term of each conductor (the others grounded).
    """
    fa = _freq(f)
    kd = str(kind).upper()
    if kd not in ("PV", "PI", "VI"):
        raise FemodesError(f"impedance kind must be 'PV', 'PI' or 'VI', got {kind!r}")
    _require_propagating(mode, fa, "the impedance")
    fld = _field(mode)
    zw = _z_wave(mode, fa)
    if mode.family == "TEM" and not (path is not None and kd == "PV"):
        return _out(zw * fld.scale ** 2)
    if kd in ("PV", "VI"):
        v = path_voltage(mode, voltage_path(mode, section) if path is None else path)
    if kd in ("PI", "VI"):
        i = wall_current(mode, wall, section)
        if i == 0:
            raise FemodesError("the wall current of this mode on the chosen wall is zero: choose another wall")
    if kd == "PV":
        return _out(v * v * zw)
    if kd == "PI":
        return _out(zw / (i * i))
    return _out(abs(v) * zw / abs(i))


# ----------------------------------------------------------------------------- 6. power handling

@dataclass(frozen=True)
class PowerHandling:
    """Peak field and breakdown power of one mode at one frequency (travelling, matched wave).

    peak_field_per_sqrt_watt : largest instantaneous |E| over the cross-section for 1 W carried
                               (V/m per sqrt(W)); scales as sqrt(P)
    peak_location            : (x, y) of that peak (m)
    breakdown_field          : the field used (V/m)
    breakdown_power          : power at which the peak reaches breakdown_field (W)
    safety_factor            : divisor applied to the power (a choice of the user)
    rated_power              : breakdown_power / safety_factor (W)
    corners                  : sharp re-entrant corners found ((x, y), ...); the peak excludes
                               discs of radius ``corner_exclusion`` (m) around them
    warnings                 : what limits the figures (e.g. singular corners)
    cautions                 : :data:`CAUTIONS`; any code printing these results must show them
    """

    frequency: float
    peak_field_per_sqrt_watt: float
    peak_location: tuple
    breakdown_field: float
    breakdown_power: float
    safety_factor: float
    rated_power: float
    corners: tuple
    corner_exclusion: float
    warnings: tuple
    cautions: tuple = CAUTIONS

    def lines(self):
        """Text lines of a report, cautions included."""
        x, y = self.peak_location
        out = [f"peak |E| at 1 W: {self.peak_field_per_sqrt_watt:.6g} V/m at ({x * 1e3:.4g}, {y * 1e3:.4g}) mm",
               f"power at {self.breakdown_field / 1e6:.4g} MV/m peak field: {self.breakdown_power:.4g} W; "
               f"divided by the safety factor {self.safety_factor:g}: {self.rated_power:.4g} W"]
        out += [f"warning: {w}" for w in self.warnings]
        out += [f"caution: {c}" for c in self.cautions]
        return out

    def __str__(self):
        return "\n".join(self.lines())


def _mesh_reentrant_corners(basis, min_excess=math.radians(20)):
    """Sharp re-entrant corners of the mesh boundary: vertices where the boundary tangent (from
    the isoparametric map, so curved walls are smooth) turns into the guide by more than
    ``min_excess`` (interior angle above pi + min_excess)."""
    mesh = basis.mesh
    mapping = basis.mapping
    facets, tind, A, B = _wall_edges(mesh)
    fv = mesh.facets[:, facets]
    X = A[:, :, None] + (B - A)[:, :, None] * np.array([0.0, 1.0])[None, None, :]
    DF = mapping.DF(X, tind=tind)
    d = B - A
    tx = DF[0, 0] * d[0][:, None] + DF[0, 1] * d[1][:, None]
    ty = DF[1, 0] * d[0][:, None] + DF[1, 1] * d[1][:, None]
    # orient each facet so that the guide lies on its left (travel fv0 -> fv1 if so)
    cen = mapping.F(np.full((2, len(tind), 1), 1.0 / 3.0), tind=tind)[:, :, 0]
    p0, p1 = mesh.p[:, fv[0]], mesh.p[:, fv[1]]
    e = p1 - p0
    left = e[0] * (cen[1] - p0[1]) - e[1] * (cen[0] - p0[0]) > 0
    start = np.where(left, fv[0], fv[1])
    t_start = np.where(left, 1.0, -1.0) * np.where(left, np.array([tx[:, 0], ty[:, 0]]), np.array([tx[:, 1], ty[:, 1]]))
    t_end = np.where(left, 1.0, -1.0) * np.where(left, np.array([tx[:, 1], ty[:, 1]]), np.array([tx[:, 0], ty[:, 0]]))
    end = np.where(left, fv[1], fv[0])
    into = {int(v): k for k, v in enumerate(end)}
    out = []
    for k, v in enumerate(start):
        j = into.get(int(v))
        if j is None:
            continue
        a, b = t_end[:, j], t_start[:, k]
        turn = math.atan2(a[0] * b[1] - a[1] * b[0], float(a @ b))
        if -turn > min_excess:  # a right turn (clockwise) with the guide on the left: re-entrant
            out.append((float(mesh.p[0, v]), float(mesh.p[1, v])))
    return out


def _peak_values(mode, f, psi, gx, gy):
    """Instantaneous peak |E| per unit V: max over time of |Re(E e^{j omega t})|.  E_t is real and
    E_z (TM) in quadrature, so the peak is max(|E_t|, |E_z|)."""
    s = _field(mode).scale
    et = s * np.hypot(gx, gy)
    if mode.family == "TM":
        ez = mode.kc / float(_beta(mode, f)) * np.abs(psi)
        return np.maximum(et, ez)
    return et


def power_handling(mode, f, breakdown_field=DRY_AIR_BREAKDOWN, safety_factor=2.0, section=None,
                   corner_exclusion=None, subdivisions=6):
    """Peak field per sqrt(watt), where it sits, and the power at which it reaches
    ``breakdown_field`` (default 3 MV/m, dry air at sea level: common practice), divided by
    ``safety_factor`` (default 2, on power: a choice, not a standard).

    For a matched travelling wave of power P the mode amplitude is V = sqrt(2 Z_w P), and the
    instantaneous peak field is V max(|e_t|, |E_z / V|) (E_z of TM modes is in quadrature with
    E_t).  The peak is searched on the plotting triangulation (``mode.potential.sample``), then
    refined inside the best elements.  Breakdown power = (breakdown_field / peak per sqrt W)^2.

    At a sharp re-entrant corner the field is singular (like r^(pi/angle - 1)), so a peak there
    grows without bound as the mesh is refined.  Such corners are found (``section.reentrant_corners()``
    if ``section`` is given, else from the mesh boundary) and the peak excludes a disc of radius
    ``corner_exclusion`` (default 1 % of the section's size) around each, with a warning: model the
    real (rounded) corner geometry for a real figure.

    Returns a :class:`PowerHandling`; its ``cautions`` must be shown with the numbers:
    breakdown depends on pressure, humidity, pulse length, surface finish and contamination, and
    multipaction in vacuum; high RF power is hazardous to people; defer to local codes,
    standards and licensed practice.
    """
    fa = _freq(f)
    if fa.ndim != 0:
        raise FemodesError("power_handling() takes one frequency (Hz)")
    f = float(fa)
    Ebd = _positive("breakdown_field", breakdown_field, "V/m")
    sf = _positive("safety_factor (divides the power)", safety_factor, "")
    _require_propagating(mode, fa, "power handling")
    fld = _field(mode)
    basis = fld.basis
    mesh = basis.mesh
    size = float(np.max(np.ptp(mesh.p, axis=1)))
    section = _section_of(mode, section)
    if section is not None:
        corners = [tuple(float(v) for v in c.point) for c in section.reentrant_corners()]
        size = section.size
    else:
        corners = _mesh_reentrant_corners(basis)
    r_ex = 0.01 * size if corner_exclusion is None else _nonnegative("corner_exclusion", corner_exclusion, "m")
    cpts = np.array(corners, dtype=float).reshape(-1, 2)

    def allowed(x, y):
        if not len(cpts) or r_ex == 0:
            return np.ones(np.shape(x), dtype=bool)
        d2 = (np.asarray(x)[..., None] - cpts[:, 0]) ** 2 + (np.asarray(y)[..., None] - cpts[:, 1]) ** 2
        return np.all(d2 > r_ex * r_ex, axis=-1)

    n = max(1, int(subdivisions))
    x, y, _, psi, gx, gy = fld.sample(n)
    vals = np.where(allowed(x, y), _peak_values(mode, f, psi, gx, gy), -np.inf)
    ne = mesh.t.shape[1]
    npt = vals.size // ne
    per_elem = vals.reshape(ne, npt)
    best_el = np.argsort(per_elem.max(axis=1))[::-1][:4]
    ref_pts = np.array([[i / n, j / n] for j in range(n + 1) for i in range(n + 1 - j)]).T
    best = (-np.inf, None)
    g = np.linspace(-1.0, 1.0, 9)
    for e in best_el:
        if not np.isfinite(per_elem[e].max()):
            continue
        X0 = ref_pts[:, int(np.argmax(per_elem[e]))]
        v0 = per_elem[e].max()
        xy0 = None
        w = 1.0 / n
        for _ in range(7):
            U, Vv = np.meshgrid(X0[0] + w * g, X0[1] + w * g)
            R = np.array([U.ravel(), Vv.ravel()])
            R = R[:, (R[0] >= 0) & (R[1] >= 0) & (R[0] + R[1] <= 1)]
            R = np.hstack([R, X0[:, None]])
            ps, qx, qy = _eval_reference(fld, np.array([e]), R[:, None, :])
            xy = basis.mapping.F(R[:, None, :], tind=np.array([e]))[:, 0, :]
            pv = np.where(allowed(xy[0], xy[1]), _peak_values(mode, f, ps[0], qx[0], qy[0]), -np.inf)
            j = int(np.argmax(pv))
            if pv[j] >= v0:
                v0, X0, xy0 = pv[j], R[:, j], xy[:, j]
            w /= 4.0
        if xy0 is None:
            xy0 = basis.mapping.F(X0[:, None, None], tind=np.array([e]))[:, 0, 0]
        if v0 > best[0]:
            best = (v0, (float(xy0[0]), float(xy0[1])))
    if best[1] is None:
        raise FemodesError(f"no field sample lies outside the corner exclusion discs (radius {r_ex:.3g} m): "
                           "use a smaller corner_exclusion")
    zw = float(_z_wave(mode, fa))
    peak = float(best[0]) * math.sqrt(2 * zw)
    p_bd = (Ebd / peak) ** 2
    warns = []
    if corners:
        where = ", ".join(f"({cx * 1e3:.4g}, {cy * 1e3:.4g}) mm" for cx, cy in corners[:6])
        more = f" and {len(corners) - 6} more" if len(corners) > 6 else ""
        warns.append(f"the field is singular at the sharp re-entrant corner(s) at {where}{more}: the peak reported "
                     f"excludes a disc of radius {r_ex * 1e3:.4g} mm around each and depends on that radius; model "
                     "the real rounded-corner geometry (e.g. a corner or fillet radius) for a real figure")
    return PowerHandling(frequency=f, peak_field_per_sqrt_watt=peak, peak_location=best[1],
                         breakdown_field=Ebd, breakdown_power=p_bd, safety_factor=sf, rated_power=p_bd / sf,
                         corners=tuple(corners), corner_exclusion=r_ex, warnings=tuple(warns))
