"""Deprecated: the figures moved to :mod:`femodes.report.figures`.  This name keeps old imports
working and will be removed."""

import warnings

from femodes.report.figures import *  # noqa: F401,F403
from femodes.report.figures import __all__  # noqa: F401

warnings.warn("femodes.figures is now femodes.report.figures", DeprecationWarning, stacklevel=2)
