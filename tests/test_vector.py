"""Full-vector (hybrid-mode) solver and its LSE / LSM references.

Sources: the layered-guide references in femodes.reference follow the transverse-resonance /
potential treatment of partially filled guides (Collin, Field Theory of Guided Waves, ch. 6;
Harrington, Time-Harmonic Electromagnetic Fields, sec. 4.x); the full-height slab TE_m0 equation
is Pozar, Microwave Engineering, sec. 3.3 (from memory); empty and homogeneously filled guides
beta^2 = eps mu k0^2 - kc^2 with kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar, sec. 3.3); the
formulation is that of Lee, Sun & Cendes, IEEE Trans. MTT 39(8), 1991.  The textbook forms
of the equations used to check the reference module are written out here again, independently.
"""

import math

import numpy as np
import pytest

import femodes as fm
from femodes import FemodesError
from femodes import reference as ref
from femodes.solvers.vector import FAMILY_THRESHOLD, VectorProblem, layered_rectangle_mesh

C0 = 299792458.0  # m/s, exact (SI definition)
A, B = 22.86e-3, 10.16e-3  # WR-90 inner dimensions (EIA WR-90)


def k0_of(f):
    return 2 * math.pi * f / C0


# ============================================================================ reference module
def textbook_lse_lsm(family, u, k0, kx, d, h, e1, e2, m1=1.0, m2=1.0):
    """Two-layer transverse-resonance equations in their textbook (tan / cot) form, as the
    relative imbalance |t1 + t2| / (|t1| + |t2|) (Collin ch. 6; Harrington sec. 4.x):
    LSE: (k1/mu1) cot(k1 d) + (k2/mu2) cot(k2 h) = 0;  LSM: (k1/eps1) tan(k1 d) + (k2/eps2) tan(k2 h) = 0,
    k_i^2 = eps_i mu_i k0^2 - kx^2 - beta^2 (complex arithmetic covers evanescent layers)."""
    k1 = np.sqrt(complex(e1 * m1 * k0 * k0 - kx * kx - u))
    k2 = np.sqrt(complex(e2 * m2 * k0 * k0 - kx * kx - u))
    if family == "LSE":
        t1, t2 = k1 / m1 / np.tan(k1 * d), k2 / m2 / np.tan(k2 * h)
    else:
        t1, t2 = k1 / e1 * np.tan(k1 * d), k2 / e2 * np.tan(k2 * h)
    return abs(t1 + t2) / (abs(t1) + abs(t2))


@pytest.mark.parametrize("d_frac, eps, f", [(0.5, 2.25, 12e9), (0.3, 6.0, 9e9), (0.8, 3.0, 15e9)])
def test_slab_roots_satisfy_textbook_equations(d_frac, eps, f):
    # the roots of the transfer-matrix characteristic function satisfy the textbook
    # transverse-resonance equations (Collin ch. 6; Harrington sec. 4.x), propagating and evanescent
    d = d_frac * B
    modes = ref.slab_on_wall_modes(A, B, d, eps, f, 16)
    assert sum(m.propagating for m in modes) >= 1 and sum(not m.propagating for m in modes) >= 2
    for m in modes:
        kx = m.indices[0] * math.pi / A
        assert textbook_lse_lsm(m.family, m.beta2, k0_of(f), kx, d, B - d, eps, 1.0) < 1e-9, m.label


def test_slab_descending_and_bounded():
    # every root lies below the Rayleigh bound eps_max k0^2 - kx^2 (Sturm-Liouville, Collin ch. 6)
    f = 13e9
    modes = ref.slab_on_wall_modes(A, B, B / 2, 2.25, f, 20)
    b2 = np.array([m.beta2 for m in modes])
    assert np.all(np.diff(b2) <= 0)
    for m in modes:
        assert m.beta2 < 2.25 * k0_of(f) ** 2 - (m.indices[0] * math.pi / A) ** 2


