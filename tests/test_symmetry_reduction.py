"""Symmetry reduction (femodes.geometry.mirror, solvers.scalar with symmetry=True).

A section with mirror planes is solved class by class on its half or quarter with symmetry walls
(psi odd: Dirichlet, even: Neumann on the cut) and the modes unfolded to the whole section.  The
checks: the reduced geometry (areas exact for lines and arcs), the corner exponents where a cut
meets a wall (the mixed Dirichlet-Neumann corner: r^((k - 1/2) pi / alpha), Grisvard, "Elliptic
problems in nonsmooth domains", 1985, section 5.2, from memory), the unfolded mesh, and the modes
against closed forms (rectangle: kc = sqrt((m pi / a)^2 + (n pi / b)^2), common practice;
equilateral triangle: Lamé; coax and the 270-degree sector: scipy.special Bessel zeros, all in
femodes.reference) and against the unreduced solve of the same guide (symmetry=False).
"""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import reference as ref
from femodes.geometry.loops import Arc, Corner
from femodes.geometry.mesh import mesh_section
from femodes.geometry.mirror import canonical, mirror_planes, reduce, unfold_mesh
from femodes.geometry.section import Section
from femodes.solvers.scalar import solve_scalar

WR90 = (22.86e-3, 10.16e-3)  # inner width and height (EIA WR-90, common practice)
RIDGE = dict(width=34e-3, height=16e-3, ridge_width=8e-3, gap=1.5e-3, ridge_corner_radius=0.2e-3,
             base_radius=0.5e-3)  # examples/double_ridge_feed.toml


def _sector_270(radius):
    """A 270-degree sector with its bisector along +x (apex at the origin, on the mirror
    plane y = 0): the reduced half has a 135-degree corner between the cut and a wall."""
    s = fm.sector(radius, 1.5 * math.pi)
    loop = s.outer.transformed("rotate", -0.75 * math.pi)
    return Section(loop, (), "polygon", {})


def _groups(ms):
    """Each mode's degenerate group as a sorted tuple of (label, parities): exactly degenerate
    partners may come in either order."""
    return [tuple(sorted(f"{ms[i].label} {sorted(ms[i].symmetry.items())}"
                         for i in sorted((m.index,) + tuple(m.degenerate_with)) if i < len(ms))) for m in ms]


def _same_modes(a, b):
    """The same modes within the two error bars, the same labels, parities and degeneracies."""
    assert len(a) == len(b)
    for x, y in zip(a, b):
        assert x.family == y.family or x.fc == pytest.approx(y.fc, rel=1e-6)
        assert abs(x.fc - y.fc) <= x.fc_error + y.fc_error, (x.label, x.fc, y.fc, x.fc_error, y.fc_error)
        assert len(x.degenerate_with) == len(y.degenerate_with)
    assert _groups(a) == _groups(b)


# ---------------------------------------------------------------- geometry

def test_mirror_planes_and_reduced_areas():
    # areas are exact for lines and arcs (Loop.signed_area), so a quarter is a quarter
    cases = [(fm.rectangle(*WR90), ("x", "y"), 4), (fm.double_ridge(**RIDGE), ("x", "y"), 4),
             (fm.coaxial(3e-3, 1e-3), ("x", "y"), 4), (_sector_270(5e-3), ("y",), 2),
             (fm.rectangle(*WR90).translated(1e-3, 2e-3).rotated(0.3), ("x", "y"), 4),
             (fm.polygon([(0, 0), (2e-3, 0), (0, 1e-3)]), (), 1)]
    for s, axes, parts in cases:
        assert mirror_planes(s) == axes
        if axes:
            red = reduce(canonical(s), axes)
            assert red.cuts == axes
            assert red.area == pytest.approx(s.area / parts, rel=1e-12)
    # material regions must be mirrored too (femodes.solvers.loaded_mirror solves them)
    loaded = fm.rectangle(*WR90).with_material(fm.rectangle(4e-3, 4e-3), eps_r=4.0)
    assert mirror_planes(loaded) == ("x", "y")
    assert mirror_planes(fm.rectangle(*WR90).with_material(fm.rectangle(4e-3, 4e-3).translated(3e-3, 0),
                                                           eps_r=4.0)) == ("y",)


