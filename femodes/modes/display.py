"""How a mode is shown to people: numbers with as many digits as their error estimate justifies,
the rows of the cutoff table, and the short ``repr`` and HTML table a notebook shows.

The terminal report (:func:`femodes.report.modes_table`) and the notebook's HTML
(``_repr_html_`` of :class:`~femodes.modes.ModeSet`, :class:`~femodes.modes.Mode`, the loaded
modes, :class:`femodes.api.Study`) take their columns from the same functions here
(:func:`cutoff_columns`, :func:`loaded_columns`; :func:`sweep_columns` for a sweep's points), so the
two show the same columns in the same units: cutoff frequencies in GHz to the first significant digit of their error, lengths in mm.
This sits beside the mode model, below the report, because both the model's own display and
the report need it; it imports only the constants (c0).
"""

from __future__ import annotations

import html
import math

from femodes.constants import C0

# -- numbers for people ------------------------------------------------------------------------


def _decimals(err, floor=0, cap=12):
    """Decimals that keep the first significant digit of ``err`` (same unit as the value)."""
    if not (err > 0 and math.isfinite(err)):
        return None
    return max(floor, min(cap, -math.floor(math.log10(err))))


def _fixed(value, decimals):
    return f"{value:.{decimals}f}"


def _significant(value, sig):
    """``value`` with ``sig`` significant digits in fixed notation."""
    if value == 0 or not math.isfinite(value):
        return "0" if value == 0 else "-"
    dec = max(0, sig - 1 - math.floor(math.log10(abs(value))))
    return f"{value:.{dec}f}"


def _sig_digits(value, err, default=7):
    """Significant digits of ``value`` justified by its error ``err`` (3 to 13)."""
    if not (value > 0 and err > 0 and math.isfinite(err)):
        return default
    return max(3, min(13, math.floor(math.log10(value)) - math.floor(math.log10(err)) + 1))


def format_ghz(f, err):
    """A frequency (Hz) in GHz, to the first significant digit of its error (Hz)."""
    if f == 0:
        return "0"
    dec = _decimals(err / 1e9)
    return _fixed(f / 1e9, 6 if dec is None else dec)


def _err_text(err_hz):
    if not (err_hz > 0 and math.isfinite(err_hz)):
        return "-"
    return f"{err_hz / 1e9:.0e}"


def _g(x, sig=5):
    """A number with ``sig`` significant digits, plain notation where sensible."""
    x = float(x)
    if not math.isfinite(x):
        return "-"
    if x == 0:
        return "0"
    if 1e-4 <= abs(x) < 1e7:
        return _significant(x, sig)
    return f"{x:.{sig - 1}e}"


def _share(x):
    """A longitudinal energy share: '0' below 1e-12 (rounding noise of a pure TE / TM mode)."""
    return "0" if abs(x) < 1e-12 else _g(x, 3)


def _symmetry_text(sym):
    return ", ".join(f"{ax} {par}" for ax, par in sorted(sym.items())) if sym else "-"


def _degenerate_text(m):
    """'#2 #3', plus how many partners lie beyond the modes listed ('+1 not listed')."""
    text = " ".join(f"#{i + 1}" for i in m.degenerate_with)
    extra = m.multiplicity - 1 - len(m.degenerate_with)
    if extra > 0:
        text = (text + " " if text else "") + f"+{extra} not listed"
    kind = getattr(m, "degeneracy", "")
    if text and kind:
        text += f" ({kind})"
    return text or "-"


def _band(modeset):
    """(f_low, f_high, ratio or None, first mode, next mode): from the lowest cutoff (0 Hz with a
    TEM mode) to the next cutoff that is not a degenerate partner of it; None without such a
    second cutoff.

    Same meaning as ModeSet.single_mode_band(), but the partners are taken from each mode's
    ``degenerate_with`` (the solver's error-aware grouping), so that a pair like a circle's TE11,
    whose two computed cutoffs differ in the last digits, is not reported as a band of zero width.
    """
    modes = sorted(modeset, key=lambda m: m.fc)
    if not modes:
        return None
    first = modes[0]
    if first.family == "TEM" or first.kc == 0:
        group = {m.index for m in modes if m.family == "TEM" or m.kc == 0}
    else:
        group = {first.index, *first.degenerate_with}
    rest = [m for m in modes if m.index not in group]
    if not rest:
        return None
    f1, f2 = float(first.fc), float(rest[0].fc)
    return f1, f2, (f2 / f1 if f1 > 0 else None), first, rest[0]