@pytest.mark.parametrize("axis", ["y", "x"])
def test_vacuum_layers_give_empty_guide(axis):
    # eps_r = 1 everywhere: LSE + LSM together are the empty guide's TE + TM modes,
    # beta^2 = k0^2 - kc^2 with kc = sqrt((m pi/a)^2 + (n pi/b)^2) (Pozar, sec. 3.3)
    f = 17e9
    ext = B if axis == "y" else A
    layers = [(0.3 * ext, 1.0, 1.0), (0.7 * ext, 1.0, 1.0)]
    got = sorted((m.beta2 for m in ref.layered_guide_modes(A, B, layers, f, count=14, axis=axis)), reverse=True)
    want = [k0_of(f) ** 2 - r.kc ** 2 for r in ref.rectangle_modes(A, B, 14)]
    scale = k0_of(f) ** 2
    assert np.max(np.abs(np.array(got) - np.array(want))) / scale < 1e-12
    # and the (m, n) of each LSE/LSM label is a TE/TM index pair with that kc
    for m in ref.layered_guide_modes(A, B, layers, f, count=14, axis=axis):
        kc2 = (m.indices[0] * math.pi / A) ** 2 + (m.indices[1] * math.pi / B) ** 2
        assert abs(k0_of(f) ** 2 - kc2 - m.beta2) < 1e-10 * scale


def test_one_material_in_two_layers_is_the_filled_guide():
    # two layers of the same eps, mu: beta^2 = eps mu k0^2 - kc^2 (Pozar, sec. 3.3)
    f, eps, mu = 9e9, 2.5, 1.8
    got = [m.beta2 for m in ref.layered_guide_modes(A, B, [(0.4 * B, eps, mu), (0.6 * B, eps, mu)], f, count=10)]
    want = [b2 for _, b2 in ref.filled_guide_modes(A, B, eps, mu, f, 10)]
    assert np.max(np.abs(np.sort(got) - np.sort(want))) / (eps * mu * k0_of(f) ** 2) < 1e-12


def test_thin_slab_limits():
    # d -> 0: the empty guide; d -> b: the filled guide (Pozar, sec. 3.3); the approach is O(d)
    f, eps = 14e9, 2.25
    scale = eps * k0_of(f) ** 2
    empty = np.array([k0_of(f) ** 2 - r.kc ** 2 for r in ref.rectangle_modes(A, B, 6)])
    filled = np.array([b2 for _, b2 in ref.filled_guide_modes(A, B, eps, 1.0, f, 6)])
    dev = []
    for t in (1e-4 * B, 1e-6 * B):
        thin = np.array([m.beta2 for m in ref.slab_on_wall_modes(A, B, t, eps, f, 6)])
        thick = np.array([m.beta2 for m in ref.slab_on_wall_modes(A, B, B - t, eps, f, 6)])
        dev.append((np.max(np.abs(np.sort(thin) - np.sort(empty))) / scale,
                    np.max(np.abs(np.sort(thick) - np.sort(filled))) / scale))
    assert dev[1][0] < 1e-5 and dev[1][1] < 1e-5
    assert dev[0][0] / dev[1][0] > 30 and dev[0][1] / dev[1][1] > 30  # O(d) convergence


def pole_free(family, u, k0, kx, d, h, e1, e2):
    """The same equations multiplied through to remove their poles, as functions of k_i^2
    (written here separately): LSE  h S(k2 h) cos(k1 d) + d S(k1 d) cos(k2 h);
    LSM  (k1^2/e1) d S(k1 d) cos(k2 h) + (k2^2/e2) h S(k2 h) cos(k1 d);  S(x) = sin(x)/x."""
    def cs(k2, t):
        k = np.sqrt(k2 + 0j)
        x = k * t
        s = np.where(np.abs(x) < 1e-8, 1.0, np.sin(x) / np.where(np.abs(x) < 1e-8, 1.0, x))
        return np.real(np.cos(x)), np.real(s)
    k1s = e1 * k0 * k0 - kx * kx - u
    k2s = e2 * k0 * k0 - kx * kx - u
    c1, s1 = cs(k1s, d)
    c2, s2 = cs(k2s, h)
    if family == "LSE":
        return h * s2 * c1 + d * s1 * c2
    return k1s / e1 * d * s1 * c2 + k2s / e2 * h * s2 * c1


def test_no_root_missed_against_a_dense_scan():
    # an independent dense sign-change scan of the pole-free equations finds exactly the roots
    # the module returns, family by family and index by index (Collin ch. 6 equations)
    f, eps, d = 16e9, 6.0, 0.35 * B
    k0 = k0_of(f)
    u_min = -3 * eps * k0 * k0
    modes = ref.layered_guide_modes(A, B, [(d, eps, 1.0), (B - d, 1.0, 1.0)], f, beta2_min=u_min)
    u = np.linspace(u_min, eps * k0 * k0, 400001)
    for family, p0 in (("LSE", 0), ("LSM", 1)):
        for p in range(p0, 8):
            kx = p * math.pi / A
            g = pole_free(family, u, k0, kx, d, B - d, eps, 1.0)
            scan = int(np.sum(np.sign(g[1:]) != np.sign(g[:-1])))
            mine = sum(1 for m in modes if m.family == family and m.indices[0] == p)
            assert scan == mine, (family, p, scan, mine)


