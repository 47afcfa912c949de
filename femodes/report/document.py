"""JSON-ready documents of a solve for programs: SI units throughout, stated in the document's
"units" entry; values that do not exist are null, never NaN or infinity.
"""

from __future__ import annotations

import math

import numpy as np

from femodes import quantities as Q
from femodes.constants import C0, __version__
from femodes.report.analysis import ANALYSIS_UNITS, as_study, sweep_name
from femodes.report.files import _write_text
from femodes.report.text import _band, _clean, _finite, _num_list, _section_info

#: units of the numbers in :func:`report_document` and :func:`write_csv`
DOCUMENT_UNITS = {"length": "m", "angle": "rad", "kc": "rad/m", "kc_error": "rad/m", "fc": "Hz",
                  "fc_error": "Hz", "cutoff_wavelength": "m (in the fill; loaded guides: free space)",
                  "f_low": "Hz", "f_high": "Hz", "frequencies": "Hz", "beta": "rad/m", "alpha": "Np/m",
                  "beta_error": "rad/m", "capacitance": "F/m", "inductance": "H/m", "impedance": "ohm",
                  "accuracy": "1 (relative: on kc; loaded guides on fc, and at a frequency on beta^2 / "
                              "(k0^2 eps_max mu_max))"}


_ANGLE_PARAMS = {"angle"}


def report_document(result, analysis=None, title=None) -> dict:
    """A JSON-ready dict of a solve, one schema for every guide (SI units, see its "units"; no
    NaN or infinity): "modes" (the lowest cutoffs, the same keys for homogeneous and loaded
    guides: null where a key has no value for the kind), "single_mode_band", "analysis" (the
    quantities at the analysis frequency, :func:`analysis_document`) when an :class:`Analysis` is
    given, and "dispersion" (beta over the band) when the study has one.  ``result``: a ModeSet
    or a :class:`femodes.api.Study`."""

    study = as_study(result)
    modes = study.modes
    band = _band(modes)
    mesh_triangles = getattr(getattr(modes, "mesh", None), "n_triangles", None)
    regions = [] if not study.loaded else [
        {"name": m.name or None, "eps_r": m.eps_r, "mu_r": m.mu_r, "tan_delta": m.tan_delta}
        for m in study.section.materials]
    doc = {
        "femodes_version": __version__,
        "title": title,
        "units": dict(DOCUMENT_UNITS),
        "guide": "loaded" if study.loaded else "homogeneous",
        "section": _section_info(study),
        "fill": {"eps_r": float(study.eps_r), "mu_r": float(study.mu_r), "tan_delta": float(study.tan_delta)},
        "regions": regions,
        "accuracy": float(study.accuracy),
        "modes_asked": getattr(study.modes, "modes_asked", None),
        "modes_returned": len(study.modes),
        "discretisation": {"unknowns": int(study.n_dofs), "element_order": int(study.order),
                           "triangles": None if mesh_triangles is None else int(mesh_triangles),
                           "elements": ("Nedelec (transverse E) and Lagrange (E_z)" if study.loaded else
                                        "Lagrange (longitudinal field)")},
        "single_mode_band": None if band is None else
        {"f_low": band[0], "f_high": band[1], "ratio": None if band[2] is None else _finite(band[2])},
        "modes": [{
            "index": m.index,
            "label": m.label,
            "family": m.family,
            "cutoff_type": m.cutoff_type,
            "parent": m.parent,
            "parent_share": _finite(m.parent_share),
            "kc": _finite(m.kc),
            "kc_error": _finite(m.kc_error),
            "fc": _finite(m.fc),
            "fc_error": _finite(m.fc_error),
            "cutoff_wavelength": _finite(m.cutoff_wavelength),
            "degenerate_with": [int(i) for i in m.degenerate_with],
            "multiplicity": int(m.multiplicity),
            "degeneracy": getattr(m, "degeneracy", "") or None,
            "symmetry": dict(m.symmetry),
            "symmetry_class": m.symmetry_class or None,
            "symmetry_group": m.symmetry_group or None,
            "nodal_domains": None if m.nodal_domains is None else int(m.nodal_domains),
            "indices": None if m.indices is None else [int(i) for i in m.indices],
        } for m in modes],
        "line": _line_document(getattr(modes, "line", None)),
        "analysis": None if analysis is None else analysis_document(analysis),
        "dispersion": None if study.dispersion is None else dispersion_document(study.dispersion),
    }
    return _clean(doc)


