"""Impedances of multi-conductor TEM lines: modal impedances, and the even, odd, differential and
common-mode impedances of a symmetric pair, from the capacitance matrix with propagated errors.

Definitions (homogeneous fill, every TEM mode travels at v = c0 / sqrt(eps_r mu_r); voltages
against the outer wall; C the Maxwell capacitance matrix, L = C^-1 / v^2 the inductance matrix;
C. R. Paul, Analysis of Multiconductor Transmission Lines, ch. 5 and 7, from memory):

* Modal impedances.  With T the orthogonal matrix of eigenvectors of C (C t_k = Lambda_k t_k,
  |t_k| = 1), the modal voltages V_m = T^T V and currents I_m = T^T I decouple the line equations
  (for a homogeneous line the same T serves for voltages and currents), and mode k has

      Z_k = V_mk / I_mk = 1 / (v Lambda_k) = v t_k^T L t_k
          = (t^T t) / (v t^T C t) for a modal voltage vector t of any length.

  These are the impedances ``femodes.impedance`` gives for the TEM Mode objects
  (eta / int |grad psi_k|^2 dA with psi_k the modal potential).
* A symmetric pair (C_11 = C_22, C_12 = C_21 < 0):

      Z_even   = 1 / (v (C_11 + C_12))   both conductors at +V: each carries I = V / Z_even
      Z_odd    = 1 / (v (C_11 - C_12))   conductors at +V and -V
      Z_diff   = 2 Z_odd                 between the two conductors, driven in antiphase
      Z_common = Z_even / 2              both conductors together against the outer wall

  (common practice for coupled lines; C_11 + C_12 is the capacitance of one conductor to the
  wall with both at 1 V).  Z_even and Z_odd equal the modal impedances of the even mode
  t = (1, 1) / sqrt 2 and the odd mode (1, -1) / sqrt 2.

Errors.  From the entrywise error bound dC of C (the solver's estimate):
|Lambda_k error| <= ||dC||_F (Weyl's inequality for symmetric matrices), so
Z_k lies within [1 / (v (Lambda_k + d)), 1 / (v (Lambda_k - d))] and the reported error is
Z_k d / (Lambda_k - d); the pair impedances likewise with d = dC_11 + dC_12 (the diagonal entries'
errors averaged).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from femodes.errors import FemodesError
from femodes.solvers.electrostatic import LineParameters

__all__ = ["LineParameters", "ModalImpedances", "PairImpedances", "line_of", "modal_impedances", "pair_impedances"]


@dataclass(frozen=True)
class ModalImpedances:
    """Modal characteristic impedances of a multi-conductor TEM line (ohm).

    labels    : the TEM modes' labels in the ModeSet, in modal order
    voltages  : (N, N) modal voltage vectors (columns, unit length; conductor order of the line)
    impedance : (N,) Z_k = 1 / (v Lambda_k), ascending
    error     : (N,) estimated absolute error of each Z_k
    """

    labels: tuple
    voltages: np.ndarray
    impedance: np.ndarray
    error: np.ndarray


@dataclass(frozen=True)
class PairImpedances:
    """Impedances of a symmetric pair of conductors in a grounded outer wall (ohm), each with its
    estimated absolute error: even, odd, differential (2 Z_odd), common (Z_even / 2)."""

    even: float
    even_error: float
    odd: float
    odd_error: float
    differential: float
    differential_error: float
    common: float
    common_error: float


def line_of(obj):
    """The :class:`LineParameters` of a ModeSet (``modeset.line``) or the parameters themselves."""
    if isinstance(obj, LineParameters):
        return obj
    line = getattr(obj, "line", None)
    if isinstance(line, LineParameters):
        return line
    raise FemodesError(f"expected the ModeSet of a homogeneously filled guide with inner conductors (femodes.solve "
                       f"of a section with holes) or its .line, got {type(obj).__name__}"
                       + (" without inner conductors" if hasattr(obj, "info") else ""))


def _bounded(z_of, value, d):
    """(value, error) of z_of(value) with value known to within +-d (z_of decreasing)."""
    if not value > d:
        raise FemodesError("the capacitance error estimate is as large as the capacitance itself: "
                           "solve with a smaller accuracy")
    z = z_of(value)
    return float(z), float(z_of(value - d) - z)


def modal_impedances(line):
    """Modal characteristic impedances (:class:`ModalImpedances`) of a ModeSet's line (or a
    :class:`LineParameters`): Z_k = 1 / (v Lambda_k), see the module docstring."""
    line = line_of(line)
    v = line.velocity
    zs, es = [], []
    for lam, d in zip(line.modal_capacitance, line.modal_capacitance_error):
        z, e = _bounded(lambda c: 1.0 / (v * c), float(lam), float(d))
        zs.append(z)
        es.append(e)
    return ModalImpedances(tuple(line.modal_labels), np.array(line.modal_voltages), np.array(zs), np.array(es))


def pair_impedances(line):
    """Even, odd, differential and common-mode impedances (:class:`PairImpedances`) of a
    symmetric pair (two inner conductors with C_11 = C_22 within their errors); see the module
    docstring for the definitions."""
    line = line_of(line)
    if line.n_conductors != 2:
        raise FemodesError(f"even and odd impedances need exactly two inner conductors, this line has "
                           f"{line.n_conductors}: use modal_impedances")
    C, dC = line.capacitance, line.capacitance_error
    if not line.symmetric_pair:
        raise FemodesError(f"the pair is not symmetric: C11 = {C[0, 0]:.6g} F/m, C22 = {C[1, 1]:.6g} F/m differ by "
                           "more than their errors; its modes are not even and odd: use modal_impedances")
    v = line.velocity
    c_self, d_self = 0.5 * (C[0, 0] + C[1, 1]), 0.5 * (dC[0, 0] + dC[1, 1])
    c_mut, d_mut = 0.5 * (C[0, 1] + C[1, 0]), 0.5 * (dC[0, 1] + dC[1, 0])
    z = lambda c: 1.0 / (v * c)  # noqa: E731
    even, e_even = _bounded(z, c_self + c_mut, d_self + d_mut)
    odd, e_odd = _bounded(z, c_self - c_mut, d_self + d_mut)
    return PairImpedances(even, e_even, odd, e_odd, 2 * odd, 2 * e_odd, even / 2, e_even / 2)
