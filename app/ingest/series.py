"""The Series: what every reader produces and every later layer consumes."""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field

import numpy as np

SAMPLING_STEP = {"annual": 1.0, "quarterly": 0.25, "monthly": 1.0 / 12.0}


@dataclass(frozen=True)
class Series:
    """A regularly (or irregularly) sampled series on a decimal-year axis.

    ``time`` and ``value`` hold only the valid points, strictly increasing in time.
    ``missing_times`` lists the grid times that had no usable value (blank, NA, sentinel).
    """

    time: np.ndarray
    value: np.ndarray
    sampling: str = "irregular"  # "annual" | "quarterly" | "monthly" | "irregular"
    label: str = ""
    units: str = ""
    missing_times: tuple[float, ...] = ()
    time_labels: tuple[str, ...] = ()  # the times as written in the input, one per valid point
    notes: tuple[str, ...] = field(default=())  # what ingestion did: anomalies, annual means, dropped rows

    @property
    def n(self) -> int:
        return int(self.time.size)

    @property
    def step(self) -> float:
        """Nominal spacing in years; for irregular data, the median spacing."""
        if self.sampling in SAMPLING_STEP:
            return SAMPLING_STEP[self.sampling]
        return float(np.median(np.diff(self.time))) if self.n > 1 else 1.0

    @property
    def points_per_year(self) -> float:
        return 1.0 / self.step

    @property
    def start(self) -> float:
        return float(self.time[0])

    @property
    def end(self) -> float:
        return float(self.time[-1])

    def window(self, start: float, end: float) -> "Series":
        """The points with start <= time <= end, same metadata."""
        mask = (self.time >= start) & (self.time <= end)
        labels = tuple(np.asarray(self.time_labels, dtype=object)[mask]) if self.time_labels else ()
        return Series(time=self.time[mask], value=self.value[mask], sampling=self.sampling, label=self.label,
                      units=self.units, time_labels=labels, notes=self.notes)

    def sha256(self) -> str:
        """A stable hash of the numbers as audited (times and values, full precision)."""
        payload = json.dumps({"time": [repr(float(t)) for t in self.time],
                              "value": [repr(float(v)) for v in self.value]}, separators=(",", ":"))
        return hashlib.sha256(payload.encode()).hexdigest()