def band_text(modes, family=None):
    """The single-mode band line of the cutoff table: 'single-mode band: 6.557 - 13.11 GHz (ratio
    2.000:1, TE10 alone)'."""
    band = _band(modes)
    only = f" (among {family} modes only)" if family else ""
    if band is None:
        return "single-mode band: needs at least two distinct cutoffs; solve for more modes"
    f1, f2, ratio, m1, m2 = band
    text = f"{format_ghz(f1, m1.fc_error)} - {format_ghz(f2, m2.fc_error)} GHz"
    if ratio is None:
        return f"single-mode band{only}: {text} (TEM only below the first higher-order cutoff)"
    who = (f"only the degenerate {m1.label} pair" if (m1.degenerate_with or m1.multiplicity > 1)
           else f"{m1.label} alone")
    return f"single-mode band{only}: {text} (ratio {ratio:.3f}:1, {who})"


# -- the columns of the tables -----------------------------------------------------------------


def cutoff_columns(modes, loaded, with_class=False):
    """(head, rows, right-aligned column indices) of the cutoff table: one row per mode, the
    cutoff in GHz with its error, the cutoff wavelength in mm; for a homogeneous guide also kc
    (rad/m), the degenerate partners, the symmetry and the nodal regions, and with ``with_class``
    the mode's class in the section's point group.  ``loaded``: the modes are cutoffs of a guide
    with material regions (:class:`~femodes.modes.LoadedCutoff`)."""
    if loaded:
        head = ["#", "label", "family", "fc [GHz]", "± [GHz]", "cutoff wl [mm]"]
        right = {0, 3, 4, 5}
    else:
        head = ["#", "label", "family", "fc [GHz]", "± [GHz]", "cutoff wl [mm]", "kc [rad/m]",
                "degenerate with", "symmetry", "nodal regions"] + (["class"] if with_class else [])
        right = {0, 3, 4, 5, 6, 9}
    rows = []
    for m in modes:
        sig = _sig_digits(m.fc, m.fc_error)
        wl = m.cutoff_wavelength
        row = [str(m.index + 1), m.label, m.family, format_ghz(m.fc, m.fc_error), _err_text(m.fc_error),
               _significant(wl * 1e3, sig) if math.isfinite(wl) else "-"]
        if not loaded:
            row += [_significant(m.kc, sig) if m.kc > 0 else "0", _degenerate_text(m), _symmetry_text(m.symmetry),
                    "-" if m.nodal_domains is None else str(m.nodal_domains)]
            row += [m.symmetry_class or "-"] if with_class else []
        rows.append(row)
    return head, rows, right


def _beta_text(b, sig):
    """beta (rad/m): real where the mode propagates, '-j alpha' where it is evanescent, 'a+jb'
    for a member of a complex pair."""
    b = complex(b)
    if abs(b.imag) <= 1e-12 * abs(b):
        return _significant(b.real, sig) if b.real > 0 else "0"
    if abs(b.real) <= 1e-12 * abs(b):
        return f"-j{_g(abs(b.imag), sig)}"
    return f"{_g(b.real, 4)}{'-' if b.imag < 0 else '+'}j{_g(abs(b.imag), 4)}"


