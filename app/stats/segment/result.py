"""What a segmentation returns: the chosen breakpoints, their uncertainty and each segment's trend."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from app.stats.noise import NoiseModel


@dataclass(frozen=True)
class Segment:
    """One piece of the fitted piecewise-linear mean."""

    start: float  # time where the piece starts (the previous break, or the first observation)
    end: float  # time where it ends (the next break, or the last observation)
    slope: float  # value units per unit of time; 0 for the level-only cost
    slope_ci: tuple[float, float]
    level_start: float  # fitted value at ``start``
    level_end: float  # fitted value at ``end``
    n_points: int  # observations the piece is fitted to


@dataclass(frozen=True)
class Segmentation:
    """Piecewise-linear fit with the number of breaks chosen by an autocorrelation-aware BIC."""

    form: str  # "continuous" (pieces joined at the breaks) | "discontinuous"
    cost: str  # "linear" | "level" (discontinuous only; continuous is always linear)
    breakpoints: tuple[float, ...]  # continuous: where pieces meet; discontinuous: last time of the earlier piece
    breakpoint_ranges: tuple[tuple[float, float], ...]  # profile-likelihood interval of each break
    segments: tuple[Segment, ...]
    fitted: np.ndarray = field(compare=False, repr=False)
    n_breaks: int = 0
    criterion: dict[int, float] = field(default_factory=dict)  # BIC value for each number of breaks tried
    rss: dict[int, float] = field(default_factory=dict)  # best residual sum of squares for each number of breaks
    noise: NoiseModel = field(default_factory=lambda: NoiseModel(kind="ar1"))  # AR(1) of the chosen fit's residuals
    confidence: float = 0.95
