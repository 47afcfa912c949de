"""CSV tables and field files (through meshio) of a solve, SI units.
"""

from __future__ import annotations

import csv
import io
import math
import os
from pathlib import Path

import meshio
import numpy as np

from femodes import quantities as Q
from femodes.atomic import replacing
from femodes.constants import C0
from femodes.errors import FemodesError
from femodes.geometry.mesh import triangle_regions
from femodes.report.analysis import as_study
from femodes.report.figures import safe_name
from femodes.solvers.fields import _transverse

CSV_COLUMNS = ("index", "label", "family", "cutoff_type", "parent", "fc_Hz", "fc_error_Hz", "kc_rad_per_m",
               "kc_error_rad_per_m", "cutoff_wavelength_m", "degenerate_with", "symmetry", "nodal_domains",
               "symmetry_class", "degeneracy")

#: columns of the quantities at the analysis frequency (``<name>.at_frequency.csv``)
AT_FREQUENCY_COLUMNS = ("index", "label", "family", "parent", "frequency_Hz", "propagates", "beta_rad_per_m",
                        "beta_error_rad_per_m", "alpha_Np_per_m", "guide_wavelength_m", "phase_velocity_m_per_s",
                        "group_velocity_m_per_s", "wave_impedance_ohm", "effective_permittivity", "e_share",
                        "h_share", "alpha_conductor_Np_per_m", "alpha_conductor_error_Np_per_m",
                        "alpha_dielectric_Np_per_m", "alpha_total_Np_per_m", "Z_PV_ohm", "Z_PI_ohm", "Z_VI_ohm",
                        "peak_E_per_sqrt_W_V_per_m", "breakdown_power_W", "rated_power_W",
                        "guide_wavelength_error_m", "phase_velocity_error_m_per_s", "group_velocity_error_m_per_s",
                        "wave_impedance_error_ohm", "alpha_total_error_Np_per_m", "Z_PV_error_ohm", "Z_PI_error_ohm",
                        "Z_VI_error_ohm", "peak_E_error_V_per_m", "breakdown_power_error_W", "rated_power_error_W",
                        "alpha_dielectric_error_Np_per_m")

#: columns of the dispersion over the band (``<name>.dispersion.csv``): one row per frequency and mode
DISPERSION_COLUMNS = ("frequency_Hz", "mode", "label", "family", "beta_rad_per_m", "alpha_Np_per_m",
                      "beta_error_rad_per_m")


def _num(x):
    try:
        x = float(x)
    except (TypeError, ValueError):
        return ""
    return "" if not math.isfinite(x) else repr(x)


def _error_cells(q):
    """The error columns of one row of the at-frequency table (empty where not estimated)."""
    e = q.errors or {}
    ze = q.impedance_errors or {}
    ph = q.power
    return (*(_num(e.get(k)) for k in ("guide_wavelength", "phase_velocity", "group_velocity", "wave_impedance",
                                       "total")),
            *(_num(ze.get(k)) for k in ("PV", "PI", "VI")),
            *(_num(getattr(ph, k, None)) for k in ("peak_error", "breakdown_power_error", "rated_power_error")),
            _num(e.get("dielectric")))


def _sibling(path, part):
    """``modes.csv`` -> ``modes.<part>.csv`` beside it."""
    p = Path(path)
    return str(p.with_name(f"{p.stem}.{part}{p.suffix or '.csv'}"))