def test_side_slab_te_m0_pozar_form_and_centred_even_modes():
    # full-height slab against the side wall: the n = 0 LSE_x roots (E_y only) satisfy Pozar's
    # TE_m0 equation k_d cot(k_d t) + k_a cot(k_a (a - t)) = 0 (Pozar sec. 3.3, from memory)
    f, eps, t = 11e9, 2.25, A / 3
    k0 = k0_of(f)
    modes = ref.layered_guide_modes(A, B, [(t, eps, 1.0), (A - t, 1.0, 1.0)], f, count=10, axis="x")
    te = [m for m in modes if m.family == "LSE" and m.indices[1] == 0]
    assert len(te) >= 3
    for m in te:
        kd = np.sqrt(complex(eps * k0 * k0 - m.beta2))
        ka = np.sqrt(complex(k0 * k0 - m.beta2))
        t1, t2 = kd / np.tan(kd * t), ka / np.tan(ka * (A - t))
        assert abs(t1 + t2) / (abs(t1) + abs(t2)) < 1e-9
        scale = abs(math.cos(0.0)) * (A - t)  # size of the pole-free form's terms
        assert abs(ref.side_slab_te_m0_equation(m.beta2, A, t, eps, k0)) < 1e-12 * scale
    # centred slab, even TE_m0 modes (E_y even about x = a/2): by symmetry the half guide with a
    # magnetic wall, k_d tan(k_d w/2) = k_a cot(k_a g), g = (a - w)/2 (derived here; Collin ch. 6)
    w = A / 4
    g = (A - w) / 2
    cen = ref.layered_guide_modes(A, B, ref.centred_slab_layers(A, w, 4.0), f, count=12, axis="x")
    even = [m for m in cen if m.family == "LSE" and m.indices[1] == 0 and m.indices[0] % 2 == 1]
    assert len(even) >= 2
    for m in even:
        kd = np.sqrt(complex(4.0 * k0 * k0 - m.beta2))
        ka = np.sqrt(complex(k0 * k0 - m.beta2))
        t1, t2 = kd * np.tan(kd * w / 2), ka / np.tan(ka * g)
        assert abs(t1 - t2) / (abs(t1) + abs(t2)) < 1e-9


def test_reference_cutoffs():
    # beta = 0 roots: at each cutoff frequency the mode list holds a root at beta^2 = 0, and
    # eps_r = 1 gives the empty guide's cutoffs c0 kc / (2 pi) (Pozar sec. 3.3)
    layers = [(B / 2, 2.25, 1.0), (B / 2, 1.0, 1.0)]
    cuts = ref.layered_guide_cutoffs(A, B, layers, 10)
    assert np.all(np.diff([c.k0 for c in cuts]) >= 0)
    for c in cuts:
        modes = ref.layered_guide_modes(A, B, layers, c.frequency, count=12)
        hit = min(modes, key=lambda m: abs(m.beta2))
        assert abs(hit.beta2) < 1e-9 * 2.25 * c.k0 ** 2
        assert (hit.family, hit.indices) == (c.family, c.indices)
        # E_z only at cutoff for LSE with a field varying across the layers' uniform direction
        assert c.field == ("TM" if c.family == "LSE" and c.indices[0] >= 1 else "TE")
    empty = ref.layered_guide_cutoffs(A, B, [(B / 3, 1.0, 1.0), (2 * B / 3, 1.0, 1.0)], 8)
    want = [r.kc for r in ref.rectangle_modes(A, B, 8)]
    assert np.allclose([c.k0 for c in empty], want, rtol=1e-12)


def test_reference_rejects_bad_input():
    with pytest.raises(ValueError, match="add up"):
        ref.layered_guide_modes(A, B, [(B / 3, 2.0, 1.0)], 10e9, count=3)
    with pytest.raises(ValueError, match="eps_r and mu_r must be positive"):
        ref.layered_guide_modes(A, B, [(B, -2.0, 1.0)], 10e9, count=3)
    with pytest.raises(ValueError, match="exactly one"):
        ref.layered_guide_modes(A, B, [(B, 2.0, 1.0)], 10e9)
    with pytest.raises(ValueError, match="axis"):
        ref.layered_guide_modes(A, B, [(B, 2.0, 1.0)], 10e9, count=2, axis="z")
    with pytest.raises(ValueError, match="below the height"):
        ref.slab_on_wall_modes(A, B, B, 2.0, 10e9, 3)