def loaded_columns(modes):
    """(head, rows, right) of the modes of a loaded guide at their frequency: beta with its error,
    guide wavelength (mm), eps_eff = (beta / k0)^2, v_p / c, v_g / c and the longitudinal energy
    shares: the columns of the report's table at a frequency that the modes themselves know
    (the losses are computed by :func:`femodes.report.analyse`)."""
    head = ["#", "label", "family", "beta [rad/m]", "± [rad/m]", "guide wl [mm]", "eps_eff", "v_p/c", "v_g/c",
            "Ez share", "Hz share"]
    rows = []
    for m in modes:
        b = m.beta()
        err = float(m.beta_error)
        sig = _sig_digits(abs(complex(b)), err)
        prop = bool(m.propagates())
        eps = complex(m.effective_permittivity)  # complex for a member of a complex pair
        e_sh, h_sh = m.longitudinal_shares()
        rows.append([str(m.index + 1), m.label, m.family, _beta_text(b, sig), f"{err:.0e}" if err > 0 else "-",
                     _g(m.guide_wavelength() * 1e3) if prop else "-",
                     f"{eps.real:.5f}" if eps.imag == 0 else "-",
                     f"{m.phase_velocity() / C0:.4f}" if prop else "-",
                     f"{m.group_velocity() / C0:.4f}" if prop else "-",
                     _share(e_sh), _share(h_sh)])
    return head, rows, set(range(3, 11)) | {0}


# -- HTML and repr ---------------------------------------------------------------------------------

_TABLE_STYLE = "border-collapse:collapse;font-size:90%"
_CELL = "padding:1px 8px;border-bottom:1px solid #ddd"


def html_table(head, rows, right=(), caption=None):
    """An HTML table of text cells (every cell escaped): the header row, then ``rows``; the
    columns in ``right`` right-aligned (numbers)."""
    esc = html.escape

    def cells(tag, row):
        return "".join(f'<{tag} style="{_CELL};text-align:{"right" if j in right else "left"}">{esc(str(c))}</{tag}>'
                       for j, c in enumerate(row))

    out = [f'<table class="femodes" style="{_TABLE_STYLE}">']
    if caption:
        out.append(f'<caption style="text-align:left;font-weight:bold">{esc(caption)}</caption>')
    out.append(f"<thead><tr>{cells('th', head)}</tr></thead><tbody>")
    out += [f"<tr>{cells('td', r)}</tr>" for r in rows]
    out.append("</tbody></table>")
    return "".join(out)


def html_lines(lines):
    """Paragraph lines under or above a table, each escaped."""
    return "".join(f'<div style="font-size:90%">{html.escape(str(t))}</div>' for t in lines if t)


def html_block(caption, before, table, after):
    """One display block: a caption line, text lines, a table (HTML), more text lines."""
    return (f'<div class="femodes">{html_lines([caption]) if caption else ""}{html_lines(before)}'
            f"{table}{html_lines(after)}</div>")


def section_text(section):
    """What the section is, in words (its own ``describe()``), or how big a mesh file's mesh is."""
    if section is None:
        return "a guide"
    if hasattr(section, "describe"):
        return section.describe()
    n = getattr(section, "n_triangles", None)
    return f"triangle mesh ({n} triangles)" if n is not None else type(section).__name__


def fill_text(eps_r, mu_r):
    return f"fill: eps_r = {eps_r:g}, mu_r = {mu_r:g}"


def cutoff_html(modes, loaded, caption=None, before=(), after=(), family=None, band=True):
    """The cutoff table of ``modes`` as HTML, with the single-mode band under it (``band``) and
    the lines ``after``."""
    head, rows, right = cutoff_columns(modes, loaded)
    notes = []
    if loaded:
        notes.append("(TE-type: only transverse E at cutoff; TM-type: only E_z; 'from': the empty-guide mode "
                     "whose field at cutoff it mostly has.  Above cutoff the modes are hybrid in general.)")
    if band and modes:
        notes.append(band_text(modes, family))
    return html_block(caption, before, html_table(head, rows, right), notes + list(after))


def at_frequency_html(modes, caption=None, before=(), after=()):
    """The modes of a loaded guide at their frequency as HTML."""
    head, rows, right = loaded_columns(modes)
    notes = ["(label: the empty-guide mode it grows from; Ez / Hz share: the longitudinal share of the electric / "
             "magnetic energy, 0 for TE / TM; eps_eff = (beta/k0)^2; losses: femodes.report.analyse)"]
    return html_block(caption, before, html_table(head, rows, right), notes + list(after))


def fc_short(m):
    """'6.557 GHz ± 3e-06' (the cutoff to its error) or 'fc = ?' where there is none."""
    if not math.isfinite(m.fc):
        return "fc not solved"
    return f"{format_ghz(m.fc, m.fc_error)} GHz" + (f" ± {_err_text(m.fc_error)}" if _err_text(m.fc_error) != "-" else "")


