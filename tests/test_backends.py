"""The linear-algebra backends of the eigen stage (femodes.solvers.backends).

Every installed backend must give the same eigenvalues to round-off, and those must be the closed
form of the rectangle: TM_mn kc^2 = (m pi / a)^2 + (n pi / b)^2, TE the same with m, n >= 0 not both
zero (D. M. Pozar, Microwave Engineering, 4th ed., sec. 3.3).
"""

import math

import numpy as np
import pytest
import scipy.sparse as sp
import skfem

import femodes
from femodes.errors import FemodesError
from femodes.solvers import backends
from femodes.solvers.discretise import discretise
from femodes.solvers.eigen import lowest_eigenpairs, restrict

A, B = 2.0, 1.0


def _closed_form(tm, count):
    mn = [(m, n) for m in range(8) for n in range(8) if (m >= 1 and n >= 1) if tm] if tm else \
        [(m, n) for m in range(8) for n in range(8) if (m, n) != (0, 0)]
    return np.sort([(m * math.pi / A) ** 2 + (n * math.pi / B) ** 2 for m, n in mn])[:count]


@pytest.fixture(scope="module")
def pencil():
    mesh = skfem.MeshTri.init_tensor(np.linspace(0, A, 41), np.linspace(0, B, 21))
    return discretise(mesh, 3)  # about 7000 dofs: above the cholespy crossover


@pytest.mark.parametrize("tm", [True, False], ids=["TM-Dirichlet", "TE-Neumann"])
def test_every_backend_gives_the_same_eigenvalues_and_the_closed_form(pencil, tm):
    K, M = pencil.K, pencil.M
    if tm:
        idx = pencil.interior()
        K, M = restrict(K, idx), restrict(M, idx)
    sigma = -0.5 * (math.pi / A) ** 2
    got = {}
    for name in backends.available():
        with backends.use(name):
            assert backends.choose(K.shape[0], spd=True) == name
            lam, X, res = lowest_eigenpairs(K, M, 7, sigma, tol=1e-12)
        got[name] = lam[1:] if not tm else lam[:6]  # TE: drop the constant (lam = 0) mode
        assert np.all(res[0 if tm else 1:] < 1e-8)  # (the constant mode's residual is relative to K x = 0)
    ref = got["superlu"]
    for name, lam in got.items():
        np.testing.assert_allclose(lam, ref, rtol=1e-10, err_msg=name)
    np.testing.assert_allclose(ref, _closed_form(tm, 6), rtol=1e-5)  # P3 on h = 0.05: discretisation error


def test_factor_solves_vectors_and_blocks_with_each_backend(pencil):
    Asp = (pencil.K + pencil.M).tocsr()  # SPD
    rng = np.random.default_rng(0)
    b = rng.standard_normal((Asp.shape[0], 3))
    for name in backends.available():
        f = backends.factorize(Asp, spd=True, backend=name)
        assert f.backend == name
        for rhs in (b, b[:, 0]):
            x = f.solve(rhs)
            assert np.linalg.norm(Asp @ x - rhs) < 1e-10 * np.linalg.norm(rhs)


def test_an_indefinite_matrix_never_goes_to_cholesky(pencil):
    Asp = (pencil.K - 30.0 * pencil.M).tocsr()  # 30 lies above the lowest eigenvalues: indefinite
    assert backends.choose(Asp.shape[0], spd=False, backend="cholespy") == "superlu"
    b = np.ones(Asp.shape[0])
    f = backends.factorize(Asp, spd=False, backend="cholespy")
    assert f.backend == "superlu" and np.linalg.norm(Asp @ f.solve(b) - b) < 1e-8 * np.linalg.norm(b)


def test_auto_uses_superlu_below_the_crossover_and_cholesky_above():
    assert backends.choose(backends.CHOLESPY_MIN - 1, spd=True, backend="auto") == "superlu"
    want = "cholespy" if "cholespy" in backends.available() else "superlu"
    assert backends.choose(backends.CHOLESPY_MIN, spd=True, backend="auto") == want
    # indefinite: SuperLU, or PARDISO's L D L^T when installed (its crossover is tested below)
    assert backends.choose(10 ** 6, spd=False, backend="auto") == ("pardiso" if "pardiso" in backends.available()
                                                                    else "superlu")


