"""The mode model: what a solve returns.

:class:`Mode` / :class:`ModeSet` for homogeneously filled guides (closed-form dispersion from the
cutoff), :class:`LoadedMode` / :class:`LoadedCutoff` for guides partly loaded with dielectric
(solved at a frequency).  :mod:`.labels` names homogeneous modes (TE10, symmetry classes,
degenerate groups); :mod:`.parents` names a loaded mode after the empty-guide mode it grows from.
The model knows nothing of the quantities computed from it or of output.
"""

from femodes.modes.loaded import LoadedCutoff, LoadedMode, LoadedModes
from femodes.modes.model import Mode, ModeSet

__all__ = ["Mode", "ModeSet", "LoadedMode", "LoadedCutoff", "LoadedModes"]
