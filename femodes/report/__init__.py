"""Reports of a solve: fixed-width text tables (:mod:`.tables`), JSON-ready documents
(:mod:`.document`), CSV and field files (:mod:`.files`), the engineering quantities of a case
file's [analysis] table (:mod:`.analysis`) and figures (:mod:`.figures`, written by
:mod:`.output`).

The text tables are for people and use engineering units (GHz, mm) with as many digits as each
number's error estimate justifies.  The JSON documents and the CSV files are for programs and use
SI units throughout (Hz, m, rad/m), stated in the document's "units" entry and the CSV header.
Values that do not exist (the cutoff wavelength of a TEM mode, the ratio of a band starting at
0 Hz) are null in JSON and empty in CSV, never NaN or infinity.
"""

from femodes.report.analysis import (
                                     ANALYSIS_UNITS,
                                     PERTURBATION_LIMIT,
                                     Analysis,
                                     ModeQuantities,
                                     Sweep,
                                     analyse,
                                     reliable_attenuation,
)
from femodes.report.document import (
                                     DOCUMENT_UNITS,
                                     LOADED_UNITS,
                                     analysis_document,
                                     loaded_document,
                                     modes_document,
                                     write_json,
)
from femodes.report.files import write_csv, write_fields, write_loaded_csv, write_loaded_fields
from femodes.report.output import check_figures, write_figures, write_loaded_figures
from femodes.report.tables import analysis_table, loaded_table, modes_table
from femodes.report.text import power_text

__all__ = ["modes_table", "modes_document", "write_csv", "write_json", "write_figures", "check_figures",
           "write_fields", "DOCUMENT_UNITS", "ANALYSIS_UNITS", "Analysis", "ModeQuantities", "Sweep", "analyse",
           "analysis_table", "analysis_document", "power_text", "reliable_attenuation", "PERTURBATION_LIMIT",
           "loaded_table", "loaded_document", "write_loaded_csv", "write_loaded_fields", "write_loaded_figures",
           "LOADED_UNITS"]
