"""Geometry: cross-sections (:mod:`.section`: shapes, material regions, validation, SI metres)
and triangle meshes (:mod:`.mesh`: gmsh, grading toward singular corners, curved high-order
nodes, mesh files through meshio; :mod:`.locate`: point location; :mod:`.symmetry`: the point
group of a section or a mesh, C_n / D_n, from its walls and material outlines)."""
