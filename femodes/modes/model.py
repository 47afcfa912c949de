"""Modes: eigenpairs -> Mode objects with cutoffs, labels and field evaluators.

Conventions (homogeneous fill eps_r, mu_r; fields vary as exp(j (omega t - beta z))):

* ``psi`` is the longitudinal potential: E_z for TM modes, H_z for TE modes, normalised so that
  int psi^2 dA = 1 (units 1/m).  For a TEM mode psi is the electrostatic potential (1 V on the
  inner conductor, 0 on the outer wall) and e_t = -grad psi, normalised to int |e_t|^2 dA = 1.
  With N inner conductors the TEM modes are the line's modal set: psi_k = sum_i t_ki phi_i with
  phi_i the potential of conductor i at 1 V (others at 0) and t_k the unit eigenvectors of the
  capacitance matrix (``ModeSet.line``, :mod:`femodes.solvers.electrostatic`); their e_t are
  mutually orthogonal.
* The transverse mode vectors are normalised to int |e_t|^2 dA = 1 (units 1/m):
      TM:  e_t = -grad_t psi / kc,            h_t = z x e_t
      TE:  e_t =  z x grad_t psi / kc,        h_t = z x e_t
  The physical fields of a mode of amplitude V are E_t = V e_t, H_t = (V / Z_w) h_t with the wave
  impedance Z_w (TE: omega mu / beta, TM: beta / (omega eps)), carrying power |V|^2 / (2 Re Z_w).
* beta = sqrt(k^2 - kc^2), k = omega sqrt(mu eps); below cutoff beta is returned as -j alpha.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from dataclasses import field as _dcfield

import numpy as np

from femodes.constants import C0, EPS0, MU0
from femodes.errors import FemodesError
from femodes.modes.display import cutoff_html, fc_short, fill_text, list_repr, section_text
from femodes.solvers.fields import ModeField, _transverse

__all__ = ["Mode", "ModeSet"]

_MOVED = ("attenuation", "impedance", "power_handling")


@dataclass(frozen=True, eq=False)
class Mode:
    """One guided mode of a homogeneously filled guide.

    family    : 'TE', 'TM' or 'TEM'
    kc        : cutoff wavenumber (rad/m), independent of the filling
    kc_error  : estimated absolute error of kc (rad/m), from a second discretisation
    eps_r, mu_r : relative permittivity and permeability of the filling
    label     : what an engineer calls it ('TE10', 'TM01', 'TE1 (x odd, y even)', ...)
    index     : position in its ModeSet (0-based, ascending cutoff)
    ordinal   : 1-based position within its family
    indices   : (m, n) for rectangles, (n, m) azimuthal/radial for circles and coax, else None
    symmetry  : parity of psi under x -> -x and y -> -y about the section's own axes,
                e.g. {'x': 'odd', 'y': 'even'}; empty if the section has no such symmetry
    symmetry_class : the class of psi in the section's symmetry group, in words ('even about all 3
                mirror lines', 'degenerate pair: 2-D class of D4', ...; '' without symmetry or
                for TEM modes); see femodes.modes.labels
    symmetry_group : the group's name ('D4', 'C2', 'circular', ...; femodes.geometry.symmetry)
    degenerate_with : indices of the other modes with the same cutoff (within the error estimate)
    multiplicity : how many modes share this cutoff, counting partners beyond the ``modes`` asked
    degeneracy : why it shares its cutoff ('' if it does not): 'symmetry' (forced by the section's
                symmetry: a square's TE10/TE01, a circle's pairs), 'TE/TM identity' (a rectangle's
                TE_mn/TM_mn, a circle's TE_0m/TM_1m), 'TEM' (several TEM modes), 'within error bar'
                (accidental: closer than the error bars, not forced); several joined by ', '
    potential : the finite-element potential psi (:class:`ModeField`)
    section   : the Section it was solved on (None for a mesh file)
    partner   : for a two-fold degenerate pair of the same family (a circle's TE11, a square's
                TE10/TE01), the other member; else None
    """

    family: str
    kc: float
    kc_error: float
    eps_r: float = 1.0
    mu_r: float = 1.0
    label: str = ""
    index: int = 0
    ordinal: int = 0
    indices: tuple | None = None
    symmetry: dict = _dcfield(default_factory=dict)
    symmetry_class: str = ""
    symmetry_group: str = ""
    nodal_domains: int | None = None
    degenerate_with: tuple = ()
    multiplicity: int = 1
    degeneracy: str = ""
    residual: float = 0.0
    potential: ModeField | None = _dcfield(default=None, repr=False)
    partner: "Mode | None" = _dcfield(default=None, repr=False)
    section: object = _dcfield(default=None, repr=False, compare=False)

    # -- cutoff -------------------------------------------------------------
    @property
    def fc(self):
        """Cutoff frequency (Hz) in the filling: c0 kc / (2 pi sqrt(eps_r mu_r))."""
        return C0 * self.kc / (2 * math.pi * math.sqrt(self.eps_r * self.mu_r))

    @property
    def fc_error(self):
        return C0 * self.kc_error / (2 * math.pi * math.sqrt(self.eps_r * self.mu_r))

    @property
    def rel_error(self):
        """Estimated relative error of kc (and fc)."""
        return self.kc_error / self.kc if self.kc > 0 else 0.0

    @property
    def cutoff_wavelength(self):
        """Cutoff wavelength 2 pi / kc (m): the wavelength in the filling at the cutoff frequency
        (equal to the free-space wavelength c0 / fc for an air-filled guide)."""
        return 2 * math.pi / self.kc if self.kc > 0 else math.inf

    # -- propagation at a frequency ------------------------------------------
    def _k(self, f):
        f = np.asarray(f, dtype=float)
        if not np.all(f > 0) or not np.all(np.isfinite(f)):
            raise FemodesError(f"frequency must be positive (Hz), got {f!r}")
        return 2 * np.pi * f * np.sqrt(self.eps_r * self.mu_r) / C0

    def beta(self, f):
        """Propagation constant beta (rad/m) at frequency f (Hz): sqrt(k^2 - kc^2).

        Below cutoff the mode is evanescent and the result is -1j * alpha (alpha in Np/m).
        """
        k = self._k(f)
        d = k * k - self.kc ** 2
        out = np.where(d >= 0, np.sqrt(np.abs(d)) + 0j, -1j * np.sqrt(np.abs(d)))
        if np.ndim(out) == 0:
            out = complex(out)
            return out.real if out.imag == 0 else out
        return out if np.any(out.imag != 0) else out.real

    def propagates(self, f):
        """True where the frequency f (Hz) is above cutoff."""
        return np.asarray(self._k(f)) > self.kc

    def _beta_real(self, f):
        """beta where the mode propagates, 0 at or below cutoff (array)."""
        k = np.asarray(self._k(f), dtype=float)
        return np.sqrt(np.maximum(k * k - self.kc ** 2, 0.0))

    def guide_wavelength(self, f):
        """Guide wavelength 2 pi / beta (m); inf at or below cutoff."""
        b = self._beta_real(f)
        with np.errstate(divide="ignore"):
            return np.where(b > 0, 2 * np.pi / np.where(b > 0, b, 1.0), np.inf)[()]

    def phase_velocity(self, f):
        """omega / beta (m/s); inf at or below cutoff."""
        return (np.asarray(f, float) * self.guide_wavelength(f))[()]

    def group_velocity(self, f):
        """d omega / d beta = (c^2 / (eps_r mu_r)) beta / omega (m/s); 0 at or below cutoff."""
        v = C0 / math.sqrt(self.eps_r * self.mu_r)
        return (v * v * self._beta_real(f) / (2 * np.pi * np.asarray(f, float)))[()]

    def wave_impedance(self, f):
        """Transverse wave impedance E_t / H_t (ohm): TE omega mu / beta, TM beta / (omega eps),
        TEM eta; imaginary below cutoff."""
        w = 2 * np.pi * np.asarray(f, float)
        mu, eps = MU0 * self.mu_r, EPS0 * self.eps_r
        if self.family == "TEM":
            return math.sqrt(mu / eps) + 0 * w
        b = self.beta(f)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = w * mu / b if self.family == "TE" else b / (w * eps)
        return z

    def longitudinal_shares(self, f):
        """(E_z share of the electric energy, H_z share of the magnetic energy) of the travelling
        mode at f (Hz), above cutoff.  A TE mode has H_z = -j (kc / beta) (V / Z_TE) psi and
        H_t = (V / Z_TE) h_t with int psi^2 = int |h_t|^2 = 1, so int |H_z|^2 / int |H_t|^2 =
        kc^2 / beta^2 and the H_z share is kc^2 / (beta^2 + kc^2) = kc^2 / k^2; a TM mode the same
        for E_z; a TEM mode (0, 0).  The loaded modes' ``e_share`` / ``h_share`` are the same
        measures (weighted by eps_r, mu_r, uniform here)."""
        k = np.asarray(self._k(f), dtype=float)
        share = np.where(k > 0, (self.kc / np.where(k > 0, k, 1.0)) ** 2, 0.0)[()]
        if self.family == "TE":
            return 0.0 * share, share
        if self.family == "TM":
            return share, 0.0 * share
        return 0.0 * share, 0.0 * share

    @property
    def cutoff_type(self):
        """The family: a homogeneously filled guide's modes keep their field type at every frequency."""
        return self.family

    # the empty-guide mode a mode grows from: a homogeneous mode is one itself
    parent = None
    parent_share = math.nan
    frequency = None  # solved for its cutoff; beta(f) is closed-form at any frequency

    # -- fields ----------------------------------------------------------------
    def fields(self, points):
        """Transverse mode vectors (e_x, e_y, h_x, h_y) at points (2, n), normalised as in the
        module docstring (int |e_t|^2 dA = 1); NaN outside the cross-section.

        These are pointwise gradients of the finite-element potential: they converge one order
        more slowly than the cutoffs (expect relative errors near 1e-4 where cutoffs are good to
        1e-6, worst next to walls and corners).  Integrated quantities (power, losses) are better.
        """
        if self.potential is None:
            raise FemodesError("this mode carries no field data")
        _, gx, gy = self.potential.evaluate(points)
        return _transverse(self.family, self.kc, self.potential, gx, gy)

    def longitudinal(self, points):
        """psi (E_z for TM, H_z for TE, potential for TEM) at points (2, n), int psi^2 dA = 1."""
        if self.potential is None:
            raise FemodesError("this mode carries no field data")
        return self.potential.evaluate(points)[0]

    # -- engineering quantities live in femodes.quantities (functions of a mode) --------------
    def __getattr__(self, name):
        if name in _MOVED:
            raise AttributeError(f"Mode.{name}(f, ...) is now femodes.{name}(mode, f, ...) (femodes.quantities): "
                                 "the mode model holds the mode, the quantities are functions of it")
        raise AttributeError(name)

    def summary(self):
        return f"{self.label}: fc = {self.fc / 1e9:.6f} GHz (+/- {self.fc_error / 1e9:.1e})"

    # -- display -----------------------------------------------------------------------------------
    def __repr__(self):
        return f"<Mode #{self.index + 1} {self.label} ({self.family}): fc = {fc_short(self)}>"

    def _repr_html_(self):
        """The mode's row of the cutoff table (the columns of :func:`femodes.report.modes_table`) for
        a notebook; its field pattern: ``femodes.field_pattern(mode)``."""
        return cutoff_html([self], False, caption=f"mode #{self.index + 1}: {self.label}", band=False,
                           after=("field pattern: femodes.field_pattern(mode)",))


class ModeSet(tuple):
    """The modes of one solve, ascending in cutoff: a tuple of :class:`Mode` with extras.

    Attributes: section, mesh (the mesh used), eps_r, mu_r, accuracy (asked), n_dofs, order,
    modes_asked (the count asked; the set holds more when a degenerate group with a forced
    degeneracy would be cut by it: the coax's TE01 comes with the TM11 pair sharing its cutoff),
    mesh_size, family (None, or 'TE'/'TM' for a one-family solve), line (for a guide with inner
    conductors: :class:`femodes.solvers.electrostatic.LineParameters`, the capacitance and
    inductance matrices with their errors and the TEM modal set; None without).
    """

    def __new__(cls, modes, **info):
        obj = super().__new__(cls, modes)
        obj.info = info
        return obj

    def __getattr__(self, name):
        try:
            return self.info[name]
        except KeyError:
            raise AttributeError(name) from None

    def __repr__(self):
        sec = self.info.get("section")
        where = f" of a {sec.kind} section" if hasattr(sec, "kind") else " of a mesh" if self.info.get("mesh") else ""
        return list_repr("ModeSet", self, where, limit=4)

    def _repr_html_(self):
        """The cutoff table (the columns and units of :func:`femodes.report.modes_table`: GHz to the
        first digit of each error, mm) with the single-mode band under it, for a notebook."""
        section = self.info.get("section") or self.info.get("mesh")
        acc = self.info.get("accuracy")
        family = self.info.get("family")
        before = [fill_text(self.info.get("eps_r", 1.0), self.info.get("mu_r", 1.0))
                  + (f"; accuracy asked {acc:.1e} (relative, on kc)" if acc is not None else "")
                  + (f"; unknowns {self.info['n_dofs']}" if "n_dofs" in self.info else "")
                  + (f"; {family} modes only" if family else "")]
        return cutoff_html(self, False, caption=f"{len(self)} modes of {section_text(section)}", before=before,
                           family=family)

    def by_label(self, label):
        """All modes with this label (a degenerate pair gives two)."""
        hits = [m for m in self if m.label == label]
        if not hits:
            raise FemodesError(f"no mode labelled {label!r}; labels here: {', '.join(m.label for m in self)}")
        return hits

    def single_mode_band(self):
        """(f_low, f_high): from the lowest cutoff to the next cutoff of a mode that is not
        degenerate with the lowest (Hz).  For a guide with a TEM mode the band starts at 0 Hz.
        With a one-family solve (``family='TE'``) the band is among that family only."""
        if not self:
            raise FemodesError("no modes: solve for at least two modes to find the single-mode band")
        first = self[0]
        same = set(first.degenerate_with) | {first.index}
        rest = [m for m in self if m.index not in same]
        if not rest:
            raise FemodesError("solve for more modes: all modes found share the lowest cutoff, "
                               "so the upper edge of the single-mode band is not known")
        return first.fc, rest[0].fc