def _line_document(line):
    """The "line" object of a guide with two or more inner conductors (SI: F/m, H/m, ohm), else None."""
    if line is None or line.n_conductors < 2:
        return None
    mi = Q.modal_impedances(line)
    pair = Q.pair_impedances(line) if line.symmetric_pair else None
    return {"conductors": [[_finite(v) for v in c] for c in line.centroids],
            "capacitance": _num_list(line.capacitance), "capacitance_error": _num_list(line.capacitance_error),
            "inductance": _num_list(line.inductance), "inductance_error": _num_list(line.inductance_error),
            "modes": [{"label": lab, "voltages": _num_list(mi.voltages[:, k]), "impedance": _finite(z),
                       "impedance_error": _finite(e)}
                      for k, (lab, z, e) in enumerate(zip(mi.labels, mi.impedance, mi.error))],
            "pair": None if pair is None else {k: _finite(getattr(pair, k)) for k in (
                "even", "even_error", "odd", "odd_error", "differential", "differential_error", "common",
                "common_error")}}


def modes_document(result, title=None, analysis=None) -> dict:
    """The JSON document of a solve: :func:`report_document` (the older argument order)."""
    return report_document(result, analysis=analysis, title=title)


def _corner(c):
    """A singular corner: its location (homogeneous guides) or location, kind and field (loaded)."""
    if hasattr(c, "location"):
        return {"location": [_finite(v) for v in c.location], "kind": c.kind,
                "field_per_sqrt_watt": _finite(c.field_per_sqrt_watt), "region": c.region}
    return {"location": [_finite(v) for v in c], "kind": "re-entrant wall corner", "field_per_sqrt_watt": None,
            "region": None}


def dispersion_document(disp) -> dict:
    """The "dispersion" object: per followed mode, beta (rad/m; null where evanescent), alpha
    (Np/m; null where propagating; both for a member of a complex pair, beta - j alpha) and
    beta's error over the frequencies (Hz)."""
    b = np.asarray(disp.beta, dtype=complex)
    tiny = 1e-12 * np.abs(b)
    err = disp.beta_error
    out = {"frequencies": _num_list(disp.frequencies),
           "method": "closed form from each cutoff" if disp.overlap is None else "full-vector solves, tracked by "
                                                                               "field overlap",
           "modes": []}
    for k in range(b.shape[1]):
        out["modes"].append({
            "label": disp.labels[k] or None, "family": disp.family[k],
            "beta": [_finite(v.real) if v.real > s else None for v, s in zip(b[:, k], tiny[:, k])],
            "alpha": [_finite(abs(v.imag)) if abs(v.imag) > s else None for v, s in zip(b[:, k], tiny[:, k])],
            "beta_error": None if err is None else _num_list(err[:, k]),
            "overlap": None if disp.overlap is None else _num_list(disp.overlap[:, k])})
    return out


def write_json(document, path):
    """Write a document from :func:`modes_document` to ``path`` (strict JSON)."""
    import json

    text = json.dumps(document, indent=2, allow_nan=False)
    _write_text(path, text + "\n", "JSON")


