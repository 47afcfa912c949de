"""Characteristic impedance of a mode: power-voltage, power-current and voltage-current
definitions along a stated voltage path and wall current; TEM modes from the electrostatic
capacitance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from femodes.constants import ETA0
from femodes.errors import FemodesError
from femodes.modes.loaded import LoadedMode
from femodes.quantities.common import _field, _freq, _out, _require_propagating, _z_wave
from femodes.quantities.losses import _boundary_rule, _conductor_groups, _gauss01, _wall_data, _wall_edges
from femodes.solvers.fields import _locate, _transverse
from femodes.solvers.loaded import _partner


def _section_of(mode, section):
    """The section given, else the one the mode was solved on (None for a mesh file)."""
    return section if section is not None else getattr(mode, "section", None)


def _basis_of(mode):
    """The scikit-fem basis that carries the mode's geometry: the potential's basis of a
    homogeneous-guide mode, the edge-element basis of a loaded-guide mode."""
    if isinstance(mode, LoadedMode):
        return mode.vector.problem.basis_t
    return _field(mode).basis


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
    p = _basis_of(mode).mesh.p
    return 0.5 * (p.min(axis=1) + p.max(axis=1)), np.array([0.0, 1.0])


def _inside(mode, pts):
    if isinstance(mode, LoadedMode):
        return _locate(_basis_of(mode), np.asarray(pts, dtype=float).reshape(2, -1))[0] >= 0
    val, _, _ = _field(mode).evaluate(pts)
    return np.isfinite(val)


def voltage_path(mode, section=None):
    """Default voltage path (2 points, each (x, y)): the line through the section's centre along
    its own y axis (vertical for unrotated shapes), from wall to wall: for a rectangle the full
    height at x = x_c, for a ridge guide across the ridge gap.  The walls are found on the mode's
    own mesh; where the centre lies in a hole (coax) the longest wall-to-wall piece is used.
    Without ``section`` the centre of the mesh's bounding box and the y direction are used.
    The same for the modes of loaded guides (:class:`~femodes.modes.LoadedMode`), on their mesh."""
    c, d = _frame(mode, section)
    nrm = np.array([d[1], -d[0]])
    basis = _basis_of(mode)
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
    # the ends pulled in by 1e-9 of the section's size: a wall found by interpolation along a
    # curved boundary edge may lie a rounding error outside the mesh (seen: 1e-12 m on a
    # rectangle), and the piece beyond it has no field; the part left out changes V by ~1e-9
    inset = 1e-9 * size
    p0, p1 = c + d * (hits[i] + inset), c + d * (hits[i + 1] - inset)
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
    basis = fld.basis
    pts, wl = _path_rule(basis, path, basis.elem.maxdeg + 4 if points is None else points)
    _, gx, gy = fld.evaluate(pts)
    ex, ey, _, _ = _transverse(mode.family, mode.kc, fld, gx, gy)
    bad = ~np.isfinite(ex)
    if np.any(bad):
        q = pts[:, np.flatnonzero(bad)[0]]
        raise FemodesError(f"the voltage path leaves the cross-section near ({q[0] * 1e3:.6g}, {q[1] * 1e3:.6g}) mm: "
                           "give points inside the guide, from wall to wall")
    return float(np.sum(ex * wl[0] + ey * wl[1]))


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
        sel = _user_wall(wall)(rule, None)
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

    Loaded-guide modes (:class:`~femodes.modes.LoadedMode`, hybrid): the same definitions from the
    full-vector fields at the mode's own frequency (``f`` must be it): P the Poynting flux, V the
    line integral of E_t along ``path`` (same default), I the longitudinal current on ``wall``
    (same default, except that a TEM-like mode of a guide with inner conductors takes the inner
    conductor that carries it); see :func:`loaded_impedances`, which also gives their errors.

    TEM modes: the line impedance from the electrostatic problem, Z = 1 / (v C) with
    C = eps int |grad phi|^2 dA for phi = 1 V on the inner conductor (and 0 V on the others), so
    Z = eta / int |grad phi|^2 dA, for every ``kind`` unless a ``path`` is given with kind "PV".
    With several inner conductors the TEM modes are the line's modal set (eigenvectors t_k of the
    capacitance matrix, unit length) and this is the modal impedance 1 / (v Lambda_k)
    (:func:`femodes.quantities.lines.modal_impedances`; even / odd / differential impedances of a
    pair: :func:`femodes.quantities.lines.pair_impedances`).
    """
    kd = str(kind).upper()
    if kd not in ("PV", "PI", "VI"):
        raise FemodesError(f"impedance kind must be 'PV', 'PI' or 'VI', got {kind!r}")
    if isinstance(mode, LoadedMode):
        _require_loaded_propagating(mode, f, "the impedance")
        path = voltage_path(mode, section) if path is None else _check_path(path)
        if kd == "PV":
            select = None
        else:
            select = _default_wall(mode, section)[0] if wall is None else _user_wall(wall)
        pv, pi, vi, _, _ = _vector_impedances(mode.vector, path, select, need_current=kd != "PV")
        return {"PV": pv, "PI": pi, "VI": vi}[kd]
    fa = _freq(f)
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


