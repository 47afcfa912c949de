"""What the full-vector solver returns: :class:`VectorMode` (one mode at one frequency, with its
fields through the problem), :class:`VectorCutoff` (beta = 0) and :class:`Dispersion` (tracked
curves), and the thresholds that name a mode's family.
"""

from __future__ import annotations

import cmath
import math
from dataclasses import dataclass, field

import numpy as np

from femodes.constants import C0

VECTOR_ORDERS = (1, 2, 3)


#: a mode is 'TE' when the longitudinal share of its electric energy, int eps |E_z|^2 /
#: int eps |E|^2, is below this; 'TM' when the longitudinal share of its magnetic energy
#: int mu |H_z|^2 / int mu |H|^2 is below it; 'TEM' when both are; else 'hybrid'.
FAMILY_THRESHOLD = 1e-6


_SHIFT_FACTOR = 1.02  # sigma = _SHIFT_FACTOR * k0^2 max(eps mu)


_COMPLEX_TOL = 1e-8   # |Im nu| / |nu| above which a shift-invert eigenvalue counts as complex


#: a complex pair of the discrete pencil is kept as a mode when its relative residual and its
#: discrete Gauss-law residual are below this (physical modes show ~1e-12, see VectorMode)
COMPLEX_RESIDUAL = 1e-7


def _is_complex(b2):
    """True for a complex beta^2 (a member of a complex pair), False for a real one."""
    return isinstance(b2, complex) or np.iscomplexobj(b2)


# ---------------------------------------------------------------------------- results
@dataclass(frozen=True, eq=False)
class VectorMode:
    """One guided mode at one frequency.

    beta2     : beta^2 (rad^2/m^2); negative for an evanescent mode; complex (a Python complex)
                for a member of a complex pair (below)
    frequency : Hz
    family    : 'TE', 'TM', 'TEM' or 'hybrid', from e_share / h_share and FAMILY_THRESHOLD;
                'complex' for a complex mode

    Complex modes: the pencil is real but not symmetric-definite, so besides real beta^2
    (propagating > 0, evanescent < 0) it can have complex-conjugate pairs beta^2, conj(beta^2).
    In a lossless guide loaded with dielectric such pairs are physical "complex modes" below
    cutoff (they carry no net power each, and exist in coupled pairs; Omar & Schuenemann, IEEE
    Trans. MTT, 1985/1987, from memory).  For them ``et`` and ``ez`` are complex, beta =
    sqrt(beta^2) on the principal branch (Re beta >= 0; with exp(j(w t - beta z)) the member with
    Im beta < 0 decays toward +z while its phase advances, its partner with Im beta > 0 decays
    toward -z), e_share uses |E|^2, h_share is NaN, and v_g, alpha_d are NaN.
    e_share   : int eps_r |E_z|^2 dA / int eps_r |E|^2 dA  (longitudinal share of electric energy)
    h_share   : int mu_r |H_z|^2 dA / int mu_r |H|^2 dA    (longitudinal share of magnetic energy)
    et        : coefficients of E_t on the Nedelec basis (real, all dofs; zero on the wall)
    ez        : coefficients of E_z on the Lagrange basis (complex: E_z = w / (j beta))
                normalised with int (|E_t|^2 + |E_z|^2) dA = 1 (units 1/m)
    residual  : ||A x - beta^2 B x|| / (||A x|| + |beta^2| ||B x||)
    divergence: residual of the discrete Gauss law (module docstring), relative to the same sums
                taken in absolute value: ~1e-12 for a physical mode, O(1) for a spurious vector
    """

    beta2: float | complex
    frequency: float
    family: str
    e_share: float
    h_share: float
    et: np.ndarray = field(repr=False)
    ez: np.ndarray = field(repr=False)
    residual: float = 0.0
    divergence: float = 0.0
    problem: object = field(default=None, repr=False)  # the VectorProblem that solved it

    @property
    def propagating(self):
        return not _is_complex(self.beta2) and self.beta2 > 0

    @property
    def beta(self):
        """beta (rad/m) if propagating, else -1j * alpha (alpha in Np/m); for a complex mode the
        principal square root of the complex beta^2 (Re beta >= 0)."""
        if _is_complex(self.beta2):
            return cmath.sqrt(self.beta2)
        if self.beta2 >= 0:
            return math.sqrt(self.beta2)
        return -1j * math.sqrt(-self.beta2)

    @property
    def k0(self):
        return 2 * math.pi * self.frequency / C0

    @property
    def effective_permittivity(self):
        """(beta / k0)^2: eps_r mu_r of the homogeneous fill with the same beta."""
        return self.beta2 / self.k0 ** 2

    @property
    def guide_wavelength(self):
        """2 pi / beta (m); inf for an evanescent mode."""
        return 2 * math.pi / math.sqrt(self.beta2) if self.propagating else math.inf

    @property
    def group_velocity(self):
        """v_g / c0 = (1 / c0) d omega / d beta, from the fields at this one frequency.

        Differentiating the pencil (A0 - k0^2 A2) x = beta^2 B x in k0^2 and multiplying by its
        left eigenvector y (module docstring, ``_polish``) gives d beta^2 / d k0^2 =
        -y^T A2 x / y^T B x (first-order perturbation theory; for a homogeneous fill it is
        eps_r mu_r exactly), and v_g / c0 = beta / (k0 d beta^2 / d k0^2).  NaN if evanescent."""
        return self.problem._sensitivity(self)[0]

    @property
    def dielectric_attenuation(self):
        """Attenuation (Np/m) by the dielectric losses of the regions: eps_r -> eps_r (1 - j
        tan_delta) changes A by j k0^2 L (L: the mass matrices weighted with eps_r tan_delta), so
        d beta^2 = j k0^2 y^T L x / y^T B x and alpha_d = -Im(d beta^2) / (2 beta), to first order
        in tan_delta.  For a homogeneous fill this is the handbook k^2 tan_delta / (2 beta)
        (Pozar, Microwave Engineering, sec. 3.1).  0 without losses; NaN if evanescent."""
        return self.problem._sensitivity(self)[1]

    def power(self):
        """Time-average power P = 1/2 Re int (E_t x H_t*) . z dA (W) of the mode as normalised
        (int (|E_t|^2 + |E_z|^2) dA = 1, E in units 1/m): :meth:`VectorProblem.power`."""
        return self.problem.power(self)

    def wall_integral(self):
        """oint |H_tan|^2 dl over every wall (PEC boundary), for the normalisation of
        :meth:`power`: :meth:`VectorProblem.wall_integral`."""
        return self.problem.wall_integral(self)

    def fields(self, points, cells=None):
        """(E_x, E_y, E_z, H_x, H_y, H_z) at points (2, n), complex, NaN outside the mesh.

        E as normalised above (1/m); H = j curl E / (omega mu0 mu_r) in the same scale
        (A/(V m), i.e. the H of a mode whose E is the one given).  ``cells`` (n,) evaluates each
        point in the given triangle instead of locating it: the one-sided limit on a triangle's
        edge (fields are only tangentially continuous across edges, and not at all at vertices).
        """
        return self.problem._fields(self, points, cells)


