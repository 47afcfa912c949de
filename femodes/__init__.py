"""femodes: finite-element eigenmodes of hollow metal waveguides with arbitrary cross-sections.

The pipeline, one subpackage per stage (each imports only the ones below it):

    geometry    sections (shapes, materials) and meshes (gmsh, mesh files)
    solvers     discretise, eigen, the scalar and the full-vector solvers with their accuracy loops
    modes       the mode model (Mode, ModeSet, LoadedMode, LoadedCutoff) and the names of modes
    api         the front door: solve(), dispersion(), study() choose the solver
    quantities  functions of a mode: wave quantities, band, losses, impedance, power handling
    studies     design studies: sensitivity() (d fc / d parameter); sweeps and seeking to come
    report      tables, JSON documents, CSV and field files, figures
    case, cli   the case file (TOML) and the command line: the face

All quantities are SI inside (metres, hertz, rad/m).  ``femodes.reference`` holds the closed forms
the tests compare with and imports none of the finite-element code.
"""

from femodes import report  # noqa: F401  (femodes.report.* without a separate import)
from femodes.api import dispersion, solve, study
from femodes.constants import C0, EPS0, ETA0, MU0, __version__
from femodes.errors import FemodesError
from femodes.geometry.mesh import Mesh, mesh_section, read_mesh, write_mesh
from femodes.geometry.section import Section
from femodes.geometry.shapes import (
    circle,
    coaxial,
    double_ridge,
    ellipse,
    l_shape,
    polygon,
    rectangle,
    rectangular_coax,
    ridged,
    sector,
    single_ridge,
    standard,
)
from femodes.geometry.symmetry import SymmetryGroup, symmetry_group
from femodes.modes import LoadedCutoff, LoadedMode, LoadedModes, Mode, ModeSet
from femodes.quantities import attenuation, impedance, power_handling
from femodes.report.figures import field_pattern
from femodes.studies import SelfCheck, Sensitivity, Tolerance, seek, selfcheck, sensitivity, sweep, tolerance

__all__ = [
    "FemodesError", "Mesh", "mesh_section", "read_mesh", "write_mesh", "Mode", "ModeSet", "LoadedMode",
    "LoadedCutoff", "LoadedModes", "Section", "SymmetryGroup", "symmetry_group",
    "circle", "coaxial", "double_ridge", "ellipse", "l_shape", "polygon", "rectangle",
    "rectangular_coax", "ridged", "sector", "single_ridge", "standard", "solve", "dispersion", "study", "attenuation",
    "impedance", "power_handling", "field_pattern", "selfcheck", "SelfCheck",
    "sweep", "seek", "sensitivity", "Sensitivity", "tolerance", "Tolerance", "C0", "EPS0", "ETA0", "MU0",
    "__version__",
]