# ============================================================================ meshes
def test_layered_mesh_conforms_to_interfaces():
    mesh, region = layered_rectangle_mesh(A, B, interfaces_y=[B / 3, 0.7 * B], h=1.5e-3)
    p, t = mesh.points, mesh.triangles
    assert np.all(np.diff(t, axis=0) > 0)  # sorted vertices (DEVELOPERS.md: scikit-fem needs them)
    assert set(np.unique(region)) == {0, 1, 2}
    bounds = [0.0, B / 3, 0.7 * B, B]
    y = p[1, t]
    tol = 1e-12 * B
    for r in range(3):
        sel = region == r
        assert np.all(y[:, sel] >= bounds[r] - tol) and np.all(y[:, sel] <= bounds[r + 1] + tol)
    v = p[:, t]
    area = 0.5 * np.abs((v[0, 1] - v[0, 0]) * (v[1, 2] - v[1, 0]) - (v[0, 2] - v[0, 0]) * (v[1, 1] - v[1, 0]))
    assert abs(area.sum() - A * B) < 1e-12 * A * B
    assert abs(area[region == 1].sum() - A * (0.7 - 1 / 3) * B) < 1e-12 * A * B
    # a grid of regions: index ix + nx iy
    mesh2, reg2 = layered_rectangle_mesh(A, B, interfaces_x=[A / 2], interfaces_y=[B / 2], h=2e-3)
    c = mesh2.points[:, mesh2.triangles].mean(axis=1)
    assert np.array_equal(reg2, (c[0] > A / 2).astype(int) + 2 * (c[1] > B / 2).astype(int))


def test_layered_mesh_rejects_bad_input():
    with pytest.raises(FemodesError, match="strictly inside"):
        layered_rectangle_mesh(A, B, interfaces_y=[B], h=1e-3)
    with pytest.raises(FemodesError, match="positive"):
        layered_rectangle_mesh(A, B, h=-1e-3)
    with pytest.raises(FemodesError, match="distinct"):
        layered_rectangle_mesh(A, B, interfaces_x=[A / 2, A / 2], h=1e-3)


# ============================================================================ vector solver
def assert_one_to_one(got, want, scale, tol):
    """Sorted computed and reference beta^2 agree within tol (relative to scale), and each
    computed value lies nearer its own reference value than half the distance to any other
    distinct one (exact degeneracies, closer than 1e-9, count as one): an extra (spurious) or a
    missing value would shift the rest by one place and fail this."""
    g = np.sort(np.asarray(got, dtype=float))[::-1] / scale
    w = np.sort(np.asarray(want, dtype=float))[::-1] / scale
    assert g.shape == w.shape
    dev = np.abs(g - w)
    assert dev.max() < tol, dev
    for i in range(w.size):
        dist = np.abs(w - w[i])
        dist = dist[dist > 1e-9]
        assert dev[i] < 0.5 * dist.min(), (i, dev[i], dist.min())
    return dev


def slab_problem(d, eps, h, order=3, mu=1.0):
    mesh, region = layered_rectangle_mesh(A, B, interfaces_y=[d], h=h)
    return VectorProblem(mesh, np.array([eps, 1.0])[region], np.array([mu, 1.0])[region], order=order), region


@pytest.fixture(scope="module")
def slab():
    """a = 22.86 mm, b = 10.16 mm, slab eps_r = 2.25 of thickness b/2 on the bottom wall."""
    P, region = slab_problem(B / 2, 2.25, 1.3e-3)
    return P, region, P.solve(13e9, modes=20, evanescent=True)


def test_slab_first_four_modes(slab):
    # beta of the first four modes (all propagating at 13 GHz) against the LSE/LSM references
    # (Collin ch. 6 / Harrington sec. 4.x transverse resonance): measured 1.2e-7 (P3, h = 1.3 mm)
    P, _, modes = slab
    want = ref.slab_on_wall_modes(A, B, B / 2, 2.25, 13e9, 4)
    assert all(m.propagating for m in modes[:4]) and all(r.propagating for r in want)
    err = [abs(m.beta / r.beta - 1) for m, r in zip(modes, want)]
    assert max(err) < 1e-6, err
    # families: LSE01 (m = 0) has E_x only, so no E_z: TE; the others are hybrid
    fams = {r.label: m.family for m, r in zip(modes, want)}
    assert fams == {"LSM10(y)": "hybrid", "LSM20(y)": "hybrid", "LSE01(y)": "TE", "LSE11(y)": "hybrid"}