def list_repr(name, modes, extra="", limit=6):
    """A short repr of a set of modes: '<ModeSet: 6 modes, TE10 6.557 GHz, TE20 13.11 GHz, ...>'."""
    n = len(modes)
    bits = []
    for m in list(modes)[:limit]:
        if math.isfinite(getattr(m, "fc", math.nan)):
            bits.append(f"{m.label} {format_ghz(m.fc, m.fc_error)} GHz")
        elif hasattr(m, "beta_value"):
            bits.append(f"{m.label} beta {_beta_text(m.beta_value, 6)} rad/m")
        else:
            bits.append(m.label)
    more = f", ... {n - limit} more" if n > limit else ""
    return f"<{name}: {n} mode{'s' if n != 1 else ''}{extra}" + (": " + ", ".join(bits) if bits else "") + more + ">"


# -- sweeps: the cutoffs over a grid of parameters (femodes.studies.SweepResult, duck-typed) ------------


#: sweep parameters without a unit (a region's or the fill's material, 'region.NAME.eps_r')
_UNITLESS = ("eps_r", "mu_r", "tan_delta")


#: lengths are shown in mm unless a case file gives its own unit: (name, metres per unit)
MM = ("mm", 1e-3)


def _param_unit(name, length=MM):
    """The unit a sweep parameter is shown in: GHz for the frequency, degrees for an angle, none
    ('1') for a material property, ``length`` (a case file's unit, default mm) for a length."""
    if name == "frequency":
        return "GHz"
    if name == "angle":
        return "deg"
    return "1" if name.split(".")[-1] in _UNITLESS else length[0]


def _param_text(name, value, length=MM):
    """A sweep parameter (SI) in the unit of :func:`_param_unit`, 6 significant digits."""
    unit = _param_unit(name, length)
    if unit == "deg":
        return f"{math.degrees(value):.6g}"
    scale = {"GHz": 1e-9, "1": 1.0}.get(unit, 1.0 / length[1])
    return f"{value * scale:.6g}"


def sweep_columns(result, labels=None, length=MM):
    """(head, rows, right-aligned columns, notes) of a :class:`~femodes.studies.SweepResult`: one
    row per point in grid order; ``notes`` says why each invalid point was refused.  ``labels``
    maps a parameter to the name shown (the case file's key); ``length``: the unit lengths are
    shown in, (name, metres per unit)."""
    labels = labels or {}
    head = [f"{labels.get(n, n)} [{_param_unit(n, length)}]" for n in result.names]
    width = getattr(result, "modes_shown", result.modes)  # a point may return a degenerate group whole
    head += [f"fc{k + 1} [GHz]" for k in range(width)] + ["single-mode band [GHz]", "ratio"]
    rows, notes = [], []
    for key in sorted(result.points):
        r = result.points[key]
        row = [_param_text(n, v, length) for n, v in zip(result.names, key)]
        if r["status"] != "ok":
            row += ["-"] * width + ["invalid", "-"]
            notes.append(f"{', '.join(row[:len(result.names)])}: {r['message']}")
        else:
            fcs = [format_ghz(f, e) for f, e in zip(r["fc"], r["fc_error"])]
            row += fcs + ["-"] * (width - len(fcs))
            band = r["band"]
            if band is None:
                row += ["-", "-"]
            else:
                row += [f"{band[0] / 1e9:.5g} - {band[1] / 1e9:.5g}",
                        f"{band[1] / band[0]:.4f}" if band[0] > 0 else "TEM"]
        rows.append(row)
    return head, rows, set(range(len(head) - 2)) | {len(head) - 1}, notes


def fixed_text(result, length=MM):
    """'width = 34 mm, height = 16 mm' of the sweep's fixed numeric parameters, or '-'."""
    def unit(k):
        u = _param_unit(k, length)
        return "" if u in ("deg", "1") else f" {u}"
    return ", ".join(f"{k} = {_param_text(k, v, length)}{unit(k)}"
                     for k, v in result.parameters.items() if isinstance(v, float)) or "-"
