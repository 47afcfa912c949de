"""Writes meshes/support_bar.msh: the mesh behind examples/support_bar_mesh.toml (our own scenario).

A milled guide 22 x 10 mm (corner radius 1 mm) holding a 2 mm dielectric card across its full
width at mid-height.  Two gmsh physical surfaces name the regions: "bar" (the card) and "air"
(the rest; gmsh writes only the elements of physical groups, so the air is named too).  Second-order
triangles follow the rounded corners, with small elements there: femodes solves a mesh file on the
geometry the mesh gives, and its error estimate (orders p and p - 1 on this mesh) does not see how
far the meshed arcs are from the true ones.  Measured against femodes' own solve of the exact
section (rounded rectangle with the card, accuracy 1e-8), beta of the dominant mode at 12 GHz:
1 mm elements on the 1 mm radii gave an error of 9.5e-4 rad/m against an estimate of 9.9e-5
(the meshed arcs' error, unseen by the estimate); 0.1 mm elements there give 2.5e-7 against
1.3e-4.  Coordinates in millimetres.

    python meshes/make_support_bar.py
"""

import os

import gmsh

WIDTH, HEIGHT, RADIUS = 22.0, 10.0, 1.0   # mm
BAR = 2.0                                  # card thickness, mm, centred at mid-height
SIZE = 1.0                                 # element size, mm
ARC_SIZE = 0.1                             # element size on the rounded corners, mm


def main(path=os.path.join(os.path.dirname(os.path.abspath(__file__)), "support_bar.msh")):
    gmsh.initialize(readConfigFiles=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        occ = gmsh.model.occ
        guide = occ.addRectangle(-WIDTH / 2, -HEIGHT / 2, 0, WIDTH, HEIGHT, roundedRadius=RADIUS)
        bar = occ.addRectangle(-WIDTH / 2, -BAR / 2, 0, WIDTH, BAR)
        occ.fragment([(2, guide)], [(2, bar)])
        occ.synchronize()
        faces = [t for _, t in gmsh.model.getEntities(2)]
        card = [t for t in faces if abs(occ.getCenterOfMass(2, t)[1]) < 1e-9]
        gmsh.model.addPhysicalGroup(2, card, name="bar")
        gmsh.model.addPhysicalGroup(2, [t for t in faces if t not in card], name="air")
        arcs = [t for _, t in gmsh.model.getEntities(1) if gmsh.model.getType(1, t) in ("Circle", "Ellipse")]
        fld = gmsh.model.mesh.field
        near = fld.add("Distance")
        fld.setNumbers(near, "CurvesList", arcs)
        fld.setNumber(near, "Sampling", 40)
        grow = fld.add("Threshold")   # ARC_SIZE on the arcs, growing to SIZE 2 mm away
        fld.setNumber(grow, "InField", near)
        fld.setNumber(grow, "SizeMin", ARC_SIZE)
        fld.setNumber(grow, "SizeMax", SIZE)
        fld.setNumber(grow, "DistMin", 0.0)
        fld.setNumber(grow, "DistMax", 2.0)
        fld.setAsBackgroundMesh(grow)
        gmsh.option.setNumber("Mesh.MeshSizeExtendFromBoundary", 0)
        gmsh.option.setNumber("Mesh.MeshSizeMax", SIZE)
        gmsh.option.setNumber("Mesh.Algorithm", 6)
        gmsh.option.setNumber("Mesh.RandomFactor", 1e-9)
        gmsh.model.mesh.generate(2)
        gmsh.model.mesh.setOrder(2)
        gmsh.option.setNumber("Mesh.MshFileVersion", 2.2)
        gmsh.write(path)
    finally:
        gmsh.finalize()
    return path


if __name__ == "__main__":
    print("wrote", main())
