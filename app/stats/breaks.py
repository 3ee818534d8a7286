"""Trend-change tests at a claimed date, and the selection-adjusted sup-F.

Two models of a change at ``tb`` on top of a straight line ``a + b t``:

* hinge (joined, "the warming slowed after tb"):  ``+ c (t - tb)_+``
* broken (slope and level change):                ``+ c (t - tb)_+ + d 1[t > tb]``

Errors are AR(1): the series and the design are Prais-Winsten transformed with the lag-1
coefficient estimated (bias-corrected, ``app.stats.noise.estimate_ar1``) from the residuals of
the straight line, the model under the null; the F statistic then compares the transformed
fits with and without the extra terms (feasible GLS, one step).

Direction. A claimed pause, slowdown or reversal is evidence only if the slope *fell*; an
acceleration only if it rose. The directional statistic is the F statistic when the estimated
slope change ``c`` has the claimed sign and 0 otherwise (for the hinge this is the squared t of
``c`` on the claimed side). Its nominal p-value is the one-sided t p-value of ``c`` for the hinge.
For the broken model it is ``P(F >= f) / 2`` when the sign is right and 1 otherwise: under the
Gaussian null, negating the coefficient vector leaves F unchanged and flips the sign of ``c``,
so each sign carries exactly half of every F tail (and ``P(p <= alpha) = alpha`` for alpha < 1/2).

A claimant who picked the date after looking at the data has searched over dates; the nominal
p-value ignores that. ``sup_f_test`` computes the directional statistic at every admissible
date (15 % trimmed at each end, Andrews 1993) and calibrates the claimed date's statistic
against the maximum over dates under a parametric bootstrap of the fitted null (a line plus
AR(1) or ARMA(1,1) noise). The bootstrap repeats the whole procedure on each simulated series,
including the re-estimation of the AR(1) coefficient, and it is vectorised over simulations:
inner products of Prais-Winsten transformed vectors are quadratic in phi,
``<Pa, Pb> = M0 - phi M1 + phi^2 M2`` (lag-0, lag-1 and trimmed lag-0 moments), and every moment
involving a break column ``g(t) 1[t > tb]`` is a reverse cumulative sum, so all dates for all
series cost O(simulations x n) plus small per-date algebra.

With ``noise`` given, phi is fixed at its lag-1 autocorrelation for the data and every simulated
series alike (the audit's case), and ``app.stats.whitened_breaks`` does the same computation with
one transform for all: two passes over each simulated series, the hinge and broken tests sharing
them (``sup_f_tests``), and simulations taken in chunks so memory stays flat on long records.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats as sps

from app.errors import ClaimError, Location, SeriesContentError
from app.stats.noise import (NOISE_KINDS, NoiseModel, bias_corrected_phis, estimate_ar1, estimate_noise,
                             lag_autocorrelations, simulate_noise)
from app.stats.ols import check_trend_inputs, fit_linear, fit_trend, fit_trend_rows
from app.stats.whitened_breaks import (WhitenedBreakStats, directional, null_chunks, prais_winsten_rows,
                                       whitened_null)

MODELS = ("hinge", "broken")
DIRECTIONS = ("decrease", "increase", "any")
MIN_POINTS_PER_SIDE = 3  # a slope on each side needs a few points; fewer makes the change unidentifiable
MIN_SERIES_POINTS = 10
DEFAULT_SEED = 20_261_201
MAX_CANDIDATES = 400  # longer series are searched on an even grid of dates (about every 3 months for 150 years monthly)


@dataclass(frozen=True)
class BreakTest:
    """A trend-change test at one given date."""

    model: str  # "hinge" | "broken"
    break_time: float
    slope_before: float
    slope_after: float
    slope_change: float
    level_change: float  # jump just after break_time; 0 for the hinge
    stat: float  # F statistic of the extra terms against the straight line
    t_change: float  # signed t statistic of the slope change
    p_value_nominal: float  # directional, as if the date had been fixed in advance
    p_value_two_sided: float  # the F test's p-value, whatever the sign
    direction: str  # "decrease" | "increase" | "any"
    noise: NoiseModel  # the AR(1) model whose phi prewhitened the fit
    dof: int  # residual degrees of freedom of the transformed fit


@dataclass(frozen=True)
class SupFTest:
    """The claimed date's directional statistic against the maximum over all admissible dates."""

    model: str
    direction: str
    claimed_break: float
    stat_at_claim: float  # directional F at the claimed date
    sup_stat: float  # largest directional F over the admissible dates
    argmax_time: float
    p_value_adjusted: float  # P(null maximum >= stat_at_claim): the claimant chose the date
    p_value_sup: float  # P(null maximum >= sup_stat): is there a break of that sign anywhere?
    critical_values: dict[str, float]  # quantiles of the null maximum, keys "0.10", "0.05", "0.01"
    null_max: np.ndarray = field(compare=False, repr=False)  # simulated maxima, one per simulation
    n_simulations: int = 0
    trim: float = 0.15
    n_candidates: int = 0  # dates searched (the claimed date is always among them)
    noise: NoiseModel = field(default_factory=lambda: NoiseModel(kind="white"))  # the simulated null noise


