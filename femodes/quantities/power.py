"""Power handling: the peak field of a mode carrying 1 W, the power at which it reaches a
breakdown field, and the cautions that must be shown with those numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.mesh import singular_corners, triangle_regions
from femodes.modes.loaded import LoadedMode
from femodes.quantities.common import _beta, _field, _freq, _nonnegative, _positive, _require_propagating, _z_wave
from femodes.quantities.impedance import _require_loaded_propagating, _section_of, lower_order_partner
from femodes.quantities.losses import _eval_reference, _wall_edges
from femodes.solvers.fields import _locate

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
    peak_error, breakdown_power_error, rated_power_error : their error bars (V/m per sqrt(W),
                               W, W) where estimated (:mod:`femodes.quantities.convergence`), else None
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
    peak_error: float | None = None
    breakdown_power_error: float | None = None
    rated_power_error: float | None = None

    def lines(self):
        """Text lines of a report, cautions included."""
        x, y = self.peak_location
        pm = "" if self.peak_error is None else f" ± {self.peak_error:.2g}"
        out = [f"peak |E| at 1 W: {self.peak_field_per_sqrt_watt:.6g}{pm} V/m at ({x * 1e3:.4g}, {y * 1e3:.4g}) mm",
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

    A loaded-guide mode (:class:`~femodes.modes.LoadedMode`) at its own frequency ``f`` goes to
    :func:`loaded_power_handling` and returns a :class:`LoadedPowerHandling` (the peak in the gas
    and in each dielectric region, material corners excluded like re-entrant wall corners).
    """
    if isinstance(mode, LoadedMode):
        return loaded_power_handling(mode, f, breakdown_field, safety_factor, section, corner_exclusion,
                                     subdivisions)
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


# ----------------------------------------------------------------------------- loaded guides

#: A material counts as gas (where the breakdown field applies) when its eps_r is at most this and
#: its mu_r is 1: dry air at one atmosphere has eps_r ~ 1.0006, and the usual insulating gases are
#: below 1.01 at moderate pressure (from memory); solids and foams lie above.
GAS_MAX_EPS_R = 1.01


@dataclass(frozen=True)
class RegionPeak:
    """Peak field of a loaded-guide mode carrying 1 W in one region (a connected set of triangles
    of one material).

    name, eps_r, mu_r        : the region ('fill', the section's region name, or its material)
    gas                      : True where the breakdown field of the gas applies (eps_r <= GAS_MAX_EPS_R)
    peak_field_per_sqrt_watt : largest instantaneous |E| in the region (corner discs excluded),
                               V/m per sqrt(W); inside a dielectric: for its dielectric-strength check
    peak_error               : its estimated error (V/m per sqrt(W))
    peak_location            : (x, y) of that peak (m)
    """

    name: str
    eps_r: float
    mu_r: float
    gas: bool
    peak_field_per_sqrt_watt: float
    peak_error: float
    peak_location: tuple

    def power_at(self, field):
        """Power (W) at which this region's peak reaches ``field`` (V/m), e.g. a dielectric strength."""
        return (_positive("field", field, "V/m") / self.peak_field_per_sqrt_watt) ** 2

    def power_at_error(self, field):
        """Estimated error (W) of :meth:`power_at` (from the peak's error, on the low side)."""
        e = _positive("field", field, "V/m")
        lo = self.peak_field_per_sqrt_watt + self.peak_error
        return (e / self.peak_field_per_sqrt_watt) ** 2 - (e / lo) ** 2


@dataclass(frozen=True)
class CornerField:
    """The field near a singular corner, reported apart from the peaks (which exclude a disc around it).

    location           : (x, y) of the corner (m)
    kind               : 're-entrant wall corner' or 'material corner' (a corner of a dielectric
                         region meeting the gas, another region or a wall)
    field_per_sqrt_watt: largest |E| of the computed field inside the exclusion disc, V/m per
                         sqrt(W).  The true field is singular there (infinite at a sharp corner):
                         this number grows as the mesh is refined and is only an indication; a
                         real figure needs the real, rounded corner geometry
    region             : the region where that value sits
    """

    location: tuple
    kind: str
    field_per_sqrt_watt: float
    region: str


