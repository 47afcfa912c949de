"""Geometry: cross-sections (:mod:`.section`: shapes, material regions, validation, SI metres)
and triangle meshes (:mod:`.mesh`: gmsh, grading toward singular corners, curved high-order
nodes, mesh files through meshio; :mod:`.locate`: point location)."""
