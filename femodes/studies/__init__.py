"""Design studies: many solves of a guide whose parameters change.

:mod:`.sweeps` (cutoffs over one parameter or a grid, in parallel locally or on a dask cluster,
stored point by point in :mod:`.store` so that an interrupted sweep resumes); :mod:`.seek`
(the parameter values that meet target cutoffs or band edges, with their uncertainty);
:mod:`.sensitivity` (d fc / d parameter of every mode from the shape derivative of the eigenvalue;
loaded guides: :mod:`.loaded_sensitivity`, materials by first-order perturbation, dimensions by
differences of solves);
:mod:`.tolerance` (worst-case and Monte Carlo spread of the cutoffs and band under tolerances).  Studies call the
front door (femodes.api) and sit beside the report, above the quantities.
"""

from femodes.studies.seek import SeekResult, seek
from femodes.studies.sensitivity import Sensitivity, sensitivity
from femodes.studies.sweeps import SweepResult, sweep
from femodes.studies.tolerance import Tolerance, tolerance
from femodes.studies.verify import SelfCheck, selfcheck

__all__ = ["sweep", "SweepResult", "seek", "SeekResult", "sensitivity", "Sensitivity", "tolerance", "Tolerance", "selfcheck", "SelfCheck"]