@dataclass(frozen=True)
class LoadedPowerHandling:
    """Power handling of one loaded-guide mode at the frequency it was solved at (matched
    travelling wave): see :func:`loaded_power_handling`.

    peak_field_per_sqrt_watt : largest instantaneous |E| in the gas for 1 W (V/m per sqrt(W)); NaN
                               if the guide has no gas region
    peak_error               : its estimated error;  peak_location : (x, y) (m) or None
    breakdown_field          : the gas breakdown field used (V/m)
    breakdown_power          : power at which the gas peak reaches it (W), breakdown_power_error
    safety_factor, rated_power : the user's divisor and breakdown_power / safety_factor (W)
    regions                  : (RegionPeak, ...): every region, gas and dielectric, with its own peak
    corners                  : (CornerField, ...): singular corners, excluded from every peak by
                               discs of radius ``corner_exclusion`` (m), their field reported apart
    order                    : element order of the mode (errors: from order - 1 on the same mesh,
                               or from re-solves: femodes.quantities.loaded_derived_quantities)
    rated_power_error        : the rated power's error where the re-solves set it, else NaN
    warnings                 : what limits the figures;  cautions : :data:`CAUTIONS`, to be shown
    """

    frequency: float
    peak_field_per_sqrt_watt: float
    peak_error: float
    peak_location: tuple | None
    breakdown_field: float
    breakdown_power: float
    breakdown_power_error: float
    safety_factor: float
    rated_power: float
    regions: tuple
    corners: tuple
    corner_exclusion: float
    order: int
    warnings: tuple
    cautions: tuple = CAUTIONS
    rated_power_error: float = math.nan  # set where the peak's error bar comes from re-solves

    def lines(self):
        """Text lines of a report, cautions included."""
        out = []
        if self.peak_location is not None:
            x, y = self.peak_location
            out.append(f"peak |E| in the gas at 1 W: {self.peak_field_per_sqrt_watt:.6g} V/m (+/- {self.peak_error:.2g}) "
                       f"at ({x * 1e3:.4g}, {y * 1e3:.4g}) mm")
            out.append(f"power at {self.breakdown_field / 1e6:.4g} MV/m peak field in the gas: {self.breakdown_power:.4g} W "
                       f"(+/- {self.breakdown_power_error:.2g}); divided by the safety factor {self.safety_factor:g}: "
                       f"{self.rated_power:.4g} W")
        for r in self.regions:
            if not r.gas:
                x, y = r.peak_location
                mat = "" if r.name.startswith("eps_r") else f" (eps_r {r.eps_r:g})"
                out.append(f"peak |E| in {r.name}{mat} at 1 W: {r.peak_field_per_sqrt_watt:.6g} V/m "
                           f"(+/- {r.peak_error:.2g}) at ({x * 1e3:.4g}, {y * 1e3:.4g}) mm: compare with its dielectric strength")
        for c in self.corners:
            x, y = c.location
            out.append(f"{c.kind} at ({x * 1e3:.4g}, {y * 1e3:.4g}) mm: |E| up to {c.field_per_sqrt_watt:.4g} V/m at 1 W "
                       f"within {self.corner_exclusion * 1e3:.4g} mm (singular: mesh-dependent)")
        out += [f"warning: {w}" for w in self.warnings]
        out += [f"caution: {c}" for c in self.cautions]
        return out

    def __str__(self):
        return "\n".join(self.lines())


