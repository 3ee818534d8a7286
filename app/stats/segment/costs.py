"""Segment costs for the discontinuous search, kept apart from the search itself.

A cost is the residual sum of squares of one small least-squares model fitted to a segment:
``LinearCost`` a straight line (the Bai & Perron 1998 pure structural-change model with regressors
1 and t), ``LevelCost`` a constant (a mean shift, e.g. the Nile example). Prefix sums of 1, t, t^2,
y, t y and y^2 give every segment's cost in O(1), so a whole (start, end) cost matrix takes O(n^2).
Time and values are centred (and time scaled) first so the differences of prefix sums keep their digits.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from typing import ClassVar

import numpy as np


class SegmentCost(ABC):
    """RSS of a per-segment model on index ranges [start, end) of one series."""

    name: ClassVar[str]
    params_per_segment: ClassVar[int]

    def __init__(self, t: np.ndarray, y: np.ndarray):
        self.t_mean = float(t.mean())
        self.t_scale = float(np.ptp(t)) or 1.0
        u = (t - self.t_mean) / self.t_scale
        v = y - y.mean()
        zero = np.zeros(1)
        self._sums = [np.concatenate([zero, np.cumsum(x)]) for x in (np.ones_like(u), u, u * u, v, u * v, v * v)]

    def costs(self, starts: np.ndarray, ends: np.ndarray) -> np.ndarray:
        """Cost of each segment [start, end) (broadcasting), in squared value units."""
        count, st, stt, sy, sty, syy = (s[ends] - s[starts] for s in self._sums)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.maximum(self._rss(count, st, stt, sy, sty, syy), 0.0)

    def columns(self, times: np.ndarray) -> np.ndarray:
        """The per-segment regressors at ``times`` (centred time keeps the fits well conditioned)."""
        return self._columns(np.asarray(times, dtype=float) - self.t_mean)

    @staticmethod
    @abstractmethod
    def _rss(count, st, stt, sy, sty, syy) -> np.ndarray: ...

    @staticmethod
    @abstractmethod
    def _columns(centred_times: np.ndarray) -> np.ndarray: ...


class LinearCost(SegmentCost):
    name = "linear"
    params_per_segment = 2

    @staticmethod
    def _rss(count, st, stt, sy, sty, syy):
        sxx = stt - st * st / count
        sxy = sty - st * sy / count
        syy_c = syy - sy * sy / count
        return syy_c - np.where(sxx > 0, sxy * sxy / np.where(sxx > 0, sxx, 1.0), 0.0)

    @staticmethod
    def _columns(centred_times):
        return np.column_stack([np.ones_like(centred_times), centred_times])


class LevelCost(SegmentCost):
    name = "level"
    params_per_segment = 1

    @staticmethod
    def _rss(count, st, stt, sy, sty, syy):
        return syy - sy * sy / count

    @staticmethod
    def _columns(centred_times):
        return np.ones((centred_times.size, 1))


COSTS: dict[str, type[SegmentCost]] = {"linear": LinearCost, "level": LevelCost}
