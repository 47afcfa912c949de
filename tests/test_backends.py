"""The linear-algebra backends of the eigen stage (femodes.solvers.backends).

Every installed backend must give the same eigenvalues to round-off, and those must be the closed
form of the rectangle: TM_mn kc^2 = (m pi / a)^2 + (n pi / b)^2, TE the same with m, n >= 0 not both
zero (D. M. Pozar, Microwave Engineering, 4th ed., sec. 3.3).
"""

import math

import numpy as np
import pytest
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
    assert backends.choose(10 ** 6, spd=False, backend="auto") == "superlu"


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
