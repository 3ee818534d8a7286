"""The shared frame of every segmentation: a search finds the best fit for each number of breaks,
the base class picks the number, sizes the breaks' uncertainty and describes the segments.

Choosing the number of breaks. Bai & Perron's (2003) BIC on the residual sum of squares adds
spurious breaks when the noise is autocorrelated: a warm spell of AR(1) noise looks like a
change of trend. Here the model being compared includes the noise: for each number of breaks
``k`` the best fit's residuals get an AR(1) (bias-corrected lag-1 coefficient, as everywhere in
the project) and the criterion is the exact Gaussian AR(1) likelihood of those residuals,
``-2 log L = n log(2 pi s^2) + n - log(1 - phi^2)`` with ``s^2`` the mean squared innovation
(Prais-Winsten residuals), plus ``(p_k + 2) log n`` where ``p_k`` counts the mean's coefficients
and break dates (Schwarz 1978; break dates counted as parameters as in Yao 1988) and 2 the noise's
phi and sigma. Under AR(1) noise a spurious break barely lowers the innovation variance, so the
criterion stops over-selecting (measured in ``tests/stats/test_segment.py``).

Uncertainty of a break: its profile likelihood, the least residual sum of squares with the
break at each candidate date and every other break re-optimised (both searches deliver this
exactly), in units of the noise's long-run variance, the scale break-date theory needs under
serial correlation (Bai 1994): ``LR(tau) = (RSS(tau) - RSS_min) / (s^2 nu)``,
``nu = (1 + phi) / (1 - phi)``. The interval keeps the dates with ``LR <= c``. For joined
segments the date is a regular parameter (Feder 1975), so ``c`` is the F(1, n_eff - p) quantile
(the profile-likelihood interval of nonlinear least squares with an estimated scale, Bates &
Watts 1988, ch. 6). For a jump the date's likelihood ratio has the non-standard law of Hansen
(2000, Econometrica 68, 575, Table 1): ``c = -2 log(1 - sqrt(confidence))``, 7.35 at 95%.

Segment slopes: ordinary least squares given the breaks, with the AR(1) adjustment used for
straight trends in ``app.stats.trend`` (Santer et al. 2008) generalised to ``p`` coefficients:
``n_eff = n (1 - phi) / (1 + phi)``, standard error times ``sqrt((n - p) / (n_eff - p))``,
``n_eff - p`` degrees of freedom. With no break it reproduces the ``ar1`` trend exactly. Joined
segments also count their break dates as parameters through the Gauss-Newton covariance
(Muggeo 2003), which widens the slopes next to an uncertain date. The choice of the number of
breaks is not propagated; measured coverage is in ``tests/stats/test_segment.py``.
"""

from __future__ import annotations

from abc import ABC, abstractmethod
from dataclasses import dataclass
from typing import ClassVar

import numpy as np
from scipy import stats as sps

from app.errors import InputError, Location
from app.stats.breaks import check_series
from app.stats.noise import estimate_ar1, estimate_noise_rows, variance_inflation
from app.stats.ols import LinearFit, fit_linear
from app.stats.segment.result import Segment, Segmentation

DEFAULT_MAX_BREAKS = 4
DEFAULT_MIN_SIZE_YEARS = 10.0


@dataclass(frozen=True)
class Piece:
    """How to read one segment off the coefficient vector of the full design."""

    start: float
    end: float
    n_points: int
    slope_row: np.ndarray  # slope = slope_row @ coef
    start_row: np.ndarray  # fitted value at ``start``
    end_row: np.ndarray  # fitted value at ``end``


class Search(ABC):
    """What one search method found on one series, and how to describe any of its fits."""

    @staticmethod
    @abstractmethod
    def critical_value(confidence: float, dof: float) -> float:
        """Critical value of one break date's profile likelihood ratio (``dof``: the noise's effective dof)."""

    def date_columns(self, breaks: tuple, coef: np.ndarray) -> np.ndarray | None:
        """Derivatives of the mean with respect to the break dates, when the dates are regular parameters."""
        return None

    @property
    @abstractmethod
    def best(self) -> dict[int, tuple[tuple, float]]:
        """Number of breaks -> (breaks in the search's own coordinates, least residual sum of squares)."""

    @abstractmethod
    def design(self, breaks: tuple) -> np.ndarray: ...

    @abstractmethod
    def n_coefficients(self, n_breaks: int) -> int: ...

    @abstractmethod
    def break_times(self, breaks: tuple) -> tuple[float, ...]: ...

    @abstractmethod
    def pieces(self, breaks: tuple) -> list[Piece]: ...

    @abstractmethod
    def profile(self, breaks: tuple, which: int, ceiling: float = np.inf) -> tuple[np.ndarray, np.ndarray]:
        """Break times and least residual sums of squares as break ``which`` moves, the others re-optimised.

        Dates whose least RSS exceeds ``ceiling`` may be left out (a search may prune them unevaluated).
        """