def test_slab_twenty_modes_no_spurious(slab):
    # the first 20 (propagating and evanescent) match the reference list one to one (so nothing
    # spurious and nothing missing; Collin ch. 6), every pair passes the pencil residual and the
    # discrete Gauss law, and beta^2 < eps_max k0^2 (Rayleigh bound)
    P, _, modes = slab
    k0 = k0_of(13e9)
    want = ref.slab_on_wall_modes(A, B, B / 2, 2.25, 13e9, 20)
    assert len(modes) == 20
    # measured 5.6e-6 of 2.25 k0^2 at the 20th mode; the first 5 below 2e-8
    assert_one_to_one([m.beta2 for m in modes], [r.beta2 for r in want], 2.25 * k0 ** 2, 1e-5)
    assert sum(m.propagating for m in modes) == sum(r.propagating for r in want) == 5
    for m in modes:
        assert m.beta2 < 2.25 * k0 ** 2
        assert m.residual < 1e-9 and m.divergence < 1e-9
    # without evanescent=True only the propagating ones come back
    assert [m.beta2 for m in P.solve(13e9, modes=8)] == pytest.approx([m.beta2 for m in modes[:5]], rel=1e-9)


def interface_traces(P, region, d):
    """Points on the interface edges (inside each edge) and the triangle below / above each."""
    m = P.mesh
    on = np.flatnonzero(np.all(np.abs(m.p[1, m.facets] - d) < 1e-12 * B, axis=0))
    s = np.array([0.15, 0.5, 0.85])
    p0, p1 = m.p[:, m.facets[0, on]], m.p[:, m.facets[1, on]]
    pts = (p0[:, :, None] + (p1 - p0)[:, :, None] * s).reshape(2, -1)
    e0, e1 = m.f2t[0, on], m.f2t[1, on]
    low = np.where(region[e0] == 0, e0, e1)
    up = np.where(region[e0] == 0, e1, e0)
    return pts, np.repeat(low, s.size), np.repeat(up, s.size)


def interface_jumps(mode, pts, cl, cu, eps):
    lo, hi = np.array(mode.fields(pts, cl)), np.array(mode.fields(pts, cu))
    emax, dmax, hmax = np.abs(lo[:3]).max(), np.abs(eps * lo[:3]).max(), np.abs(lo[3:]).max()
    return {
        "E_t": max(np.abs(lo[0] - hi[0]).max(), np.abs(lo[2] - hi[2]).max()) / emax,
        "B_n": np.abs(lo[4] - hi[4]).max() / hmax,
        "D_n": np.abs(eps * lo[1] - hi[1]).max() / dmax,
        "H_t": max(np.abs(lo[3] - hi[3]).max(), np.abs(lo[5] - hi[5]).max()) / hmax,
        "E_n": np.abs(lo[1] - hi[1]).max() / emax,
    }


def test_interface_conditions_on_computed_fields(slab):
    # across the slab face y = d (interface conditions, Pozar sec. 1.3, from memory):
    # tangential E and normal B are continuous by construction of the elements (round-off);
    # normal D and tangential H only weakly (natural conditions): measured <= 1e-3 of the field
    # at P3, h = 1.3 mm, falling with h; normal E itself jumps (eps_2 / eps_1 = 1 / 2.25).
    P, region, modes = slab
    pts, cl, cu = interface_traces(P, region, B / 2)
    assert pts.shape[1] >= 30
    fine, region_f = slab_problem(B / 2, 2.25, 0.9e-3)
    pts_f, cl_f, cu_f = interface_traces(fine, region_f, B / 2)
    fine_modes = fine.solve(13e9, modes=5)
    for m, mf in zip(modes[:5], fine_modes):
        j = interface_jumps(m, pts, cl, cu, 2.25)
        jf = interface_jumps(mf, pts_f, cl_f, cu_f, 2.25)
        assert j["E_t"] < 1e-12 and j["B_n"] < 1e-12
        assert j["D_n"] < 2e-3 and j["H_t"] < 3e-3
        assert jf["D_n"] < j["D_n"] and jf["H_t"] < j["H_t"]  # a discretisation effect
    lsm = [m for m in modes[:5] if interface_jumps(m, pts, cl, cu, 2.25)["E_n"] > 0.1]
    assert len(lsm) == 3  # LSM10, LSM20, LSM11 have E_y; the LSE ones have E_y = 0


