"""The end a relative window runs to ("since 1998", "for 15 years"), counted in whole periods of the series."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from app.ingest.sampling import PERIODS_PER_YEAR, period_index, period_label

_SAMPLING_OF_PER_YEAR = {per_year: name for name, per_year in PERIODS_PER_YEAR.items()}


@dataclass(frozen=True)
class Anchor:
    """The last whole period a relative window includes, as a period count since year 0."""

    index: int
    per_year: int  # 12, 4 or 1: months, quarters or years
    from_record: bool  # taken from the end of the record, not from the date of the claim

    @property
    def year(self) -> int:
        return self.index // self.per_year

    def label(self, periods_back: int = 0) -> str:
        """The period ``periods_back`` periods before the anchor, written as the series writes it."""
        mid_time = (self.index - periods_back + 0.5) / self.per_year
        return period_label(mid_time, _SAMPLING_OF_PER_YEAR[self.per_year])


def periods_per_year(sampling: str | None) -> int:
    """Months, unless the series is sampled by quarters or years: a month edge suits any series."""
    return PERIODS_PER_YEAR.get(sampling or "", 12)


def find_anchor(made_on: dt.date | None, series_span: tuple[float, float] | None,
                sampling: str | None) -> Anchor | None:
    """The last whole period before the claim was made; else the period holding the record's last time."""
    per_year = periods_per_year(sampling)
    if made_on is not None:
        current = made_on.year * per_year + (made_on.month - 1) * per_year // 12
        return Anchor(index=current - 1, per_year=per_year, from_record=False)
    if series_span is not None and np.isfinite(series_span[1]):
        index = int(period_index(np.array([series_span[1]]), per_year)[0])
        return Anchor(index=index, per_year=per_year, from_record=True)
    return None