def test_unknown_backend_names_the_valid_ones(monkeypatch):
    with pytest.raises(FemodesError, match="valid names: auto, superlu, cholespy"):
        with backends.use("umfpack"):
            pass
    monkeypatch.setenv("FEMODES_BACKEND", "nope")
    with pytest.raises(FemodesError, match="FEMODES_BACKEND.*valid names"):
        femodes.solve(femodes.rectangle(22.86e-3, 10.16e-3), modes=1, accuracy=1e-3)
    monkeypatch.setenv("FEMODES_BACKEND", "SuperLU")
    assert backends.choose(10 ** 5, spd=True) == "superlu"


def test_the_whole_solve_agrees_across_backends():
    # WR-90 (a = 22.86 mm, b = 10.16 mm): kc = pi / a (TE10), 2 pi / a (TE20), pi / b (TE01) (Pozar sec. 3.3)
    a, b = 22.86e-3, 10.16e-3
    want = np.sort([math.pi / a, 2 * math.pi / a, math.pi / b])
    got = {}
    for name in backends.available():
        with backends.use(name):
            got[name] = np.array([m.kc for m in femodes.solve(femodes.rectangle(a, b), modes=3, accuracy=1e-6)])
    for name, kc in got.items():
        np.testing.assert_allclose(kc, want, rtol=1e-6, err_msg=name)
        np.testing.assert_allclose(kc, got["superlu"], rtol=1e-7, err_msg=name)


def test_predicted_cost_is_a_growing_band_that_holds_the_factor():
    lo_t, hi_t = zip(*[backends.predicted_cost(n, "superlu")[0] for n in (1e3, 1e4, 1e5, 1e6)])
    assert all(a < b for a, b in zip(lo_t, hi_t)) and all(a < b for a, b in zip(hi_t, hi_t[1:]))
    # the memory band's high end holds at least SuperLU's own factor (12 bytes per stored entry:
    # value + row index) of a P4 pencil it was not measured on
    skm = skfem.MeshTri.init_tensor(np.linspace(0, A, 61), np.linspace(0, B, 31))
    d = discretise(skm, 4)
    f = backends.factorize(d.K + d.M, spd=True, backend="superlu")
    assert backends.predicted_cost(d.n_dofs, "superlu")[1][1] > 12 * f.nnz
    with pytest.raises(FemodesError, match="positive"):
        backends.predicted_cost(0)


# -- MKL PARDISO (optional: pip install 'femodes[mkl]'); skipped where the library cannot be loaded --------
from femodes.solvers import pardiso as pardiso_mod  # noqa: E402


@pytest.fixture
def mkl():
    if pardiso_mod.load() is None:
        pytest.skip("MKL PARDISO is not installed (pip install 'femodes[mkl]', x86-64 only)")
    return pardiso_mod


@pytest.fixture
def phases(mkl, monkeypatch):
    """Every PARDISO call's (mtype, phase), in order."""
    seen = []
    real = mkl.call

    def spy(lib, pt, mtype, phase, *a, **k):
        seen.append((mtype, phase))
        return real(lib, pt, mtype, phase, *a, **k)

    monkeypatch.setattr(mkl, "call", spy)
    return seen


def test_pardiso_factorises_once_and_solves_many_times(pencil, phases):
    Asp = (pencil.K + pencil.M).tocsr()  # SPD
    rng = np.random.default_rng(1)
    f = backends.factorize(Asp, spd=True, backend="pardiso")
    assert f.backend == "pardiso"
    for _ in range(4):
        b = rng.standard_normal(Asp.shape[0])
        assert np.linalg.norm(Asp @ f.solve(b) - b) < 1e-10 * np.linalg.norm(b)
    B = rng.standard_normal((Asp.shape[0], 3))
    assert np.linalg.norm(Asp @ f.solve(B) - B) < 1e-10 * np.linalg.norm(B)
    # one analysis + factorisation (phase 12), then only solves on the stored factor (phase 33)
    assert phases == [(2, 12)] + [(2, 33)] * 5
    f.release()
    assert phases[-1] == (2, -1)
    # a whole shift-invert eigensolve: one factorisation for hundreds of solves
    phases.clear()
    with backends.use("pardiso"):
        lowest_eigenpairs(pencil.K, pencil.M, 6, -0.5 * (math.pi / A) ** 2)
    # (the SPD factor is applied as its two halves, forward (331) and backward (333): Lanczos on
    # the standard form F M F^T)
    assert phases.count((2, 12)) == 1 and phases.count((2, 331)) > 10
    assert phases.count((2, 333)) >= phases.count((2, 331))