def test_cutoffs_directly(slab):
    # hybrid cutoffs from the decoupled beta = 0 problems against the beta -> 0 roots of the
    # LSE/LSM equations (Collin ch. 6), with the field type at cutoff (E_z only: 'TM')
    P, _, _ = slab
    cuts = P.cutoffs(10)
    want = ref.layered_guide_cutoffs(A, B, [(B / 2, 2.25, 1.0), (B / 2, 1.0, 1.0)], 10)
    err = [abs(c.k0 / w.k0 - 1) for c, w in zip(cuts, want)]
    assert max(err) < 1e-6, err
    assert [c.field for c in cuts] == [w.field for w in want]
    for c in cuts:
        assert c.residual < 1e-8
    # and the solver at 1.001 x the lowest cutoff finds a mode with small positive beta^2 there
    f1 = cuts[0].frequency * 1.001
    b2 = P.solve(f1, modes=1)[0].beta2
    r = ref.slab_on_wall_modes(A, B, B / 2, 2.25, f1, 1)[0].beta2
    assert abs(b2 / r - 1) < 1e-5


def test_magnetic_slab():
    # mu_r enters both the curl-curl and the coupling terms: a slab eps_r = 2, mu_r = 1.5
    # against the same references with mu (Collin ch. 6 / Harrington sec. 4.x)
    P, _ = slab_problem(0.4 * B, 2.0, 1.3e-3, mu=1.5)
    f = 11e9
    modes = P.solve(f, modes=8, evanescent=True)
    want = ref.layered_guide_modes(A, B, [(0.4 * B, 2.0, 1.5), (0.6 * B, 1.0, 1.0)], f, count=8)
    dev = np.array([abs(m.beta2 - r.beta2) for m, r in zip(modes, want)]) / (3.0 * k0_of(f) ** 2)
    assert dev.max() < 2e-6, dev


def test_centred_full_height_slab():
    # full-height slab eps_r = 4, width a/4, centred: LSE_x / LSM_x references; the n = 0 LSE_x
    # modes are the classic TE_m0 modes with E_y only (Pozar sec. 3.3; Collin ch. 6): 'TE'
    w, f = A / 4, 10e9
    mesh, region = layered_rectangle_mesh(A, B, interfaces_x=[(A - w) / 2, (A + w) / 2], h=1.3e-3)
    P = VectorProblem(mesh, np.array([1.0, 4.0, 1.0])[region], 1.0, order=3)
    modes = P.solve(f, modes=20, evanescent=True)
    want = ref.layered_guide_modes(A, B, ref.centred_slab_layers(A, w, 4.0), f, count=20, axis="x")
    # 20 of 20 one to one; measured 1.5e-5 of 4 k0^2 at the 18th, <= 4e-8 for the first 10
    assert_one_to_one([m.beta2 for m in modes], [r.beta2 for r in want], 4 * k0_of(f) ** 2, 3e-5)
    assert abs(modes[0].beta / want[0].beta - 1) < 1e-7
    for m, r in zip(modes[:10], want[:10]):
        if r.family == "LSE" and r.indices[1] == 0:
            assert m.family == "TE" and m.e_share < FAMILY_THRESHOLD
        else:
            assert m.family == "hybrid"


def test_filled_guide_with_mu():
    # homogeneous eps_r = 1.5, mu_r = 2: beta = sqrt(eps mu k0^2 - kc^2), TE / TM families
    # (Pozar sec. 3.3)
    mesh, _ = layered_rectangle_mesh(A, B, h=1.2e-3)
    P = VectorProblem(mesh, 1.5, 2.0, order=3)
    f = 10e9
    modes = P.solve(f, modes=6)
    want = ref.filled_guide_modes(A, B, 1.5, 2.0, f, 6)
    assert len(modes) == 5  # TM21 / TE21 are cut off at 10 GHz here
    for m, (label, b2) in zip(modes, want):
        assert abs(m.beta / math.sqrt(b2) - 1) < 1e-7
        assert m.family == label[:2]