def test_coax_half_is_one_piece_with_the_inner_conductor_on_its_wall():
    red = reduce(canonical(fm.coaxial(3e-3, 1e-3)), ("x",))
    assert red.holes == ()
    # pi (b^2 - a^2) / 2
    assert red.area == pytest.approx(math.pi * (9e-6 - 1e-6) / 2, rel=1e-12)
    assert sum(isinstance(s, Arc) for s in red.outer.segments) >= 2


def test_mixed_corner_exponents():
    # Dirichlet on one side, Neumann on the other: (k - 1/2) pi / alpha; with the pure problem's
    # k pi / alpha, every multiple of pi / (2 alpha) (Grisvard 1985, section 5.2, from memory)
    c = Corner((0.0, 0.0), 0.75 * math.pi, mixed=True)
    assert c.exponent == pytest.approx(2 / 3)
    assert c.singular_exponent == pytest.approx(2 / 3)
    assert c.exponents(2.1) == pytest.approx([2 / 3, 4 / 3, 2.0])
    # a cut meeting a straight wall at right angles: 1, 3, 5 (mixed) and 2, 4 (pure): smooth
    assert Corner((0.0, 0.0), 0.5 * math.pi, mixed=True).singular_exponent == math.inf
    # a 60-degree corner halved (30 degrees): 3, 6, 9 ... smooth too
    assert Corner((0.0, 0.0), math.pi / 6, mixed=True).singular_exponent == math.inf
    # the half 270-degree sector: its apex is a 135-degree mixed corner and limits the rate
    red = reduce(canonical(_sector_270(5e-3)), ("y",))
    apex = [c for c in red.corners() if math.hypot(*c.point) < 1e-12]
    assert len(apex) == 1 and apex[0].mixed and apex[0].angle == pytest.approx(0.75 * math.pi)
    assert apex[0] in red.rate_limiting_corners(4)
    # where the cut meets the arc at right angles: mixed, not limiting
    assert all(not c.limits_rate(4) for c in red.corners() if c != apex[0])


def test_unfolded_mesh_covers_the_whole_section_symmetrically():
    s = fm.double_ridge(**RIDGE)
    red = reduce(canonical(s), ("x", "y"))
    m = mesh_section(red, 2e-3, order=4, all_corners=True)
    u = unfold_mesh(m, ("x", "y"), s)
    assert u.n_triangles == 4 * m.n_triangles
    p = u.points[:, u.triangles]
    area = 0.5 * np.abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0]) - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))
    # straight-sided triangles: the fillets are cut a little short, within h^2 of the true area
    assert area.sum() == pytest.approx(s.area, rel=1e-3)
    key = {tuple(np.round(q / 1e-9).astype(int)) for q in u.points.T}
    assert all(tuple(np.round(q * [-1, 1] / 1e-9).astype(int)) in key for q in u.points.T)
    assert all(tuple(np.round(q * [1, -1] / 1e-9).astype(int)) in key for q in u.points.T)
    assert u.is_curved and len(u.curves) and np.all(u.edge_curve >= 0)


# ---------------------------------------------------------------- against closed forms

