"""Case files: a TOML description of one guide and how to solve it.

A case file names a cross-section (or a mesh file), its filling, the solve settings and the
figures wanted.  :func:`load_case` reads and checks it and returns a :class:`Case`;
:func:`run_case` solves it.  Lengths are converted to metres and angles to radians here, once;
everything after this module works in SI units.

Schema
------
Top level::

    title = "..."            optional string, printed in reports

``[guide]`` (required) -- the cross-section:

    shape       required; one of the shape names below
    units       unit of every length in [guide]: m, cm, mm, um, in, mil (default mm;
                1 in = 25.4 mm and 1 mil = 0.001 in exactly)

    rectangle         width, height; optional corner_radius
    circle            radius
    ellipse           a (semi-axis along x), b (semi-axis along y)
    coaxial           outer_radius, inner_radius; optional inner_offset = [dx, dy]
    rectangular_coax  width, height, inner_width, inner_height; optional inner_offset = [dx, dy]
    single_ridge      width, height, ridge_width, gap; optional ridge_corner_radius, base_radius
    double_ridge      width, height, ridge_width, gap; optional ridge_corner_radius, base_radius
    l_shape           width, height, notch_width, notch_height
    sector            radius, angle_deg (opening angle in degrees, 0 < angle_deg < 360);
                      optional inner_radius
    polygon           vertices = [[x, y], ...] (at least 3, in order around the outline);
                      optional holes = [[[x, y], ...], ...] (inner conductors)
    mesh              file = "path/to/mesh.msh": a triangle mesh (gmsh .msh or any format meshio
                      reads), relative to the case file; its coordinates are in `units`; its named
                      groups of triangles (gmsh physical surfaces) can be filled by [[region]] tables

    Placement (every shape except mesh), applied in this order: mirror, rotate, offset.
    mirror      "x" (x -> -x) or "y" (y -> -y)
    rotate_deg  counter-clockwise rotation about the origin, degrees
    offset      [dx, dy] translation, in `units`

    The shapes are those of :mod:`femodes.section`; each key is the shape function's parameter
    of the same name (``angle_deg`` -> ``angle`` in radians, ``inner_offset`` -> ``offset``).

``[[region]]`` (optional, repeatable) -- a part of the guide filled with another material (a
dielectric slab, a ceramic load, a ferrite), making the guide inhomogeneous: its modes are then
hybrid in general and are solved with the full-vector solver (femodes.loaded).  Each region
takes a shape of the list below except mesh, with its keys and placement, in the units of
[guide], and:

    eps_r       relative permittivity, real, 1 to 10000 (required)
    mu_r        relative permeability, real, 1 to 10000 (default 1)
    tan_delta   loss tangent, 0 <= tan_delta < 1 (default 0): dielectric attenuation
    name        what the report calls the region (default: by its permittivity)

    A later region wins where two overlap; parts of a region outside the guide are ignored.

    With shape = "mesh" in [guide] a region is one of the file's named groups of triangles (a
    gmsh physical surface) instead of a shape:

    group       the group's name in the mesh file (required; an unnamed gmsh group by its
                number in quotes, "2"); each group at most once
    eps_r, mu_r, tan_delta, name   as above (name defaults to the group's name)

    Shape and placement keys do not apply there, and group applies to mesh files only.  The
    mesh is not refined: the error of each value is estimated from elements of order p and
    p - 1 on it, and a warning says when it misses the asked accuracy.
    Such a case reports the lowest cutoffs (beta = 0) of the loaded guide and, with [analysis],
    the propagating modes at the frequency (beta, guide wavelength, phase and group velocity,
    dielectric loss, wall loss with the [analysis] conductor and roughness_um; which empty-guide
    mode each grows from) and, with a band, their dispersion (figure "dispersion").  Impedance
    and power handling are not computed for loaded guides yet; breakdown_field, safety_factor
    and impedance in [analysis] are then refused.

``[fill]`` (optional) -- the homogeneous filling (the background, where there are regions):

    eps_r       relative permittivity, real, 1 to 10000 (default 1)
    mu_r        relative permeability, real, 1 to 10000 (default 1)
    tan_delta   loss tangent of the filling, >= 0 and < 1 (default 0); used only for the
                dielectric part of the attenuation in [analysis] (the modes are solved lossless)

``[solve]`` (optional):

    modes       how many modes, a whole number from 1 to 500 (default 6)
    accuracy    relative error on each cutoff the solver aims for (default 1e-6; 1e-11 to 0.1)
    family      "TE" or "TM" to solve one family only (default: all)
    order       finite-element order 1..4 (default: the solver's choice)
    quantity_accuracy  relative error asked of the wall loss, impedances and peak field (and, with
                [[region]] tables, the dielectric loss and group velocity) at the analysis
                frequency (default 1e-3): the guide is re-solved on finer meshes until they meet
                it, or a warning says what was reached; 0 for no re-solves (a loaded guide then
                keeps the estimate of order p against p - 1 on its mesh)

``[output]`` (optional):

    figures     list of figures to write: "fields" (field pattern per mode), "chart" (mode
                chart); default none
    format      png, svg or pdf (default png)
    directory   where figures go, relative to the current directory (default "femodes-out")
    field_count how many modes get a field pattern, a whole number >= 1 (default: all)

    figures may also list "attenuation" (attenuation against frequency over the [analysis]
    band; needs `band`) and "band" (the bands of the guide on a frequency axis, with the
    [analysis] band and frequency when given); and, for guides with [[region]] tables,
    "dispersion" (beta against frequency over the band; needs `band`).  "fields" then draws
    the modes at the [analysis] frequency, and "chart", "band", "attenuation" do not apply.  Turning figures on from the command line
    without a list in the case file writes "fields" and "chart", plus "band" with an
    [analysis] table and "attenuation" with a band.

``[analysis]`` (optional) -- engineering quantities at a frequency or over a band (computed after
the solve; see :mod:`femodes.quantities`).  It needs ``frequency`` or ``band`` (or both):

    frequency        the frequency of the quantity table, a number in `frequency_units`
                     (default: the centre (f1 + f2) / 2 of `band`)
    band             [f1, f2], 0 < f1 < f2, in `frequency_units`: attenuation is swept over it
                     and the figures "attenuation" and "band" show it
    points           frequencies in the band sweep, a whole number 2 .. 2001 (default 41);
                     only with `band`
    frequency_units  Hz, kHz, MHz or GHz (default GHz)
    conductor        the wall metal: a name (copper, silver, gold, aluminium, brass, stainless
                     steel; a few aliases such as "aluminum" or "cu") or a conductivity in S/m
                     from 1e4 to 1e9 (default copper, 5.8e7 S/m)
    roughness_um     rms surface roughness of the walls in micrometres (default 0: smooth);
                     applied with the Hammerstad-Jensen factor
    breakdown_field  peak field at which the filling breaks down, V/m (default 3e6: dry air at
                     sea level, common practice)
    safety_factor    divisor applied to the breakdown power, >= 1 (default 2: a choice, not a
                     standard)
    impedance        "PV", "PI" or "VI": which characteristic impedance the table shows first
                     (default "PV"; all three are computed)

The frequency and the band must lie below the highest cutoff computed (solve for more modes
otherwise): modes that were not computed could propagate there.

Anything else -- an unknown table or key, a wrong type, a missing key -- is an error that says
what was wrong, the value given and what would be valid.
"""

from femodes.case.build import load_case, parse_case, run_case
from femodes.case.schema import FIGURE_KINDS, FORMATS, FREQUENCY_UNITS, IMPEDANCE_KINDS, SHAPES, UNITS, shapes_help
from femodes.case.settings import AnalysisSettings, Case, OutputSettings, figure_kinds_for

__all__ = ["Case", "OutputSettings", "AnalysisSettings", "load_case", "parse_case", "run_case", "SHAPES",
           "UNITS", "FREQUENCY_UNITS", "FIGURE_KINDS", "FORMATS", "IMPEDANCE_KINDS", "shapes_help", "figure_kinds_for"]