def test_homogeneous_rectangle_agrees_with_scalar_solver():
    # eps_r = 1: the vector solver against femodes.solve (scalar; beta = sqrt(k0^2 - kc^2)) to
    # 1e-8 (measured <= 1e-9 at P3, h = 0.7 mm); at 18 GHz TE10, TE20, TE01 and the degenerate
    # TE11 / TM11 pair propagate (cutoffs from kc = sqrt((m pi/a)^2 + (n pi/b)^2), Pozar sec. 3.3)
    f = 18e9
    mesh, _ = layered_rectangle_mesh(A, B, h=0.7e-3)
    P = VectorProblem(mesh, 1.0, 1.0, order=3)
    modes = P.solve(f, modes=6)
    scalar = fm.solve(fm.rectangle(A, B), modes=6, accuracy=1e-10)
    assert len(modes) == 5
    for m, s in zip(modes, scalar):
        assert abs(m.beta / s.beta(f) - 1) < 1e-8
    assert [m.family for m in modes[:3]] == [s.family for s in scalar[:3]] == ["TE"] * 3


def test_l_shape_twenty_modes_against_scalar_solver():
    # a homogeneous guide with a re-entrant corner, on femodes' own graded mesh: the 20 modes of
    # largest beta^2 (propagating and evanescent) are the scalar solver's TE and TM modes one to
    # one (nothing spurious; beta^2 = k0^2 - kc^2)
    sec = fm.l_shape(20e-3, 20e-3, 10e-3, 10e-3)
    scalar = fm.solve(sec, modes=20, accuracy=1e-8)
    f = 1.2 * scalar[5].fc
    mesh = fm.mesh_section(sec, 3e-3, order=3, grading=1.5)
    P = VectorProblem(mesh, 1.0, 1.0, order=3)
    modes = P.solve(f, modes=20, evanescent=True)
    k02 = k0_of(f) ** 2
    want = np.array([k02 - s.kc ** 2 for s in scalar])
    got = np.array([m.beta2 for m in modes])
    # measured 6e-6 of k0^2 at the 20th mode, <= 4e-8 for the first 6
    assert_one_to_one(got, want, k02, 2e-5)
    assert sum(m.propagating for m in modes) == int(np.sum(want > 0)) >= 6
    assert all(m.divergence < 1e-9 for m in modes)
    # pure families where the scalar mode is not (near-)degenerate with one of the other family
    for m, s in zip(modes, scalar):
        near = [o for o in scalar if o is not s and abs(o.kc / s.kc - 1) < 1e-4]
        if not near:
            assert m.family == s.family


@pytest.mark.parametrize("order, tol", [(1, 5e-3), (2, 2e-4), (3, 5e-6)])
def test_every_order_on_a_curved_mesh(order, tol):
    # MEASURED.md: N2 / P3 on a curved mesh gave silently wrong answers when the vertex order was
    # not sorted.  Disk radius 10 mm, isoparametric femodes mesh: the first 6 modes against the
    # closed form (Bessel zeros via scipy.special, femodes.reference.circle_modes), with
    # beta^2 = k0^2 - kc^2 (Pozar sec. 3.4, from memory); measured 2e-3, 7e-5, 1e-6 for orders 1-3
    sec = fm.circle(10e-3)
    want = ref.circle_modes(10e-3, 6)
    f = 1.3 * C0 * want[5].kc / (2 * math.pi)
    P = VectorProblem(fm.mesh_section(sec, 2e-3, order=order), 1.0, 1.0, order=order)
    modes = P.solve(f, modes=6)
    err = [abs(m.beta / math.sqrt(k0_of(f) ** 2 - r.kc ** 2) - 1) for m, r in zip(modes, want)]
    assert len(modes) == 6 and max(err) < tol, err
    assert [m.family for m in modes] == [r.family for r in want]


# ============================================================================ dispersion
@pytest.fixture(scope="module")
def crossing():
    """Slab eps_r = 4 of thickness b/2: between 12 and 13.5 GHz LSE21 and LSM30 both cross LSM11."""
    P, _ = slab_problem(B / 2, 4.0, 1.3e-3)
    fs = np.linspace(12.0e9, 13.5e9, 16)
    layers = [(B / 2, 4.0, 1.0), (B / 2, 1.0, 1.0)]
    refs = [{m.label: m.beta2 for m in ref.layered_guide_modes(A, B, layers, f, count=10)} for f in fs]
    return P, fs, refs