def write_csv(result, path, analysis=None):
    """The report as CSV tables, SI units named in each header, the same for every guide:
    ``path`` has one row per mode of the lowest cutoffs (:data:`CSV_COLUMNS`; ``index`` and
    ``degenerate_with`` are 0-based positions, space-separated; ``symmetry`` like
    ``x=odd;y=even``; ``symmetry_class`` the mode's class in the section's symmetry group, in
    words (femodes.modes.labels); empty where a value does not exist for the kind of guide); with an
    :class:`Analysis`, ``<name>.at_frequency.csv`` has the quantities at its frequency
    (:data:`AT_FREQUENCY_COLUMNS`); with a band, ``<name>.dispersion.csv`` has beta of each
    followed mode at each frequency (:data:`DISPERSION_COLUMNS`: beta empty where evanescent, alpha
    empty where propagating, both for a member of a complex pair).  Returns the paths written."""
    study = as_study(result)
    rows = [CSV_COLUMNS]
    for m in study.modes:
        rows.append((m.index, m.label, m.family, m.cutoff_type, m.parent or "", _num(m.fc), _num(m.fc_error),
                     _num(m.kc), _num(m.kc_error), _num(m.cutoff_wavelength),
                     " ".join(str(i) for i in m.degenerate_with),
                     ";".join(f"{k}={v}" for k, v in sorted(m.symmetry.items())),
                     "" if m.nodal_domains is None else m.nodal_domains, m.symmetry_class,
                     getattr(m, "degeneracy", "")))
    written = [_write_rows(path, rows)]
    if analysis is not None:
        f = analysis.frequency
        k0 = 2 * math.pi * f / C0
        rows = [AT_FREQUENCY_COLUMNS]
        for q in analysis.modes:
            m, w, ls, z, ph = q.mode, q.waves, q.losses, q.impedances or {}, q.power
            e_sh, h_sh = m.longitudinal_shares(f) if q.propagates else (math.nan, math.nan)
            rows.append((m.index, m.label, m.family, m.parent or "", _num(f), int(bool(q.propagates)), _num(w.beta),
                         _num(w.beta_error), _num(w.alpha), _num(w.guide_wavelength), _num(w.phase_velocity),
                         _num(w.group_velocity), _num(np.real(w.wave_impedance)) if q.propagates else "",
                         _num((float(w.beta) / k0) ** 2) if q.propagates else "", _num(e_sh), _num(h_sh),
                         *((_num(ls.conductor), _num(ls.conductor_error), _num(ls.dielectric), _num(ls.total))
                           if ls is not None else ("",) * 4),
                         *(_num(z.get(k)) for k in ("PV", "PI", "VI")),
                         *((_num(ph.peak_field_per_sqrt_watt), _num(ph.breakdown_power), _num(ph.rated_power))
                           if ph is not None else ("",) * 3),
                         *_error_cells(q)))
        written.append(_write_rows(_sibling(path, "at_frequency"), rows))
    disp = study.dispersion
    if disp is not None:
        b = np.asarray(disp.beta, dtype=complex)
        tiny = 1e-12 * np.abs(b)
        rows = [DISPERSION_COLUMNS]
        for i, f in enumerate(disp.frequencies):
            for k in range(b.shape[1]):
                v = b[i, k]
                rows.append((_num(f), k + 1, disp.labels[k], disp.family[k], _num(v.real) if v.real > tiny[i, k] else "",
                             _num(abs(v.imag)) if abs(v.imag) > tiny[i, k] else "",
                             "" if disp.beta_error is None else _num(disp.beta_error[i, k])))
        written.append(_write_rows(_sibling(path, "dispersion"), rows))
    return written


def _write_rows(path, rows):
    buf = io.StringIO()
    csv.writer(buf, lineterminator="\n").writerows(rows)
    _write_text(path, buf.getvalue(), "CSV")
    return str(path)