def analysis_document(an) -> dict:
    """The "analysis" object of the JSON document: SI units (see its "units"), no NaN or infinity."""

    s = an.settings
    f = an.frequency
    modes = []
    for q in an.modes:
        m, w = q.mode, q.waves
        zw = complex(w.wave_impedance)
        e_sh, h_sh = m.longitudinal_shares(f) if q.propagates else (None, None)
        k0 = 2 * math.pi * f / C0
        d = {"index": m.index, "label": m.label, "family": m.family, "parent": m.parent,
             "parent_share": _finite(m.parent_share), "propagates": q.propagates,
             "beta": _finite(w.beta), "beta_error": _finite(w.beta_error), "alpha": _finite(w.alpha),
             "effective_permittivity": _finite((float(w.beta) / k0) ** 2) if q.propagates else None,
             "e_share": _finite(e_sh), "h_share": _finite(h_sh),
             "guide_wavelength": _finite(w.guide_wavelength),
             "phase_velocity": _finite(w.phase_velocity), "group_velocity": _finite(w.group_velocity),
             "wave_impedance": {"real": _finite(zw.real + 0.0), "imag": _finite(zw.imag + 0.0)},
             "impedances": None if q.impedances is None else {k: (None if v is None else _finite(v))
                                                             for k, v in q.impedances.items()},
             "impedance_errors": None if q.impedance_errors is None else {
                 k: _finite(v) for k, v in q.impedance_errors.items()},
             "errors": None if q.errors is None else {k: _finite(v) for k, v in q.errors.items()},
             "voltage_path": None if q.voltage_path is None else [list(p) for p in q.voltage_path],
             "attenuation_np_per_m": None, "attenuation_db_per_m": None, "power_handling": None,
             "notes": list(q.notes)}
        if q.losses is not None:
            ls = q.losses
            d["attenuation_np_per_m"] = {"conductor": _finite(ls.conductor),
                                         "conductor_error": _finite(ls.conductor_error),
                                         "dielectric": _finite(ls.dielectric), "total": _finite(ls.total)}
            d["attenuation_db_per_m"] = {"conductor": _finite(ls.conductor_db),
                                         "conductor_error": _finite(ls.conductor_error * Q.NP_TO_DB),
                                         "dielectric": _finite(ls.dielectric_db), "total": _finite(ls.total_db)}
        if q.power is not None:
            p = q.power
            d["power_handling"] = {
                "frequency": _finite(p.frequency),
                "peak_field_per_sqrt_watt": _finite(p.peak_field_per_sqrt_watt),
                "peak_error": _finite(getattr(p, "peak_error", None)),
                "peak_location": None if p.peak_location is None else [_finite(v) for v in p.peak_location],
                "breakdown_field": _finite(p.breakdown_field), "breakdown_power": _finite(p.breakdown_power),
                "breakdown_power_error": _finite(getattr(p, "breakdown_power_error", None)),
                "safety_factor": _finite(p.safety_factor), "rated_power": _finite(p.rated_power),
                "rated_power_error": _finite(getattr(p, "rated_power_error", None)),
                "regions": [{"name": r.name, "eps_r": _finite(r.eps_r), "gas": bool(r.gas),
                             "peak_field_per_sqrt_watt": _finite(r.peak_field_per_sqrt_watt),
                             "peak_error": _finite(r.peak_error),
                             "peak_location": [_finite(v) for v in r.peak_location]}
                            for r in getattr(p, "regions", ())],
                "corners": [_corner(c) for c in p.corners],
                "corner_exclusion": _finite(p.corner_exclusion), "warnings": list(p.warnings)}
        modes.append(d)
    b = an.band
    band = {"single_mode": None, "recommended": None, "sweep": None}
    if b is not None:
        band["single_mode"] = {"f_low": _finite(b.low), "f_high": _finite(b.high), "ratio": _finite(b.ratio),
                               "dominant": b.dominant, "next": b.next}
        if b.recommended is not None:
            band["recommended"] = {"f_low": _finite(b.recommended[0]), "f_high": _finite(b.recommended[1]),
                                   "rule": "1.25 fc1 .. 0.95 fc2 (rule of thumb, common practice; not a standard)"}
    if an.sweep is not None:
        fs = an.sweep.frequencies
        per = []
        for idx, a in an.sweep.attenuation.items():
            number, label = sweep_name(an, idx)
            db = a * Q.NP_TO_DB
            entry = {"index": number - 1, "label": label, "attenuation_np_per_m": _num_list(a),
                     "attenuation_db_per_m": _num_list(db),
                     "min_db_per_m": _finite(np.nanmin(db)), "min_at": _finite(fs[int(np.nanargmin(db))]),
                     "max_db_per_m": _finite(np.nanmax(db)), "max_at": _finite(fs[int(np.nanargmax(db))]),
                     "rated_power": None, "rated_power_min": None, "rated_power_min_at": None}
            p = an.sweep.rated_power.get(idx)
            if p is not None:
                entry["rated_power"] = _num_list(p)
                entry["rated_power_min"] = _finite(np.nanmin(p))
                entry["rated_power_min_at"] = _finite(fs[int(np.nanargmin(p))])
            per.append(entry)
        band["sweep"] = {"f_low": _finite(fs[0]), "f_high": _finite(fs[-1]), "points": int(fs.size),
                         "frequencies": _num_list(fs), "modes": per,
                         "rated_power_note": "TE and TEM modes: scaled from the table frequency as 1 / Z_w "
                                             "(their peak field per sqrt(W) goes as sqrt(Z_w)); null otherwise"}
    first = next((q for q in an.modes if q.impedances is not None), None)
    doc = {
        "units": dict(ANALYSIS_UNITS),
        "frequency": _finite(f),
        "frequency_role": s.frequency_role,
        "walls": {"conductor": s.conductor, "conductivity": _finite(s.conductivity), "roughness": _finite(s.roughness),
                  "surface_resistance": _finite(Q.surface_resistance(f, s.conductivity)),
                  "skin_depth": _finite(Q.skin_depth(f, s.conductivity)),
                  "roughness_factor": _finite(Q.roughness_factor(f, s.conductivity, s.roughness))},
        "fill": {"tan_delta": _finite(s.tan_delta)},
        "breakdown_field": _finite(s.breakdown_field),
        "safety_factor": _finite(s.safety_factor),
        "impedance_first": s.impedance,
        "family_only": an.family,
        "modes": modes,
        "dominant_impedance": None if first is None else {"index": first.mode.index, "label": first.mode.label,
                                                          "shown_first": s.impedance, **first.impedances},
        "band": band,
        "methods": {"losses": "power-loss (perturbation) method on the lossless mode; Hammerstad-Jensen roughness",
                    "power_handling": "at the table frequency only; peak instantaneous |E| over the cross-section "
                                      "for a matched travelling wave"},
        "quantity_accuracy": _derived_document(an),
        "warnings": list(an.warnings),
        "cautions": list(an.cautions),
    }
    return _clean(doc)


