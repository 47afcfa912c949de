"""Reports of a solve, one path for every guide (homogeneous or loaded): fixed-width text tables
(:mod:`.tables`), a JSON-ready document of one schema (:mod:`.document`), CSV tables and field
files (:mod:`.files`), the engineering quantities at an analysis frequency (:mod:`.analysis`) and
figures (:mod:`.figures`, written by :mod:`.output`).  Each takes what :func:`femodes.solve`
returns for a homogeneous guide (a ModeSet) or a :class:`femodes.api.Study` of either kind.

The text tables are for people and use engineering units (GHz, mm) with as many digits as each
number's error estimate justifies.  The JSON documents and the CSV files are for programs and use
SI units throughout (Hz, m, rad/m), stated in the document's "units" entry and the CSV header.
Values that do not exist (the cutoff wavelength of a TEM mode, the ratio of a band starting at
0 Hz, the kc of a loaded guide's cutoff) are null in JSON and empty in CSV, never NaN or infinity.
"""

from femodes.report.analysis import (
    ANALYSIS_UNITS,
    PERTURBATION_LIMIT,
    Analysis,
    ModeQuantities,
    Sweep,
    analyse,
    as_study,
    reliable_attenuation,
)
from femodes.report.document import (
    DOCUMENT_UNITS,
    analysis_document,
    dispersion_document,
    modes_document,
    report_document,
    write_json,
)
from femodes.report.files import AT_FREQUENCY_COLUMNS, CSV_COLUMNS, DISPERSION_COLUMNS, write_csv, write_fields
from femodes.report.output import check_figures, write_figures
from femodes.report.selfcheck import selfcheck_document, selfcheck_table
from femodes.report.tables import analysis_table, dispersion_table, modes_table, report_table
from femodes.report.text import power_text

__all__ = ["report_table", "report_document", "modes_table", "modes_document", "analysis_table", "dispersion_table",
           "analysis_document", "dispersion_document", "selfcheck_table", "selfcheck_document", "write_csv", "write_json", "write_fields", "write_figures",
           "check_figures", "as_study", "DOCUMENT_UNITS", "ANALYSIS_UNITS", "CSV_COLUMNS", "AT_FREQUENCY_COLUMNS",
           "DISPERSION_COLUMNS", "Analysis", "ModeQuantities", "Sweep", "analyse", "power_text",
           "reliable_attenuation", "PERTURBATION_LIMIT"]
