"""Writes meshes/support_bar.msh: the mesh behind examples/support_bar_mesh.toml (our own scenario).

A milled guide 20 x 10 mm (corner radius 1 mm) holding a 2 mm dielectric card across its full
width at mid-height.  Two gmsh physical surfaces name the regions: "bar" (the card) and "air"
(the rest; gmsh writes only the elements of physical groups, so the air is named too).  Second-order
triangles follow the rounded corners.  Coordinates in millimetres.

    python meshes/make_support_bar.py
"""

import os

import gmsh

WIDTH, HEIGHT, RADIUS = 20.0, 10.0, 1.0   # mm
BAR = 2.0                                  # card thickness, mm, centred at mid-height
SIZE = 1.0                                 # element size, mm


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
