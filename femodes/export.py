"""Deprecated: the report functions moved to :mod:`femodes.report` (tables, documents, files,
analysis, figures).  This name keeps old imports working and will be removed."""

import warnings

from femodes.report import *  # noqa: F401,F403
from femodes.report import __all__  # noqa: F401

warnings.warn("femodes.export is now femodes.report", DeprecationWarning, stacklevel=2)