def test_dispersion_keeps_identities_through_crossings(crossing):
    # tracked curves follow the LSE/LSM reference curves (Collin ch. 6) rather than swapping
    P, fs, refs = crossing
    D = P.dispersion(fs, modes=7)
    labels = [min(refs[0], key=lambda l: abs(refs[0][l] - D.beta2[0, k])) for k in range(7)]
    assert len(set(labels)) == 7
    order_start = sorted(labels, key=lambda l: -refs[0][l])
    order_end = sorted(labels, key=lambda l: -refs[-1][l])
    assert order_start != order_end  # the case does contain crossings: sorting would swap
    assert order_end.index("LSM11(y)") > order_end.index("LSE21(y)")
    assert order_start.index("LSM11(y)") < order_start.index("LSE21(y)")
    scale = 4.0 * k0_of(fs[-1]) ** 2
    for k, lab in enumerate(labels):
        curve = np.array([r[lab] for r in refs])
        assert np.max(np.abs(D.beta2[:, k] - curve)) / scale < 1e-6, lab
    assert D.overlap.min() > 0.9
    assert len(D.snapshots) < len(fs)  # the reduced path did its job with few full solves
    assert D.beta.shape == (16, 7)


def test_dispersion_reduced_equals_direct(crossing):
    # the reduced-basis re-solves against one shift-invert solve per frequency (same matrices)
    P, fs, _ = crossing
    sub = fs[::5]
    Dr = P.dispersion(sub, modes=5, method="reduced")
    Dd = P.dispersion(sub, modes=5, method="direct")
    scale = 4.0 * k0_of(sub[-1]) ** 2
    assert np.max(np.abs(Dr.beta2 - Dd.beta2)) / scale < 1e-10
    assert np.all(Dr.family == Dd.family)


def test_dispersion_keeps_evanescent_near_parallel_pair_apart():
    # eps_r = 2.25, b/2 slab: LSM11 and LSE11 cross near 11.35 GHz while both are evanescent
    # (transverse resonance, Collin ch. 6); there their fields are nearly parallel (energy-norm
    # overlap 0.998), which once made the tracker swap them.  Both tracked from 11.0 GHz on.
    P, _ = slab_problem(B / 2, 2.25, 1.3e-3)
    fs = np.linspace(11.0e9, 11.8e9, 6)
    layers = [(B / 2, 2.25, 1.0), (B / 2, 1.0, 1.0)]
    refs = [{m.label: m.beta2 for m in ref.layered_guide_modes(A, B, layers, f, count=8)} for f in fs]
    assert (refs[0]["LSM11(y)"] > refs[0]["LSE11(y)"]) and (refs[-1]["LSM11(y)"] < refs[-1]["LSE11(y)"])
    for method in ("direct", "reduced"):
        D = P.dispersion(fs, modes=5, method=method)
        labels = [min(refs[0], key=lambda l: abs(refs[0][l] - D.beta2[0, k])) for k in range(5)]
        assert {"LSM11(y)", "LSE11(y)"} <= set(labels)
        scale = 2.25 * k0_of(fs[-1]) ** 2
        for k, lab in enumerate(labels):
            curve = np.array([r[lab] for r in refs])
            assert np.max(np.abs(D.beta2[:, k] - curve)) / scale < 1e-5, (method, lab)


# ============================================================================ user errors
def test_user_errors_say_what_is_valid(slab):
    P, _, _ = slab
    mesh, region = layered_rectangle_mesh(A, B, interfaces_y=[B / 2], h=3e-3)
    sk = mesh.to_skfem()
    with pytest.raises(FemodesError, match=r"one of \(1, 2, 3\)"):
        VectorProblem(sk, 1.0, 1.0, order=4)
    with pytest.raises(FemodesError, match="per triangle"):
        VectorProblem(sk, np.ones(3), 1.0)
    with pytest.raises(FemodesError, match="positive on every triangle"):
        VectorProblem(sk, -np.ones(sk.t.shape[1]), 1.0)
    with pytest.raises(FemodesError, match="triangle mesh"):
        VectorProblem("mesh.msh", 1.0, 1.0)
    with pytest.raises(FemodesError, match="positive finite number of Hz"):
        P.solve(-1e9)
    with pytest.raises(FemodesError, match="integer >= 1"):
        P.solve(10e9, modes=0)
    with pytest.raises(FemodesError, match="'reduced' or 'direct'"):
        P.dispersion([10e9, 11e9], method="fast")
    with pytest.raises(FemodesError, match="frequencies"):
        P.dispersion([10e9, "x"])
    with pytest.raises(FemodesError, match="one triangle index"):
        P.solve(13e9, modes=1)[0].fields(np.zeros((2, 3)), cells=[0])