def _material_regions(prob, section=None):
    """(label (nt,), [(name, eps_r, mu_r, gas)]) of the connected regions of one material of a
    VectorProblem's mesh (triangles joined across edges with equal eps_r and mu_r).  Named after
    the section's regions when ``section`` is given ('fill' for the background), else by material."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    mesh = prob.mesh
    eps, mu = np.asarray(prob.eps_r), np.asarray(prob.mu_r)
    nt = mesh.t.shape[1]
    a, b = mesh.f2t[0], mesh.f2t[1]
    same = (b >= 0) & (eps[a] == eps[np.maximum(b, 0)]) & (mu[a] == mu[np.maximum(b, 0)])
    g = coo_matrix((np.ones(int(same.sum())), (a[same], b[same])), shape=(nt, nt))
    n, lab = connected_components(g, directed=False)
    first = np.array([np.flatnonzero(lab == r)[0] for r in range(n)])
    sec = triangle_regions(section, mesh.p, mesh.t) if section is not None else None
    info = []
    for r in range(n):
        e, m = float(eps[first[r]]), float(mu[first[r]])
        if sec is not None:
            k = int(sec[first[r]])
            name = "fill" if k == 0 else (section.materials[k - 1].name or f"region {k}")
        else:
            name = f"eps_r = {e:g}" + (f", mu_r = {m:g}" if m != 1 else "")
        info.append([name, e, m, bool(e <= GAS_MAX_EPS_R and m == 1.0)])
    names = [i[0] for i in info]
    for r, i in enumerate(info):
        if names.count(i[0]) > 1:
            i[0] += f" (part {names[:r + 1].count(i[0])})"
    return lab, [tuple(i) for i in info]


def _mesh_material_corners(prob, straight=math.radians(20), right=math.radians(1)):
    """Corners of the material interfaces of a VectorProblem's mesh, where the field is singular:
    vertices where an interface (edges between triangles of different eps_r or mu_r) bends by more
    than ``straight``, where three or more interface edges meet, or where an interface meets the
    wall other than at a right angle (within ``right``) on a straight stretch of wall."""
    mesh = prob.mesh
    eps, mu = np.asarray(prob.eps_r), np.asarray(prob.mu_r)
    a, b = mesh.f2t[0], mesh.f2t[1]
    bb = np.where(b >= 0, b, a)
    iface = (b >= 0) & ((eps[a] != eps[bb]) | (mu[a] != mu[bb]))
    wall = b < 0
    fv, p = mesh.facets, mesh.p
    out = []

    def dirs(mask, v):
        ends = fv[:, mask & ((fv[0] == v) | (fv[1] == v))]
        other = np.where(ends[0] == v, ends[1], ends[0])
        d = p[:, other] - p[:, [v]]
        return d / np.hypot(d[0], d[1])

    cos_straight = math.cos(straight)
    for v in np.unique(fv[:, iface]):
        di, dw = dirs(iface, v), dirs(wall, v)
        if dw.shape[1] == 0:
            if di.shape[1] == 2 and float(di[:, 0] @ di[:, 1]) < -cos_straight:
                continue
        elif di.shape[1] == 1 and dw.shape[1] == 2:
            if float(dw[:, 0] @ dw[:, 1]) < -math.cos(right) and abs(float(di[:, 0] @ dw[:, 0])) < math.sin(right):
                continue
        out.append((float(p[0, v]), float(p[1, v])))
    return out


def _instantaneous_peak(F):
    """max over time of |Re(E e^{j omega t})| for complex E = a + j b (components F[0..2]):
    sqrt((|a|^2 + |b|^2) / 2 + sqrt(((|a|^2 - |b|^2) / 2)^2 + (a . b)^2))."""
    ex, ey, ez = F[0], F[1], F[2]
    a2 = ex.real ** 2 + ey.real ** 2 + ez.real ** 2
    b2 = ex.imag ** 2 + ey.imag ** 2 + ez.imag ** 2
    ab = ex.real * ex.imag + ey.real * ey.imag + ez.real * ez.imag
    return np.sqrt(0.5 * (a2 + b2) + np.sqrt((0.5 * (a2 - b2)) ** 2 + ab * ab))


def _vector_peaks(vm, lab, n_regions, corners, r_ex, subdivisions):
    """Per region (peak per sqrt(W), (x, y)) outside the corner discs, and per corner the largest
    value inside its disc with the region it sits in, of a VectorMode; each region's peak is
    searched on ``subdivisions``^2 sub-triangles of every element, then refined inside its best
    elements by a shrinking pattern search in reference coordinates (each element's own values:
    the normal E jumps at a dielectric face, and the gas side is kept as gas)."""
    prob = vm.problem
    basis = prob.basis_t
    scale = 1.0 / math.sqrt(vm.power())
    n = max(1, int(subdivisions))
    x, y, _, F = prob.sample(vm, n)
    val = _instantaneous_peak(F) * scale
    ne = prob.mesh.t.shape[1]
    q = val.size // ne
    cpts = np.array([c for c, _ in corners], dtype=float).reshape(-1, 2)

    def allowed(px, py):
        if not len(cpts) or r_ex == 0:
            return np.ones(np.shape(px), dtype=bool)
        d2 = (np.asarray(px)[..., None] - cpts[:, 0]) ** 2 + (np.asarray(py)[..., None] - cpts[:, 1]) ** 2
        return np.all(d2 > r_ex * r_ex, axis=-1)

    per = np.where(allowed(x, y), val, -np.inf).reshape(ne, q)
    ref_pts = np.array([[i / n, j / n] for j in range(n + 1) for i in range(n + 1 - j)]).T
    g = np.linspace(-1.0, 1.0, 9)
    peaks = []
    for r in range(n_regions):
        els = np.flatnonzero(lab == r)
        emax = per[els].max(axis=1)
        best = (-np.inf, None)
        # the best (up to) four elements, searched side by side: one field evaluation per step
        state = []  # [element, X0, v0, xy0]
        for e in els[np.argsort(emax)[::-1][:4]]:
            if not np.isfinite(per[e].max()):
                continue
            X0 = ref_pts[:, int(np.argmax(per[e]))]
            state.append([e, X0, per[e].max(), basis.mapping.F(X0[:, None, None], tind=np.array([e]))[:, 0, 0]])
        w = 1.0 / n
        for _ in range(7 if state else 0):
            Rs, XYs = [], []
            for e, X0, _, _ in state:
                U, V = np.meshgrid(X0[0] + w * g, X0[1] + w * g)
                R = np.array([U.ravel(), V.ravel()])
                R = R[:, (R[0] >= 0) & (R[1] >= 0) & (R[0] + R[1] <= 1)]
                Rs.append(R)
                XYs.append(basis.mapping.F(R[:, None, :], tind=np.array([e]))[:, 0, :])
            cells = np.concatenate([np.full(R.shape[1], st[0]) for R, st in zip(Rs, state)])
            Fr = prob.fields_at_reference(vm, cells, np.hstack(Rs))
            xy = np.hstack(XYs)
            pv_all = np.where(allowed(xy[0], xy[1]), _instantaneous_peak(Fr) * scale, -np.inf)
            start = 0
            for st, R, XY in zip(state, Rs, XYs):
                pv = pv_all[start:start + R.shape[1]]
                start += R.shape[1]
                j = int(np.argmax(pv))
                if pv[j] >= st[2]:
                    st[1], st[2], st[3] = R[:, j], pv[j], XY[:, j]
            w /= 4.0
        for _, _, v0, xy0 in state:
            if v0 > best[0]:
                best = (float(v0), (float(xy0[0]), float(xy0[1])))
        peaks.append(best)
    at_corners = []
    for cx, cy in cpts:
        inside = (x - cx) ** 2 + (y - cy) ** 2 <= r_ex * r_ex
        if not np.any(inside):
            at_corners.append((math.nan, -1))
            continue
        k = int(np.flatnonzero(inside)[np.argmax(val[inside])])
        at_corners.append((float(val[k]), int(lab[k // q])))
    return peaks, at_corners


def loaded_power_handling(mode, f=None, breakdown_field=DRY_AIR_BREAKDOWN, safety_factor=2.0, section=None,
                          corner_exclusion=None, subdivisions=6):
    """Power handling of a loaded-guide mode (:class:`~femodes.modes.LoadedMode`) at the frequency
    it was solved at (``f``, if given, must be that frequency): a :class:`LoadedPowerHandling`.

    The mode's full-vector field is scaled to carry P = 1 W (P the Poynting flux,
    VectorMode.power()); the instantaneous peak of the field, max over time of |Re(E e^{j omega t})|
    (E_t real, E_z in quadrature for a propagating mode), is searched in every region (connected
    triangles of one material) as for homogeneous guides (:func:`power_handling`).  Only the gas
    breaks down at ``breakdown_field`` (default 3 MV/m, dry air at sea level: common practice):
    gas regions are those with eps_r <= GAS_MAX_EPS_R and mu_r = 1; the breakdown power is
    (breakdown_field / peak in the gas)^2, divided by ``safety_factor`` (a choice).  Each
    dielectric region reports its own peak for the designer's dielectric-strength check
    (:meth:`RegionPeak.power_at`); the gas right at a dielectric face sees the normal field of the
    dielectric times its eps_r, which the per-element search keeps.

    Singular corners: re-entrant wall corners and the corners of material regions (a dielectric
    corner meeting gas, another region or a wall; a right-angled region corner on a straight wall
    is regular) make the field infinite at the corner.  They come from ``section``
    (``femodes.geometry.mesh.singular_corners``) if given, else from the mesh (wall corners turning
    into the guide, interface vertices that bend, branch or meet the wall obliquely).  Every peak
    excludes discs of radius ``corner_exclusion`` (default 1 % of the section's size) around them,
    and the largest computed |E| inside each disc is reported apart (:class:`CornerField`).

    Errors: every peak is found again for the same mode with elements one order lower on the same
    mesh (:func:`~femodes.quantities.impedance.lower_order_partner`); the error is the larger of the
    difference of the two peaks and the difference of the two fields at the peak (the lower order's
    pointwise error, an upper bound in practice for the order used).  NaN where no lower order exists.
    The ``cautions`` must be shown with the numbers (:data:`CAUTIONS`).
    """
    if f is not None:
        _require_loaded_propagating(mode, f, "power handling")
    elif not mode.propagating:
        raise FemodesError(f"power handling needs a propagating mode: {mode.label} is evanescent at "
                           f"{mode.frequency / 1e9:.9g} GHz")
    Ebd = _positive("breakdown_field", breakdown_field, "V/m")
    sf = _positive("safety_factor (divides the power)", safety_factor, "")
    vm = mode.vector
    prob = vm.problem
    if section is not None:
        wall = [tuple(float(v) for v in c.point) for c in section.reentrant_corners()]
        mat = [tuple(float(v) for v in c.point) for c in singular_corners(section)[len(wall):]]
        size = section.size
    else:
        wall = _mesh_reentrant_corners(prob.basis_t)
        mat = _mesh_material_corners(prob)
        size = float(np.max(np.ptp(prob.mesh.p, axis=1)))
    corners = [(c, "re-entrant wall corner") for c in wall]
    for c in mat:  # a corner shared by two regions, or on a wall corner, once
        if all(math.dist(c, o) > 1e-9 * size for o, _ in corners):
            corners.append((c, "material corner"))
    r_ex = 0.01 * size if corner_exclusion is None else _nonnegative("corner_exclusion", corner_exclusion, "m")
    lab, info = _material_regions(prob, section)
    peaks, at_c = _vector_peaks(vm, lab, len(info), corners, r_ex, subdivisions)
    if all(p[1] is None for p in peaks):
        raise FemodesError(f"no field sample lies outside the corner exclusion discs (radius {r_ex:.3g} m): "
                           "use a smaller corner_exclusion")
    errs = [math.nan] * len(info)
    other = lower_order_partner(mode)
    if other is not None:
        lower, _ = _vector_peaks(other, lab, len(info), corners, r_ex, subdivisions)
        s_hi, s_lo = 1.0 / math.sqrt(vm.power()), 1.0 / math.sqrt(other.power())
        for r, ((v, xy), (vl, _)) in enumerate(zip(peaks, lower)):
            if xy is None:
                continue
            pt = np.array(xy, dtype=float)[:, None]
            # both fields at the peak, each in the element of this region that holds it
            cell = _cell_in_region(prob, pt, lab, r)
            fa = prob.fields_at_reference(vm, cell[0], cell[1])
            fb = other.problem.fields_at_reference(other, cell[0], cell[1])
            d = abs(float(_instantaneous_peak(fa)[0]) * s_hi - float(_instantaneous_peak(fb)[0]) * s_lo)
            errs[r] = max(abs(v - vl), d)
    regions = tuple(RegionPeak(name, e, m, gas, float(v), float(err), xy)
                    for (name, e, m, gas), (v, xy), err in zip(info, peaks, errs) if xy is not None)
    gas = [r for r in regions if r.gas]
    warns = []
    if gas:
        top = max(gas, key=lambda r: r.peak_field_per_sqrt_watt)
        peak, perr, where = top.peak_field_per_sqrt_watt, top.peak_error, top.peak_location
        p_bd = (Ebd / peak) ** 2
        p_err = p_bd - (Ebd / (peak + perr)) ** 2 if math.isfinite(perr) else math.nan
    else:
        peak = perr = p_bd = p_err = math.nan
        where = None
        warns.append(f"no gas region (eps_r <= {GAS_MAX_EPS_R:g}): the gas breakdown figure does not apply; check "
                     "the peak of each dielectric region against its dielectric strength, and mind thin gas gaps "
                     "(between a dielectric and a wall), where the field is eps_r times the normal field inside")
    if any(not r.gas for r in regions):
        warns.append("the peaks inside dielectric regions are for a dielectric-strength check of each material; "
                     "a gas gap at a dielectric face (machining, fit) sees eps_r times the normal field of the "
                     "dielectric")
    if corners:
        where_c = ", ".join(f"({cx * 1e3:.4g}, {cy * 1e3:.4g}) mm" for (cx, cy), _ in corners[:6])
        more = f" and {len(corners) - 6} more" if len(corners) > 6 else ""
        warns.append(f"the field is singular at the sharp re-entrant or material corner(s) at {where_c}{more}: the "
                     f"peaks reported exclude a disc of radius {r_ex * 1e3:.4g} mm around each and depend on that "
                     "radius; the corner values are reported apart; model the real rounded-corner geometry (e.g. a "
                     "corner or fillet radius, or a chamfered dielectric edge) for a real figure")
    cf = tuple(CornerField(c, kind, v, info[k][0] if k >= 0 else "")
               for (c, kind), (v, k) in zip(corners, at_c))
    return LoadedPowerHandling(frequency=float(mode.frequency), peak_field_per_sqrt_watt=peak, peak_error=perr,
                               peak_location=where, breakdown_field=Ebd, breakdown_power=p_bd,
                               breakdown_power_error=p_err, safety_factor=sf, rated_power=p_bd / sf,
                               regions=regions, corners=cf, corner_exclusion=r_ex, order=int(prob.order),
                               warnings=tuple(warns))


def _cell_in_region(prob, pt, lab, r):
    """(cells (1,), reference coordinates (2, 1)) of the point ``pt`` (2, 1) in a triangle of region
    ``r`` (the point may lie on an interface, where the located triangle could be the neighbour's)."""
    cells, ref = _locate(prob.basis_t, pt)
    if cells[0] >= 0 and lab[cells[0]] == r:
        return cells, ref
    # nearest triangle of the region by its vertices, reference coordinates on its straight sides
    t = np.flatnonzero(lab == r)
    v = prob.mesh.p[:, prob.mesh.t[:, t]]
    d = np.min(np.hypot(v[0] - pt[0, 0], v[1] - pt[1, 0]), axis=0)
    c = t[int(np.argmin(d))]
    a, b_, e = (prob.mesh.p[:, prob.mesh.t[k, c]] for k in range(3))
    M = np.array([b_ - a, e - a]).T
    X = np.clip(np.linalg.solve(M, pt[:, 0] - a), 0.0, 1.0)
    return np.array([c]), X[:, None]