def _derived_document(an):
    """How the field-derived quantities' error bars were found, or None."""
    d = getattr(an, "derived", None)
    if d is None:
        return None
    if an.loaded:
        return {"asked": _finite(d.accuracy), "met": bool(d.met), "mesh_sizes": [_finite(h) for h in d.sizes],
                "unknowns": list(d.unknowns), "rate_cap": _finite(d.cap),
                "method": "re-solves of the loaded guide at the analysis frequency at element sizes h r^k (r = 1.5), "
                          "each mode followed by the overlap of its transverse E; Richardson estimate of the last "
                          "three with the observed rate (refinement ratio from the unknowns), never above rate_cap "
                          "(the element order, or 2 lambda of the sharpest wall or material corner), the older pair "
                          "carried to the finest mesh too, times 3; the values are the finest mesh's",
                "modes": [{"index": i, "quantities": {k: {"value": _finite(q.value), "error": _finite(q.error),
                                                          "rate": _finite(q.rate), "observed_rate": _finite(q.observed)}
                                                      for k, q in qs.items()}}
                          for i, qs in d.quantities.items()],
                "warnings": list(d.warnings)}
    return {"asked": _finite(d.accuracy), "met": bool(d.met), "mesh_sizes": [_finite(h) for h in d.sizes],
            "unknowns": list(d.unknowns), "rate_cap": _finite(d.cap),
            "method": "re-solves at element sizes h r^k (r = 1.5) ending at the reported mesh; Richardson estimate "
                      "of the last three with the observed rate, never above rate_cap (the field's order p, or "
                      "2 pi / angle of the sharpest re-entrant corner), the older pair carried to the finest "
                      "mesh too, times 3",
            "modes": [{"index": i, "quantities": {k: {"value": _finite(q.value), "error": _finite(q.error),
                                                      "rate": _finite(q.rate), "observed_rate": _finite(q.observed)}
                                                  for k, q in qs.items()}}
                      for i, qs in d.quantities.items()],
            "warnings": list(d.warnings)}