def test_pardiso_halves_are_transposes_and_compose_to_the_solve(pencil, mkl):
    """F A F^T = I, the split PARDISO's SPD factor offers (its manual's phases 331 / 333, from
    memory): forward and backward halves are each other's transposes and compose to A^-1."""
    Asp = (pencil.K + pencil.M).tocsr()
    f = backends.factorize(Asp, spd=True, backend="pardiso")
    fwd, bwd = f.halves
    rng = np.random.default_rng(3)
    u, v = rng.standard_normal((2, Asp.shape[0]))
    assert abs(u @ fwd(v) - bwd(u) @ v) <= 1e-12 * np.linalg.norm(u) * np.linalg.norm(fwd(v))
    x = bwd(fwd(v))
    assert np.linalg.norm(Asp @ x - v) < 1e-10 * np.linalg.norm(v)
    y = fwd(v)
    assert abs(y @ y - v @ x) <= 1e-12 * abs(v @ x)  # |F v|^2 = v^T A^-1 v
    f.release()


def test_pardiso_releases_its_memory(pencil, mkl):
    Asp = (pencil.K + pencil.M).tocsr()
    before = mkl.memory_in_use()
    f = backends.factorize(Asp, spd=True, backend="pardiso")
    held = mkl.memory_in_use() - before
    assert held > 8 * f.nnz  # at least the factor's values (8 bytes each) are MKL's
    assert backends.predicted_cost(Asp.shape[0], "pardiso")[1][1] > held  # the memory band holds the factor
    f.release()
    assert mkl.memory_in_use() - before < 0.01 * held
    with pytest.raises(RuntimeError, match="released"):
        f.solve(np.ones(Asp.shape[0]))
    # a factor that is simply dropped is freed by its finaliser
    g = mkl.PardisoFactor(Asp, 2)
    assert mkl.memory_in_use() - before > 8 * g.nnz
    del g
    assert mkl.memory_in_use() - before < 0.01 * held


def test_pardiso_inertia_counts_the_eigenvalues_below_the_shift(mkl):
    # Dirichlet Laplacian of the 2 x 1 rectangle: eigenvalues (m pi / 2)^2 + (n pi)^2 = 12.34, 19.74, 32.08,
    # 44.41, ... (Pozar sec. 3.3, the TM cutoffs).  K - 26 M has exactly two negative eigenvalues (Sylvester's
    # law of inertia: as many as the pencil has below 26; the P3 values lie within 1e-5 of the closed form).
    mesh = skfem.MeshTri.init_tensor(np.linspace(0, A, 21), np.linspace(0, B, 11))
    d = discretise(mesh, 3)
    idx = d.interior()
    K, M = restrict(d.K, idx), restrict(d.M, idx)
    n = K.shape[0]
    shifted = (K - 26.0 * M).tocsr()
    f = backends.factorize(shifted, spd=False, backend="pardiso", symmetric=True, inertia=(n - 2, 2))
    assert f.backend == "pardiso" and f.inertia == (n - 2, 2)
    b = np.ones(n)
    assert np.linalg.norm(shifted @ f.solve(b) - b) < 1e-9 * np.linalg.norm(b)
    # a factorisation that contradicts the expected inertia is not used: SuperLU takes over
    g = backends.factorize(shifted, spd=False, backend="pardiso", symmetric=True, inertia=(n - 1, 1))
    assert g.backend == "superlu"
    # an SPD claim PARDISO's Cholesky disproves falls back the same way
    assert backends.factorize(shifted, spd=True, backend="pardiso").backend == "superlu"


def test_pardiso_solves_an_unsymmetric_matrix(pencil, mkl):
    Asp = (pencil.K + pencil.M).tocsr()
    Asp = (Asp + 0.1 * abs(Asp).max() * sp.diags(np.ones(Asp.shape[0] - 1), 1)).tocsr()  # unsymmetric
    f = backends.factorize(Asp, spd=False, backend="pardiso")
    b = np.arange(Asp.shape[0], dtype=float)
    assert f.backend == "pardiso" and f.inertia is None
    assert np.linalg.norm(Asp @ f.solve(b) - b) < 1e-10 * np.linalg.norm(b)


