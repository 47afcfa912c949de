"""Characteristic impedance of a mode: power-voltage, power-current and voltage-current
definitions along a stated voltage path and wall current; TEM modes from the electrostatic
capacitance.
"""

from __future__ import annotations

import math

import numpy as np

from femodes.errors import FemodesError
from femodes.quantities.common import _field, _freq, _out, _require_propagating, _z_wave
from femodes.quantities.losses import _gauss01, _wall_data, _wall_edges
from femodes.solvers.fields import _transverse


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
    With several inner conductors the TEM modes are the line's modal set (eigenvectors t_k of the
    capacitance matrix, unit length) and this is the modal impedance 1 / (v Lambda_k)
    (:func:`femodes.quantities.lines.modal_impedances`; even / odd / differential impedances of a
    pair: :func:`femodes.quantities.lines.pair_impedances`).
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
