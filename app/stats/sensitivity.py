"""Cherry-pick diagnostics: does the claim survive moving its dates a little?

An honest short-window claim should not hinge on the exact start and end chosen. The matrix
recomputes the trend for every start within +/- k years of the claimed start and every end
within +/- k years of the claimed end; a claimed window that is the flattest cell of its
neighbourhood was probably picked for being flat. The endpoint check asks the commonest
version of that question directly: does the window start (or end) on a spike year, a point far
off the long-term line, which alone tilts a short trend?
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import ClaimError, InputError, Location
from app.stats.ols import fit_trend
from app.stats.windows import MIN_WINDOW_POINTS, check_one_series, check_times, indices_for_times, slopes_for_bounds

COARSEST_DEFAULT_STEP = 0.25  # years: monthly data on a quarterly grid gives a 25 x 25 matrix for k = 3
MIN_COMPARED_YEARS = 1.0  # a window shorter than a year of data is never compared with the claimed one
TIE_TOLERANCE = 1e-12  # relative: cells that are the same window computed twice must tie, not rank


@dataclass(frozen=True)
class SensitivityMatrix:
    """Trends of the windows around the claimed one. Rows are starts, columns are ends.

    ``slopes`` is NaN where the window has fewer than three points, starts at or after its
    end, reaches more than one sampling interval beyond the data, or is too short to compare with the claimed
    one (``shortest_years``).
    """

    start_times: np.ndarray
    end_times: np.ndarray
    slopes: np.ndarray  # shape (len(start_times), len(end_times))
    step: float  # spacing of the candidate starts and ends, in years
    claimed_start: float
    claimed_end: float
    claimed_slope: float
    claimed_rank_percentile: float  # among the other cells: 0 = the flattest window, 100 = the steepest
    share_lower: float  # share of the other cells whose slope is lower than the claimed window's
    long_term_slope: float
    share_flatter_than_long_term: float  # share of all cells below the long-term slope
    min_slope: float
    max_slope: float
    shortest_years: float = 0.0  # the least span of data (sampling intervals covered) a compared window has


@dataclass(frozen=True)
class EndpointCheck:
    """Whether the window's first or last point sits far off the long-term line (a spike year)."""

    first_time: float
    first_z: float  # (value - long-term line) / noise standard deviation
    first_is_outlier: bool
    last_time: float
    last_z: float
    last_is_outlier: bool
    threshold: float  # |z| above this is an outlier


def window_sensitivity(t: np.ndarray, y: np.ndarray, claimed_start: float, claimed_end: float,
                       k_years: float = 3.0, step: float | None = None,
                       long_term_slope: float | None = None) -> SensitivityMatrix:
    """The trend of every window whose start and end lie within ``k_years`` of the claimed ones.

    Candidate starts are ``claimed_start + j * step`` for every integer j with |j step| <= k,
    and likewise for ends, so the claimed window is the centre cell. A window holds the points
    with start <= t <= end. ``step`` defaults to the sampling interval, but no finer than a
    quarter year: monthly data would otherwise give a 73 x 73 matrix nobody can read.
    ``long_term_slope`` defaults to the OLS slope of the whole series.
    """
    t = check_times(t)
    values = check_one_series(y, t.size)
    sampling = float(np.median(np.diff(t)))
    step = _check_sensitivity_options(k_years, step, sampling)
    claimed_first, claimed_last = indices_for_times(t, claimed_start, claimed_end)
    if claimed_last - claimed_first + 1 < MIN_WINDOW_POINTS:
        raise ClaimError(f"the window {claimed_start:g} to {claimed_end:g} holds fewer than {MIN_WINDOW_POINTS} points",
                         location=Location(field="claim"), fix="Choose a window that covers at least three points")

    half = int(np.floor(k_years / step + 1e-9))
    offsets = step * np.arange(-half, half + 1)
    start_times = claimed_start + offsets
    end_times = claimed_end + offsets
    first, _ = indices_for_times(t, start_times, start_times)
    _, last = indices_for_times(t, end_times, end_times)
    slopes = slopes_for_bounds(t, values, first[:, None], last[None, :])
    shortest = shortest_window_years(claimed_end - claimed_start + sampling)
    covered = end_times[None, :] - start_times[:, None] + sampling
    inside = (start_times[:, None] < end_times[None, :]) & (start_times[:, None] >= t[0] - sampling) \
        & (end_times[None, :] <= t[-1] + sampling) & (covered >= shortest - 1e-9)
    slopes = np.where(inside, slopes, np.nan)

    claimed_slope = float(slopes_for_bounds(t, values, claimed_first, claimed_last))
    others = np.isfinite(slopes)
    others[half, half] = False  # the claimed window itself
    lower, tied = _rank_counts(slopes[others], claimed_slope)
    n_others = int(others.sum())
    finite = slopes[np.isfinite(slopes)]
    trend = fit_trend(t, values).slope if long_term_slope is None else float(long_term_slope)
    return SensitivityMatrix(
        start_times=start_times,
        end_times=end_times,
        slopes=slopes,
        step=step,
        claimed_start=float(claimed_start),
        claimed_end=float(claimed_end),
        claimed_slope=claimed_slope,
        claimed_rank_percentile=100.0 * (lower + 0.5 * tied) / n_others if n_others else float("nan"),
        share_lower=lower / n_others if n_others else float("nan"),
        long_term_slope=float(trend),
        share_flatter_than_long_term=float(np.mean(finite < trend)),
        min_slope=float(finite.min()),
        max_slope=float(finite.max()),
        shortest_years=shortest,
    )


