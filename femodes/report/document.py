"""JSON-ready documents of a solve for programs: SI units throughout, stated in the document's
"units" entry; values that do not exist are null, never NaN or infinity.
"""

from __future__ import annotations

import math

import numpy as np

from femodes import quantities as Q
from femodes.constants import __version__
from femodes.report.analysis import ANALYSIS_UNITS, _loaded_wall_loss, _mode_of
from femodes.report.files import _write_text
from femodes.report.text import _band, _clean, _finite, _num_list, _section_info

#: units of the numbers in :func:`modes_document` and :func:`write_csv`
DOCUMENT_UNITS = {"length": "m", "angle": "rad", "kc": "rad/m", "kc_error": "rad/m", "fc": "Hz",
         "fc_error": "Hz", "cutoff_wavelength": "m", "f_low": "Hz", "f_high": "Hz", "accuracy": "1 (relative, on kc)"}


_ANGLE_PARAMS = {"angle"}


def modes_document(modeset, title=None, analysis=None) -> dict:
    """A JSON-ready dict of the solve, SI units (see the "units" entry); no NaN or infinity.
    With an :class:`Analysis` it has an "analysis" object too (:func:`analysis_document`)."""

    band = _band(modeset)
    doc = {
        "femodes_version": __version__,
        "title": title,
        "units": dict(DOCUMENT_UNITS),
        "section": _section_info(modeset),
        "fill": {"eps_r": float(modeset.eps_r), "mu_r": float(modeset.mu_r)},
        "accuracy": float(modeset.accuracy),
        "discretisation": {"unknowns": int(modeset.n_dofs), "element_order": int(modeset.order),
                           "triangles": int(modeset.mesh.n_triangles)},
        "single_mode_band": None if band is None else
        {"f_low": band[0], "f_high": band[1], "ratio": None if band[2] is None else _finite(band[2])},
        "modes": [{
            "index": m.index,
            "label": m.label,
            "family": m.family,
            "kc": _finite(m.kc),
            "kc_error": _finite(m.kc_error),
            "fc": _finite(m.fc),
            "fc_error": _finite(m.fc_error),
            "cutoff_wavelength": _finite(m.cutoff_wavelength),
            "degenerate_with": [int(i) for i in m.degenerate_with],
            "multiplicity": int(m.multiplicity),
            "symmetry": dict(m.symmetry),
            "nodal_domains": None if m.nodal_domains is None else int(m.nodal_domains),
            "indices": None if m.indices is None else [int(i) for i in m.indices],
        } for m in modeset],
    }
    if analysis is not None:
        doc["analysis"] = analysis_document(analysis)
    return _clean(doc)


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
        d = {"index": m.index, "label": m.label, "family": m.family, "propagates": q.propagates,
             "beta": _finite(w.beta), "alpha": _finite(w.alpha), "guide_wavelength": _finite(w.guide_wavelength),
             "phase_velocity": _finite(w.phase_velocity), "group_velocity": _finite(w.group_velocity),
             "wave_impedance": {"real": _finite(zw.real + 0.0), "imag": _finite(zw.imag + 0.0)},
             "impedances": None if q.impedances is None else {k: (None if v is None else _finite(v))
                                                             for k, v in q.impedances.items()},
             "voltage_path": None if q.voltage_path is None else [list(p) for p in q.voltage_path],
             "attenuation_np_per_m": None, "attenuation_db_per_m": None, "power_handling": None,
             "notes": list(q.notes)}
        if q.losses is not None:
            ls = q.losses
            d["attenuation_np_per_m"] = {"conductor": _finite(ls.conductor), "dielectric": _finite(ls.dielectric),
                                         "total": _finite(ls.total)}
            d["attenuation_db_per_m"] = {"conductor": _finite(ls.conductor_db), "dielectric": _finite(ls.dielectric_db),
                                         "total": _finite(ls.total_db)}
        if q.power is not None:
            p = q.power
            d["power_handling"] = {
                "frequency": _finite(p.frequency),
                "peak_field_per_sqrt_watt": _finite(p.peak_field_per_sqrt_watt),
                "peak_location": [_finite(v) for v in p.peak_location],
                "breakdown_field": _finite(p.breakdown_field), "breakdown_power": _finite(p.breakdown_power),
                "safety_factor": _finite(p.safety_factor), "rated_power": _finite(p.rated_power),
                "corners": [[_finite(v) for v in c] for c in p.corners],
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
            m = _mode_of(an, idx)
            db = a * Q.NP_TO_DB
            entry = {"index": idx, "label": m.label, "attenuation_np_per_m": _num_list(a),
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
        "warnings": list(an.warnings),
        "cautions": list(an.cautions),
    }
    return _clean(doc)


#: units of the numbers in :func:`loaded_document` (SI)
LOADED_UNITS = {"length": "m", "fc": "Hz", "fc_error": "Hz", "frequency": "Hz", "beta": "rad/m",
                "beta_error": "rad/m", "guide_wavelength": "m", "alpha_dielectric": "Np/m",
                "alpha_conductor": "Np/m", "alpha_conductor_error": "Np/m", "conductivity": "S/m", "roughness": "m",
                "phase_velocity": "1 (v_p / c0)", "group_velocity": "1 (v_g / c0)",
                "effective_permittivity": "1 ((beta / k0)^2)",
                "accuracy": "1 (relative: on beta^2 / (k0^2 eps_max mu_max) at a frequency, on fc for cutoffs)"}


def loaded_document(study, title=None) -> dict:
    """A JSON-ready dict of a :class:`femodes.loaded.LoadedStudy` (SI units, no NaN)."""

    sec = study.section
    doc = {
        "femodes_version": __version__, "title": title, "units": dict(LOADED_UNITS),
        "section": {"kind": sec.kind, "description": sec.describe(),
                    "params": {k: float(v) for k, v in sec.params.items()
                               if isinstance(v, (int, float)) and not isinstance(v, bool)}},
        "fill": {"eps_r": study.eps_r, "mu_r": study.mu_r, "tan_delta": study.tan_delta},
        "regions": [{"name": m.name or None, "eps_r": m.eps_r, "mu_r": m.mu_r, "tan_delta": m.tan_delta}
                    for m in sec.materials],
        "accuracy": study.accuracy,
        "discretisation": {"unknowns": int(study.n_dofs), "element_order": int(study.order),
                           "elements": "Nedelec (transverse E) and Lagrange (E_z)"},
        "walls": {"conductor": study.conductor, "conductivity": _finite(study.conductivity),
                  "roughness": _finite(study.roughness)},
        "cutoffs": [{"index": c.index, "label": c.label, "field": c.field, "fc": c.fc, "fc_error": c.fc_error,
                     "parent": c.parent, "parent_share": _finite(c.parent_share)} for c in study.cutoffs],
        "single_mode_band": None if study.single_mode_band is None else
        {"f_low": study.single_mode_band[0], "f_high": study.single_mode_band[1]},
    }
    if study.frequency is not None:
        doc["at_frequency"] = {"frequency": study.frequency, "unknowns": int(study.n_dofs_at_f),
                               "more_may_propagate": bool(study.more_propagate), "modes": [{
                                   "index": m.index, "label": m.label, "family": m.family, "parent": m.parent,
                                   "parent_share": _finite(m.parent_share),
                                   "beta": _finite(m.beta().real) if m.propagating else None,
                                   "alpha": None if m.propagating else _finite(abs(m.beta())),
                                   "beta_error": _finite(m.beta_error),
                                   "guide_wavelength": _finite(m.guide_wavelength()),
                                   "effective_permittivity": _finite(m.effective_permittivity),
                                   "phase_velocity": _finite(m.phase_velocity()),
                                   "group_velocity": _finite(m.group_velocity()),
                                   "alpha_dielectric": _finite(m.dielectric_attenuation()),
                                   "alpha_conductor": _finite(ac), "alpha_conductor_error": _finite(ac_err),
                                   "e_share": _finite(m.e_share), "h_share": _finite(m.h_share)}
                                   for m in study.modes for ac, ac_err in (_loaded_wall_loss(m, study),)]}
    d = study.dispersion
    if d is not None:
        b2 = np.asarray(d.beta2, dtype=float)
        doc["dispersion"] = {"frequencies": [float(f) for f in d.frequencies],
                             "labels": [l or None for l in d.labels] or None,
                             "beta": [[_finite(math.sqrt(v)) if v > 0 else None for v in row] for row in b2],
                             "beta_squared": [[float(v) for v in row] for row in b2],
                             "family": [[str(f) for f in row] for row in d.family],
                             "overlap": [[float(v) for v in row] for row in d.overlap]}
    return _clean(doc)