def break_test(t, y, break_time: float, model: str = "hinge", direction: str = "decrease",
               noise: NoiseModel | None = None) -> BreakTest:
    """F and directional t test of a trend change at ``break_time`` with AR(1) errors.

    ``noise`` given: its lag-1 autocorrelation (``rho1``, which is phi for an AR(1)) prewhitens;
    otherwise phi is estimated from the straight line's residuals.
    """
    t, y = check_series(t, y)
    _check_options(model, direction)
    _check_break_time(t, break_time)
    noise = noise if noise is not None else estimate_ar1(fit_trend(t, y).residuals)
    phi = float(noise.rho1)
    design = break_design(t, break_time, model)
    full = fit_linear(prais_winsten(design, phi), prais_winsten(y, phi))
    null = fit_linear(prais_winsten(design[:, :2], phi), prais_winsten(y, phi))
    q = design.shape[1] - 2
    f_stat = max((null.rss - full.rss) / q / (full.rss / full.dof), 0.0)
    change = float(full.coef[2])
    t_change = change / float(np.sqrt(full.cov_unscaled[2, 2] * full.rss / full.dof))
    p_two = float(sps.f.sf(f_stat, q, full.dof))
    return BreakTest(
        model=model,
        break_time=float(break_time),
        slope_before=float(full.coef[1]),
        slope_after=float(full.coef[1] + change),
        slope_change=change,
        level_change=float(full.coef[3]) if model == "broken" else 0.0,
        stat=float(f_stat),
        t_change=float(t_change),
        p_value_nominal=_directional_p(model, direction, t_change, f_stat, p_two, full.dof),
        p_value_two_sided=p_two,
        direction=direction,
        noise=noise,
        dof=full.dof,
    )


def sup_f_test(t, y, claimed_break: float, model: str = "hinge", direction: str = "decrease",
               noise_kind: str = "ar1", n_simulations: int = 2000, trim: float = 0.15,
               rng: np.random.Generator | int | None = None, noise: NoiseModel | None = None,
               max_candidates: int = MAX_CANDIDATES) -> SupFTest:
    """Selection-adjusted test of a break at a chosen date (sup-F over dates, parametric bootstrap).

    The null: the straight line plus noise of ``noise_kind`` fitted to its residuals (or ``noise``).
    The statistic on the data and on every simulated series is the same procedure: AR(1)
    prewhitening with phi re-estimated per series ("ar1", "arma11"), phi fixed at 0 ("white") or
    phi fixed at ``noise.rho1`` when ``noise`` is given.
    """
    return sup_f_tests(t, y, claimed_break, (model,), direction, noise_kind, n_simulations, trim, rng, noise,
                       max_candidates)[model]


