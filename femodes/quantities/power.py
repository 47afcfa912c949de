"""Power handling: the peak field of a mode carrying 1 W, the power at which it reaches a
breakdown field, and the cautions that must be shown with those numbers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError
from femodes.quantities.common import _beta, _field, _freq, _nonnegative, _positive, _require_propagating, _z_wave
from femodes.quantities.impedance import _section_of
from femodes.quantities.losses import _eval_reference, _wall_edges

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
