"""Solvers: matrices and eigenpairs with error estimates, before any mode is named.

:mod:`.discretise` (scalar Lagrange forms), :mod:`.eigen` (shift-invert eigenpairs: the one place
that knows the linear-algebra backend), :mod:`.scalar` (homogeneous guides: TE / TM / TEM and the
accuracy loop), :mod:`.vector` (full-vector edge + nodal elements for loaded guides),
:mod:`.loaded` (its accuracy loop), :mod:`.fields` (evaluating scalar solutions)."""