# ----------------------------------------------------------------------------- loaded guides

def _require_loaded_propagating(mode, f, what):
    """A loaded mode is solved at one frequency: refuse any other, and evanescent modes."""
    if np.ndim(f) != 0:
        raise FemodesError(f"{what} of a loaded-guide mode takes one frequency, the mode's own "
                           f"({mode.frequency / 1e9:.9g} GHz), got an array")
    mode.beta(float(f))
    if not mode.propagating:
        raise FemodesError(f"{what} needs a propagating mode: {mode.label} is evanescent at "
                           f"{mode.frequency / 1e9:.9g} GHz")


def _path_rule(basis, path, points):
    """Gauss points (2, n) along the polyline ``path`` and their weights times the piece's vector
    (2, n): each straight piece cut where it crosses an element edge of ``basis``'s mesh, so that
    every piece lies in one element (the normal E_t jumps at a dielectric face)."""
    p = _check_path(path)
    s, w = _gauss01(int(points))
    pts, wl = [], []
    for k in range(len(p) - 1):
        a, b = p[k], p[k + 1]
        cuts = np.concatenate([[0.0], _edge_crossings(basis.mesh, a, b), [1.0]])
        lo, hi = cuts[:-1], cuts[1:]
        u = (lo[:, None] + (hi - lo)[:, None] * s[None, :]).ravel()
        wt = ((hi - lo)[:, None] * w[None, :]).ravel()
        seg = b - a
        pts.append(a[:, None] + seg[:, None] * u[None, :])
        wl.append(seg[:, None] * wt[None, :])
    return np.hstack(pts), np.hstack(wl)


def _path_integrand(vm, pts, wl):
    """E_t . dl of the full-vector mode ``vm`` (a VectorMode, as normalised) at the points of a
    path rule, each point evaluated in its own element through the (curved) map (E_t of a
    propagating mode is real)."""
    prob = vm.problem
    cells, ref = _locate(prob.basis_t, pts)
    if np.any(cells < 0):
        q = pts[:, np.flatnonzero(cells < 0)[0]]
        raise FemodesError(f"the voltage path leaves the cross-section near ({q[0] * 1e3:.6g}, {q[1] * 1e3:.6g}) mm: "
                           "give points inside the guide, from wall to wall")
    ex, ey = prob.fields_at_reference(vm, cells, ref)[:2]
    return ex.real * wl[0] + ey.real * wl[1]


def _wall_integrand(vm, select, n=10):
    """J_z dl of the full-vector mode ``vm`` (as normalised) at the Gauss points (m, n) of every wall
    edge of its (curved) mesh, zero where ``select(rule, mesh)`` is False; J_z = n_x H_y - n_y H_x,
    n the wall normal into the guide (J_s = n x H on a perfect conductor)."""
    prob = vm.problem
    rule = _boundary_rule(prob.basis_t, n)
    m = rule["tind"].size
    F = prob.fields_at_reference(vm, np.repeat(rule["tind"], n), rule["X"].reshape(2, -1))
    hx, hy = F[3].real.reshape(m, n), F[4].real.reshape(m, n)
    jz = rule["nin"][0] * hy - rule["nin"][1] * hx
    sel = select(rule, prob.mesh)
    if not np.any(sel):
        raise FemodesError("the wall selection contains no wall points")
    return jz * rule["dl"] * sel


def _vector_wall_current(vm, select, n=10):
    """int J_z dl of the full-vector mode ``vm`` (as normalised) over the selected wall points."""
    return float(np.sum(_wall_integrand(vm, select, n)))


def _half_walls(c, d):
    """Wall selection: the points on the +d side of the centre c (the default of wall_current)."""
    return lambda rule, mesh: d[0] * (rule["xy"][0] - c[0]) + d[1] * (rule["xy"][1] - c[1]) > 0


