"""Symmetry groups of sections and meshes, and the classes of the modes in them (issue 13 item 4).

Checks against things outside femodes:
* the groups of plane figures (a square and a plus-shaped cross: D4; an equilateral triangle: D3;
  a regular hexagon: D6; a rectangle and a double-ridge guide: D2; a single-ridge guide, an L with
  equal legs, an eccentric coax: D1 about the line through their centres) -- elementary geometry,
  common practice;
* the square guide's cutoffs fc_mn = (c / 2a) sqrt(m^2 + n^2) (Pozar, Microwave Engineering, 4th
  ed., sec. 3.3) and the parity of its closed-form fields cos(m pi x / a) cos(n pi y / a): TE10 /
  TE01 are one degenerate pair, the two-dimensional class of D4 (group theory: a class of
  dimension two forces the degeneracy; Hamermesh, Group Theory, ch. 3 -- from memory);
* the equilateral triangle of side a: lambda = (16 pi^2 / (9 a^2)) (m^2 + m n + n^2), Neumann
  (TE) m, n >= 0 not both 0, Dirichlet (TM) m, n >= 1 (Lame; M. A. Pinsky, "The eigenvalues of an
  equilateral triangle", SIAM J. Math. Anal. 11 (1980) 819-827; B. J. McCartin, "Eigenstructure of
  the equilateral triangle, Part I: the Dirichlet problem", SIAM Review 45 (2003) 267-287, and
  Part II for the Neumann problem, Math. Probl. Eng. 2004): an unordered index pair {m, n} with
  m != n gives a two-fold eigenvalue (one 2-D class of D3), m = n a single one (a 1-D class); the
  lowest Dirichlet mode has one sign (Courant), so it is even about every mirror line;
* a mesh file (written with meshio, read back) of a double-ridge guide: the same group and the
  same labels and classes as the Section it was meshed from.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import femodes
from femodes.constants import C0
from femodes.geometry.symmetry import symmetry_group

A = 0.02
S3 = math.sqrt(3)


def _deg(g):
    return sorted(round(math.degrees(a), 6) % 180 for a in g.mirrors)


def _triangle(side, turn=0.0):
    pts = [(-side / 2, -side * S3 / 6), (side / 2, -side * S3 / 6), (0.0, side * S3 / 3)]
    c, s = math.cos(turn), math.sin(turn)
    return femodes.polygon([(c * x - s * y + 0.003, s * x + c * y - 0.001) for x, y in pts])


def _cross(arm, half):
    """A plus-shaped guide: arms of width 2 ``arm`` reaching ``half`` from the centre."""
    a, h = arm, half
    return femodes.polygon([(-a, -h), (a, -h), (a, -a), (h, -a), (h, a), (a, a), (a, h), (-a, h), (-a, a),
                            (-h, a), (-h, -a), (-a, -a)])


# ------------------------------------------------------------------------------------ groups
def test_groups_of_plane_figures_sections_and_their_meshes():
    """Elementary geometry (common practice): the groups, mirror lines and centres."""
    hexagon = femodes.polygon([(0.01 * math.cos(k * math.pi / 3), 0.01 * math.sin(k * math.pi / 3))
                               for k in range(6)])
    cases = [
        (femodes.rectangle(A, A), "D4", [0, 45, 90, 135]),
        (femodes.rectangle(A, A).rotated(0.3).translated(0.01, 0.02), "D4", [0, 45, 90, 135]),  # own axes
        (_cross(3e-3, 9e-3), "D4", [0, 45, 90, 135]),
        (_triangle(A), "D3", [30, 90, 150]),
        (_triangle(A, math.radians(10)), "D3", [40, 100, 160]),  # mirrors at any angle
        (hexagon, "D6", [0, 30, 60, 90, 120, 150]),
        (femodes.rectangle(0.02286, 0.01016), "D2", [0, 90]),
        (femodes.double_ridge(0.02, 0.01, 0.005, 0.003), "D2", [0, 90]),
        (femodes.single_ridge(0.02, 0.01, 0.005, 0.003), "D1", [90]),
        (femodes.l_shape(0.02, 0.02, 0.01, 0.01), "D1", [45]),
        (femodes.coaxial(0.01, 0.003, (0.002, 0.001)), "D1", [round(math.degrees(math.atan2(1, 2)), 6)]),
        (femodes.ellipse(0.02, 0.01), "D2", [0, 90]),
    ]
    for sec, name, lines in cases:
        g = symmetry_group(sec)
        assert g.name == name, (sec.describe(), g.describe())
        assert _deg(g) == pytest.approx(lines, abs=1e-6), (sec.describe(), g.describe())
        mesh = femodes.mesh_section(sec, sec.size / 12, graded=False)
        gm = symmetry_group(mesh)
        assert gm.name == name, (sec.describe(), gm.describe())
        # a mesh file has no own axes: its mirror lines are measured from the global x axis
        turn = math.degrees(sec.frame[2])
        assert sorted((d + turn) % 180 for d in _deg(g)) == pytest.approx(_deg(gm), abs=1e-3)
        assert gm.centre == pytest.approx(g.centre, abs=gm.tolerance)  # chords of arcs move it a little
    # the centroid is the centre: the translated triangle's centroid is where it was moved
    assert symmetry_group(_triangle(A)).centre == pytest.approx((0.003, -0.001), abs=1e-12)
    assert symmetry_group(femodes.circle(0.01)).name == "circular"
    assert symmetry_group(femodes.coaxial(0.01, 0.003)).name == "circular"


def test_a_nearly_square_guide_is_not_a_square():
    """The tolerance is 1e-6 of the size for a Section: 20 x 20.01 mm (5e-4 apart) is D2, whose
    TE10 and TE01 are not one pair; 20 mm x 20 (1 + 1e-8) mm is a square (D4)."""
    assert symmetry_group(femodes.rectangle(A, A * 1.0005)).name == "D2"
    assert symmetry_group(femodes.rectangle(A, A * (1 + 1e-8))).name == "D4"
    assert symmetry_group(femodes.circle(0.01).with_material(femodes.circle(0.002).translated(1e-4, 0),
                                                             eps_r=2.0)).name == "D1"


def test_materials_and_inner_conductors_enter_the_group():
    """A slab off the centre line leaves one mirror; an inner conductor off centre breaks D2."""
    box = femodes.rectangle(A, A)
    slab = box.with_material(femodes.rectangle(0.004, 0.002).translated(0.005, 0.0), eps_r=4.0)
    assert symmetry_group(slab).name == "D1" and _deg(symmetry_group(slab)) == [0]
    two = slab.with_material(femodes.rectangle(0.004, 0.002).translated(-0.005, 0.0), eps_r=4.0)
    assert symmetry_group(two).name == "D2"
    unequal = slab.with_material(femodes.rectangle(0.004, 0.002).translated(-0.005, 0.0), eps_r=3.0)
    assert symmetry_group(unequal).name == "D1"
    rc = femodes.rectangular_coax(A, 0.01, 0.004, 0.002, offset=(0.002, 0.0))
    assert symmetry_group(rc).name == "D1" and _deg(symmetry_group(rc)) == [0]


# ------------------------------------------------------------------------------------ classes
def test_square_pair_is_the_two_dimensional_class_of_d4():
    """Square a x a: fc_mn = (c / 2a) sqrt(m^2 + n^2) (Pozar sec. 3.3).  TE10 / TE01 (psi odd in
    one coordinate): the 2-D class; TE11 ~ sin sin about the centre: odd about both axes, even
    about both diagonals; TM11 ~ cos cos: even about all four mirror lines; TE20 / TE02 (cos 2 pi x
    / a, even about both axes): their sum and difference are two different 1-D classes, so the
    pure index modes are mixes (the square's extra degeneracy beyond D4)."""
    ms = femodes.solve(femodes.rectangle(A, A), modes=6, accuracy=1e-6)
    assert {m.symmetry_group for m in ms} == {"D4"}
    f10 = C0 / (2 * A)
    by = {m.label: m for m in ms}
    for lab in ("TE10", "TE01"):
        m = by[lab]
        assert m.fc == pytest.approx(f10, abs=max(m.fc_error, 1e-9 * f10))
        assert m.symmetry_class == "degenerate pair: 2-D class of D4"
        assert m.multiplicity == 2
    assert by["TE10"].symmetry == {"x": "odd", "y": "even"}  # the x/y parity labels are unchanged
    assert by["TE11"].fc == pytest.approx(f10 * math.sqrt(2), abs=max(by["TE11"].fc_error, 1e-9 * f10))
    assert by["TE11"].symmetry_class == ("even about the 45-degree line and the 135-degree line; "
                                         "odd about the x axis and the y axis")
    assert by["TM11"].symmetry_class == "even about all 4 mirror lines"
    for lab in ("TE20", "TE02"):
        assert by[lab].symmetry_class.startswith("mixes (")
    table = femodes.report.modes_table(ms)
    assert "symmetry: D4: 4 mirror lines" in table and "2-D class of D4" in table
    doc = femodes.report.modes_document(ms)
    assert doc["section"]["symmetry_group"] == "D4"
    assert doc["modes"][0]["symmetry_class"] == "degenerate pair: 2-D class of D4"


def test_cross_guide_classes_follow_its_degeneracies():
    """Plus-shaped guide (D4): by group theory a mode of the 2-D class is one of a degenerate pair
    and a mode of a 1-D class is single (no closed form is needed for that, only D4 and no
    accidental degeneracy among the lowest modes); the lowest TE pair is the 2-D class."""
    ms = femodes.solve(_cross(3e-3, 9e-3), modes=6, accuracy=1e-3)
    assert ms[0].symmetry_group == "D4"
    assert ms[0].multiplicity == 2 and ms[0].family == "TE"
    for m in ms:
        pair = m.symmetry_class == "degenerate pair: 2-D class of D4"
        assert pair == (m.multiplicity == 2), (m.label, m.symmetry_class, m.multiplicity)
        if not pair:
            assert m.symmetry_class and not m.symmetry_class.startswith("mixes"), m.symmetry_class
        else:  # a pair the group forces: called so, and completed when the mode count cuts it
            assert m.degeneracy == "symmetry", (m.label, m.degeneracy)
            assert len(m.degenerate_with) == 1, (m.label, m.degenerate_with)


def _triangle_levels(side, count):
    """Closed form (Lame; Pinsky 1980, McCartin 2003): {family: [(lambda, multiplicity), ...]}."""
    out = {}
    for fam, lo in (("TE", 0), ("TM", 1)):
        vals = {}
        for m in range(lo, 12):
            for n in range(m, 12):
                if m == n == 0:
                    continue
                q = m * m + m * n + n * n
                vals[q] = vals.get(q, 0) + (1 if m == n else 2)
        out[fam] = [(16 * math.pi ** 2 / (9 * side ** 2) * q, k) for q, k in sorted(vals.items())][:count]
    return out


def test_equilateral_triangle_d3_classes_match_the_closed_form_degeneracies():
    """Equilateral triangle, turned 10 degrees and moved (mirrors at 40, 100, 160 degrees): every
    cutoff and its multiplicity from Lame's closed form; the two-fold ones are named the 2-D class
    of D3, the single ones a 1-D class; the lowest TM mode even about all three mirror lines."""
    levels = _triangle_levels(A, 3)
    ms = femodes.solve(_triangle(A, math.radians(10)), modes=10, accuracy=1e-6)
    assert {m.symmetry_group for m in ms} == {"D3"}
    for fam, want in levels.items():
        got = [m for m in ms if m.family == fam]
        k = 0
        for lam, mult in want:
            if k + mult > len(got):
                break
            group = got[k:k + mult]
            for m in group:
                assert m.kc ** 2 == pytest.approx(lam, abs=2 * m.kc * m.kc_error + 1e-9 * lam), (fam, m.label)
                if mult == 2:
                    assert m.symmetry_class == "degenerate pair: 2-D class of D3", (fam, m.label)
                    # (TE and TM share some cutoffs too, e.g. both have 7: count one family)
                    assert sum(ms[i].family == fam for i in m.degenerate_with) == 1
                else:
                    assert m.symmetry_class in ("even about all 3 mirror lines", "odd about all 3 mirror lines")
            k += mult
        assert k >= 3
    tm1 = next(m for m in ms if m.family == "TM")
    assert tm1.symmetry_class == "even about all 3 mirror lines"


# ------------------------------------------------------------------------------------ mesh files
def test_ridge_guide_mesh_file_has_d2_and_the_sections_labels(tmp_path):
    """A double-ridge guide moved off the origin, meshed by femodes, written with meshio (gmsh 2.2)
    and read back: D2 about its centroid, and its modes carry the Section's labels, parities and
    classes (cutoffs agreeing to the mesh's accuracy).  Near-equal cutoffs (the pair near 15.2 GHz)
    may come in either order, so modes are matched by family, parity and class."""
    import meshio

    sec = femodes.double_ridge(0.02, 0.01, 0.005, 0.003).translated(0.004, -0.002)
    mesh = femodes.mesh_section(sec, 0.0007, graded=False)
    path = str(tmp_path / "ridge.msh")
    xyz = np.vstack([mesh.points, np.zeros(mesh.n_vertices)]).T
    meshio.write(path, meshio.Mesh(xyz, [("triangle", mesh.triangles.T)]), file_format="gmsh22", binary=False)
    read = femodes.read_mesh(path)
    g = symmetry_group(read)
    assert g.name == "D2" and _deg(g) == pytest.approx([0, 90], abs=1e-6)
    assert g.centre == pytest.approx((0.004, -0.002), abs=1e-9)

    ref = femodes.solve(sec, modes=6, accuracy=1e-5)
    got = femodes.solve(read, modes=6)
    for m in got:
        assert m.symmetry_group == "D2"
        twin = [r for r in ref if r.family == m.family and r.symmetry == m.symmetry
                and r.symmetry_class == m.symmetry_class and abs(r.fc - m.fc) < 2e-3 * r.fc]
        assert len(twin) == 1, (m.label, m.fc, m.symmetry_class)
        fcs = sorted(r.fc for r in ref)
        if all(abs(f - twin[0].fc) > 0.01 * f for f in fcs if f != twin[0].fc):
            assert m.label == twin[0].label
    assert got[0].label == "TE1 (x odd, y even)" == ref[0].label
    assert got[0].symmetry_class == "even about the x axis; odd about the y axis"


def test_pinwheel_has_turns_only_and_a_rotating_pair():
    """A square with one tab on each side, off the side's middle, turned by 90 degrees from side
    to side: C4 (90-degree turns, no mirror line; elementary geometry).  C4's two complex classes
    k = 1 and 3 are conjugate, so a real field of either comes in a degenerate pair (group theory,
    from memory): the lowest pair is named so; the single modes are unchanged by, or change sign
    under, a quarter turn."""
    base = [(1, -1), (1, 0.2), (1.3, 0.2), (1.3, 0.6), (1, 0.6)]
    pts = []
    for k in range(4):
        c, s = math.cos(k * math.pi / 2), math.sin(k * math.pi / 2)
        pts += [(5e-3 * (c * x - s * y), 5e-3 * (s * x + c * y)) for x, y in base]
    sec = femodes.polygon(pts)
    assert symmetry_group(sec).name == "C4" and symmetry_group(sec).mirrors == ()
    assert symmetry_group(femodes.mesh_section(sec, 1e-3, graded=False)).name == "C4"
    ms = femodes.solve(sec, modes=4, accuracy=1e-3)
    assert ms[0].multiplicity == 2
    for m in ms:
        if m.multiplicity == 2:
            assert m.symmetry_class == "degenerate pair of C4 (rotating)"
        else:
            assert m.symmetry_class in ("unchanged by a 90-degree turn", "changes sign under a 90-degree turn")
