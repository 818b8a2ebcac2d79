"""CSV / xlsx import and validation of the six import kinds, and one record typed in.

The public interface of the import; where each part lives:

- ``columns.py``: the kinds, their columns and the codes a column allows;
- ``reading/``: a file as chunks of text cells (CSV, Excel, encodings, header);
- ``checks.py``: the cell checks (text, codes, numbers, measures, dates);
- ``kinds/``: one validator per kind (``kinds/zones.py`` ...), on a shared base;
- ``duplicates.py``, ``identity.py``: rows met before, and which file a row came from;
- ``driver.py``: :func:`import_file`, :func:`import_files`, :func:`import_dir`;
- ``refused.py``: the refused rows written to CSV;
- ``record.py``, ``corrections.py``, ``lot_record.py``, ``plant.py``: :func:`log_inspection`,
  :func:`correct_inspection`, :func:`log_lot`, :func:`set_default_plant`.

A new import column: name it in ``columns.py`` and check it in its kind's validator.
"""

from tracker.log.ingest.columns import (
    COLUMNS,
    DEFECTS,
    GRADED_CATEGORIES,
    KINDS,
    METHODS,
    MOULDS,
    NEVER_ACCEPTABLE,
    RESULTS,
    SLEEVE_KINDS,
    US_COLUMNS,
    XRAY_CATEGORIES,
)
from tracker.log.ingest.corrections import correct_inspection
from tracker.log.ingest.driver import CHUNK_ROWS, import_dir, import_file, import_files
from tracker.log.ingest.identity import FileIdentity, file_identity
from tracker.log.ingest.lot_record import log_lot
from tracker.log.ingest.plant import set_default_plant
from tracker.log.ingest.record import log_inspection
from tracker.log.ingest.refused import write_refused
from tracker.log.ingest.result import MAX_PROBLEMS, ImportResult

__all__ = [
    "CHUNK_ROWS", "COLUMNS", "DEFECTS", "GRADED_CATEGORIES", "KINDS", "MAX_PROBLEMS", "METHODS", "MOULDS",
    "NEVER_ACCEPTABLE", "RESULTS", "SLEEVE_KINDS", "US_COLUMNS", "XRAY_CATEGORIES",
    "FileIdentity", "ImportResult",
    "correct_inspection", "file_identity", "import_dir", "import_file", "import_files",
    "log_inspection", "log_lot", "set_default_plant", "write_refused",
]