def shortest_window_years(claimed_years: float) -> float:
    """The least span a window compared with the claimed one may cover: half the claimed span, and never under a
    year (a few months' trend swings far beyond any decade's and says nothing about the claim), but never more
    than the claimed window itself. Our requirement, no source."""
    return min(claimed_years, max(0.5 * claimed_years, MIN_COMPARED_YEARS))


def endpoint_outliers(t: np.ndarray, y: np.ndarray, start: float, end: float, reference: np.ndarray,
                      noise_sd: float, threshold: float = 2.0) -> EndpointCheck:
    """z-scores of the window's first and last points against a long-term line.

    ``reference`` is that line's value at every time (for instance ``fit_trend(t, y).fitted``);
    ``noise_sd`` the noise's marginal standard deviation (``NoiseModel.marginal_sd``), not the
    innovation sigma, since a single point varies by the marginal amount. The default
    threshold of 2 flags about 4.6% of ordinary points under Gaussian noise (common practice,
    no source).
    """
    t = check_times(t)
    values = check_one_series(y, t.size)
    line = check_one_series(reference, t.size)
    if not noise_sd > 0 or not np.isfinite(noise_sd):
        raise InputError(f"the noise standard deviation must be positive, got {noise_sd}",
                         location=Location(field="noise_sd"))
    first, last = indices_for_times(t, start, end)
    if last < first:
        raise ClaimError(f"no point lies between {start:g} and {end:g}", location=Location(field="claim"),
                         fix="Choose a window inside the series")
    z = (values[[first, last]] - line[[first, last]]) / noise_sd
    return EndpointCheck(first_time=float(t[first]), first_z=float(z[0]), first_is_outlier=bool(abs(z[0]) > threshold),
                         last_time=float(t[last]), last_z=float(z[1]), last_is_outlier=bool(abs(z[1]) > threshold),
                         threshold=float(threshold))


def _rank_counts(others: np.ndarray, claimed: float) -> tuple[int, int]:
    """Cells strictly lower than the claimed slope, and cells equal to it up to rounding."""
    scale = TIE_TOLERANCE * (float(np.max(np.abs(others), initial=0.0)) + abs(claimed))
    tied = np.abs(others - claimed) <= scale
    return int(np.count_nonzero((others < claimed) & ~tied)), int(np.count_nonzero(tied))


def _check_sensitivity_options(k_years: float, step: float | None, sampling: float) -> float:
    if not k_years > 0:
        raise InputError(f"k_years must be positive, got {k_years}", location=Location(field="k_years"))
    chosen = max(sampling, COARSEST_DEFAULT_STEP) if step is None else float(step)
    if not chosen > 0:
        raise InputError(f"step must be positive, got {step}", location=Location(field="step"))
    if chosen > k_years:
        raise InputError(f"a step of {chosen:g} years leaves no neighbours within {k_years:g} years",
                         location=Location(field="step"), fix="Use a step no larger than k_years")
    return chosen
