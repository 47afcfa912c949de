"""femodes: finite-element eigenmodes of hollow metal waveguides with arbitrary cross-sections.

Pipeline: section -> mesh -> discretise -> eigen -> modes -> quantities, figures, export.
All quantities are SI inside (metres, hertz, rad/m).
"""

from .errors import FemodesError
from .mesh import Mesh, mesh_section, read_mesh, write_mesh
from .modes import C0, EPS0, MU0, Mode, ModeSet
from .section import (Section, circle, coaxial, double_ridge, ellipse, l_shape, polygon, rectangle,
                      rectangular_coax, ridged, sector, single_ridge)
from .loaded import dispersion
from .solver import solve

__version__ = "0.1.0"

__all__ = [
    "FemodesError", "Mesh", "mesh_section", "read_mesh", "write_mesh", "Mode", "ModeSet",
    "Section", "circle", "coaxial", "double_ridge", "ellipse", "l_shape", "polygon", "rectangle",
    "rectangular_coax", "ridged", "sector", "single_ridge", "solve", "dispersion", "C0", "EPS0", "MU0",
]