class Segmenter(ABC):
    """Fit a piecewise-linear mean with up to ``max_breaks`` breaks: ``fit(t, y) -> Segmentation``."""

    form: ClassVar[str]

    def __init__(self, max_breaks: int = DEFAULT_MAX_BREAKS, confidence: float = 0.95):
        if not (isinstance(max_breaks, (int, np.integer)) and max_breaks >= 0):
            raise InputError(f"max_breaks must be a whole number >= 0, got {max_breaks}",
                             location=Location(field="max_breaks"), fix="use 0 to 4")
        if not 0.0 < confidence < 1.0:
            raise InputError(f"confidence must lie strictly between 0 and 1, got {confidence}",
                             location=Location(field="confidence"), fix="give it as a fraction such as 0.95")
        self.max_breaks = int(max_breaks)
        self.confidence = float(confidence)

    @abstractmethod
    def search(self, t: np.ndarray, y: np.ndarray) -> Search: ...

    @property
    def cost_name(self) -> str:
        return "linear"

    def fit(self, t, y) -> Segmentation:
        t, y = check_series(t, y)
        found = self.search(t, y)
        n = t.size
        designs = {k: found.design(breaks) for k, (breaks, _) in found.best.items()}
        fits = {k: fit_linear(design, y) for k, design in designs.items()}
        criterion = {k: ar1_bic(fit.residuals, found.n_coefficients(k), k) for k, fit in fits.items()}
        chosen = min(criterion, key=lambda k: (criterion[k], k))
        breaks = found.best[chosen][0]
        fit = fits[chosen]
        noise = estimate_ar1(fit.residuals, n_regressors=found.n_coefficients(chosen))
        p = fit.coef.size
        nu = float(variance_inflation(noise.phi, noise.phi))
        n_eff = min(n / nu, n)
        long_run_variance = fit.rss / max(n - p, 1) * nu
        critical = found.critical_value(self.confidence, max(n_eff - p - chosen, 1.0))
        # Dates above this are outside every interval; a search need not evaluate them.
        ceiling = found.best[chosen][1] + critical * long_run_variance * (1.0 + 1e-9)
        ranges = []
        for which in range(chosen):
            times, rss = found.profile(breaks, which, ceiling)
            excess = rss - rss.min()
            # A noiseless series (a clean step) fits some segmentation exactly: its range is the best date alone.
            inside = times[excess / long_run_variance <= critical] if long_run_variance > 0 else times[excess <= 0]
            ranges.append((float(inside.min()), float(inside.max())))
        return Segmentation(
            form=self.form,
            cost=self.cost_name,
            breakpoints=found.break_times(breaks),
            breakpoint_ranges=tuple(ranges),
            segments=tuple(_segments(found.pieces(breaks), designs[chosen], fit,
                                     found.date_columns(breaks, fit.coef), n_eff, self.confidence)),
            fitted=fit.fitted,
            n_breaks=chosen,
            criterion=criterion,
            rss={k: float(f.rss) for k, f in fits.items()},
            noise=noise,
            confidence=self.confidence,
        )


def ar1_bic(residuals: np.ndarray, n_coefficients: int, n_breaks: int) -> float:
    """Schwarz criterion of a mean with ``n_coefficients`` coefficients and ``n_breaks`` dates plus AR noise.

    The noise is the better (by the same criterion) of an AR(1) and an AR(2): an AR(1) likelihood under-fits
    noise with a longer memory (AR(2), ARMA(1,1)), and the slow swings it leaves in the innovations then pass
    for breaks (measured: 31% of straight lines with AR(2) (0.5, 0.3) noise got breaks with AR(1) alone).
    """
    e = np.asarray(residuals, dtype=float)
    n = e.size
    phi = estimate_ar1(e, n_regressors=n_coefficients).phi
    innovations = np.concatenate([[np.sqrt(1.0 - phi * phi) * e[0]], e[1:] - phi * e[:-1]])
    s2 = max(float(innovations @ innovations) / n, 1e-300)
    ar1 = n * np.log(2.0 * np.pi * s2) + n - np.log(1.0 - phi * phi) + (n_coefficients + n_breaks + 2) * np.log(n)
    return float(min(ar1, _ar2_bic(e, n_coefficients, n_breaks)))


def _ar2_bic(e: np.ndarray, n_coefficients: int, n_breaks: int) -> float:
    """The same criterion with AR(2) noise, its likelihood conditional on the first two residuals (scaled to n)."""
    n = e.size
    if n < n_coefficients + 8:
        return float("inf")
    fitted = estimate_noise_rows(e[None, :], "ar2", n_coefficients)
    phi, phi2 = float(fitted.phi[0]), float(fitted.phi2[0])
    innovations = e[2:] - phi * e[1:-1] - phi2 * e[:-2]
    s2 = max(float(innovations @ innovations) / innovations.size, 1e-300)
    return float(n * np.log(2.0 * np.pi * s2) + n + (n_coefficients + n_breaks + 3) * np.log(n))


def _segments(pieces: list[Piece], design: np.ndarray, fit: LinearFit, date_columns: np.ndarray | None,
              n_eff: float, confidence: float) -> list[Segment]:
    """Slopes with AR(1)-adjusted intervals; break dates that are regular parameters widen them (Gauss-Newton)."""
    n, p = fit.residuals.size, fit.coef.size
    cov_unscaled = fit.cov_unscaled
    if date_columns is not None and date_columns.size:
        jacobian = np.column_stack([design, date_columns])
        cov_unscaled = np.linalg.pinv(jacobian.T @ jacobian)[:p, :p]
        p += date_columns.shape[1]
    s2 = fit.rss / (n - p) if n > p else float("inf")
    out = []
    for piece in pieces:
        slope = float(piece.slope_row @ fit.coef)
        if not np.any(piece.slope_row):
            half = 0.0  # the level-only model fixes every slope at zero
        elif n_eff > p:
            stderr = np.sqrt(s2 * piece.slope_row @ cov_unscaled @ piece.slope_row * (n - p) / (n_eff - p))
            half = float(sps.t.ppf(0.5 + confidence / 2.0, n_eff - p) * stderr)
        else:
            half = float("inf")
        out.append(Segment(start=piece.start, end=piece.end, slope=slope, slope_ci=(slope - half, slope + half),
                           level_start=float(piece.start_row @ fit.coef), level_end=float(piece.end_row @ fit.coef),
                           n_points=piece.n_points))
    return out
