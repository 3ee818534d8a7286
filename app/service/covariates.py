"""Covariates as requests carry them: JSON arrays or extra CSV columns, read onto the response's time axis.

Each covariate is read by the same ingest path as a series (times mid-period, missing values allowed,
the same decimal comma, sentinels and annual means as the response; never the response's anomaly base:
an index such as ENSO is already an anomaly of its own kind). Errors name ``covariates[i]...`` for JSON
and the form's ``covariate_columns`` / ``covariate_max_lag`` for uploads.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, Sequence

from app.errors import ClaimError, LimitExceeded, Location
from app.ingest import IngestOptions, ParsedTable, Series, series_from_arrays
from app.service.columns import extra_column, unusable_column
from app.service.payloads import series_payload
from app.stats.adjust import AR_ITERATIONS, MAX_COVARIATES, Covariate, default_max_lag

# Lagged copies one covariate may need (candidate lags x response points). The lag search holds them all
# at once, so this bounds its memory: 25 monthly lags over 200 years is 60,000; a million leaves daily data room.
MAX_LAG_CELLS = 1_000_000

# Errors raised while fitting an uploaded file's covariates point at the form fields that chose them.
FORM_COVARIATE_FIELDS = ((r"covariates\[\d+\]\.max_lag", "covariate_max_lag"), (r"covariates(\[.*)?", "covariate_columns"))


@dataclass(frozen=True)
class CovariateSeries:
    """A covariate as read: its name, its checked Series (kept for storage) and its maximum lag in steps."""

    name: str
    series: Series
    max_lag: int | None = None

    @property
    def covariate(self) -> Covariate:
        return Covariate(name=self.name, time=self.series.time, value=self.series.value, max_lag=self.max_lag)


def covariate_ingest_options(options: IngestOptions) -> IngestOptions:
    """The response's reading options without its anomaly base (module docstring)."""
    return dataclasses.replace(options, anomaly_base=None, time_column=None, value_column=None, label="", units="")


def check_covariate_count(count: int, field: str) -> None:
    if count > MAX_COVARIATES:
        raise LimitExceeded(f"{count} covariates is more than the {MAX_COVARIATES} one audit can fit",
                            location=Location(field=field), fix="Keep the factors that matter most")


def _lag_counts(response: Series, covariates: Sequence[CovariateSeries]) -> list[int]:
    """Candidate lags of each covariate: its own maximum, else the default (two years, at most a quarter of the series)."""
    return [(cov.max_lag if cov.max_lag is not None else min(default_max_lag(response.points_per_year),
                                                             response.n // 4)) + 1 for cov in covariates]


def lag_search_work(response: Series, covariates: Sequence[CovariateSeries], lag_rule: str = "ls") -> int:
    """The lag search's work in one sweep: every candidate lag of every covariate is a least-squares fit of the
    response's points on all the regressors (n p^2 each), and the AIC rule repeats each fit for its AR(1)
    iterations. Sweeps until no lag moves multiply this by a few."""
    regressors = 2 + len(covariates)
    per_fit = response.n * regressors ** 2 * (AR_ITERATIONS if lag_rule == "aic" else 1)
    return sum(_lag_counts(response, covariates)) * per_fit


def check_lag_cells(response: Series, covariates: Sequence[CovariateSeries], fields: Sequence[str],
                    work_limit: int | None = None, lag_rule: str = "ls") -> None:
    """Refuses lag searches too big to hold in memory, or past the work budget, before any computing starts."""
    for cov, lags, field in zip(covariates, _lag_counts(response, covariates), fields):
        cells = lags * response.n
        if cells > MAX_LAG_CELLS:
            raise LimitExceeded(
                f"searching {lags:,} lags of '{cov.name}' over {response.n:,} points needs {cells:,} lagged "
                f"values; the limit is {MAX_LAG_CELLS:,}", location=Location(field=field),
                fix="Give a smaller maximum lag (in steps of the series), or use monthly or annual means")
    work = lag_search_work(response, covariates, lag_rule)
    if covariates and work_limit is not None and work > work_limit:
        raise LimitExceeded(
            f"searching the lags of {len(covariates)} covariates over {response.n:,} points is more work than this "
            f"service does in one request ({work:,} units; the limit is {work_limit:,})",
            location=Location(field=fields[0] if fields else "covariates"),
            fix="Give smaller maximum lags, fewer covariates, the 'ls' lag rule, or monthly or annual means")


def covariates_from_json(items: Sequence[dict[str, Any]], options: IngestOptions) -> tuple[CovariateSeries, ...]:
    """``[{"name", "time", "value", "max_lag"?}]`` (already shape-checked by the request schema)."""
    check_covariate_count(len(items), "covariates")
    reading = covariate_ingest_options(options)
    read = []
    for index, item in enumerate(items):
        field = f"covariates[{index}]"
        series = series_from_arrays(item["time"], item["value"], reading, field=field, label=item["name"])
        read.append(CovariateSeries(name=item["name"], series=series, max_lag=item.get("max_lag")))
    return tuple(read)


# Names one form may list (covariates, a driver): far more than any table this service reads has columns.
MAX_COLUMN_NAMES = 500


def column_names(values: Sequence[str | None], field: str = "covariate_columns",
                 max_length: int = 2_000) -> tuple[str, ...]:
    """Column names from comma-separated text, repeated fields, or both; blanks dropped, order and case kept.

    The count and each name's length are checked before anything else is done with them, and repeats are
    dropped through a dict (linear time): a form may carry tens of thousands of names."""
    parts: list[str] = []
    for value in values:
        if (value or "").count(",") + 1 + len(parts) > MAX_COLUMN_NAMES:
            raise LimitExceeded(f"more than {MAX_COLUMN_NAMES} column names were given",
                                location=Location(field=field), fix="Name only the columns you need")
        parts.extend(part.strip() for part in (value or "").split(","))
    for name in parts:
        if len(name) > max_length:
            raise LimitExceeded(f"a column name is {len(name):,} characters long; the limit is {max_length:,}",
                                location=Location(field=field), fix="Name the column as its header writes it")
    return tuple(dict.fromkeys(name for name in parts if name))


def covariates_from_table(table: ParsedTable, columns: Sequence[str], max_lag: int | None,
                          field: str = "covariate_columns") -> tuple[CovariateSeries, ...]:
    """Extra numeric columns of an uploaded table, on the response's own times."""
    check_covariate_count(len(columns), field)
    if max_lag is not None and max_lag < 0:
        raise ClaimError(f"the maximum lag must be 0 or more, got {max_lag}", location=Location(field="covariate_max_lag"),
                         fix="Give for example 24 for two years of monthly data")
    read = []
    for name in columns:
        found = extra_column(table, name)
        if found is None:
            raise unusable_column(table, name, "covariate", field)
        read.append(CovariateSeries(name=found[0], series=found[1], max_lag=max_lag))
    return tuple(read)


def covariate_payload(cov: CovariateSeries) -> dict[str, Any]:
    return {"name": cov.name, "max_lag": cov.max_lag, "sha256": cov.series.sha256(),
            "series": series_payload(cov.series)}

