"""Mesh files with material regions: gmsh physical surfaces name the regions, the Python call or the
case file gives each its material, and the full-vector solver runs on that fixed mesh.

A mesh file is not refined: the error of every value is what the mesh gives, estimated from edge
elements of order p and p - 1 on the same mesh (femodes.solvers.loaded.solve_loaded_mesh).  The
tests check that estimate against outside references -- the true error must lie within the
reported error, and within the asked accuracy where the mesh reaches it:

* the LSE / LSM transverse-resonance solutions of a WR-90 guide with a full-height slab against
  a side wall (Collin, Field Theory of Guided Waves, ch. 6; Pozar, Microwave Engineering,
  sec. 3.3, partially loaded guide), computed in femodes.reference without the FE code;
* guides filled with one medium: beta = sqrt(k0^2 eps_r - kc^2) (Pozar sec. 3.3 and 3.4), with
  kc of the rectangle in closed form and of the circle from scipy.special Bessel-function zeros.

The meshes are written inside the tests with gmsh's Python API.
"""

import io
import math
import re
import warnings
from contextlib import redirect_stdout

import gmsh
import meshio
import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import jn_zeros, jnp_zeros

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref
from femodes.case import load_case
from femodes.cli import main

A, B = 22.86e-3, 10.16e-3     # WR-90 inner size, m (EIA)
T, EPS = 6e-3, 2.25           # slab against the side wall x = 0: width (m), eps_r
C0 = 299792458.0