def _conductor(k):
    """Wall selection: the k-th conductor (0 the outer wall, then the inner ones by extent)."""
    def select(rule, mesh):
        groups = _conductor_groups(mesh, rule["facets"])
        mask = np.zeros(rule["dl"].shape, dtype=bool)
        mask[groups[k]] = True
        return mask
    return select


def _user_wall(wall):
    """Wall selection from the user's function (x, y) -> bool array."""
    def select(rule, mesh):
        x, y = rule["xy"]
        try:
            sel = np.asarray(wall(x, y), dtype=bool)
        except Exception as exc:  # the user's function failed
            raise FemodesError(f"the wall selection function failed on arrays of wall points: {exc}") from None
        if sel.shape != x.shape:
            raise FemodesError(f"the wall selection function must return a bool array shaped like x "
                               f"{x.shape}, got shape {sel.shape}")
        return sel
    return select


def _default_wall(mode, section):
    """(selection, description, inner conductor index or None) of the wall whose current defines I
    for a loaded mode: as
    :func:`wall_current` (the half of the walls on the positive side of the guide's centre), but a
    TEM-like mode (family TEM or grown from the empty guide's TEM) of a guide with inner
    conductors takes the inner conductor that carries the largest current (the conductor current
    of a line)."""
    mesh = mode.vector.problem.mesh
    groups = _conductor_groups(mesh, mesh.boundary_facets())
    if len(groups) > 1 and (mode.family == "TEM" or "TEM" in (mode.parent or "")):
        cur = [abs(_vector_wall_current(mode.vector, _conductor(k))) for k in range(1, len(groups))]
        k = 1 + int(np.argmax(cur))
        return _conductor(k), f"inner conductor {k} (the whole conductor)", k
    c, d = _frame(mode, section)
    dx, dy = (float(v) + 0.0 for v in np.round(d, 12))  # + 0.0: no "-0" in the text
    cx, cy = (float(v) * 1e3 + 0.0 for v in np.round(c, 15))
    return _half_walls(c, d), (f"the half of the walls on the ({dx:.3g}, {dy:.3g}) side of the centre "
                               f"({cx:.4g}, {cy:.4g}) mm"), None


def _at_one_watt(vm, path, select, need_current=True):
    """(E_t . dl at the path points, J_z dl at the wall points) of a VectorMode scaled to carry
    1 W (divided by sqrt(P), P = VectorMode.power()); the wall part None if not asked."""
    scale = 1.0 / math.sqrt(vm.power())
    pts, wl = path
    v = _path_integrand(vm, pts, wl) * scale
    j = _wall_integrand(vm, select) * scale if need_current else None
    return v, j


def _impedances_at_one_watt(v1, i1):
    """(Z_PV, Z_PI, Z_VI) from |V| and |I| at P = 1 W: V^2 / 2, 2 / I^2, V / I."""
    if i1 == 0:
        raise FemodesError("the wall current of this mode on the chosen wall is zero: choose another wall")
    return v1 * v1 / 2.0, 2.0 / (i1 * i1), v1 / i1


def _vector_impedances(vm, path, select, need_current=True):
    """(Z_PV, Z_PI, Z_VI, V at 1 W, I at 1 W) of a VectorMode; NaN where I is not asked."""
    rule = _path_rule(vm.problem.basis_t, path, vm.problem.order + 4)
    v, j = _at_one_watt(vm, rule, select, need_current)
    v1 = abs(float(np.sum(v)))
    if not need_current:
        return v1 * v1 / 2.0, math.nan, math.nan, v1, math.nan
    i1 = abs(float(np.sum(j)))
    return _impedances_at_one_watt(v1, i1) + (v1, i1)


