"""CSV tables and field files (through meshio) of a solve, SI units.
"""

from __future__ import annotations

import csv
import math

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.mesh import triangle_regions
from femodes.report.analysis import _loaded_wall_loss
from femodes.report.figures import safe_name

CSV_COLUMNS = ("index", "label", "family", "fc_Hz", "fc_error_Hz", "kc_rad_per_m", "kc_error_rad_per_m",
               "cutoff_wavelength_m", "degenerate_with", "symmetry", "nodal_domains")


def write_csv(modeset, path):
    """One row per mode, SI units named in the header; ``index`` and ``degenerate_with`` are
    0-based positions (space-separated), ``symmetry`` like ``x=odd;y=even``."""
    def num(x):
        return "" if not math.isfinite(x) else repr(float(x))

    rows = [CSV_COLUMNS]
    for m in modeset:
        rows.append((m.index, m.label, m.family, num(m.fc), num(m.fc_error), num(m.kc), num(m.kc_error),
                     num(m.cutoff_wavelength), " ".join(str(i) for i in m.degenerate_with),
                     ";".join(f"{k}={v}" for k, v in sorted(m.symmetry.items())),
                     "" if m.nodal_domains is None else m.nodal_domains))
    try:
        with open(path, "w", newline="", encoding="utf-8") as fh:
            csv.writer(fh).writerows(rows)
    except OSError as exc:
        raise FemodesError(f"cannot write CSV file {path}: {exc.strerror or exc}") from None
    return str(path)


def write_fields(modeset, path):
    """Write the mesh with each mode's fields as point data through meshio (format from the file
    name: .vtu for ParaView, .xdmf, .msh, ...).  Per mode, at the mesh vertices (SI units,
    normalisation of :mod:`femodes.modes`: int psi^2 dA = 1, int |e_t|^2 dA = 1):
    ``NN_label_psi`` (E_z for TM, H_z for TE, potential for TEM), ``NN_label_E`` (the vector e_t,
    z component 0) and ``NN_label_absE``.  Returns the path."""
    import meshio


    mesh = modeset.mesh
    pts = mesh.points
    data = {}
    for m in modeset:
        if m.potential is None:
            continue
        key = f"{m.index + 1:02d}_{safe_name(m.label)}"
        psi = m.longitudinal(pts)
        ex, ey, _, _ = m.fields(pts)
        data[key + "_psi"] = np.nan_to_num(psi)
        data[key + "_E"] = np.nan_to_num(np.column_stack([ex, ey, np.zeros_like(ex)]))
        data[key + "_absE"] = np.nan_to_num(np.hypot(ex, ey))
    xyz = np.column_stack([pts[0], pts[1], np.zeros(pts.shape[1])])
    try:
        meshio.write(str(path), meshio.Mesh(xyz, [("triangle", mesh.triangles.T)], point_data=data))
    except Exception as exc:  # meshio raises its own types for unknown formats
        raise FemodesError(f"cannot write field file {path}: {exc}; use a name ending in .vtu, .xdmf or .msh") from None
    return str(path)


def _write_text(path, text, what):
    try:
        with open(path, "w", encoding="utf-8") as fh:
            fh.write(text)
    except OSError as exc:
        raise FemodesError(f"cannot write {what} file {path}: {exc.strerror or exc}") from None


def write_loaded_csv(study, path):
    """The modes at the frequency (or, without one, the cutoffs) of a loaded study as CSV (SI)."""
    import io

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if study.frequency is not None:
        w.writerow(["index", "label", "family", "frequency_Hz", "beta_rad_per_m", "beta_error_rad_per_m",
                    "guide_wavelength_m", "effective_permittivity", "vp_over_c", "vg_over_c", "e_share",
                    "h_share", "alpha_dielectric_Np_per_m", "alpha_conductor_Np_per_m",
                    "alpha_conductor_error_Np_per_m"])
        for m in study.modes:
            if not m.propagating:
                continue
            w.writerow([m.index, m.label, m.family, repr(study.frequency), repr(float(m.beta())),
                        repr(m.beta_error), repr(m.guide_wavelength()), repr(m.effective_permittivity),
                        repr(m.phase_velocity()), repr(m.group_velocity()), repr(m.e_share), repr(m.h_share),
                        repr(m.dielectric_attenuation())] + [repr(v) for v in _loaded_wall_loss(m, study)])
    else:
        w.writerow(["index", "label", "field_at_cutoff", "fc_Hz", "fc_error_Hz"])
        for c in study.cutoffs:
            w.writerow([c.index, c.label, c.field, repr(c.fc), repr(c.fc_error)])
    _write_text(path, buf.getvalue(), "CSV")
    return str(path)


def write_loaded_fields(study, path, subdivisions=2):
    """The modes at the frequency of a loaded study as a field file through meshio (format from
    the file name: .vtu for ParaView, .xdmf, ...).  The mesh is written element by element, each
    element cut into ``subdivisions``^2 triangles with points of its own, so that the jump of the
    normal E across material interfaces is kept (vertices on an interface appear once per side).

    Point data per propagating mode ``NN_label`` (SI, the normalisation of
    femodes.vector.VectorMode: int (|E_t|^2 + |E_z|^2) dA = 1, units 1/m for E, A/(V m) x 1/m for
    H): ``_Et`` and ``_Ht`` the transverse fields (z component 0), ``_Ez`` and ``_Hz`` the
    longitudinal ones (which are in quadrature with the transverse: their imaginary part is
    written, the real part is zero), ``_absE`` = |E|.  Cell data: ``region`` (0 the fill, i the
    i-th region) and ``eps_r``.  Returns the path."""
    import meshio


    if study.frequency is None or not any(m.propagating for m in study.modes):
        raise FemodesError("--fields writes the modes at a frequency: give [analysis] frequency (at which "
                           "at least one mode propagates) in the case file")
    modes = [m for m in study.modes if m.propagating]
    prob = modes[0].vector.problem
    data, tri, xy = {}, None, None
    for m in modes:
        x, y, t, F = prob.sample(m.vector, subdivisions)
        tri, xy = t, (x, y)
        key = f"{m.index + 1:02d}_{safe_name(m.label)}"
        zero = np.zeros_like(x)
        data[key + "_Et"] = np.column_stack([F[0].real, F[1].real, zero])
        data[key + "_Ez"] = F[2].imag
        data[key + "_Ht"] = np.column_stack([F[3].real, F[4].real, zero])
        data[key + "_Hz"] = F[5].imag
        data[key + "_absE"] = np.sqrt(np.abs(F[0]) ** 2 + np.abs(F[1]) ** 2 + np.abs(F[2]) ** 2)
    per_element = tri.shape[0] // prob.mesh.t.shape[1]
    regions = np.repeat(triangle_regions(study.section, prob.mesh.p, prob.mesh.t[:3]), per_element)
    eps = np.repeat(prob.eps_r, per_element)
    xyz = np.column_stack([xy[0], xy[1], np.zeros_like(xy[0])])
    try:
        meshio.write(str(path), meshio.Mesh(xyz, [("triangle", tri)], point_data=data,
                                            cell_data={"region": [regions], "eps_r": [eps]}))
    except Exception as exc:  # meshio raises its own types for unknown formats
        raise FemodesError(f"cannot write field file {path}: {exc}; use a name ending in .vtu or .xdmf") from None
    return str(path)
