"""A rectangle meshed with straight interfaces along x and y (layered dielectric test guides).
"""

from __future__ import annotations

import numpy as np

from femodes.errors import FemodesError, check_positive
from femodes.geometry.mesh import _mesh_from_connectivity, gmsh_session


# ---------------------------------------------------------------------------- test meshes
def layered_rectangle_mesh(width, height, interfaces_y=(), interfaces_x=(), h=None):
    """Triangle mesh of the rectangle [0, width] x [0, height] cut into regions by the lines
    y = c (interfaces_y) and x = c (interfaces_x), conforming to every interface.

    gmsh's built-in kernel: one rectangle per region, neighbours sharing their edges, one
    physical group per region.  Returns (femodes.Mesh, region) where region[i] is the region of
    triangle i: ix + nx * iy, counting from x = 0 and y = 0 (nx = len(interfaces_x) + 1), so for
    layers stacked in y it is simply the layer index from the bottom.  ``h``: maximum element size
    (m), default height / 8.
    """

    W = check_positive("width", width)
    H = check_positive("height", height)
    hh = H / 8 if h is None else check_positive("h (element size)", h)

    def cuts(name, values, L):
        try:
            vals = sorted(float(v) for v in values)
        except (TypeError, ValueError):
            raise FemodesError(f"{name} must be a list of coordinates in metres, got {values!r}") from None
        for v in vals:
            if not (0 < v < L):
                raise FemodesError(f"{name}: every interface must lie strictly inside (0, {L!r}) m, got {v!r}")
        if any(b - a <= 1e-12 * L for a, b in zip(vals, vals[1:])):
            raise FemodesError(f"{name}: interfaces must be distinct, got {vals!r}")
        return [0.0] + vals + [L]

    xs = cuts("interfaces_x", interfaces_x, W)
    ys = cuts("interfaces_y", interfaces_y, H)
    nx, ny = len(xs) - 1, len(ys) - 1
    if (W * H) / (hh * hh) > 2e6:
        raise FemodesError(f"element size h = {hh!r} m would give millions of triangles on a "
                           f"{W!r} x {H!r} m rectangle; use a larger h")
    with gmsh_session("femodes-layers") as gmsh:
        geo = gmsh.model.geo
        pt = {(i, j): geo.addPoint(xs[i], ys[j], 0.0, hh) for i in range(nx + 1) for j in range(ny + 1)}
        hl = {(i, j): geo.addLine(pt[i, j], pt[i + 1, j]) for i in range(nx) for j in range(ny + 1)}
        vl = {(i, j): geo.addLine(pt[i, j], pt[i, j + 1]) for i in range(nx + 1) for j in range(ny)}
        surfaces = []
        for j in range(ny):
            for i in range(nx):
                loop = geo.addCurveLoop([hl[i, j], vl[i + 1, j], -hl[i, j + 1], -vl[i, j]])
                surfaces.append(geo.addPlaneSurface([loop]))
        geo.synchronize()
        for r, s in enumerate(surfaces):
            gmsh.model.addPhysicalGroup(2, [s], r + 1)
        gmsh.option.setNumber("Mesh.MeshSizeMax", hh)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.0)
        gmsh.option.setNumber("Mesh.MeshSizeFromCurvature", 0)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.option.setNumber("Mesh.RandomFactor", 1e-9)
        gmsh.model.mesh.generate(2)
        tags, coords, _ = gmsh.model.mesh.getNodes()
        coords = np.asarray(coords).reshape(-1, 3)[:, :2].T
        lookup = np.zeros(int(tags.max()) + 1, dtype=np.int64)
        lookup[tags] = np.arange(len(tags))
        conns, regions = [], []
        for r, s in enumerate(surfaces):
            _, _, enodes = gmsh.model.mesh.getElements(2, s)
            c = np.asarray(enodes[0], dtype=np.int64).reshape(-1, 3).T
            conns.append(lookup[c])
            regions.append(np.full(c.shape[1], r, dtype=np.int64))
    mesh = _mesh_from_connectivity(coords, np.hstack(conns))
    return mesh, np.concatenate(regions)