@dataclass(frozen=True)
class LoadedImpedances:
    """Characteristic impedances of a loaded-guide mode at the frequency it was solved at (ohm),
    each with its estimated error (ohm): see :func:`loaded_impedances` for the definitions.

    pv, pi, vi            : Z_PV = |V|^2 / (2P), Z_PI = 2P / |I|^2, Z_VI = |V| / |I|
    pv_error, ...         : |Z(order p) - Z(order p - 1)| on the same mesh; NaN if unavailable
    voltage, current      : |V| (V) and |I| (A) of the mode carrying 1 W
    path                  : the voltage path ((x, y), ...) in metres
    wall                  : which wall carries I (words)
    order                 : the element order of the mode (the errors compare with order - 1)
    quasi_static          : for a TEM-like mode of a guide with inner conductors (non-magnetic),
                            the quasi-static line impedance 1 / (c0 sqrt(C C1)) of the conductor
                            that carries I (C the capacitance per metre with the dielectrics, C1
                            without), exact for a TEM line in the low-frequency limit; NaN otherwise
    quasi_static_error    : its difference from order - 1 on the same mesh
    """

    frequency: float
    pv: float
    pi: float
    vi: float
    pv_error: float
    pi_error: float
    vi_error: float
    voltage: float
    current: float
    path: tuple
    wall: str
    order: int
    quasi_static: float = math.nan
    quasi_static_error: float = math.nan

    def value(self, kind):
        """Z (ohm) of ``kind`` 'PV', 'PI' or 'VI'."""
        return getattr(self, _kind(kind))

    def error(self, kind):
        """Estimated error (ohm) of ``kind`` 'PV', 'PI' or 'VI'."""
        return getattr(self, _kind(kind) + "_error")

    def lines(self):
        """Text lines of a report."""
        (x0, y0), (x1, y1) = self.path[0], self.path[-1]
        return [f"Z_PV = {self.pv:.6g} ohm (+/- {self.pv_error:.2g}), Z_PI = {self.pi:.6g} ohm (+/- {self.pi_error:.2g}), "
                f"Z_VI = {self.vi:.6g} ohm (+/- {self.vi_error:.2g})",
                f"V = {self.voltage:.6g} V at 1 W along ({x0 * 1e3:.4g}, {y0 * 1e3:.4g}) -> ({x1 * 1e3:.4g}, "
                f"{y1 * 1e3:.4g}) mm; I = {self.current:.6g} A at 1 W on {self.wall}"] + (
                [f"quasi-static line impedance {self.quasi_static:.6g} ohm (+/- {self.quasi_static_error:.2g})"]
                if math.isfinite(self.quasi_static) else [])

    def __str__(self):
        return "\n".join(self.lines())


def _kind(kind):
    kd = str(kind).upper()
    if kd not in ("PV", "PI", "VI"):
        raise FemodesError(f"impedance kind must be 'PV', 'PI' or 'VI', got {kind!r}")
    return kd.lower()


def lower_order_partner(mode):
    """The same mode computed with elements one order lower on the same final mesh (a VectorMode,
    solved on first use and cached by the mode), or None (order 1, or no partner of the same
    family near its beta^2): the reference for the errors of field-based quantities."""
    if mode.lower is None or not mode.propagating:
        return None
    return _partner(mode.vector, mode.lower())


