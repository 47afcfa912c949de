"""The modes of a guide partly loaded with dielectric: :class:`LoadedMode` (a hybrid mode at the
frequency it was solved at, with its error and the empty-guide mode it grows from) and
:class:`LoadedCutoff` (a cutoff, beta = 0).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from femodes.constants import C0, MU0
from femodes.errors import FemodesError
from femodes.modes.display import _g, at_frequency_html, cutoff_html, fc_short, list_repr


@dataclass(frozen=True, eq=False)
class LoadedMode:
    """One mode of a loaded guide at the frequency it was solved at.

    family : 'TE', 'TM', 'TEM' or 'hybrid', from the longitudinal energy shares (``e_share``,
             ``h_share``; see femodes.vector.FAMILY_THRESHOLD); 'complex' for a member of a
             complex-conjugate pair of beta^2 below cutoff (label 'complex pair 1 (+)' for
             Im beta^2 > 0, '(-)' for its conjugate; beta complex, the principal root, Re beta
             >= 0; beta_error = |error of beta^2| / (2 |beta|))
    label  : 'hybrid from TE10' when the mode's transverse E is mostly (``parent_share`` >= 0.8)
             that of one empty-guide mode or degenerate group ('hybrid from TE11/TM11': the
             LSE/LSM mixtures of a rectangle's degenerate pair), or of two ('... from TE10+TE20');
             else family and ordinal, e.g. 'hybrid 2'
    parent : the empty-guide label(s) it grows from, or None; ``parent_share`` the share of
             int |E_t|^2 in their transverse fields (empty guide = the section without its
             regions, solved with the scalar solver for the labels)
    frequency : Hz;  beta_error : estimated absolute error of beta (rad/m)
    vector : the :class:`femodes.vector.VectorMode` with the fields
    """

    family: str
    label: str
    frequency: float
    beta_value: complex | float
    beta_error: float
    index: int
    vector: object = field(repr=False)
    parent: str | None = None
    parent_share: float = math.nan
    lower: object = field(default=None, repr=False)  # () -> the modes at order p - 1, same mesh

    def beta(self, f=None):
        """beta (rad/m) at the solve frequency, -1j alpha if evanescent.  Asking at another
        frequency is an error: the mode was solved at one frequency only."""
        if f is not None and not math.isclose(float(f), self.frequency, rel_tol=1e-12):
            raise FemodesError(f"this mode was solved at {self.frequency / 1e9:.9g} GHz, not {float(f) / 1e9:.9g} GHz; "
                               "for beta at other frequencies use femodes.dispersion(section, frequencies, "
                               "modes=N), or solve again at that frequency")
        return self.beta_value

    @property
    def propagating(self):
        return self.vector.propagating

    def propagates(self, f=None):
        """True if the mode propagates (beta^2 > 0) at its frequency (the homogeneous modes'
        ``propagates(f)``, for the one frequency this mode was solved at)."""
        self.beta(f)
        return bool(self.propagating)

    def guide_wavelength(self, f=None):
        """2 pi / beta (m); inf for an evanescent mode."""
        b = self.beta(f)
        return 2 * math.pi / b if isinstance(b, float) and b > 0 else math.inf

    def phase_velocity(self, f=None):
        """omega / beta (m/s); inf if evanescent."""
        b = self.beta(f)
        return 2 * math.pi * self.frequency / b if isinstance(b, float) and b > 0 else math.inf

    def group_velocity(self, f=None):
        """d omega / d beta (m/s), by perturbation of the pencil at this frequency
        (femodes.solvers.vector.VectorMode.group_velocity, which gives v_g / c0); NaN if evanescent."""
        self.beta(f)
        return C0 * self.vector.group_velocity

    def wave_impedance(self, f=None):
        """E_t / H_t (ohm) where the mode has one: a TE mode (no E_z) in a guide of uniform mu_r
        has H_t = (beta / (omega mu)) z x E_t everywhere (Faraday's law with E_z = 0), so
        Z = omega mu0 mu_r / beta.  A hybrid, TM-like or TEM-like mode of an inhomogeneous fill has
        no single ratio (it varies over the section with eps_r): NaN, as below cutoff."""
        b = self.beta(f)
        mu = getattr(self.vector.problem, "mu_r", None)
        uniform = mu is not None and float(np.ptp(np.asarray(mu))) == 0.0
        if self.family != "TE" or not uniform or not (isinstance(b, float) and b > 0):
            return math.nan
        return 2 * math.pi * self.frequency * MU0 * float(np.asarray(mu).flat[0]) / b

    def longitudinal_shares(self, f=None):
        """(E_z share of the electric energy, H_z share of the magnetic energy) at the mode's
        frequency: ``e_share``, ``h_share``."""
        self.beta(f)
        return self.e_share, self.h_share

    # -- what the homogeneous modes have and a loaded mode at one frequency does not know -------
    kc = math.nan            # its cutoff is a separate solve (femodes.api.study: ``modes``)
    kc_error = math.nan
    fc = math.nan
    fc_error = math.nan
    symmetry = {}
    symmetry_class = ""
    symmetry_group = ""
    nodal_domains = None
    indices = None
    degenerate_with = ()
    multiplicity = 1

    def dielectric_attenuation(self, f=None):
        """Attenuation by the loss tangents of the fill and the regions, Np/m (first order in
        tan_delta; femodes.vector.VectorMode.dielectric_attenuation); NaN if evanescent."""
        self.beta(f)
        return self.vector.dielectric_attenuation

    @property
    def e_share(self):
        """int eps_r |E_z|^2 / int eps_r |E|^2: how far from TE the mode is (0 for TE)."""
        return self.vector.e_share

    @property
    def h_share(self):
        """int mu_r |H_z|^2 / int mu_r |H|^2: how far from TM the mode is (0 for TM)."""
        return self.vector.h_share

    @property
    def effective_permittivity(self):
        """(beta / k0)^2: the relative permittivity of a medium in which a plane wave would have
        this beta (below the largest eps_r mu_r of the section for any guided mode)."""
        k0 = 2 * math.pi * self.frequency / C0
        return self.vector.beta2 / (k0 * k0)

    def fields(self, points):
        """(E_x, E_y, E_z, H_x, H_y, H_z) at points (2, n); see VectorMode.fields."""
        return self.vector.fields(points)

    # -- display -----------------------------------------------------------------------------------
    def __repr__(self):
        b = complex(self.beta_value)
        what = (f"beta = {_g(b.real, 7)} rad/m" if b.imag == 0 and b.real > 0 else
                f"beta = {_g(b.real, 4)}{'-' if b.imag < 0 else '+'}j{_g(abs(b.imag), 4)} rad/m")
        return f"<LoadedMode #{self.index + 1} {self.label} ({self.family}) at {self.frequency / 1e9:.6g} GHz: {what}>"

    def _repr_html_(self):
        """The mode's row of the table at its frequency (beta with its error, guide wavelength,
        eps_eff, v_p, v_g, longitudinal shares), for a notebook; its field pattern:
        ``femodes.field_pattern(mode)``."""
        return at_frequency_html([self], caption=f"mode #{self.index + 1} at {self.frequency / 1e9:.6g} GHz: "
                                 f"{self.label}", after=("field pattern: femodes.field_pattern(mode)",))


@dataclass(frozen=True, eq=False)
class LoadedCutoff:
    """A cutoff (beta = 0) of a loaded guide: ``field`` 'TE' (transverse E only at cutoff) or
    'TM' (E_z only); ``fc`` Hz, ``fc_error`` its estimated error (Hz).

    label  : 'TE-type from TE10' when the field at cutoff is mostly (``parent_share`` >= 0.8) that
             of one empty-guide mode or degenerate group at its cutoff (transverse E compared with
             the TE modes' for a TE-type cutoff, E_z with the TM modes' for a TM-type one), else
             'TE-type 2' (the ordinal among its type)
    """

    field: str
    label: str
    fc: float
    fc_error: float
    index: int
    parent: str | None = None
    parent_share: float = math.nan

    @property
    def rel_error(self):
        return self.fc_error / self.fc if self.fc > 0 else 0.0

    def __repr__(self):
        return f"<LoadedCutoff #{self.index + 1} {self.label}: fc = {fc_short(self)}>"

    def _repr_html_(self):
        """The cutoff's row of the cutoff table, for a notebook."""
        return cutoff_html([self], True, caption=f"cutoff #{self.index + 1}: {self.label}", band=False)

    @property
    def family(self):
        """'hybrid': above its cutoff a loaded-guide mode has both E_z and H_z in general; the
        field at cutoff is ``field`` ('TE' or 'TM')."""
        return "hybrid"

    @property
    def cutoff_type(self):
        return self.field

    @property
    def cutoff_wavelength(self):
        """Free-space wavelength c0 / fc at the cutoff frequency (m)."""
        return C0 / self.fc if self.fc > 0 else math.inf

    # what the homogeneous modes have and a loaded-guide cutoff does not
    kc = math.nan  # the empty guide's kc has no meaning here: the cutoff is a frequency
    kc_error = math.nan
    symmetry = {}
    symmetry_class = ""
    symmetry_group = ""
    nodal_domains = None
    indices = None
    degenerate_with = ()
    multiplicity = 1


class LoadedModes(tuple):
    """What :func:`femodes.solve` returns for a guide with material regions: a plain tuple of
    :class:`LoadedMode` (at a frequency) or :class:`LoadedCutoff` (without), which a notebook
    shows as a table (the columns of the text report's)."""

    __slots__ = ()

    def __repr__(self):
        if self and isinstance(self[0], LoadedMode):
            return list_repr("LoadedModes", self, f" at {self[0].frequency / 1e9:.6g} GHz")
        return list_repr("LoadedModes", self, " (cutoffs)")

    def _repr_html_(self):
        if self and isinstance(self[0], LoadedMode):
            return at_frequency_html(self, caption=f"{len(self)} modes at {self[0].frequency / 1e9:.6g} GHz")
        return cutoff_html(self, True, caption=f"{len(self)} cutoffs of the loaded guide")
