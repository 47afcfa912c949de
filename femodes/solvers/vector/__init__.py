"""Full-vector guided modes of inhomogeneously filled PEC guides (hybrid modes).

The numerical core for dielectric- and magnetic-loaded guides: a cross-section meshed into
triangles, each with its own real, positive eps_r and mu_r (piecewise constant), PEC on every
boundary edge.  Fields vary as exp(j (omega t - beta z)); k0 = omega / c0.

Formulation (mixed transverse / longitudinal; Lee, Sun & Cendes, IEEE Trans. MTT 39(8), 1991)
------------------------------------------------------------------------------------------
Unknowns: the transverse field E_t in Nedelec (first kind) edge elements N_p and the scaled
longitudinal field  w = j beta E_z  in Lagrange elements P_p of the same order p (1, 2 or 3;
scikit-fem ElementTriN1..N3 with ElementTriP1..P3; grad P_p lies in N_p, which is what keeps the
discrete curl null-space exact).  Testing the vector wave equation
curl(mu_r^-1 curl E) = k0^2 eps_r E with the edge functions N_i and the nodal functions L_i gives
the pencil  A x = beta^2 B x,  x = (E_t, w), with

    A = [[ S_tt - k0^2 T_eps ,  -G     ],        B = [[ -T_mu ,  0 ],
         [ 0                 ,  C(k0)  ]]             [  G^T  ,  0 ]]

    S_tt[i, j] = int mu_r^-1 curl N_i curl N_j dA        (curl of a 2-D field: a scalar)
    T_eps[i,j] = int eps_r  N_i . N_j dA,   T_mu[i, j] = int mu_r^-1 N_i . N_j dA
    G[i, j]    = int mu_r^-1 N_i . grad L_j dA
    C(k0)      = S_zz - k0^2 T_zz,  S_zz[i,j] = int mu_r^-1 grad L_i . grad L_j dA,
                 T_zz[i, j] = int eps_r L_i L_j dA

(first row: the transverse equation; second row: the longitudinal one multiplied by j beta).
Lee, Sun & Cendes scale the other way (e_t = beta E_t, e_z = -j E_z), which makes both matrices
symmetric but puts the n_z null directions at beta^2 = 0, in the middle of the spectrum next to
every mode near its cutoff; with w = j beta E_z they go to beta^2 = infinity instead (below).
The six matrices are assembled once; a frequency only recombines them.  PEC: all boundary dofs of
both spaces are removed (tangential E_t = 0: the edge dofs of wall edges; E_z = 0: every nodal,
edge and face dof on the wall).  Quadrature is exact for the polynomial degree (2p) on straight
triangles; eps_r and mu_r enter as element-wise weights of the quadrature.

Why no spurious mode is returned
--------------------------------
B has rank n_t: its z-columns are zero, so the n_z directions (0, w) are eigenvalues beta^2 =
infinity of the pencil.  Every finite eigenvalue is a physical discrete mode: testing the first
row with the gradients grad L_j (which lie in N_p) and adding the second row gives exactly the
discrete Gauss law  int eps_r E_t . grad L_j dA + int eps_r w L_j dA = 0  for every j (k0 > 0),
so the gradient fields that make nodal or unconstrained formulations spurious cannot appear at a
finite beta^2 unless they are part of a TM-like mode.  Shift-invert with the operator
OP = (A - sigma B)^-1 B maps beta^2 to nu = 1 / (beta^2 - sigma): the infinite eigenvalues go to
nu = 0 (the same end as the strongly evanescent modes), and OP x depends only on E_t, so ARPACK is
run on the E_t block alone, where the (0, w) directions do not exist at all.  sigma is put just
above k0^2 max(eps_r mu_r), above every beta^2 (Rayleigh bound), so the largest |nu| are the
largest beta^2: propagating modes first, then the least attenuated evanescent ones.  We factorise
(A - sigma B) ourselves (SuperLU, on the symmetric form of the matrix, see ``_factor``) and
hand eigs a LinearOperator: scipy's generalised shift-invert mode is not usable with this
indefinite B (MEASURED.md), and sigma > 0 stays far from -k0^2 eps_r where it was slow.  Each returned mode also carries the
residual of the pencil and of the discrete Gauss law, so a stray vector would show.

Cutoffs (beta = 0)
------------------
At beta = 0 the two rows decouple: transverse fields with  S_tt e = k0^2 T_eps e  (E_z = 0, only
H_z: "TE-type" cutoff), and longitudinal ones with  S_zz e_z = k0^2 T_zz e_z  (E_t = 0: "TM-type").
Both are solved directly as symmetric generalised eigenproblems in k0^2; the curl-curl one with the
constraint int eps_r e . grad L_j = 0 imposed by a Lagrange multiplier, which removes its huge
null-space of gradients (k0 = 0) instead of shifting it.

Complex modes
-------------
A and B are real but the pencil is not symmetric-definite, so below cutoff eigenvalues can come
as complex-conjugate pairs beta^2, conj(beta^2) with complex eigenvectors (conjugate to each
other).  In lossless guides whose dielectric spans the section in no direction these are physical
"complex modes"; on coarse meshes two nearly equal evanescent eigenvalues can also merge into
such a pair.  ARPACK runs on the real operator; its complex Ritz pairs are kept (family
'complex', see :class:`VectorMode`) when they are converged eigenpairs of the pencil, and the
distinction physical / artefact is made by refinement in femodes.solvers.loaded.

All SI: metres, hertz, rad/m.
"""

from femodes.geometry.layered import layered_rectangle_mesh
from femodes.solvers.vector.modes import (
    COMPLEX_RESIDUAL,
    FAMILY_THRESHOLD,
    VECTOR_ORDERS,
    Dispersion,
    VectorCutoff,
    VectorMode,
)
from femodes.solvers.vector.problem import VectorProblem

__all__ = ["VectorProblem", "VectorMode", "VectorCutoff", "Dispersion", "layered_rectangle_mesh",
           "VECTOR_ORDERS", "FAMILY_THRESHOLD", "COMPLEX_RESIDUAL"]
