"""Tests of femodes.case: TOML case files -> a checked solve request.

Expected numbers name their source in a comment.  Lengths in the case files are checked against
exact unit factors: 1 in = 25.4 mm exactly (NIST SP 811, appendix B; the 1959 international
inch), 1 mil = 0.001 in.
"""

import inspect
import math

import pytest

import femodes
from femodes import FemodesError
from femodes.case import SHAPES, UNITS, Case, OutputSettings, load_case, run_case, shapes_help

C0 = 299792458.0  # m/s, exact by the SI definition of the metre


def write(tmp_path, text, name="case.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def load_text(tmp_path, text):
    return load_case(write(tmp_path, text))


def close(a, b, rel=1e-12):
    return math.isclose(a, b, rel_tol=rel, abs_tol=1e-18)


# ----------------------------------------------------------------------------- every shape

# (shape, [guide] body, expected Section.kind, expected params in metres/radians)
SHAPE_CASES = [
    ("rectangle", "width = 22.86\nheight = 10.16", "rectangle", {"width": 22.86e-3, "height": 10.16e-3}),
    ("rectangle", "width = 20\nheight = 10\ncorner_radius = 1", "rounded_rectangle",
     {"width": 20e-3, "height": 10e-3, "corner_radius": 1e-3}),
    ("circle", "radius = 5", "circle", {"radius": 5e-3}),
    ("ellipse", "a = 6\nb = 3", "ellipse", {"a": 6e-3, "b": 3e-3}),
    ("coaxial", "outer_radius = 3.5\ninner_radius = 1.52\ninner_offset = [0.5, -0.25]", "coaxial",
     {"outer_radius": 3.5e-3, "inner_radius": 1.52e-3, "offset_x": 0.5e-3, "offset_y": -0.25e-3}),
    ("rectangular_coax", "width = 10\nheight = 8\ninner_width = 4\ninner_height = 2\ninner_offset = [1, 0]",
     "rectangular_coax", {"width": 10e-3, "height": 8e-3, "inner_width": 4e-3, "inner_height": 2e-3,
                          "offset_x": 1e-3, "offset_y": 0.0}),
    ("single_ridge", "width = 22\nheight = 10\nridge_width = 5\ngap = 3\nbase_radius = 0.3", "single_ridge",
     {"width": 22e-3, "height": 10e-3, "ridge_width": 5e-3, "gap": 3e-3, "base_radius": 0.3e-3}),
    ("double_ridge", "width = 22\nheight = 10\nridge_width = 5\ngap = 2\nridge_corner_radius = 0.2",
     "double_ridge", {"width": 22e-3, "height": 10e-3, "ridge_width": 5e-3, "gap": 2e-3,
                      "ridge_corner_radius": 0.2e-3}),
    ("l_shape", "width = 20\nheight = 10\nnotch_width = 8\nnotch_height = 4", "l_shape",
     {"width": 20e-3, "height": 10e-3, "notch_width": 8e-3, "notch_height": 4e-3}),
    # 90 degrees = pi/2 rad exactly by definition of the degree
    ("sector", "radius = 5\nangle_deg = 90\ninner_radius = 1", "sector",
     {"radius": 5e-3, "angle": math.pi / 2, "inner_radius": 1e-3}),
    ("polygon", "vertices = [[0, 0], [10, 0], [10, 10], [0, 10]]\nholes = [[[4, 4], [6, 4], [6, 6], [4, 6]]]",
     "polygon", {}),
]


@pytest.mark.parametrize("shape, body, kind, params", SHAPE_CASES, ids=[c[0] + str(i) for i, c in enumerate(SHAPE_CASES)])
def test_every_shape_loads_in_metres(tmp_path, shape, body, kind, params):
    case = load_text(tmp_path, f'[guide]\nshape = "{shape}"\n{body}\n')
    assert isinstance(case, Case)
    sec = case.section
    assert isinstance(sec, femodes.Section)
    assert sec.kind == kind
    assert set(sec.params) == set(params)
    for k, v in params.items():
        assert close(sec.params[k], v), (k, sec.params[k], v)
    # defaults: nothing asked of the solver beyond the section, no figures
    assert case.solve == {}
    assert case.output == OutputSettings()


def test_polygon_hole_and_area(tmp_path):
    case = load_text(tmp_path, '[guide]\nshape = "polygon"\n'
                     'vertices = [[0, 0], [10, 0], [10, 10], [0, 10]]\n'
                     'holes = [[[4, 4], [6, 4], [6, 6], [4, 6]]]\n')
    sec = case.section
    assert len(sec.holes) == 1
    # area: 10 x 10 mm square less a 2 x 2 mm hole = 96 mm^2 (plain arithmetic)
    assert close(sec.area, 96e-6, rel=1e-9)


def test_rectangular_coax_inner_offset_moves_the_hole(tmp_path):
    case = load_text(tmp_path, '[guide]\nshape = "rectangular_coax"\nwidth = 10\nheight = 8\n'
                     'inner_width = 4\ninner_height = 2\ninner_offset = [1, 0]\n')
    pts = case.section.holes[0].polyline(4)
    # inner conductor 4 mm wide centred at x = 1 mm spans x = -1 .. 3 mm
    assert close(float(pts[0].min()), -1e-3, rel=1e-9) and close(float(pts[0].max()), 3e-3, rel=1e-9)


def test_mesh_shape_reads_file_relative_to_case_in_units(tmp_path):
    # a WR-90 outline drawn in millimetre numbers, written as a gmsh file
    mesh = femodes.mesh_section(femodes.rectangle(22.86, 10.16), 3.0, order=2)
    (tmp_path / "meshes").mkdir()
    femodes.write_mesh(mesh, tmp_path / "meshes" / "wr90.msh")
    sub = tmp_path / "cases"
    sub.mkdir()
    case = load_case(write(sub, '[guide]\nshape = "mesh"\nunits = "mm"\nfile = "../meshes/wr90.msh"\n'))
    assert isinstance(case.section, femodes.Mesh)
    # half-width 11.43 mm, half-height 5.08 mm (EIA WR-90 inner 22.86 x 10.16 mm), now in metres
    assert close(float(case.section.points[0].max()), 11.43e-3, rel=1e-9)
    assert close(float(case.section.points[1].max()), 5.08e-3, rel=1e-9)


# ----------------------------------------------------------------------------- units

@pytest.mark.parametrize("units, value, metres", [
    ("m", 0.02286, 0.02286),
    ("cm", 2.286, 0.02286),                 # 1 cm = 1e-2 m (SI prefix)
    ("mm", 22.86, 0.02286),                 # 1 mm = 1e-3 m (SI prefix)
    ("um", 22860, 0.02286),                 # 1 um = 1e-6 m (SI prefix)
    ("in", 0.9, 0.9 * 0.0254),              # 1 in = 25.4 mm exactly (NIST SP 811, B.8)
    ("in", 1, 0.0254),
    ("mil", 900, 0.02286),                  # WR-90 is 0.900 in = 900 mil = 22.86 mm wide
    ("mil", 1, 25.4e-6),                    # 1 mil = 0.001 in = 25.4 um
])
def test_length_units(tmp_path, units, value, metres):
    case = load_text(tmp_path, f'[guide]\nshape = "rectangle"\nunits = "{units}"\nwidth = {value}\nheight = {value}\n')
    assert close(case.section.params["width"], metres)
    assert close(case.section.params["height"], metres)


def test_unit_table_is_exact():
    # exact definitions: SI prefixes, and 1 in = 0.0254 m (NIST SP 811), 1 mil = 1e-3 in
    assert UNITS == {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "mil": 0.0254e-3}


def test_placement_mirror_rotate_offset(tmp_path):
    case = load_text(tmp_path, '[guide]\nshape = "rectangle"\nunits = "mm"\nwidth = 20\nheight = 10\n'
                     'rotate_deg = 30\noffset = [1, 2]\n')
    x0, y0, ang = case.section.frame
    # rotated about the origin first, then moved by (1, 2) mm: the centre ends at (1, 2) mm
    assert close(x0, 1e-3) and close(y0, 2e-3) and close(ang, math.radians(30))
    m = load_text(tmp_path, '[guide]\nshape = "l_shape"\nwidth = 20\nheight = 10\nnotch_width = 8\n'
                  'notch_height = 4\nmirror = "x"\n').section
    # the L shape spans x = 0 .. 20 mm; mirrored x -> -x it spans -20 .. 0 mm
    xmin, _, xmax, _ = m.bounds
    assert close(xmin, -20e-3, rel=1e-9) and abs(xmax) < 1e-12


# ----------------------------------------------------------------------------- the other tables

def test_fill_solve_output_tables(tmp_path):
    case = load_text(tmp_path, '''title = "t"
[guide]
shape = "circle"
radius = 5
[fill]
eps_r = 2.25
mu_r = 1
[solve]
modes = 3
accuracy = 1e-5
family = "TM"
order = 3
[output]
figures = ["chart"]
format = "svg"
directory = "out"
field_count = 2
''')
    assert case.title == "t"
    assert case.solve == {"eps_r": 2.25, "mu_r": 1.0, "modes": 3, "accuracy": 1e-5, "family": "TM", "order": 3}
    assert case.output == OutputSettings(figures=("chart",), format="svg", directory="out", field_count=2)


def test_with_options_overrides(tmp_path):
    case = load_text(tmp_path, '[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 3\n')
    c2 = case.with_options(modes="5", accuracy="1e-4", figures_dir="figs", fmt="pdf")
    assert c2.solve["modes"] == 5 and c2.solve["accuracy"] == 1e-4
    assert c2.output.figures == ("fields", "chart") and c2.output.directory == "figs" and c2.output.format == "pdf"
    assert case.solve["modes"] == 3  # the original is unchanged (frozen)
    assert case.with_options(no_figures=True).output.figures == ()
    with pytest.raises(FemodesError, match=r"--modes must be a whole number >= 1, got 'many'"):
        case.with_options(modes="many")
    with pytest.raises(FemodesError, match=r"--modes must be a whole number >= 1, got 0"):
        case.with_options(modes="0")


def test_run_case_uses_the_fill(tmp_path):
    case = load_text(tmp_path, '[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10.16\n'
                     '[fill]\neps_r = 2.25\n[solve]\nmodes = 2\naccuracy = 1e-5\n')
    ms = run_case(case).modes
    assert len(ms) == 2 and ms[0].label == "TE10"
    # WR-90 TE10 cutoff filled with eps_r = 2.25: fc = c / (2 a sqrt(eps_r)) = 4.371427 GHz,
    # a = 22.86 mm (EIA WR-90); Pozar, Microwave Engineering, 4th ed., sec. 3.3
    exact = C0 / (2 * 22.86e-3 * 1.5)
    assert abs(ms[0].fc - exact) / exact < 1e-5
    assert ms.eps_r == 2.25


# ----------------------------------------------------------------------------- errors

def error_of(tmp_path, text):
    with pytest.raises(FemodesError) as info:
        load_text(tmp_path, text)
    return str(info.value)


def test_unknown_key_suggests(tmp_path):
    msg = error_of(tmp_path, '[guide]\nshape = "rectangle"\nwidht = 22.86\nheight = 10.16\n')
    assert "unknown key 'widht' in [guide]; did you mean 'width'?" in msg
    assert "case.toml" in msg  # says which file


def test_unknown_table_and_shape_suggest(tmp_path):
    msg = error_of(tmp_path, '[guide]\nshape = "circle"\nradius = 5\n[solv]\nmodes = 2\n')
    assert "unknown table 'solv'" in msg and "did you mean 'solve'?" in msg
    msg = error_of(tmp_path, '[guide]\nshape = "rectangel"\nwidth = 1\nheight = 1\n')
    assert "unknown shape 'rectangel'" in msg and "did you mean 'rectangle'?" in msg
    assert "double_ridge" in msg  # lists the valid shapes
    msg = error_of(tmp_path, '[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodez = 2\n')
    assert "did you mean 'modes'?" in msg


def test_missing_keys_are_listed(tmp_path):
    msg = error_of(tmp_path, '[guide]\nshape = "double_ridge"\nwidth = 22\n')
    assert "needs width, height, ridge_width, gap" in msg
    assert "missing in [guide]: height, ridge_width, gap" in msg
    assert "missing the [guide] table" in error_of(tmp_path, 'title = "x"\n')
    assert "needs shape" in error_of(tmp_path, '[guide]\nwidth = 1\n')


@pytest.mark.parametrize("text, words", [
    ('[guide]\nshape = "rectangle"\nwidth = "22 mm"\nheight = 10\n', ['"22 mm"', "string", "length in mm"]),
    ('[guide]\nshape = "rectangle"\nwidth = true\nheight = 10\n', ["true", "boolean"]),
    ('[guide]\nshape = 3\n', ["shape in [guide] must be a string"]),
    ('[guide]\nshape = "circle"\nradius = 5\nunits = "inch"\n', ['"inch"', "m, cm, mm, um, in, mil"]),
    ('[guide]\nshape = "circle"\nradius = 5\noffset = [1]\n', ["pair [dx, dy]"]),
    ('[guide]\nshape = "circle"\nradius = 5\nmirror = "z"\n', ["'x', 'y'", '"z"']),
    ('[guide]\nshape = "polygon"\nvertices = [[0, 0], [1, 0], [1]]\n', ["point 3", "[x, y]"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 2.5\n', ["whole number >= 1", "2.5"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\nmodes = 0\n', ["modes in [solve]", "whole number >= 1", "0"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\nfamily = "te"\n', ["'TE', 'TM'", "did you mean 'TE'?"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\norder = 7\n', ["1, 2, 3, 4", "7"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[solve]\naccuracy = -1\n', ["from 1e-11", "up to 0.1", "-1"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[fill]\neps_r = 0\n', ["eps_r in [fill]", "from 1 to 10000", "got 0"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[fill]\nmu_r = -2.0\n', ["mu_r in [fill]", "-2.0"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[output]\nfigures = ["field"]\n', ["did you mean 'fields'?"]),
    ('[guide]\nshape = "circle"\nradius = 5\n[output]\nformat = "gif"\n', ["'png', 'svg', 'pdf'", '"gif"']),
    ('guide = 3\n', ["[guide]", "table"]),
    ('title = 7\n[guide]\nshape = "circle"\nradius = 5\n', ["title must be a string"]),
])
def test_bad_values_say_what_and_what_is_valid(tmp_path, text, words):
    msg = error_of(tmp_path, text)
    for w in words:
        assert w in msg, (w, msg)


def test_geometry_errors_pass_through(tmp_path):
    # gap 12 mm in a 10 mm high guide: the shape function's own check (femodes.geometry.section.ridged)
    msg = error_of(tmp_path, '[guide]\nshape = "double_ridge"\nwidth = 22\nheight = 10\nridge_width = 5\ngap = 12\n')
    assert "gap (12 mm) must be smaller than the guide height (10 mm)" in msg
    msg = error_of(tmp_path, '[guide]\nshape = "circle"\nradius = -5\n')
    assert "radius" in msg and "must be positive" in msg and "(mm)" in msg


def test_bad_toml_reports_the_line(tmp_path):
    msg = error_of(tmp_path, '[guide]\nshape = "circle"\nradius = \n')
    assert "not valid TOML" in msg and "line 3" in msg


def test_missing_files(tmp_path):
    with pytest.raises(FemodesError, match="case file not found"):
        load_case(tmp_path / "nope.toml")
    msg = error_of(tmp_path, '[guide]\nshape = "mesh"\nfile = "meshes/none.msh"\n')
    assert "mesh file 'meshes/none.msh' not found" in msg and str(tmp_path) in msg
    msg = error_of(tmp_path, '[guide]\nshape = "mesh"\nfile = "m.msh"\nrotate_deg = 3\n')
    assert "does not apply to shape 'mesh'" in msg


# ----------------------------------------------------------------------------- the shape table

def test_shape_table_matches_the_shape_functions():
    # every key of the table names a parameter of its shape function, and every required
    # parameter of the function is a required key: the loader cannot drift from femodes.section
    for name, spec in SHAPES.items():
        if spec.build is None:
            assert name == "mesh"
            continue
        params = inspect.signature(spec.build).parameters
        for key in spec.keys:
            assert key.target in params, (name, key)
        needed = {p for p, v in params.items() if v.default is inspect.Parameter.empty}
        assert needed == {k.target for k in spec.required}, name


def test_shapes_help_lists_the_table():
    text = shapes_help()
    for name, spec in SHAPES.items():
        assert name in text
        for key in spec.keys:
            assert key.name in text
    for u in UNITS:
        assert u in text


# ----------------------------------------------------------------------------- [analysis]

from femodes.case import FREQUENCY_UNITS, AnalysisSettings  # noqa: E402
from femodes.quantities import METALS  # noqa: E402

GUIDE = '[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10.16\n'


def test_analysis_defaults(tmp_path):
    case = load_text(tmp_path, GUIDE + '[analysis]\nfrequency = 10\n')
    an = case.analysis
    assert isinstance(an, AnalysisSettings)
    # GHz by default: 10 GHz = 1e10 Hz (SI prefix)
    assert close(an.frequency, 10e9) and an.band is None and an.table_frequency == an.frequency
    # defaults: copper (IACS 5.8e7 S/m, from memory), smooth walls, lossless fill, 3 MV/m (dry air
    # at sea level, common practice), safety factor 2 (a choice), PV first
    assert (an.conductor, an.conductivity, an.roughness, an.tan_delta) == ("copper", 5.8e7, 0.0, 0.0)
    assert (an.breakdown_field, an.safety_factor, an.impedance, an.points) == (3e6, 2.0, "PV", 41)
    assert an.frequency_role == "given"
    assert case.solve == {} and case.tan_delta == 0.0
    assert load_text(tmp_path, GUIDE).analysis is None


@pytest.mark.parametrize("units, value, hertz", [
    ("Hz", 1.0e10, 1e10), ("kHz", 1.0e7, 1e10), ("MHz", 10000, 1e10), ("GHz", 10, 1e10),  # SI prefixes
])
def test_analysis_frequency_units(tmp_path, units, value, hertz):
    case = load_text(tmp_path, GUIDE + f'[analysis]\nfrequency = {value}\nfrequency_units = "{units}"\n')
    assert close(case.analysis.frequency, hertz)
    assert FREQUENCY_UNITS == {"Hz": 1.0, "kHz": 1e3, "MHz": 1e6, "GHz": 1e9}


def test_analysis_all_keys(tmp_path):
    case = load_text(tmp_path, GUIDE + '''[fill]
tan_delta = 2e-4
[analysis]
band = [8200, 12400]
frequency_units = "MHz"
points = 5
conductor = "Aluminum"
roughness_um = 0.8
breakdown_field = 1.5e6
safety_factor = 4
impedance = "pi"
''')
    an = case.analysis
    assert an.band == pytest.approx((8.2e9, 12.4e9), rel=1e-12) and an.points == 5
    # no frequency: the table is at the band centre (8.2 + 12.4) / 2 = 10.3 GHz
    assert an.frequency is None and close(an.table_frequency, 10.3e9) and an.frequency_role == "band centre"
    assert an.conductor == "aluminium" and an.conductivity == METALS["aluminium"]
    assert close(an.roughness, 0.8e-6)                      # micrometres -> metres
    assert an.tan_delta == 2e-4 and case.tan_delta == 2e-4
    assert "tan_delta" not in case.solve                   # the modes are solved lossless
    assert (an.breakdown_field, an.safety_factor, an.impedance) == (1.5e6, 4.0, "PI")
    s = load_text(tmp_path, GUIDE + '[analysis]\nfrequency = 9\nconductor = 3.5e7\n').analysis
    assert s.conductor is None and s.conductivity == 3.5e7 and "3.5e+07 S/m" in s.conductor_text


@pytest.mark.parametrize("body, words", [
    ('[analysis]\nfrequncy = 10\n', ["unknown key 'frequncy' in [analysis]", "did you mean 'frequency'?"]),
    ('[analysis]\nfrequency = 10\ntan_delta = 1e-4\n', ["'tan_delta' does not belong in [analysis]", "[fill]"]),
    ('[analysis]\nfrequency = 10\nroughness = 1\n', ["roughness_um (micrometres)"]),
    ('[analysis]\nconductor = "copper"\n', ["needs frequency = F or band = [F1, F2]"]),
    ('[analysis]\nfrequency = -3\n', ["frequency in [analysis] must be a positive frequency in GHz", "-3"]),
    ('[analysis]\nfrequency = "10 GHz"\n', ["frequency in [analysis]", '"10 GHz"', "without quotes"]),
    ('[analysis]\nband = [12.4, 8.2]\n', ["0 < f1 < f2", "12.4"]),
    ('[analysis]\nband = [8.2, 10, 12.4]\n', ["pair [f1, f2]", "e.g. [8.2, 12.4]"]),
    ('[analysis]\nfrequency = 10\npoints = 5\n', ["points in [analysis]", "needs band"]),
    ('[analysis]\nband = [8, 12]\npoints = 1\n', ["whole number from 2 to 2001", "1"]),
    ('[analysis]\nfrequency = 10\nfrequency_units = "ghz"\n', ["Hz, kHz, MHz, GHz", "did you mean 'GHz'?"]),
    ('[analysis]\nfrequency = 10\nconductor = "copperr"\n', ["unknown metal 'copperr'", "did you mean 'copper'?",
                                                             "S/m"]),
    ('[analysis]\nfrequency = 10\nconductor = -5\n', ["conductor in [analysis]", "conductivity in S/m from 10000 to 1e+09", "got -5"]),
    ('[analysis]\nfrequency = 10\nroughness_um = -1\n', ["roughness_um", ">= 0"]),
    ('[analysis]\nfrequency = 10\nbreakdown_field = 0\n', ["breakdown_field", "positive field strength in V/m"]),
    ('[analysis]\nfrequency = 10\nsafety_factor = 0.5\n', ["safety_factor", ">= 1", "0.5"]),
    ('[analysis]\nfrequency = 10\nimpedance = "ZZ"\n', ["'PV', 'PI', 'VI'", '"ZZ"']),
    ('[fill]\ntan_delta = 1.5\n', ["tan_delta in [fill]", "0 <= tan_delta < 1", "1.5"]),
    ('[analysis]\nfrequency = 10\n[output]\nfigures = ["attenuation"]\n', ["'attenuation' needs a band"]),
])
def test_analysis_errors_say_what_and_what_is_valid(tmp_path, body, words):
    msg = error_of(tmp_path, GUIDE + body)
    for w in words:
        assert w in msg, (w, msg)
    assert "analysis must be a table [analysis]" in error_of(tmp_path, "analysis = 3\n" + GUIDE)


def test_analysis_overrides(tmp_path):
    case = load_text(tmp_path, GUIDE + '[fill]\ntan_delta = 1e-4\n')
    assert case.analysis is None
    c1 = case.with_options(frequency="9.5")
    assert close(c1.analysis.frequency, 9.5e9) and c1.analysis.tan_delta == 1e-4   # [fill] loss carried over
    c2 = c1.with_options(band=["8", "12"])
    # a new band moves the table to its centre, (8 + 12) / 2 = 10 GHz, unless --frequency is given too
    assert c2.analysis.band == (8e9, 12e9) and c2.analysis.frequency is None and close(c2.analysis.table_frequency, 10e9)
    c3 = c1.with_options(band=["8", "12"], frequency="11")
    assert close(c3.analysis.table_frequency, 11e9)
    c4 = c3.with_options(conductor="2.56e7")
    assert c4.analysis.conductor is None and c4.analysis.conductivity == 2.56e7
    assert c3.with_options(conductor="brass").analysis.conductivity == METALS["brass"]
    # figures from the command line: every kind that applies (attenuation only with a band)
    assert c3.with_options(figures_dir="f").output.figures == ("fields", "chart", "attenuation", "band")
    assert c1.with_options(figures_dir="f").output.figures == ("fields", "chart", "band")
    assert case.with_options(figures_dir="f").output.figures == ("fields", "chart")
    with pytest.raises(FemodesError, match="--conductor needs a frequency"):
        case.with_options(conductor="copper")
    with pytest.raises(FemodesError, match=r"--band must be F1 F2 with 0 < F1 < F2 \(GHz\).*got 12 8"):
        case.with_options(band=["12", "8"])
    with pytest.raises(FemodesError, match="--frequency must be a frequency in GHz"):
        case.with_options(frequency="high")
    with pytest.raises(FemodesError, match="--frequency must be a positive frequency"):
        case.with_options(frequency="0")


# ----------------------------------------------------------------------------- [[region]] tables

SLAB = '''title = "slab on the bottom wall"
[guide]
shape = "rectangle"
units = "mm"
width = 22.86
height = 10.16
[[region]]
name = "slab"
shape = "rectangle"
width = 22.86
height = 5.08
offset = [0, -2.54]
eps_r = 2.25
tan_delta = 1e-3
'''


def test_region_tables_add_materials_in_guide_units(tmp_path):
    case = load_text(tmp_path, SLAB + '[[region]]\nshape = "circle"\nradius = 1\noffset = [5, 2]\neps_r = 9.8\n'
                     'mu_r = 1.5\n')
    assert case.loaded
    m1, m2 = case.section.materials
    assert (m1.eps_r, m1.mu_r, m1.tan_delta, m1.name) == (2.25, 1.0, 1e-3, "slab")
    assert (m2.eps_r, m2.mu_r, m2.tan_delta, m2.name) == (9.8, 1.5, 0.0, "")
    # the slab's outline in metres (units of [guide]: mm)
    xy = m1.region.polyline(4)
    assert close(xy[1].min(), -5.08e-3) and close(xy[1].max(), 0.0, rel=0) and close(xy[0].max(), 11.43e-3)
    xy2 = m2.region.polyline(16)
    assert close(xy2[0].mean(), 5e-3, rel=1e-9) and close(xy2[0].max() - xy2[0].min(), 2e-3, rel=1e-9)


@pytest.mark.parametrize("extra, words", [
    ('[[region]]\nshape = "circle"\nradius = 1\n', ["[[region]] 2 needs eps_r"]),
    ('[[region]]\nshape = "circle"\nradius = 1\neps_r = 2\nunits = "cm"\n', ["units", "units of [guide]"]),
    ('[[region]]\nshape = "mesh"\nfile = "x.msh"\neps_r = 2\n', ["cannot be a mesh file"]),
    ('[[region]]\nshape = "circel"\nradius = 1\neps_r = 2\n', ["did you mean 'circle'?"]),
    ('[[region]]\nshape = "circle"\nradius = 1\neps_r = 2\ntan_delta = 2\n', ["0 <= tan_delta < 1"]),
    ('[[region]]\nshape = "circle"\nradius = 1\neps_r = -1\n', ["eps_r in [[region]] 2", "from 1 to 10000"]),
    ('[[region]]\nshape = "circle"\nradius = 1\noffset = [100, 0]\neps_r = 2\n', ["[[region]] 2", "outside the guide"]),
    ('[solve]\nfamily = "TE"\n', ["family", "hybrid"]),
    ('[solve]\norder = 4\n', ["1, 2 or 3", "edge elements"]),
    ('[analysis]\nfrequency = 10\n[output]\nfigures = ["chart"]\n', ["'chart' does not apply", "fields, dispersion"]),
    ('[output]\nfigures = ["fields"]\n', ["at a frequency", "[analysis] frequency"]),
    ('[analysis]\nfrequency = 10\n[output]\nfigures = ["dispersion"]\n', ["needs a band"]),
])
def test_region_errors_say_what_to_fix(tmp_path, extra, words):
    msg = error_of(tmp_path, SLAB + extra)
    for w in words:
        assert w in msg, (w, msg)


def test_region_table_written_single_is_refused(tmp_path):
    msg = error_of(tmp_path, '[guide]\nshape = "circle"\nradius = 5\n[region]\nshape = "circle"\nradius = 1\neps_r = 2\n')
    assert "[[region]]" in msg and "double brackets" in msg


def test_loaded_case_solves_against_the_layered_reference(tmp_path):
    # cutoffs of the slab-loaded WR-90 from the transverse-resonance equations (Collin, Field
    # Theory of Guided Waves, ch. 6), computed in femodes.reference without finite elements
    from femodes import reference as ref

    case = load_text(tmp_path, SLAB + '[solve]\nmodes = 3\naccuracy = 1e-6\n[analysis]\nfrequency = 13\n')
    study = run_case(case)
    want = ref.layered_guide_cutoffs(22.86e-3, 10.16e-3, [(5.08e-3, 2.25, 1.0), (5.08e-3, 1.0, 1.0)], 3)
    for c, r in zip(study.cutoffs, want):
        assert abs(c.fc / r.frequency - 1) < 1e-6
    betas = sorted((m.beta() for m in study.at_frequency), reverse=True)
    refs = ref.slab_on_wall_modes(22.86e-3, 10.16e-3, 5.08e-3, 2.25, 13e9, len(betas))
    for b, r in zip(betas, refs):
        assert abs(b ** 2 - r.beta2) / ((2 * math.pi * 13e9 / C0) ** 2 * 2.25) < 1e-6
    assert study.more_propagate  # five modes propagate at 13 GHz (the reference), three were asked for
