"""Independent reference cutoffs for hollow metal (PEC) waveguides.

This module is the yardstick for the finite-element solver, so it must never
depend on it: it imports only numpy, scipy, math, dataclasses and typing.
Everything is in SI units (metres, rad/m, Hz).

Besides the cutoffs of hollow guides it gives the propagation constants of a few guides
loaded with dielectric at a frequency: layered rectangular guides (LSE / LSM,
:func:`layered_guide_modes`) and the circular guide with a concentric dielectric rod (hybrid
HE / EH modes, :func:`rod_in_circular_guide_betas`).

Physics
-------
For a uniform guide along z with a perfectly conducting wall, the fields of a
mode vary as exp(j(w t - beta z)) with beta**2 = k**2 - kc**2, where the
cutoff wavenumber kc depends only on the cross-section:

* TM modes (Hz = 0): Ez solves the Helmholtz equation
  ``lap_t Ez + kc**2 Ez = 0`` with the Dirichlet condition ``Ez = 0`` on the
  wall, so kc**2 are the eigenvalues of the Dirichlet Laplacian.
* TE modes (Ez = 0): Hz solves the same equation with the Neumann condition
  ``dHz/dn = 0`` on the wall; kc**2 are the *nonzero* Neumann eigenvalues (the
  constant Hz with kc = 0 is not a mode).
* TEM modes (kc = 0) exist only when the cross-section has more than one
  conductor, e.g. the coaxial line.

The cutoff frequency of a mode in a guide filled with a medium of relative
permittivity eps_r and permeability mu_r is
``fc = C0 * kc / (2 pi sqrt(eps_r mu_r))``.

Every mode is returned as a :class:`RefMode`; lists are sorted by kc.

Closed forms are used where they exist (rectangle, circle); Bessel
cross-product equations are solved by a sign-change scan plus Brent's method
(coax, sectors); the ellipse uses Mathieu functions computed here from their
Fourier coefficients (not scipy's Mathieu routines, see :func:`ellipse_modes`)
and is cross-checked by an independent polynomial Ritz method
(:func:`ellipse_ritz_kc`).
"""

from femodes.reference.common import (  # noqa: F401
    C0,
    EPS0,
    ETA0,
    MU0,
    RefMode,
    annulus_roots,
    bessel_roots,
    mode_label,
)
from femodes.reference.ellipse import (  # noqa: F401
    _ellipse_class_roots,
    _radial_conditions,
    ellipse_modes,
    ellipse_ritz_kc,
    mathieu_characteristic,
    mathieu_tridiagonal,
)
from femodes.reference.guides import (  # noqa: F401
    WR90_A,
    WR90_B,
    RectangularGuide,
    circle_modes,
    coax_modes,
    coax_te11_estimate,
    coax_tem_impedance,
    equilateral_triangle_modes,
    rectangle_fc_derivatives,
    rectangle_kc,
    rectangle_modes,
    right_isosceles_triangle_modes,
    sector_modes,
    wr90,
)
from femodes.reference.layered import (  # noqa: F401
    LayeredCutoff,
    LayeredMode,
    SlabPeakAndVoltage,
    centred_slab_layers,
    filled_guide_modes,
    layered_guide_cutoffs,
    layered_guide_modes,
    side_slab_te_m0_equation,
    side_slab_te_m0_peak_and_voltage,
    side_slab_te_m0_wall_loss,
    slab_on_wall_modes,
)
from femodes.reference.lines import (  # noqa: F401
    eccentric_coax_capacitance,
    shielded_pair_thin_wire,
    two_wire_impedance,
    wires_in_shield_capacitance,
    wires_in_shield_conductor_attenuation,
)
from femodes.reference.lshape import (  # noqa: F401
    L_SHAPE_DIRICHLET,
    L_SHAPE_NEUMANN,
    l_shape_eigenvalue_mps,
)
from femodes.reference.rod import (  # noqa: F401
    rod_in_circular_guide_betas,
    rod_in_circular_guide_complex_beta2,
    rod_in_circular_guide_determinant,
)

__all__ = [
    "rectangle_fc_derivatives",
    "LayeredMode", "LayeredCutoff", "layered_guide_modes", "layered_guide_cutoffs", "slab_on_wall_modes",
    "centred_slab_layers", "side_slab_te_m0_equation", "filled_guide_modes",
    "C0", "MU0", "EPS0", "ETA0", "RefMode", "mode_label",
    "rectangle_kc", "rectangle_modes", "RectangularGuide", "WR90_A", "WR90_B", "wr90",
    "circle_modes", "bessel_roots", "annulus_roots",
    "coax_modes", "coax_te11_estimate", "coax_tem_impedance",
    "sector_modes", "equilateral_triangle_modes", "right_isosceles_triangle_modes",
    "L_SHAPE_DIRICHLET", "L_SHAPE_NEUMANN", "l_shape_eigenvalue_mps",
    "mathieu_tridiagonal", "mathieu_characteristic", "ellipse_modes", "ellipse_ritz_kc",
    "rod_in_circular_guide_betas", "side_slab_te_m0_wall_loss",
    "SlabPeakAndVoltage", "side_slab_te_m0_peak_and_voltage",
    "eccentric_coax_capacitance", "two_wire_impedance", "shielded_pair_thin_wire", "wires_in_shield_capacitance",
    "wires_in_shield_conductor_attenuation",
    "rod_in_circular_guide_determinant", "rod_in_circular_guide_complex_beta2",
]
