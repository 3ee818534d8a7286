"""Reading newsroom series: CSV, plain text, spreadsheets (.xlsx, .ods) and JSON in, a validated ``Series`` out.

Times become decimal years at the middle of their period (see ``app.ingest.times``); missing values and
holes in the grid are listed on the Series; every rejection is an ``app.errors.InputError`` that says
where the fault sits and what to do about it.
"""

from app.ingest.csv_reader import ParsedTable, read_csv_text, series_from_csv
from app.ingest.json_reader import series_from_arrays, series_from_json
from app.ingest.limits import ReadLimits
from app.ingest.options import IngestOptions
from app.ingest.series import Series
from app.ingest.upload import read_upload
from app.ingest.validate import MIN_POINTS, check_window_in_series, validate_series

__all__ = [
    "IngestOptions",
    "MIN_POINTS",
    "ParsedTable",
    "ReadLimits",
    "Series",
    "check_window_in_series",
    "read_csv_text",
    "read_upload",
    "series_from_arrays",
    "series_from_csv",
    "series_from_json",
    "validate_series",
]