# the square at 1e-8 takes several meshes: its TM class odd about both planes starts at TM22, 4x
# the kc^2 of TM11 in the even class, and each mesh's shift must stay below both classes' lowest
@pytest.mark.parametrize("a, b, n, accuracy", [(*WR90, 12, 1e-7), (10e-3, 10e-3, 12, 1e-6), (20e-3, 20e-3, 16, 1e-8)])
def test_rectangles_against_the_closed_form(a, b, n, accuracy):
    # fc = c / 2 sqrt((m / a)^2 + (n / b)^2) (common practice); labels and degeneracies as the
    # unreduced solve's
    red = fm.solve(fm.rectangle(a, b), n, accuracy=accuracy, symmetry="always")
    whole = fm.solve(fm.rectangle(a, b), n, accuracy=accuracy, symmetry=False)
    truth = ref.rectangle_modes(a, b, len(red))  # a degenerate group the count cuts comes whole
    kc = np.array([m.kc for m in red])
    true_err = np.abs(kc - [r.kc for r in truth]) / [r.kc for r in truth]
    est = np.array([m.rel_error for m in red])
    assert np.all(true_err <= est) and np.all(true_err <= accuracy), (true_err, est)
    # the names: as the closed form's within each degenerate group (TE / TM pairs, the square's
    # TE10 / TE01 and its four-fold TE12 / TE21 / TM12 / TM21)
    assert sorted(m.label for m in red) == sorted(r.label for r in truth)
    _same_modes(red, whole)


def test_equilateral_triangle_with_a_corner_on_the_cut():
    # the 60-degree apex lies on the mirror x = 0: halved, a 30-degree corner whose mixed
    # exponents 3, 6, ... are whole (smooth); Lamé's closed form (femodes.reference)
    side = 10e-3
    s = fm.polygon([(-side / 2, 0.0), (side / 2, 0.0), (0.0, side * math.sqrt(3) / 2)])
    assert mirror_planes(s) == ("x",)
    red = fm.solve(s, 8, accuracy=1e-6, symmetry="always")
    truth = ref.equilateral_triangle_modes(side, len(red))  # a pair the count cuts comes whole
    kc = np.array([m.kc for m in red])
    t = np.array([r.kc for r in truth])
    assert [m.family for m in red] == [r.family for r in truth] or np.allclose(kc, t, rtol=1e-5)
    true_err = np.abs(kc - t) / t
    est = np.array([m.rel_error for m in red])
    assert np.all(true_err <= est) and np.all(true_err <= 1e-6), (true_err, est)


@pytest.mark.parametrize("family", ["TM", "TE"])
def test_270_degree_sector_mixed_corner_error_bars(family):
    # J_nu(kc R) = 0 (TM), J_nu'(kc R) = 0 (TE), nu = k pi / (3 pi / 2) (femodes.reference.
    # sector_modes: scipy.special + brentq).  The even class sees the mixed 135-degree corner
    # (exponent 2/3, like the whole 270-degree corner), the odd class the Dirichlet one (4/3)
    R = 5e-3
    s = _sector_270(R)
    modes = fm.solve(s, 5, family=family, accuracy=1e-6, symmetry="always")
    sol = solve_scalar(s, 5, 1e-6, family, 4, symmetry=True)
    assert sol.fine["symmetry"] == ("y",)
    truth = np.array([r.kc for r in ref.sector_modes(R, 1.5 * math.pi, 30) if r.family == family][:5])
    kc = np.array([m.kc for m in modes])
    true_err = np.abs(kc - truth) / truth
    est = np.array([m.rel_error for m in modes])
    assert np.all(true_err <= est) and np.all(true_err <= 1e-6), (true_err, est)


def test_coax_te11_tem_and_labels():
    # TE11 of a coax: J_1'(k a) Y_1'(k b) - J_1'(k b) Y_1'(k a) = 0 (femodes.reference.coax_modes,
    # scipy.special); a degenerate pair with x / y parities, a TEM mode first
    a, b = 1e-3, 3e-3
    red = fm.solve(fm.coaxial(b, a), 6, accuracy=1e-6, symmetry="always")
    whole = fm.solve(fm.coaxial(b, a), 6, accuracy=1e-6, symmetry=False)
    truth = ref.coax_modes(a, b, 6)
    assert red[0].family == "TEM" and red[0].label == "TEM"
    te11 = [m for m in red if m.label == "TE11"]
    kc11 = next(r.kc for r in truth if r.label.startswith("TE11"))
    assert len(te11) == 2 and {m.symmetry["x"] for m in te11} == {"odd", "even"}
    for m in te11:
        assert abs(m.kc - kc11) / kc11 <= m.rel_error <= 1e-6
    _same_modes(red, whole)
    # the TEM line from the conductor potential on the unfolded mesh: C = 2 pi eps0 / ln(b / a)
    # (common practice), within its error estimate
    c_true = 2 * math.pi * ref.EPS0 / math.log(b / a)
    assert abs(red.line.capacitance[0, 0] - c_true) <= red.line.capacitance_error[0, 0] <= 1e-6 * c_true


