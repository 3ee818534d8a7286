"""Reading newsroom series: CSV, plain text, spreadsheets (.xlsx, .ods) and JSON in, a validated ``Series`` out.

``read_upload`` reads any of the file formats (told apart by content), ``read_link`` fetches one from a link first
(``app.ingest.fetch``); a year-by-month table becomes one monthly series; ``seasonal_cycle`` and ``deseasonalise``
find and remove a calendar-month cycle. Times become decimal years at the middle of their period (see
``app.ingest.times``); missing values and holes in the grid are listed on the Series; every rejection is an
``app.errors.InputError`` that says where the fault sits and what to do about it.
"""

from app.ingest.csv_reader import ParsedTable, read_csv_text
from app.ingest.fetch import Fetched, FetchPolicy, fetch
from app.ingest.json_reader import series_from_arrays, series_from_json
from app.ingest.limits import ReadLimits
from app.ingest.options import IngestOptions
from app.ingest.seasonal import SeasonalCycle, deseasonalise, seasonal_cycle
from app.ingest.series import Series
from app.ingest.upload import read_link, read_upload
from app.ingest.validate import MIN_POINTS, check_window_in_series, validate_series

__all__ = [
    "FetchPolicy",
    "Fetched",
    "IngestOptions",
    "MIN_POINTS",
    "ParsedTable",
    "ReadLimits",
    "SeasonalCycle",
    "Series",
    "check_window_in_series",
    "deseasonalise",
    "fetch",
    "read_csv_text",
    "read_link",
    "read_upload",
    "seasonal_cycle",
    "series_from_arrays",
    "series_from_json",
    "validate_series",
]
