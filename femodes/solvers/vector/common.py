"""Input checks and small assembly helpers shared by the full-vector problem and its mixins:
element pairs of an order, per-triangle materials, frequencies and counts, COO assembly, the
scikit-fem mesh of a femodes Mesh."""

from __future__ import annotations

import math

import numpy as np

from femodes.errors import FemodesError
from femodes.geometry.mesh import Mesh
from femodes.solvers.vector.modes import VECTOR_ORDERS


# ---------------------------------------------------------------------------- helpers
def _elements(order):
    import skfem

    try:
        p = int(order)
    except (TypeError, ValueError):
        p = None
    if p not in VECTOR_ORDERS or isinstance(order, bool):
        raise FemodesError(f"element order must be one of {VECTOR_ORDERS} (Nedelec N_p with Lagrange "
                           f"P_p), got {order!r}")
    return ({1: skfem.ElementTriN1, 2: skfem.ElementTriN2, 3: skfem.ElementTriN3}[p](),
            {1: skfem.ElementTriP1, 2: skfem.ElementTriP2, 3: skfem.ElementTriP3}[p](), p)


def _material(name, value, n):
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise FemodesError(f"{name} must be a number or one real number per triangle, got {value!r}") from None
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    arr = arr.ravel()
    if arr.shape != (n,):
        raise FemodesError(f"{name} must be a number or an array of one value per triangle ({n}), "
                           f"got shape {np.shape(value)}")
    bad = ~(np.isfinite(arr) & (arr > 0))
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise FemodesError(f"{name} must be real, finite and positive on every triangle; triangle {i} "
                           f"has {arr[i]!r}")
    return arr


def _frequency(f):
    try:
        v = float(f)
    except (TypeError, ValueError):
        raise FemodesError(f"frequency must be a number of Hz, got {f!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise FemodesError(f"frequency must be a positive finite number of Hz, got {f!r}")
    return v


def _count(name, n, minimum=1):
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < minimum:
        raise FemodesError(f"{name} must be an integer >= {minimum}, got {n!r}")
    return int(n)


def _coo(rows_dofs, cols_dofs, blocks, shape):
    from scipy.sparse import coo_matrix

    nr, nc, ne = blocks.shape
    rows = np.broadcast_to(rows_dofs[:, None, :], (nr, nc, ne)).ravel()
    cols = np.broadcast_to(cols_dofs[None, :, :], (nr, nc, ne)).ravel()
    return coo_matrix((blocks.ravel(), (rows, cols)), shape=shape).tocsr()


def _skfem_mesh(mesh, order):
    """A scikit-fem triangle mesh with sorted vertex order (see DEVELOPERS.md)."""
    from skfem import MeshTri1


    if isinstance(mesh, Mesh):
        return mesh.to_skfem(order=max(2, order)) if mesh.is_curved else mesh.to_skfem()
    if not hasattr(mesh, "t") or not hasattr(mesh, "p") or getattr(mesh, "t").shape[0] != 3:
        raise FemodesError(f"expected a scikit-fem triangle mesh or a femodes Mesh, got {type(mesh).__name__}")
    t = np.asarray(mesh.t)
    if np.all(np.diff(t, axis=0) > 0):
        return mesh
    if type(mesh) is MeshTri1:  # straight triangles: reordering the vertices changes nothing else
        return MeshTri1(np.ascontiguousarray(mesh.p), np.ascontiguousarray(np.sort(t, axis=0)))
    raise FemodesError("the curved mesh's triangle vertices are not sorted; Nedelec and higher-order "
                       "elements give wrong answers on it.  Build it with femodes.Mesh.to_skfem, which "
                       "sorts them")