def test_double_ridge_example_reduced_equals_whole():
    # no closed form: the reduced and unreduced solves of the example's guide agree within their
    # error bars, with the same labels, parities and degenerate pairs
    s = fm.double_ridge(**RIDGE)
    red = fm.solve(s, 10, accuracy=1e-5, symmetry="always")
    whole = fm.solve(s, 10, accuracy=1e-5, symmetry=False)
    _same_modes(red, whole)
    # the fundamental: H_z odd across the ridges' plane x = 0, even across the gap's y = 0
    assert red[0].symmetry == {"x": "odd", "y": "even"}


def test_fields_of_unfolded_modes_are_mirror_images():
    # E_z of TM11 in WR-90 (sin(pi x / a) sin(pi y / b) about the corner) is even about both
    # centre lines, H_z of TE10 odd in x: checked on the unfolded field at mirrored points
    ms = fm.solve(fm.rectangle(*WR90), 5, accuracy=1e-6, symmetry="always")
    pts = np.array([[3e-3, -4e-3, 7e-3], [2e-3, 1e-3, -3.5e-3]])
    for m in ms:
        f = m.longitudinal(pts)
        fx = m.longitudinal(pts * np.array([[-1.0], [1.0]]))
        sx = 1.0 if m.symmetry["x"] == "even" else -1.0
        assert np.allclose(fx, sx * f, atol=1e-9 * np.max(np.abs(f)))


def test_family_and_option_off():
    s = fm.rectangle(*WR90)
    te = fm.solve(s, 4, family="TE", accuracy=1e-6, symmetry="always")
    assert [m.label for m in te] == ["TE10", "TE20", "TE01", "TE11"]
    sol = solve_scalar(s, 4, 1e-6, None, 4, symmetry=False)
    assert "symmetry" not in sol.fine
    sol = solve_scalar(s, 4, 1e-6, None, 4, symmetry=True)
    assert sol.fine["symmetry"] == ("x", "y") and sol.fine["reduced_dofs"] < sol.n_dofs


def test_default_reduces_only_where_it_pays():
    # the policy (femodes.api.reduction_pays, measured in DEVELOPERS.md): many modes, or fine
    # accuracy on a graded / curved section; a wrong value is refused with what is valid
    from femodes.api import reduction_pays
    assert reduction_pays(fm.rectangle(*WR90), 100, 1e-6)
    assert not reduction_pays(fm.rectangle(*WR90), 6, 1e-8)
    assert reduction_pays(fm.double_ridge(**RIDGE), 10, 1e-8)
    assert not reduction_pays(fm.double_ridge(**RIDGE), 8, 1e-6)
    with pytest.raises(fm.FemodesError, match="symmetry must be"):
        fm.solve(fm.rectangle(*WR90), 2, symmetry="yes")


def test_moved_and_rotated_rectangle():
    # the planes are the section's own axes: WR-90 moved and turned is still solved on its
    # quarter, the modes unfolded back in place (closed form, common practice)
    s = fm.rectangle(*WR90).translated(1e-3, 2e-3).rotated(0.3)
    ms = fm.solve(s, 8, accuracy=1e-7, symmetry="always")
    truth = ref.rectangle_modes(*WR90, 8)
    t = np.array([r.kc for r in truth])
    err = np.abs(np.array([m.kc for m in ms]) - t) / t
    assert np.all(err <= np.array([m.rel_error for m in ms]))
    assert sorted(m.label for m in ms) == sorted(r.label for r in truth)