def _gmsh_file(path, build, h, second_order=False, version=4.1):
    """Mesh the surfaces ``build(occ)`` makes and names (it returns {name: [surface tags]}) with
    element size h (mm), writing their physical groups to ``path``."""
    gmsh.initialize(readConfigFiles=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        groups = build(gmsh.model.occ)
        gmsh.model.occ.synchronize()
        for name, tags in groups.items():
            dim = 1 if name == "wall" else 2
            gmsh.model.addPhysicalGroup(dim, tags, name=name)
        gmsh.option.setNumber("Mesh.MeshSizeMax", h)
        gmsh.option.setNumber("Mesh.RandomFactor", 1e-9)
        gmsh.model.mesh.generate(2)
        if second_order:
            gmsh.model.mesh.setOrder(2)
        gmsh.option.setNumber("Mesh.MshFileVersion", version)
        gmsh.write(str(path))
    finally:
        gmsh.finalize()
    return str(path)


def _side_slab(occ, walls=False):
    """WR-90 in mm, [0, a] x [0, b], cut at x = t: "slab" (x < t) and "air" (+ "wall" curves)."""
    guide = occ.addRectangle(0, 0, 0, A * 1e3, B * 1e3)
    slab = occ.addRectangle(0, 0, 0, T * 1e3, B * 1e3)
    occ.fragment([(2, guide)], [(2, slab)])
    occ.synchronize()
    faces = [t for _, t in occ.getEntities(2)]
    left = [t for t in faces if occ.getCenterOfMass(2, t)[0] < T * 1e3]
    out = {"slab": left, "air": [t for t in faces if t not in left]}
    if walls:
        out["wall"] = [t for _, t in occ.getEntities(1)]
    return out


@pytest.fixture(scope="module")
def slab_file(tmp_path_factory):
    return _gmsh_file(tmp_path_factory.mktemp("slab") / "slab.msh", lambda occ: _side_slab(occ, walls=True), 1.0)


def _quiet_solve(*args, **kw):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = fm.solve(*args, **kw)
    return out, [str(w.message) for w in caught if issubclass(w.category, RuntimeWarning)]


# ----------------------------------------------------------------------------- reading groups

@pytest.mark.parametrize("version,second_order", [(4.1, False), (2.2, False), (2.2, True)])
def test_read_mesh_keeps_physical_surfaces_as_named_groups(tmp_path, version, second_order):
    path = _gmsh_file(tmp_path / "s.msh", lambda occ: _side_slab(occ, walls=True), 2.0, second_order, version)
    mesh = fm.read_mesh(path, scale=1e-3)
    assert set(mesh.groups) == {"slab", "air"}  # "wall" is a group of curves: no triangles
    assert mesh.regions.shape == (mesh.n_triangles,)
    p = mesh.points[:, mesh.triangles]
    area = 0.5 * np.abs((p[0, 1] - p[0, 0]) * (p[1, 2] - p[1, 0]) - (p[0, 2] - p[0, 0]) * (p[1, 1] - p[1, 0]))
    # the groups tile the two rectangles exactly (area of a rectangle: common practice)
    slab = mesh.regions == mesh.region_names["slab"]
    assert math.isclose(area[slab].sum(), T * B, rel_tol=1e-12)
    assert math.isclose(area[~slab].sum(), (A - T) * B, rel_tol=1e-12)
    filled = mesh.with_materials({"slab": dict(eps_r=EPS, tan_delta=1e-4, name="PTFE")})
    assert [(m.group, m.eps_r, m.tan_delta, m.name) for m in filled.materials] == [("slab", EPS, 1e-4, "PTFE")]
    assert np.array_equal(filled.material_index() == 1, slab)
    # written back and read again, the groups survive
    fm.write_mesh(filled, tmp_path / "back.msh")
    back = fm.read_mesh(str(tmp_path / "back.msh"), scale=1.0)
    assert set(back.groups) == {"slab", "air"}
    assert np.array_equal(back.regions == back.region_names["slab"], slab)


def test_unnamed_physical_groups_go_by_their_number(tmp_path):
    mesh = fm.mesh_section(fm.rectangle(A, B), 3e-3, order=2)
    fm.write_mesh(mesh, tmp_path / "plain.msh")     # one physical surface, tag 1, no name
    back = fm.read_mesh(str(tmp_path / "plain.msh"))
    assert back.groups == ("1",)
    assert back.with_materials({"1": 2.0}).material_index().min() == 1


def test_read_mesh_takes_cell_sets_of_other_formats(tmp_path, slab_file):
    mesh = fm.read_mesh(slab_file, scale=1e-3)
    sets = {n: [np.flatnonzero(mesh.regions == t)] for n, t in mesh.region_names.items() if t > 0}
    xyz = np.vstack([mesh.points, np.zeros(mesh.n_vertices)]).T
    meshio.write(str(tmp_path / "s.inp"), meshio.Mesh(xyz, [("triangle", mesh.triangles.T)], cell_sets=sets))
    other = fm.read_mesh(str(tmp_path / "s.inp"))
    assert set(other.groups) == {"slab", "air"}
    assert np.array_equal(other.regions == other.region_names["slab"], mesh.regions == mesh.region_names["slab"])


# ----------------------------------------------------------------------------- (a) the side slab

def _slab_refs(f, count=6):
    return ref.layered_guide_modes(A, B, [(T, EPS, 1.0), (A - T, 1.0, 1.0)], f, count=count, axis="x")


def test_side_slab_modes_within_their_estimates_on_a_fixed_mesh(slab_file):
    f, acc = 12e9, 1e-4
    mesh = fm.read_mesh(slab_file, scale=1e-3).with_materials({"slab": EPS})
    modes, warned = _quiet_solve(mesh, modes=4, frequency=f, accuracy=acc)
    assert not warned  # the estimate meets the asked accuracy on this mesh
    k0 = 2 * math.pi * f / C0
    refs = _slab_refs(f)
    assert len(modes) == len([r for r in refs if r.propagating])
    for m, r in zip(modes, refs):
        true = abs(m.beta() - r.beta)
        assert true <= m.beta_error, (m.label, r.label, true, m.beta_error)
        # the accuracy is asked on beta^2 relative to k0^2 eps_max (femodes.solvers.loaded)
        assert abs(m.beta() ** 2 - r.beta2) / (k0 * k0 * EPS) <= acc
    # the dominant mode against the textbook TE_m0 equation, written out on its own (Pozar sec. 3.3)
    b2 = brentq(lambda x: ref.side_slab_te_m0_equation(x, A, T, EPS, k0), modes[0].beta() ** 2 * 0.99,
                min(modes[0].beta() ** 2 * 1.01, EPS * k0 * k0 * 0.999999))
    assert abs(modes[0].beta() - math.sqrt(b2)) <= modes[0].beta_error
    # LSE10 has no E_z (TE) and grows from the empty guide's first mode, TE10 (Collin ch. 6); on a
    # mesh file the empty-guide modes are named by family and ordinal, with their parity about the
    # mesh's mirror lines through its centroid (TE10: odd in x, even in y)
    assert modes[0].family == "TE" and modes[0].parent == "TE1 (x odd, y even)" and modes[0].parent_share > 0.8


def test_side_slab_cutoffs_within_their_estimates_on_a_fixed_mesh(slab_file):
    acc = 1e-4
    mesh = fm.read_mesh(slab_file, scale=1e-3).with_materials({"slab": EPS})
    cuts, warned = _quiet_solve(mesh, modes=4, accuracy=acc)
    assert not warned
    want = ref.layered_guide_cutoffs(A, B, [(T, EPS, 1.0), (A - T, 1.0, 1.0)], 4, axis="x")
    for c, r in zip(cuts, want):
        true = abs(c.fc / r.frequency - 1)
        assert true <= c.rel_error and true <= acc, (c.label, r.label, true, c.rel_error)
        assert c.field == r.field


def test_a_coarse_fixed_mesh_warns_and_its_estimate_still_bounds_the_error(tmp_path):
    # a fixed mesh cannot be refined: asked more than it gives, it says so, and the error bar it
    # reports is still an upper bound
    path = _gmsh_file(tmp_path / "coarse.msh", _side_slab, 4.0)
    mesh = fm.read_mesh(path, scale=1e-3).with_materials({"slab": EPS})
    f = 12e9
    modes, warned = _quiet_solve(mesh, modes=3, frequency=f, accuracy=1e-9)
    assert any("not reached on the fixed mesh" in w and "coarse.msh" in w for w in warned)
    for m, r in zip(modes, _slab_refs(f)):
        assert abs(m.beta() - r.beta) <= m.beta_error


def test_dispersion_on_a_mesh_file_follows_the_reference_curves(slab_file):
    mesh = fm.read_mesh(slab_file, scale=1e-3).with_materials({"slab": EPS})
    fs = np.linspace(11e9, 13e9, 3)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        disp = fm.dispersion(mesh, fs, modes=2, accuracy=1e-4)
    # each tracked curve stays on one reference curve (LSE20 is crossed by LSM01 near 12.6 GHz),
    # within the accuracy asked of beta^2 relative to k0^2 eps_max
    first = {r.label: r.beta2 for r in _slab_refs(fs[0], 4)}
    for k in range(2):
        label = min(first, key=lambda lab: abs(first[lab] - disp.beta2[0, k]))
        for i, f in enumerate(fs):
            want = {r.label: r.beta2 for r in _slab_refs(f, 4)}[label]
            assert abs(disp.beta2[i, k] - want) / ((2 * math.pi * f / C0) ** 2 * EPS) < 1e-4, (label, f)
    assert disp.labels[0] == "TE from TE1 (x odd, y even)"


# ----------------------------------------------------------------------------- (b) filled guides

def test_filled_rectangle_region_is_the_handbook_guide(tmp_path):
    path = _gmsh_file(tmp_path / "filled.msh",
                      lambda occ: {"fill": [occ.addRectangle(0, 0, 0, A * 1e3, B * 1e3)]}, 2.0)
    eps, f, acc = 2.54, 10e9, 1e-4
    mesh = fm.read_mesh(path, scale=1e-3).with_materials({"fill": dict(eps_r=eps)})
    modes, warned = _quiet_solve(mesh, modes=3, frequency=f, accuracy=acc)
    assert not warned
    k0 = 2 * math.pi * f / C0
    want = ref.filled_guide_modes(A, B, eps, 1.0, f, 3)   # beta^2 = k0^2 eps_r - kc^2 (Pozar sec. 3.3)
    for m, (label, b2) in zip(modes, want):
        true = abs(m.beta() - math.sqrt(b2))
        assert true <= m.beta_error and abs(m.beta() ** 2 - b2) / (k0 * k0 * eps) <= acc, (label, true)
        assert m.family == "TE"   # the filled guide's modes stay pure TE / TM (Pozar sec. 3.3)


def test_filled_circle_with_curved_triangles_is_the_handbook_guide(tmp_path):
    R = 10e-3
    path = _gmsh_file(tmp_path / "disc.msh", lambda occ: {"fill": [occ.addDisk(0, 0, 0, R * 1e3, R * 1e3)]},
                      2.0, second_order=True, version=2.2)
    eps, f = 2.2, 12e9
    mesh = fm.read_mesh(path, scale=1e-3).with_materials({"fill": eps})
    assert mesh.is_curved
    modes, _ = _quiet_solve(mesh, modes=4, frequency=f, accuracy=1e-4)
    k0 = 2 * math.pi * f / C0
    # TE11 (pair), TM01, TE21 of the circular guide: kc = p'_11 / R, p_01 / R, p'_21 / R
    # (Pozar sec. 3.4; zeros from scipy.special)
    kcs = [jnp_zeros(1, 1)[0] / R] * 2 + [jn_zeros(0, 1)[0] / R, jnp_zeros(2, 1)[0] / R]
    # the true error here includes the meshed circle's own (second-order edges on the arc), which
    # the estimate of orders 3 and 2 on this mesh does not see; small enough at this mesh size
    # (measured at this size: true error 0.25-0.27 of the estimate for the TE11 pair, 0.05-0.08 for
    # TM01 and TE21)
    for m, kc in zip(modes, kcs):
        exact = math.sqrt(k0 * k0 * eps - kc * kc)
        true = abs(m.beta() - exact)
        assert true <= m.beta_error and abs(m.beta() ** 2 - exact ** 2) / (k0 * k0 * eps) <= 1e-4, (m.label, true)


# ----------------------------------------------------------------------------- (c) messages

def test_group_errors_name_the_file_the_group_and_the_groups_there(slab_file, tmp_path):
    mesh = fm.read_mesh(slab_file, scale=1e-3)
    with pytest.raises(FemodesError, match=r"no group 'slb' in mesh file .*slab\.msh \(did you mean 'slab'\?\); "
                                           r"groups of triangles there: 'slab', 'air'"):
        mesh.with_materials({"slb": EPS})
    with pytest.raises(FemodesError, match=r"group 'wall' of mesh file .*slab\.msh holds no triangles.*'slab', 'air'"):
        mesh.with_material("wall", eps_r=EPS)
    with pytest.raises(FemodesError, match=r"group 'slab' of mesh file .*slab\.msh is given a material twice.*"
                                           r"'slab', 'air'"):
        mesh.with_material("slab", eps_r=EPS).with_material("slab", eps_r=3.0)
    with pytest.raises(FemodesError, match="unknown material key.*'eps'.*valid: eps_r"):
        mesh.with_materials({"slab": dict(eps=EPS)})
    with pytest.raises(FemodesError, match="eps_r must be a positive"):
        mesh.with_materials({"slab": -1.0})
    # a file without named groups
    xyz = np.vstack([mesh.points, np.zeros(mesh.n_vertices)]).T
    meshio.write(str(tmp_path / "plain.vtu"), meshio.Mesh(xyz, [("triangle", mesh.triangles.T)]))
    with pytest.raises(FemodesError, match=r"mesh file .*plain\.vtu has no named groups.*'rod'.*physical"):
        fm.read_mesh(str(tmp_path / "plain.vtu")).with_material("rod", eps_r=2.0)


def test_solve_refuses_what_does_not_apply_to_a_mesh_with_materials(slab_file):
    mesh = fm.read_mesh(slab_file, scale=1e-3)
    with pytest.raises(FemodesError, match="frequency= is for guides with material regions.*with_materials"):
        fm.solve(mesh, modes=2, frequency=10e9)
    filled = mesh.with_materials({"slab": EPS})
    with pytest.raises(FemodesError, match="order must be 2 or 3 for a mesh file with materials"):
        fm.solve(filled, modes=2, frequency=10e9, order=1)
    with pytest.raises(FemodesError, match="family= does not apply"):
        fm.solve(filled, modes=2, family="TE")


# ----------------------------------------------------------------------------- case file and CLI

def _case(tmp_path, text, name="case.toml"):
    p = tmp_path / name
    p.write_text(text)
    return str(p)


def _case_error(tmp_path, text):
    with pytest.raises(FemodesError) as info:
        load_case(_case(tmp_path, text))
    return str(info.value)


GUIDE = '[guide]\nshape = "mesh"\nfile = "{f}"\nunits = "mm"\n'


def test_case_file_regions_name_groups_of_a_mesh_file(slab_file, tmp_path):
    case = load_case(_case(tmp_path, GUIDE.format(f=slab_file) + '[[region]]\ngroup = "slab"\neps_r = 2.25\n'
                                      'tan_delta = 2e-4\nname = "PTFE slab"\n'))
    assert case.loaded
    assert [(m.group, m.eps_r, m.tan_delta, m.name) for m in case.section.materials] == \
        [("slab", 2.25, 2e-4, "PTFE slab")]


@pytest.mark.parametrize("region,expected", [
    ('group = "slb"\neps_r = 2\n', [r"\[\[region\]\] 1", "no group 'slb'", "slab.msh", "did you mean 'slab'",
                                    "'slab', 'air'"]),
    ('group = "slab"\nshape = "rectangle"\nwidth = 2\neps_r = 2\n', ["'shape', 'width'", "do not apply to a "
                                                                     "mesh-file guide", "'slab', 'air'"]),
    ('group = "slab"\noffset = [1, 0]\neps_r = 2\n', ["'offset'", "mesh's own groups"]),
    ('eps_r = 2\n', ["needs group", "'slab', 'air'"]),
    ('group = 2\neps_r = 2\n', ["must be a string", "'slab', 'air'"]),
    ('group = "slab"\n', ["needs eps_r"]),
    ('group = "slab"\neps_r = 2\nepsr = 3\n', ["unknown key 'epsr'", "did you mean 'eps_r'"]),
    ('group = "slab"\neps_r = 2\n\n[[region]]\ngroup = "slab"\neps_r = 3\n',
     [r"\[\[region\]\] 2", "group 'slab'", "slab.msh", "given a material twice", "'slab', 'air'"]),
])
def test_case_file_mesh_region_errors(slab_file, tmp_path, region, expected):
    msg = _case_error(tmp_path, GUIDE.format(f=slab_file) + "[[region]]\n" + region)
    for e in expected:
        assert re.search(e, msg), (e, msg)


def test_case_file_group_is_refused_for_a_shape_guide(tmp_path):
    msg = _case_error(tmp_path, '[guide]\nshape = "rectangle"\nwidth = 22.86\nheight = 10.16\n'
                                '[[region]]\ngroup = "slab"\neps_r = 2\n')
    assert "group in [[region]] 1" in msg and 'shape = "mesh"' in msg and "rectangle" in msg


def test_case_file_order_one_is_refused_for_a_mesh_file_with_regions(slab_file, tmp_path):
    msg = _case_error(tmp_path, GUIDE.format(f=slab_file) + '[[region]]\ngroup = "slab"\neps_r = 2\n'
                                '[solve]\norder = 1\n')
    assert "order in [solve] must be 2 or 3" in msg


def test_cli_solves_the_bundled_mesh_example(tmp_path):
    import pathlib

    root = pathlib.Path(__file__).resolve().parents[1]
    out = io.StringIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        with redirect_stdout(out):
            status = main(["solve", str(root / "examples" / "support_bar_mesh.toml"), "--no-figures",
                           "--band", "11", "13", "--frequency", "12", "--fields", str(tmp_path / "m.vtu")])
    text = out.getvalue()
    assert status == 0, text
    assert "section: mesh support_bar.msh" in text and '"PTFE card": eps_r = 2.1' in text
    assert "TE-type from TE1" in text and "hybrid from TE1" in text and "dispersion:" in text
    # the dominant mode's beta lies between the empty guide's and that of the guide filled with
    # the card's eps_r everywhere (Rayleigh quotient monotone in eps: common practice; kc of the
    # 22 mm guide's TE10, Pozar sec. 3.3, moved by its 1 mm corner radii far less than these margins)
    row = next(l for l in text.splitlines() if l.startswith("1  hybrid from TE1 (x odd, y even)"))
    beta = float(row.split(")", 1)[1].split()[1])  # after the label: family, beta
    k0, kc = 2 * math.pi * 12e9 / C0, math.pi / 22e-3
    assert math.sqrt(k0 ** 2 - kc ** 2) < beta < math.sqrt(2.1 * k0 ** 2 - kc ** 2)
    cells = meshio.read(str(tmp_path / "m.vtu")).cell_data["region"][0]
    assert set(np.unique(cells)) == {0, 1}   # the card's triangles carry region 1 in the field file