def sup_f_tests(t, y, claimed_break: float, models=MODELS, direction: str = "decrease",
                noise_kind: str = "ar1", n_simulations: int = 2000, trim: float = 0.15,
                rng: np.random.Generator | int | None = None, noise: NoiseModel | None = None,
                max_candidates: int = MAX_CANDIDATES) -> dict[str, SupFTest]:
    """``sup_f_test`` for several models on the same simulated null series (each model's own maxima).

    Sharing the simulations makes the models' p-values dependent on each other, not any less valid
    one at a time; with one model it draws exactly what ``sup_f_test`` draws.
    """
    t, y = check_series(t, y)
    for model in models:
        _check_options(model, direction)
    _check_break_time(t, claimed_break)
    if noise_kind not in NOISE_KINDS:
        raise ClaimError(f"unknown noise model '{noise_kind}'", location=Location(field="noise_kind"),
                         fix=f"use one of {', '.join(NOISE_KINDS)}")
    if not 0.0 < trim < 0.5:
        raise ClaimError(f"trimming fraction {trim} is outside (0, 0.5)", location=Location(field="trim"),
                         fix="use 0.15, the usual choice (Andrews 1993)")
    if n_simulations < 1:
        raise ClaimError("the number of simulations must be positive", location=Location(field="n_simulations"))
    rng = as_generator(rng)
    if noise is not None:
        null_noise, fixed_phi = noise, float(noise.rho1)
    else:
        null_noise = estimate_noise(fit_trend(t, y).residuals, noise_kind)
        fixed_phi = 0.0 if noise_kind == "white" else None

    candidates = candidate_break_times(t, trim, max_candidates, claimed_break)
    claim_index = int(np.flatnonzero(candidates == claimed_break)[0])
    if fixed_phi is not None:
        observed, null_max = _fixed_phi_stats(t, y, candidates, models, direction, null_noise, fixed_phi,
                                              n_simulations, rng)
    else:
        observed, null_max = _estimated_phi_stats(t, y, candidates, models, direction, null_noise, n_simulations, rng)
    return {model: _summary(model, direction, claimed_break, candidates, claim_index, observed[model],
                            null_max[model], n_simulations, trim, null_noise) for model in models}


def _fixed_phi_stats(t, y, candidates, models, direction, null_noise, phi, n_simulations, rng):
    """Observed statistics and null maxima when every series is prewhitened with the same phi."""
    engine = WhitenedBreakStats(t, candidates, phi)
    # Residuals rather than values: no statistic changes, and no large level has to be subtracted away.
    residuals = fit_trend(t, y).residuals
    observed = {m: directional(*stats, direction)[0]
                for m, stats in engine.both(prais_winsten_rows(residuals[None, :], phi), models).items()}
    maxima = {m: [] for m in models}
    for rows in null_chunks(t.size, n_simulations):
        for m, largest in engine.null_maxima(whitened_null(null_noise, phi, t.size, rows, rng), models,
                                             direction).items():
            maxima[m].append(largest)
    return observed, {m: np.concatenate(parts) for m, parts in maxima.items()}


def _estimated_phi_stats(t, y, candidates, models, direction, null_noise, n_simulations, rng):
    """Observed statistics and null maxima with phi re-estimated on every series (the general engine)."""
    engines = {m: BatchBreakStats.for_trend(t, candidates, m) for m in models}
    observed = {m: e.directional_stats(y[None, :], prewhitening_phis(t, y[None, :], None), direction)[0]
                for m, e in engines.items()}
    maxima = {m: [] for m in models}
    for rows in null_chunks(t.size, n_simulations):
        simulated = simulate_noise(null_noise, t.size, rows, rng)
        phis = prewhitening_phis(t, simulated, None)
        for m, e in engines.items():
            maxima[m].append(e.directional_stats(simulated, phis, direction).max(axis=1))
    return observed, {m: np.concatenate(parts) for m, parts in maxima.items()}


def _summary(model, direction, claimed_break, candidates, claim_index, observed, null_max, n_simulations, trim,
             null_noise) -> SupFTest:
    stat_at_claim = float(observed[claim_index])
    best = int(np.argmax(observed))
    quantiles = np.quantile(null_max, [0.90, 0.95, 0.99])
    return SupFTest(
        model=model,
        direction=direction,
        claimed_break=float(claimed_break),
        stat_at_claim=stat_at_claim,
        sup_stat=float(observed[best]),
        argmax_time=float(candidates[best]),
        p_value_adjusted=monte_carlo_p(null_max, stat_at_claim),
        p_value_sup=monte_carlo_p(null_max, float(observed[best])),
        critical_values={"0.10": float(quantiles[0]), "0.05": float(quantiles[1]), "0.01": float(quantiles[2])},
        null_max=null_max,
        n_simulations=int(n_simulations),
        trim=float(trim),
        n_candidates=int(candidates.size),
        noise=null_noise,
    )