def write_fields(result, path, subdivisions=None, frequency=None):
    """Write each mode's fields through meshio (format from the file name: .vtu for ParaView,
    .xdmf, ...), the same for every guide.  The mesh is written element by element, each element
    cut into ``subdivisions``^2 triangles with points of their own (default: the element order,
    so the points are the element's own interpolation nodes and a high-order field is not thrown
    away; the jump of normal E across material interfaces is kept too).

    At a frequency (``frequency``, else the study's): the propagating modes carrying 1 W, SI
    units: point data ``NN_label_Et`` and ``_Ht`` (transverse E in V/m and H in A/m, real; z
    component 0), ``_Ez`` and ``_Hz`` (the longitudinal fields, in quadrature with the
    transverse ones: their imaginary part is written), ``_absE`` = |E|.  Without a frequency (a
    homogeneous guide solved for its cutoffs): the normalised mode vectors of
    :mod:`femodes.modes.model` (int psi^2 dA = 1, int |e_t|^2 dA = 1, units 1/m): ``_psi`` (E_z
    for TM, H_z for TE, the potential for TEM), ``_E`` (e_t), ``_H`` (h_t = z x e_t), ``_absE``.
    Cell data: ``region`` (0 the fill, i the i-th region) and ``eps_r``.  Returns the path."""
    name = os.fspath(path)
    if not any(name.lower().endswith(ext) for ext in meshio.extension_to_filetypes):
        raise FemodesError(f"cannot write field file {name}: its ending names no mesh format; use a name ending "
                           "in .vtu (ParaView) or .xdmf")
    study = as_study(result)
    f = frequency if frequency is not None else study.frequency
    if study.loaded:
        if f is None or not any(m.propagates() for m in study.at_frequency):
            raise FemodesError("--fields writes a loaded guide's modes at a frequency: give [analysis] frequency "
                               "(at which at least one mode propagates) in the case file, or --frequency F (GHz)")
        modes = [m for m in study.at_frequency if m.propagates()]
        prob = modes[0].vector.problem
        s = int(subdivisions or study.order)
        data, tri, xy = {}, None, None
        for m in modes:
            x, y, tri, F = prob.sample(m.vector, s)
            xy = (x, y)
            _put_phasors(data, m, F * math.sqrt(1.0 / m.vector.power()))
        per_element = tri.shape[0] // prob.mesh.t.shape[1]
        regions = np.repeat(triangle_regions(study.section, prob.mesh.p, prob.mesh.t[:3]), per_element)
        eps = np.repeat(prob.eps_r, per_element)
    else:
        modes = [m for m in study.modes if m.potential is not None]
        s = int(subdivisions or study.order)
        data, tri, xy = {}, None, None
        for m in modes:
            x, y, tri, psi, gx, gy = m.potential.sample(s)
            xy = (x, y)
            if f is None:
                key = f"{m.index + 1:02d}_{safe_name(m.label)}"
                ex, ey, hx, hy = _transverse(m.family, m.kc, m.potential, gx, gy)
                zero = np.zeros_like(x)
                data[key + "_psi"] = psi
                data[key + "_E"] = np.column_stack([ex, ey, zero])
                data[key + "_H"] = np.column_stack([hx, hy, zero])
                data[key + "_absE"] = np.hypot(ex, ey)
            elif m.family == "TEM" or m.propagates(f):
                _put_phasors(data, m, _homogeneous_phasors(m, f, psi, gx, gy))
        if f is not None and not data:
            raise FemodesError(f"no mode propagates at {f / 1e9:.6g} GHz: nothing to write to the field file")
        n_cells = tri.shape[0]
        regions = np.zeros(n_cells, dtype=int)
        eps = np.full(n_cells, float(study.eps_r))
    xyz = np.column_stack([xy[0], xy[1], np.zeros_like(xy[0])])
    try:
        with replacing(path, "field") as tmp:
            meshio.write(str(tmp), meshio.Mesh(xyz, [("triangle", tri)], point_data=data,
                                               cell_data={"region": [regions], "eps_r": [eps]}))
    except FemodesError:
        raise
    except Exception as exc:  # meshio raises its own types for unknown formats
        raise FemodesError(f"cannot write field file {path}: {exc}; use a name ending in .vtu or .xdmf") from None
    return str(path)


def _homogeneous_phasors(mode, f, psi, gx, gy):
    """(E_x, E_y, E_z, H_x, H_y, H_z) of a homogeneous mode carrying 1 W at f, from psi and its
    gradient (the relations of femodes.quantities.field_phasors)."""
    zw = float(np.real(Q.wave_quantities(mode, f).wave_impedance))
    V = math.sqrt(2 * zw)
    ex, ey, hx, hy = _transverse(mode.family, mode.kc, mode.potential, gx, gy)
    c = complex(Q.longitudinal_factor(mode, f)) if mode.family != "TEM" else 0j
    zero = np.zeros_like(psi) + 0j
    ez = c * V * psi if mode.family == "TM" else zero
    hz = c * V * psi if mode.family == "TE" else zero
    return np.array([V * ex, V * ey, ez, V / zw * hx, V / zw * hy, hz], dtype=complex)


def _put_phasors(data, mode, F):
    key = f"{mode.index + 1:02d}_{safe_name(mode.label)}"
    zero = np.zeros(F.shape[1])
    data[key + "_Et"] = np.column_stack([F[0].real, F[1].real, zero])
    data[key + "_Ez"] = F[2].imag
    data[key + "_Ht"] = np.column_stack([F[3].real, F[4].real, zero])
    data[key + "_Hz"] = F[5].imag
    data[key + "_absE"] = np.sqrt(np.abs(F[0]) ** 2 + np.abs(F[1]) ** 2 + np.abs(F[2]) ** 2)


def _write_text(path, text, what):
    with replacing(path, what) as tmp, open(tmp, "w", encoding="utf-8") as fh:
        fh.write(text)
