"""A Series as stored with a request's inputs: JSON-ready, and read back exactly."""

from __future__ import annotations

from typing import Any

import numpy as np

from app.ingest import Series


def series_payload(series: Series) -> dict[str, Any]:
    """The series as audited, JSON-ready; ``series_from_payload`` reads it back exactly."""
    return {"time": [float(t) for t in series.time], "value": [float(v) for v in series.value],
            "time_labels": list(series.time_labels), "sampling": series.sampling, "label": series.label,
            "units": series.units, "missing_times": list(series.missing_times), "notes": list(series.notes)}


def series_from_payload(payload: dict[str, Any]) -> Series:
    return Series(time=np.asarray(payload["time"], dtype=float), value=np.asarray(payload["value"], dtype=float),
                  sampling=payload["sampling"], label=payload["label"], units=payload["units"],
                  missing_times=tuple(payload["missing_times"]), time_labels=tuple(payload["time_labels"]),
                  notes=tuple(payload["notes"]))