def test_pardiso_cutoffs_of_the_rectangle_agree_with_superlu_within_error_bars(mkl):
    # WR-90 cutoffs, closed form kc = sqrt((m pi / a)^2 + (n pi / b)^2) (Pozar sec. 3.3), computed on meshes
    # large enough (accuracy 1e-9) that auto would take a sparse Cholesky
    a, b = 22.86e-3, 10.16e-3
    got = {}
    for name in ("superlu", "pardiso"):
        with backends.use(name):
            got[name] = femodes.solve(femodes.rectangle(a, b), modes=5, accuracy=1e-9)
    exact = {(m, n): 299792458.0 / 2 * math.hypot(m / a, n / b) for m in range(4) for n in range(3)}
    for p, s in zip(got["pardiso"], got["superlu"]):
        assert p.label == s.label
        assert abs(p.fc - s.fc) <= p.fc_error + s.fc_error
        m, n = (int(c) for c in p.label[2:4])
        assert abs(p.fc - exact[(m, n)]) <= p.fc_error, p.label


def test_pardiso_slab_loaded_guide_matches_the_lse_lsm_values(phases, monkeypatch):
    # WR-90 with an eps_r = 2.25 slab on its bottom half: LSE / LSM transverse resonance (Collin, Field Theory of
    # Guided Waves, ch. 6), femodes.reference.slab_on_wall_modes
    from femodes import reference as ref

    a, b, f = 22.86e-3, 10.16e-3, 13e9
    guide = femodes.rectangle(a, b).with_material(femodes.rectangle(a, b / 2).translated(0, -b / 4), eps_r=2.25)
    want = ref.slab_on_wall_modes(a, b, b / 2, 2.25, f, 4)
    fallbacks = []
    real = backends._superlu
    monkeypatch.setattr(backends, "_superlu", lambda A: fallbacks.append(A.shape) or real(A))
    got = {}
    for name in ("pardiso", "superlu"):
        with backends.use(name):
            got[name] = femodes.solve(guide, modes=4, frequency=f, accuracy=1e-5)
        if name == "pardiso":
            # every factorisation was PARDISO's L D L^T (mtype -2), its inertia the expected one
            assert fallbacks == [] and phases.count((-2, 12)) >= 2
    for p, s, r in zip(got["pardiso"], got["superlu"], want):
        assert abs(p.beta() - r.beta) <= p.beta_error, (p.label, r.label)
        assert abs(p.beta() - s.beta()) <= p.beta_error + s.beta_error


def test_pardiso_asked_for_but_not_installed_is_refused(monkeypatch):
    monkeypatch.setattr(pardiso_mod, "load", lambda: None)
    monkeypatch.setenv("FEMODES_BACKEND", "pardiso")
    with pytest.raises(FemodesError, match=r"'pardiso'.*not installed.*valid names: auto, superlu, cholespy, pardiso"
                                           r".*femodes\[mkl\]"):
        femodes.solve(femodes.rectangle(22.86e-3, 10.16e-3), modes=1, accuracy=1e-3)
    monkeypatch.setenv("FEMODES_BACKEND", "auto")
    assert "pardiso" not in backends.available()
    assert backends.choose(10 ** 6, spd=True) == ("cholespy" if "cholespy" in backends.available() else "superlu")
    assert backends.choose(10 ** 6, spd=False) == "superlu"


def test_auto_takes_pardiso_only_above_its_measured_crossovers(mkl):
    assert backends.choose(backends.PARDISO_SPD_MIN, spd=True, backend="auto") == "pardiso"
    assert backends.choose(backends.PARDISO_SPD_MIN - 1, spd=True, backend="auto") != "pardiso"
    assert backends.choose(backends.PARDISO_INDEFINITE_MIN, spd=False, backend="auto") == "pardiso"
    assert backends.choose(backends.PARDISO_INDEFINITE_MIN - 1, spd=False, backend="auto") == "superlu"
    # a saddle point (zero diagonal block) stays with SuperLU under auto: measured slower with PARDISO
    assert backends.choose(10 ** 6, spd=False, backend="auto", saddle=True) == "superlu"
    n = backends.PARDISO_INDEFINITE_MIN
    T = sp.diags([-np.ones(n - 1), 4 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1])  # positive definite
    S = sp.bmat([[T, sp.identity(n)], [sp.identity(n), None]], format="csc")  # zero (2, 2) block
    assert backends.factorize(S, backend="auto").backend == "superlu"
    # inertia (n, n): T positive definite, its Schur complement -T^-1 negative definite (Sylvester)
    f = backends.factorize(S, backend="pardiso", symmetric=True, inertia=(n, n))
    b = np.ones(2 * n)
    assert f.backend == "pardiso" and np.linalg.norm(S @ f.solve(b) - b) < 1e-12 * np.linalg.norm(b)