@dataclass(frozen=True, eq=False)
class VectorCutoff:
    """A cutoff (beta = 0) of the loaded guide.

    field : 'TE' (only transverse E at cutoff, with H_z) or 'TM' (only E_z at cutoff)
    coeffs: the field at cutoff, on the Nedelec basis (TE) or the Lagrange basis (TM)
    """

    k0: float
    field: str
    coeffs: np.ndarray = field(repr=False)
    residual: float = 0.0

    @property
    def frequency(self):
        return C0 * self.k0 / (2 * math.pi)


@dataclass(frozen=True, eq=False)
class Dispersion:
    """beta(f) of tracked modes.

    frequencies : (F,) Hz, as given
    beta2       : (F, N) beta^2 (rad^2/m^2) of each tracked mode (column) at each frequency;
                  a complex array when a tracked mode is a member of a complex pair somewhere
                  (family 'complex' there; see VectorMode)
    overlap     : (F, N) how surely each point continues the curve: the larger of the mode's
                  weight in the expansion of the same mode at the previous frequency (bi-orthogonal
                  projection, 1 for identical fields) and its agreement with the beta^2 predicted
                  from the previous point's slope (see ``_track``) (1 at the
                  first); low values (say < 0.9) mean the frequency step was too coarse to be sure
    family      : (F, N) family guess of each mode at each frequency
    modes       : the VectorMode objects, modes[i][k] for frequency i and tracked mode k
    snapshots   : the frequencies at which a full shift-invert solve was made
    labels      : a name per tracked mode ('' where none), set by femodes.dispersion
    """

    frequencies: np.ndarray
    beta2: np.ndarray
    overlap: np.ndarray
    family: np.ndarray
    modes: tuple = field(repr=False)
    snapshots: np.ndarray = field(default_factory=lambda: np.zeros(0))
    labels: tuple = ()

    @property
    def beta(self):
        """(F, N) beta (rad/m), -1j alpha where evanescent, the principal square root (Re beta
        >= 0) of a complex beta^2 where the mode is a member of a complex pair."""
        b2 = np.asarray(self.beta2)
        cplx = np.abs(b2.imag) > 0
        re = b2.real
        real_beta = np.where(re >= 0, np.sqrt(np.abs(re)) + 0j, -1j * np.sqrt(np.abs(re)))
        return np.where(cplx, np.sqrt(b2.astype(complex)), real_beta)