# ------------------------------------------------------------------------------------------ pieces


def break_design(t: np.ndarray, break_time: float, model: str) -> np.ndarray:
    """Columns 1, t, (t - tb)_+ and, for the broken model, 1[t > tb]."""
    hinge = np.maximum(t - break_time, 0.0)
    columns = [np.ones_like(t), t, hinge]
    if model == "broken":
        columns.append((t > break_time).astype(float))
    return np.column_stack(columns)


def prais_winsten(x: np.ndarray, phi: float) -> np.ndarray:
    """Rows z_0 = sqrt(1 - phi^2) x_0, z_t = x_t - phi x_{t-1}: whitens AR(1) errors, keeps all n rows."""
    x = np.asarray(x, dtype=float)
    return prais_winsten_rows(x.reshape(x.shape[0], -1).T, phi).T.reshape(x.shape)


def candidate_break_times(t: np.ndarray, trim: float, max_candidates: int, claimed: float) -> np.ndarray:
    """Observation times after which a break may fall, each side keeping a ``trim`` share of the points.

    A break "at t_k" puts t_k last in the first segment (the hinge is zero there, the step starts
    after it). Too many dates are thinned to an even grid; the claimed date is always added.
    """
    n = t.size
    lo = max(int(np.ceil(trim * n)), MIN_POINTS_PER_SIDE)
    hi = min(n - lo, n - MIN_POINTS_PER_SIDE)
    times = t[lo - 1:hi]
    if times.size > max_candidates:
        times = times[np.unique(np.linspace(0, times.size - 1, max_candidates).round().astype(int))]
    return np.union1d(times, [claimed])


def monte_carlo_p(null: np.ndarray, observed: float) -> float:
    """(1 + #{null >= observed}) / (1 + size): never zero, exact under exchangeability.

    Davison & Hinkley (1997, Bootstrap Methods and their Application, ch. 4).
    """
    return float((1 + np.count_nonzero(null >= observed)) / (1 + null.size))


def as_generator(rng: np.random.Generator | int | None) -> np.random.Generator:
    """A Generator from a seed, a Generator, or None (a fixed default seed, so results repeat)."""
    if isinstance(rng, np.random.Generator):
        return rng
    return np.random.default_rng(DEFAULT_SEED if rng is None else rng)


def prewhitening_phis(t: np.ndarray, series: np.ndarray, fixed_phi: float | None) -> np.ndarray:
    """The AR(1) coefficient each row is prewhitened with: ``estimate_ar1`` of its straight-line residuals."""
    if fixed_phi is not None:
        return np.full(series.shape[0], fixed_phi)
    residuals = fit_trend_rows(t, series).residuals
    return bias_corrected_phis(lag_autocorrelations(residuals, 1), t.size)


def _directional_p(model: str, direction: str, t_change: float, f_stat: float, p_two: float, dof: int) -> float:
    if direction == "any":
        return p_two
    sign = -1.0 if direction == "decrease" else 1.0
    if model == "hinge":
        return float(sps.t.sf(sign * t_change, dof))
    return 0.5 * p_two if sign * t_change > 0 else 1.0