def loaded_impedances(mode, f=None, path=None, wall=None, section=None):
    """Power-voltage, power-current and voltage-current impedances of a loaded-guide mode
    (:class:`~femodes.modes.LoadedMode`, hybrid) at the frequency it was solved at (``f``, if
    given, must be that frequency), with their errors; a :class:`LoadedImpedances`.

        P     = 1/2 Re int (E_t x H_t*) . z dA   (the Poynting flux, VectorMode.power())
        V     = int E_t . dl along ``path``       (default :func:`voltage_path`: through the centre
                of the section along its own y axis, wall to wall; as for homogeneous guides)
        I     = int J_z dl on ``wall``, J_s = n x H  (default: as :func:`wall_current`, the half of
                the walls on the positive side of the centre, i.e. the top wall of a rectangle;
                for a TEM-like mode of a guide with inner conductors, the inner conductor)
        Z_PV  = |V|^2 / (2 P),   Z_PI = 2 P / |I|^2,   Z_VI = |V| / |I|

    (the usual definitions, common practice; for TE10 of a filled rectangle 2 (b/a) Z_TE,
    (pi^2 b / 8a) Z_TE and (pi b / 2a) Z_TE, and for a TEM line all three are the line impedance).
    E_t and H_t of a propagating loaded mode are in phase (E_z and H_z in quadrature), so V and I
    are real.  ``wall`` a function (x, y) -> bool array, as in :func:`wall_current`.

    Errors: the same mode with elements one order lower on the same final mesh
    (:func:`lower_order_partner`), both scaled to 1 W, gives at every quadrature point the
    difference of the integrands, E_t . dl along the path and J_z dl on the wall; its integral in
    absolute value, dV = int |dE_t . dl| and dI = int |dJ_z| dl, bounds the error of V and I of
    the order used as long as that order is pointwise the more accurate (the fields converge
    faster with the order), and the impedance errors are the largest changes V +/- dV, I -/+ dI
    can make (|V| + dV)^2 / 2 - Z_PV, 2 / (|I| - dI)^2 - Z_PI, (|V| + dV) / (|I| - dI) - Z_VI.
    The plain difference of the two integrals is not used: the lower order's line integrals
    profit from cancellation (measured on a filled WR-90: its V was closer to the truth than the
    higher order's, the difference 2x below the true error).  NaN where no lower order exists."""
    if f is not None:
        _require_loaded_propagating(mode, f, "the impedance")
    elif not mode.propagating:
        raise FemodesError(f"the impedance needs a propagating mode: {mode.label} is evanescent at "
                           f"{mode.frequency / 1e9:.9g} GHz")
    path = voltage_path(mode, section) if path is None else _check_path(path)
    select, where, k = _default_wall(mode, section)
    if wall is not None:
        select, where = _user_wall(wall), "the walls selected by the given function"
    rule = _path_rule(mode.vector.problem.basis_t, path, mode.vector.problem.order + 4)
    v, j = _at_one_watt(mode.vector, rule, select)
    v1, i1 = abs(float(np.sum(v))), abs(float(np.sum(j)))
    pv, pi, vi = _impedances_at_one_watt(v1, i1)
    errs = (math.nan,) * 3
    other = lower_order_partner(mode)
    if other is not None:
        vl, jl = _at_one_watt(other, rule, select)
        sgn = 1.0 if float(np.sum(v * vl) + np.sum(j * jl)) >= 0 else -1.0
        dv = float(np.sum(np.abs(v - sgn * vl)))   # no cancellation: a bound on |V(p) - V(exact)|
        di = float(np.sum(np.abs(j - sgn * jl)))   # if order p is pointwise the better (see below)
        lo_pi = 2.0 / (i1 - di) ** 2 if di < i1 else math.inf
        hi_vi = (v1 + dv) / (i1 - di) if di < i1 else math.inf
        errs = ((v1 + dv) ** 2 / 2.0 - pv, lo_pi - pi, hi_vi - vi)
    qs = qs_err = math.nan
    if k is not None and np.all(np.asarray(mode.vector.problem.mu_r) == 1.0):
        qs = _quasi_static(mode.vector.problem, k)
        if other is not None:
            qs_err = abs(qs - _quasi_static(other.problem, k))
    pts = tuple((float(x), float(y)) for x, y in np.asarray(path, dtype=float))
    return LoadedImpedances(float(mode.frequency), pv, pi, vi, *errs, v1, i1, pts, where,
                            int(mode.vector.problem.order), qs, qs_err)


def _quasi_static(prob, k):
    """Quasi-static line impedance (ohm) of inner conductor ``k`` of a VectorProblem's mesh (the
    others at 0 V): Z = 1 / (c0 sqrt(C C1)) = eta0 / sqrt(W W1), from the capacitance per metre
    C = eps0 W with the section's eps_r and C1 = eps0 W1 with eps_r = 1 (which gives the
    inductance L = mu0 eps0 / C1 of a non-magnetic line), W = int eps_r |grad phi|^2 dA of the
    electrostatic potential phi = 1 V on the conductor (Lagrange elements of the problem)."""
    from scipy.sparse.linalg import spsolve
    from skfem import BilinearForm, asm
    from skfem.helpers import dot, grad

    bz = prob.basis_z
    eps = np.asarray(prob.eps_r, dtype=float)[:, None] * np.ones_like(bz.dx)
    stiff = BilinearForm(lambda u, v, w: w.eps * dot(grad(u), grad(v)))
    facets = prob.mesh.boundary_facets()
    groups = _conductor_groups(prob.mesh, facets)
    bnd = np.unique(bz.get_dofs(facets=facets).flatten())
    on = np.unique(bz.get_dofs(facets=facets[groups[k]]).flatten())
    inner = np.setdiff1d(np.arange(bz.N), bnd)
    energy = []
    for e in (eps, np.ones_like(eps)):
        K = asm(stiff, bz, eps=e).tocsr()
        phi = np.zeros(bz.N)
        phi[on] = 1.0
        phi[inner] = spsolve(K[inner][:, inner].tocsc(), -(K[inner][:, bnd] @ phi[bnd]))
        energy.append(float(phi @ (K @ phi)))
    return ETA0 / math.sqrt(energy[0] * energy[1])