def test_upper_triangle_for_the_symmetric_types_keeps_every_diagonal_entry():
    """PARDISO's symmetric types read the upper triangle with the whole diagonal stored (its
    manual's storage rule, from memory); the fast CSR cut and the COO path give the same."""
    B = sp.random(60, 60, density=0.1, random_state=1)
    A = (B + B.T + sp.identity(60)).tocsr()
    U = pardiso_mod._upper(A)
    assert U.has_sorted_indices and abs(U - sp.triu(A)).max() == 0
    assert np.all(np.diff(U.indptr) > 0) and np.all(U.indices[U.indptr[:-1]] == np.arange(60))
    C = (B + B.T).tolil()
    C.setdiag(0)
    C = C.tocsr()
    C.eliminate_zeros()  # zero diagonal: the COO path adds explicit zeros
    V = pardiso_mod._upper(C)
    assert np.all(V.indices[V.indptr[:-1]] == np.arange(60)) and abs(V - sp.triu(C)).max() == 0


def test_lanczos_on_the_standard_form_matches_the_rectangle(monkeypatch):
    """The eigen step's standard form (F M F^T y = y / (lam - sigma), x = F^T y), used where the
    factor offers its halves, gives the generalized path's eigenpairs and the rectangle's closed
    form kc^2 = (m pi / a)^2 + (n pi / b)^2 (common practice).  Halves from a dense Cholesky factor."""
    import scipy.linalg as la

    from femodes.solvers import eigen

    mesh = skfem.MeshTri.init_tensor(np.linspace(0, A, 21), np.linspace(0, B, 11))
    d = discretise(mesh, 3)
    K, M = d.K, d.M
    sigma = -0.5 * (math.pi / A) ** 2
    lam0, X0, _ = lowest_eigenpairs(K, M, 7, sigma)
    calls = []

    def halved(Amat, spd=False, **kw):
        L = la.cholesky(Amat.toarray(), lower=True)
        fwd = lambda b: la.solve_triangular(L, b, lower=True)
        bwd = lambda b: la.solve_triangular(L.T, b, lower=False)
        calls.append(1)
        return backends.Factor("dense", lambda b: bwd(fwd(b)), halves=(fwd, bwd))

    monkeypatch.setattr(eigen, "factorize", halved)
    lam, X, res = lowest_eigenpairs(K, M, 7, sigma)
    assert calls
    np.testing.assert_allclose(lam[1:], lam0[1:], rtol=1e-10)
    assert abs(lam[0]) < 1e-8 * lam[1]  # the Neumann constant
    np.testing.assert_allclose(lam[1:], _closed_form(False, 6), rtol=1e-3)  # P3, h = 0.1
    np.testing.assert_allclose(np.einsum("ij,ij->j", X, M @ X), 1.0, rtol=1e-10)  # M-orthonormal
    assert np.all(res[1:] < 1e-8)


def test_coax_statics_go_through_the_backend_layer_and_match_the_closed_form():
    """The TEM potentials factorise through the backend layer (every installed backend gives the
    same gram matrix), and the coax's gram entry int |grad phi|^2 dA is C / eps = 2 pi / ln(b / a)
    (common practice)."""
    from femodes.geometry.mesh import mesh_section
    from femodes.solvers.electrostatic import conductor_potentials

    b, a = 5e-3, 2e-3
    section = femodes.coaxial(b, a)
    disc = discretise(mesh_section(section, 0.6e-3, order=3).to_skfem(order=3), 3)
    grams = {}
    for name in backends.available():
        with backends.use(name):
            grams[name] = conductor_potentials(disc, section)[1][0, 0]
    for name, g in grams.items():
        assert g == pytest.approx(grams["superlu"], rel=1e-10), name
    assert grams["superlu"] == pytest.approx(2 * math.pi / math.log(b / a), rel=1e-4)