class BatchBreakStats:
    """F statistics of added break columns, for many series and many dates, each series with its own phi.

    The null design has ``k0`` columns (rows of ``null_cols``). At date number ``i`` the model adds
    ``q`` (1 or 2) break columns, each a combination ``sum_f mix[i, k, f] g_f(t) 1[index >= first_after[i]]``
    of the ``families`` g_f. The trend models use null columns (1, t) and families (1, t); the
    classical structural-change settings of Andrews (1993) fit the same frame (a mean shift: null
    (1,), family (1,)), which is how the tests check the simulation against his table.
    Everything is written component by component so each step is one elementwise operation on a
    (series, dates) array.
    """

    def __init__(self, null_cols: np.ndarray, families: np.ndarray, mix: np.ndarray, first_after: np.ndarray):
        self.n = null_cols.shape[1]
        self.k0 = null_cols.shape[0]
        self.q = mix.shape[1]
        if self.q not in (1, 2) or np.any(first_after < 1) or np.any(first_after > self.n - 1):
            raise ValueError("one or two break columns, each starting after the first and before the last point")
        self.null_cols, self.families, self.mix, self.first_after = null_cols, families, mix, first_after
        self.null_null = _cross_moments(null_cols, null_cols)  # (3, k0, k0)
        null_fam = _tail_moments(null_cols, families, first_after)  # (3, k0, F, m)
        self.null_break = np.einsum("uafm,mkf->uakm", null_fam, mix)  # (3, k0, q, m)
        fam_fam = _tail_pair_moments(families, first_after)  # (3, F, F, m)
        self.break_break = np.einsum("mkf,ufgm,mlg->uklm", mix, fam_fam, mix)  # (3, q, q, m)

    @classmethod
    def for_trend(cls, t: np.ndarray, break_times: np.ndarray, model: str) -> "BatchBreakStats":
        """Hinge (t - tb)_+ = (t - mean) 1[t > tb] + (mean - tb) 1[t > tb]; broken adds the step 1[t > tb]."""
        tc = t - t.mean()
        base = np.vstack([np.ones(t.size), tc])
        q = 1 if model == "hinge" else 2
        mix = np.zeros((break_times.size, q, 2))
        mix[:, 0, 0] = t.mean() - break_times
        mix[:, 0, 1] = 1.0
        if q == 2:
            mix[:, 1, 0] = 1.0
        return cls(base, base, mix, np.searchsorted(t, break_times, side="right"))

    def directional_stats(self, series: np.ndarray, phi: np.ndarray, direction: str) -> np.ndarray:
        """(S, m) directional F: F where the first break column's coefficient has the claimed sign, else 0."""
        return directional(*self.f_and_change(series, phi), direction)

    def f_and_change(self, series: np.ndarray, phi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """F statistic and first break coefficient, each (S, m), of every series at every date."""
        p = phi[:, None]  # per-date arrays are (S, m); per-series scalars are (S, 1)

        def at_phi(moments):
            return moments[0] - p * moments[1] + p * p * moments[2]

        k0, q = self.k0, self.q
        gram = np.stack([np.hstack([at_phi(self.null_null[:, i, j]) for j in range(k0)]) for i in range(k0)], axis=1)
        gram_inv = np.linalg.inv(gram)  # (S, k0, k0): one small matrix per series
        inv = [[gram_inv[:, i, j, None] for j in range(k0)] for i in range(k0)]
        series_null = _cross_moments(series, self.null_cols)  # (3, S, k0)
        null_y = [at_phi(series_null[:, :, i:i + 1]) for i in range(k0)]
        yy = at_phi(_self_moments(series)[:, :, None])
        fam_y = _tail_moments(series, self.families, self.first_after)  # (3, S, F, m)
        break_y = [at_phi(np.einsum("usfm,mf->usm", fam_y, self.mix[:, k])) for k in range(q)]
        cross = [[at_phi(self.null_break[:, i, k]) for k in range(q)] for i in range(k0)]
        # Each break column's and the series' least-squares fit on the null columns (Frisch-Waugh-Lovell).
        fit = [[sum(inv[i][j] * cross[j][k] for j in range(k0)) for i in range(k0)] for k in range(q)]
        y_fit = [sum(inv[i][j] * null_y[j] for j in range(k0)) for i in range(k0)]
        rss_null = yy - sum(null_y[i] * y_fit[i] for i in range(k0))
        b = [break_y[k] - sum(fit[k][i] * null_y[i] for i in range(k0)) for k in range(q)]
        d = [[at_phi(self.break_break[:, k, l]) - sum(cross[i][k] * fit[l][i] for i in range(k0))
              for l in range(q)] for k in range(q)]
        if q == 1:
            change = b[0] / d[0][0]
            reduction = change * b[0]
        else:
            det_d = d[0][0] * d[1][1] - d[0][1] * d[1][0]
            change = (d[1][1] * b[0] - d[0][1] * b[1]) / det_d
            second = (d[0][0] * b[1] - d[1][0] * b[0]) / det_d
            reduction = change * b[0] + second * b[1]
        reduction = np.maximum(reduction, 0.0)
        rss_full = np.maximum(rss_null - reduction, 1e-300)
        return (reduction / q) / (rss_full / (self.n - k0 - q)), change


def _cross_moments(rows: np.ndarray, columns: np.ndarray) -> np.ndarray:
    """(3, R, K) lag moments of every row with every column: <Pa, Pb> = M0 - phi M1 + phi^2 M2.

    P is the Prais-Winsten transform; M0 = sum a_t b_t, M1 = sum_{t>=1} (a_t b_{t-1} + a_{t-1} b_t),
    M2 = sum_{t=1}^{n-2} a_t b_t.
    """
    m0 = rows @ columns.T
    m1 = rows[:, 1:] @ columns[:, :-1].T + rows[:, :-1] @ columns[:, 1:].T
    m2 = rows[:, 1:-1] @ columns[:, 1:-1].T
    return np.stack([m0, m1, m2])


def _self_moments(rows: np.ndarray) -> np.ndarray:
    """(3, R) lag moments of every row with itself."""
    m0 = np.einsum("ij,ij->i", rows, rows)
    m1 = 2.0 * np.einsum("ij,ij->i", rows[:, 1:], rows[:, :-1])
    m2 = np.einsum("ij,ij->i", rows[:, 1:-1], rows[:, 1:-1])
    return np.stack([m0, m1, m2])


def _tails(x: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """sum_{i >= j} x[..., i] for each j in ``starts`` (0 <= j <= n) along the last axis."""
    running = np.cumsum(x, axis=-1)
    before = np.where(starts > 0, running[..., np.maximum(starts - 1, 0)], 0.0)
    return running[..., -1:] - before


def _tail_moments(rows: np.ndarray, families: np.ndarray, first: np.ndarray) -> np.ndarray:
    """(3, R, F, m) lag moments of each row with g(t) 1[index >= j], for each family g and start j >= 1.

    In M1, sum_{t>=1} a_t b_{t-1} keeps t >= j + 1 and sum_{t>=1} a_{t-1} b_t keeps t >= j.
    """
    a = rows[:, None, :]
    g = families[None, :, :]
    m0 = _tails(a * g, first)
    m1 = _tails(a[..., 1:] * g[..., :-1], first) + _tails(a[..., :-1] * g[..., 1:], first - 1)
    m2 = m0 - (a[..., -1] * g[..., -1])[..., None]
    return np.stack([m0, m1, m2])


def _tail_pair_moments(families: np.ndarray, first: np.ndarray) -> np.ndarray:
    """(3, F, F, m) lag moments of g 1[index >= j] with h 1[index >= j] for every pair of families."""
    g, h = families[:, None, :], families[None, :, :]
    m0 = _tails(g * h, first)
    m1 = _tails(g[..., 1:] * h[..., :-1] + g[..., :-1] * h[..., 1:], first)
    m2 = m0 - (g[..., -1] * h[..., -1])[..., None]
    return np.stack([m0, m1, m2])


# ------------------------------------------------------------------------------------------ checks


def check_series(t, y, min_points: int = MIN_SERIES_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """Float arrays of a usable, time-ordered series, or a SeriesContentError saying what to fix."""
    t, y = check_trend_inputs(t, y, min_points)
    if y.ndim != 1:
        raise SeriesContentError("the values must form one series", location=Location(field="series"),
                                 fix="pass a one-dimensional array of values")
    if np.any(np.diff(t) <= 0):
        raise SeriesContentError("times are not strictly increasing", location=Location(field="series.time"),
                                 fix="sort the series and drop duplicate times")
    return t, y


def _check_options(model: str, direction: str) -> None:
    if model not in MODELS:
        raise ClaimError(f"unknown break model '{model}'", location=Location(field="model"),
                         fix=f"use one of {', '.join(MODELS)}")
    if direction not in DIRECTIONS:
        raise ClaimError(f"unknown direction '{direction}'", location=Location(field="direction"),
                         fix=f"use one of {', '.join(DIRECTIONS)}")


def _check_break_time(t: np.ndarray, break_time: float) -> None:
    before = int(np.count_nonzero(t <= break_time))
    after = t.size - before
    if not np.isfinite(break_time) or min(before, after) < MIN_POINTS_PER_SIDE:
        raise ClaimError(
            f"the break at {break_time} leaves {before} points before and {after} after",
            location=Location(field="break_time"),
            fix=f"choose a date with at least {MIN_POINTS_PER_SIDE} points on each side",
        )
