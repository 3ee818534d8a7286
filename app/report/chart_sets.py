"""Which charts each kind of stored result has, and where each chart is served.

A pause audit has the five evidence charts, and a sixth when it was adjusted for covariates; a
correlation audit has its own. The set is chosen by the document, so a chart the document cannot
draw is "not found" rather than a broken picture.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any

from app.report.adjusted_chart import ADJUSTED_CHART, ADJUSTED_CHART_NAME
from app.report.charts import CHART_NAMES, CHARTS, ChartSpec
from app.report.correlation_charts import CORRELATION_CHART_NAMES, CORRELATION_CHART_SPECS


@dataclass(frozen=True)
class ChartSet:
    kind: str  # the stored record's kind: part of the cache key
    base_path: str  # charts are served at {base_path}/{id}/charts/{name}.svg
    specs: Mapping[str, ChartSpec]
    names_for: Callable[[dict[str, Any]], tuple[str, ...]]  # the charts this document has, in reading order

    def names(self, document: dict[str, Any]) -> tuple[str, ...]:
        return self.names_for(document)


def _audit_chart_names(document: dict[str, Any]) -> tuple[str, ...]:
    return CHART_NAMES + ((ADJUSTED_CHART_NAME,) if document.get("adjustment") else ())


AUDIT_CHARTS = ChartSet("audit", "/audits", {**CHARTS, ADJUSTED_CHART_NAME: ADJUSTED_CHART}, _audit_chart_names)
CORRELATION_CHARTS = ChartSet("correlation", "/correlations", CORRELATION_CHART_SPECS,
                              lambda document: CORRELATION_CHART_NAMES)
