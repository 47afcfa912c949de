"""Engineering quantities of a solved mode: propagation, bands, losses, impedance, power handling.

Pure functions of a mode (:class:`femodes.modes.Mode`) or a mode set; SI units in and out (Hz,
m, rad/m, Np/m, ohm, W, V/m).  Homogeneous fill eps = eps0 eps_r, mu = mu0 mu_r; fields vary as
exp(j (omega t - beta z)).

Normalisation (see femodes.modes).  A mode is carried by its transverse mode vectors with
int |e_t|^2 dA = 1 and h_t = z x e_t.  A mode of amplitude V (volts) has

    E_t = V e_t,   H_t = (V / Z_w) h_t,   P = |V|^2 / (2 Z_w)   (Z_w real above cutoff),

with the wave impedance Z_w = omega mu / beta (TE), beta / (omega eps) (TM), eta (TEM).
psi is the longitudinal potential with int psi^2 dA = 1:

    TE:  e_t =  z x grad psi / kc,   so  h_t = -grad psi / kc
    TM:  e_t = -grad psi / kc,       so  h_t = -z x grad psi / kc
    TEM: e_t = -grad phi * scale,    phi = 1 V on the inner conductor, scale = 1/sqrt(int |grad phi|^2);
         with N inner conductors phi = sum_i t_i phi_i, t the mode's modal voltages (:mod:`.lines`)

Longitudinal fields (derived in :func:`longitudinal_factor`):

    TE:  H_z = -j (kc / beta) (V / Z_w) psi          (E_z = 0)
    TM:  E_z = -j (kc / beta)  V        psi          (H_z = 0)

Losses use the power-loss (perturbation) method on the lossless mode (:mod:`.losses`);
impedances use the usual power-voltage, power-current and voltage-current definitions
(:mod:`.impedance`), and for lines with several inner conductors the modal, even / odd,
differential and common-mode impedances from the capacitance matrix (:mod:`.lines`); power
handling reports the peak field and the power at which it reaches a
breakdown field, with the cautions that belong to it (:mod:`.power`); :mod:`.wave` has the wave
quantities and the band.

Modes of dielectric-loaded guides (:class:`femodes.modes.LoadedMode`, hybrid, solved at one
frequency) take the same front doors at their own frequency: :func:`conductor_attenuation`,
:func:`impedance` and :func:`power_handling` dispatch to :func:`loaded_conductor_attenuation`,
:func:`loaded_impedances` (a :class:`LoadedImpedances`) and :func:`loaded_power_handling` (a
:class:`LoadedPowerHandling`: the peak in the gas and in each dielectric region, corners apart),
which work from the full-vector fields and give every number an error from the same mode at one
element order lower on the same mesh (:func:`lower_order_partner`).

A homogeneous guide's field-derived quantities (wall loss, impedances, peak field) get their
error bars from re-solves on a ladder of meshes (:func:`derived_quantities`, :mod:`.convergence`),
its wave quantities from the cutoff's error (:func:`wave_errors`); a loaded guide's (wall and
dielectric loss, group velocity, impedances, peak fields) from re-solves at its frequency
(:func:`loaded_derived_quantities`, :mod:`.loaded_convergence`).
"""

from femodes.constants import ETA0, NP_TO_DB
from femodes.quantities.convergence import (
                                       DEFAULT_QUANTITY_ACCURACY,
                                       DerivedErrors,
                                       QuantityError,
                                       derived_quantities,
                                       wave_errors,
)
from femodes.quantities.impedance import (
                                       LoadedImpedances,
                                       impedance,
                                       loaded_impedances,
                                       lower_order_partner,
                                       path_voltage,
                                       voltage_path,
                                       wall_current,
)
from femodes.quantities.lines import LineParameters, ModalImpedances, PairImpedances, line_of, modal_impedances, pair_impedances
from femodes.quantities.loaded_convergence import loaded_derived_quantities
from femodes.quantities.losses import (
                                       METALS,
                                       Losses,
                                       WallIntegrals,
                                       attenuation,
                                       conductivity_of,
                                       conductor_attenuation,
                                       dielectric_attenuation,
                                       loaded_conductor_attenuation,
                                       loaded_conductor_attenuation_error,
                                       losses,
                                       roughness_factor,
                                       skin_depth,
                                       surface_resistance,
                                       to_db,
                                       vector_mode_attenuation,
                                       wall_integrals,
)
from femodes.quantities.power import (
                                       CAUTIONS,
                                       DRY_AIR_BREAKDOWN,
                                       GAS_MAX_EPS_R,
                                       CornerField,
                                       LoadedPowerHandling,
                                       PowerHandling,
                                       RegionPeak,
                                       loaded_power_handling,
                                       power_handling,
)
from femodes.quantities.wave import (
                                       RECOMMENDED_HIGH,
                                       RECOMMENDED_LOW,
                                       Band,
                                       FieldPhasors,
                                       WaveQuantities,
                                       band,
                                       field_phasors,
                                       longitudinal_factor,
                                       propagating,
                                       wave_quantities,
)

__all__ = [
    "NP_TO_DB", "ETA0", "METALS", "RECOMMENDED_LOW", "RECOMMENDED_HIGH", "DRY_AIR_BREAKDOWN", "CAUTIONS",
    "WaveQuantities", "Band", "WallIntegrals", "Losses", "PowerHandling", "FieldPhasors",
    "wave_quantities", "band", "propagating", "longitudinal_factor", "field_phasors",
    "conductivity_of", "skin_depth", "surface_resistance", "roughness_factor", "wall_integrals",
    "conductor_attenuation",
    "vector_mode_attenuation", "loaded_conductor_attenuation", "loaded_conductor_attenuation_error", "dielectric_attenuation", "attenuation", "losses", "to_db",
    "voltage_path", "path_voltage", "wall_current", "impedance", "power_handling",
    "GAS_MAX_EPS_R", "LoadedImpedances", "LoadedPowerHandling", "RegionPeak", "CornerField",
    "loaded_impedances", "loaded_power_handling", "lower_order_partner",
    "DEFAULT_QUANTITY_ACCURACY", "DerivedErrors", "QuantityError", "derived_quantities", "wave_errors",
    "loaded_derived_quantities",
    "LineParameters", "ModalImpedances", "PairImpedances", "line_of", "modal_impedances", "pair_impedances",
]
