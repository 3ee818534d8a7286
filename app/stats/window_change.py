"""Did the trend change during the claimed window? A test bounded by both of the window's ends.

The model is a continuous line with knots at the window's two boundaries::

    y = a + b t + c1 (t - k_start)_+ + c2 (t - k_end)_+ + noise

so the window's slope is ``b + c1`` and the stretch after the window has its own slope ``b + c1 + c2``:
a pause that really happened and then ended is compared with the trend before it, and the years
after it cannot mask it (a hinge running from the claimed start to the end of the record would
average the pause with the faster rise that followed). When fewer than ``MIN_POINTS_AFTER`` points
follow the window, the second knot is dropped (a hinge from the window's start). The statistic is
the directional t of ``c1``: positive when the slope moved the way the claim says.

Scale. The t uses the OLS variance of ``c1`` multiplied by the noise's variance inflation (the
long-run over the marginal variance, ``NoiseModel.variance_inflation``), both re-estimated on every
series, observed and simulated alike, from the residuals of the claimed window's own model. The
statistic is then close to pivotal: its null distribution barely depends on the noise parameters,
so a bootstrap from estimated parameters is not thrown off by their estimation error.

Selection. The claimant chose both ends of the window after looking at the data. The adjusted
p-value compares the claimed window's statistic with the null distribution of the *largest*
statistic over every admissible window: every start leaving as many points before it as the
claimed one does (or 15%, Andrews 1993, whichever is fewer), every length within a factor
``LENGTH_FACTOR`` of the claimed length. The null is a straight line plus noise from the fitted
model (a parametric bootstrap, Davison & Hinkley 1997, ch. 4); the line itself cancels from every
statistic, so only the noise is simulated.

Level shifts. A step with an unchanged slope, ``y = a + b t + d 1[t >= k]`` at the best date
anywhere in the record (down to ``MIN_POINTS_PER_SIDE`` points from either end, so a step in the
last few years is seen), competes with the window's change of slope: the share of variance each
explains is compared, and the step's own selection-adjusted p-value (its largest t over all dates)
comes from the same simulations. A jump at the window's start, with the slope change beside it, is
reported as well (``p_value_jump_nominal``): a change of slope that survives a jump is not a step.

Every inner product a date needs is a reverse cumulative sum of the series (and of the series
times t), so all windows of all simulated series cost O(simulations x (n + windows)).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from app.stats.noise import NoiseModel, estimate_noise_rows, simulate_noise

MIN_POINTS_PER_SIDE = 3  # a slope on each side needs a few points; fewer makes a change unidentifiable
MIN_POINTS_AFTER = 3  # fewer points after the window: no after-segment, the window runs to the end
MIN_START_SHARE = 0.15  # Andrews (1993) trimming, relaxed to the claimed window's own start
LENGTH_FACTOR = 1.5  # admissible lengths: claimed / 1.5 .. claimed x 1.5
MAX_WINDOWS = 1500  # longer searches use an even grid of starts and lengths (the claimed window always kept)
CHUNK_VALUES = 400_000  # simulated values (rows x windows) held at once
DIRECTIONS = ("decrease", "increase")


@dataclass(frozen=True)
class StepCompetitor:
    """The best single step with an unchanged slope, as an alternative explanation."""

    time: float  # the step falls just before this observation
    size: float  # level change, in the series' units
    rss_reduction: float  # variance it explains beyond the straight line
    p_value_adjusted: float  # its largest |t| over all dates against the null maxima
    explains_as_well: bool  # it explains at least as much as any admissible window's change of slope


@dataclass(frozen=True)
class WindowChangeTest:
    """The claimed window against the trend before it, adjusted for the choice of both ends."""

    direction: str  # "decrease" | "increase": the slope change that supports the claim
    first_time: float  # the window's first and last observation times
    last_time: float
    model: str  # "three_segment" | "hinge_to_end"
    slope_before: float
    slope_window: float
    slope_after: float  # NaN for "hinge_to_end"
    slope_change: float  # window slope minus the slope before
    statistic: float  # directional t of the slope change (positive: moved as claimed)
    p_value_nominal: float  # as if the window had been fixed in advance (same simulations)
    p_value_adjusted: float  # against the largest statistic over admissible windows
    jump_slope_change: float  # the slope change with a jump allowed at the window's start
    jump_size: float
    p_value_jump_nominal: float
    rss_reduction: float  # variance the window's change of slope explains beyond the straight line
    step: StepCompetitor
    n_windows: int
    length_range: tuple[int, int]  # admissible window lengths, in points
    n_simulations: int
    noise: NoiseModel  # the simulated null noise
    null_max: np.ndarray = field(compare=False, repr=False)

    @property
    def p_value_adjusted_se(self) -> float:
        return monte_carlo_se(self.p_value_adjusted, self.n_simulations)


class _Design:
    """Reverse sums over the centred times, and the knot positions between observations."""

    def __init__(self, t: np.ndarray):
        self.n = t.size
        self.tc = t - t.mean()
        # A knot between observations k-1 and k: the hinge (t - knot)_+ is zero up to k-1.
        self.knot = np.concatenate([[self.tc[0] - 1.0], 0.5 * (self.tc[1:] + self.tc[:-1])])
        ones = np.ones(self.n)
        self.a0, self.a1, self.a2 = (_reverse(v) for v in (ones, self.tc, self.tc * self.tc))
        self.sxx = float(self.tc @ self.tc)

    def hinge_null(self, k: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """<h_k, 1> and <h_k, t> for the hinge at knot k."""
        kn = self.knot[k]
        return self.a1[k] - kn * self.a0[k], self.a2[k] - kn * self.a1[k]

    def hinge_gram(self, k: np.ndarray, m: np.ndarray) -> np.ndarray:
        """<h~_k, h~_m>: hinges with the straight line partialled out (k, m broadcast)."""
        late = np.maximum(k, m)
        kk, km = self.knot[k], self.knot[m]
        raw = self.a2[late] - (kk + km) * self.a1[late] + kk * km * self.a0[late]
        return raw - self._null_part(self.hinge_null(k), self.hinge_null(m))

    def step_gram(self, k: np.ndarray) -> np.ndarray:
        step = (self.a0[k], self.a1[k])
        return self.a0[k] - self._null_part(step, step)

    def step_hinge(self, k: np.ndarray, m: np.ndarray) -> np.ndarray:
        """<u~_k, h~_m> for the step starting at k and the hinge at knot m."""
        late = np.maximum(k, m)
        raw = self.a1[late] - self.knot[m] * self.a0[late]
        return raw - self._null_part((self.a0[k], self.a1[k]), self.hinge_null(m))

    def _null_part(self, a, b):
        # The line's columns 1 and t are orthogonal once t is centred.
        return a[0] * b[0] / self.n + a[1] * b[1] / self.sxx


def _reverse(v: np.ndarray) -> np.ndarray:
    """sum_{i >= k} v_i for k = 0..n, the last entry 0."""
    out = np.zeros(v.shape[:-1] + (v.shape[-1] + 1,))
    out[..., :-1] = np.cumsum(v[..., ::-1], axis=-1)[..., ::-1]
    return out


@dataclass(frozen=True)
class _Windows:
    """Admissible windows as (first index, first index after) with their fixed design algebra."""

    first: np.ndarray
    after: np.ndarray
    coef_first: np.ndarray  # c1 = coef_first * <y, h_first> + coef_after * <y, h_after>
    coef_after: np.ndarray
    c1_variance: np.ndarray  # (G^-1)_11 in units of the noise variance
    second_after: np.ndarray  # (G^-1)_22
    claimed: int  # position of the claimed window


def _window_algebra(design: _Design, first: np.ndarray, after: np.ndarray) -> tuple[np.ndarray, ...]:
    n = design.n
    three = (n - after) >= MIN_POINTS_AFTER
    safe_after = np.where(three, after, first)
    g11 = design.hinge_gram(first, first)
    g12 = np.where(three, design.hinge_gram(first, safe_after), 0.0)
    g22 = np.where(three, design.hinge_gram(safe_after, safe_after), 1.0)
    det = g11 * g22 - g12 * g12
    # c1 = (G^-1)_11 <y, h_first> + (G^-1)_12 <y, h_after>, and its variance is (G^-1)_11 sigma^2.
    coef_first = np.where(three, g22 / det, 1.0 / g11)
    coef_after = np.where(three, -g12 / det, 0.0)
    second_after = np.where(three, g11 / det, 0.0)  # (G^-1)_22, for c2 and the variance each window explains
    return coef_first, coef_after, second_after


def admissible_windows(design: _Design, claimed_first: int, claimed_after: int,
                       max_windows: int = MAX_WINDOWS) -> _Windows:
    n = design.n
    length = claimed_after - claimed_first
    lo_len = max(MIN_POINTS_PER_SIDE, int(np.floor(length / LENGTH_FACTOR)))
    hi_len = max(lo_len, int(np.ceil(length * LENGTH_FACTOR)))
    lo_start = max(MIN_POINTS_PER_SIDE, min(claimed_first, int(np.ceil(MIN_START_SHARE * n))))
    lengths = np.arange(lo_len, hi_len + 1)
    starts = np.arange(lo_start, n - lo_len + 1)
    total = lengths.size * starts.size
    if total > max_windows:
        thin = int(np.ceil(np.sqrt(total / max_windows)))
        lengths, starts = lengths[::thin], starts[::thin]
    first, size = (a.ravel() for a in np.meshgrid(starts, lengths, indexing="ij"))
    after = np.minimum(first + size, n)
    keep = (first + size <= n) & ~((first == claimed_first) & (after == claimed_after))
    first = np.concatenate([[claimed_first], first[keep]])
    after = np.concatenate([[claimed_after], after[keep]])
    coef_first, coef_after, second_after = _window_algebra(design, first, after)
    return _Windows(first, after, coef_first, coef_after, coef_first, second_after, 0)


def _line_residuals(design: _Design, rows: np.ndarray) -> np.ndarray:
    centred = rows - rows.mean(axis=1, keepdims=True)
    return centred - np.outer(centred @ design.tc / design.sxx, design.tc)


def _hinge_products(design: _Design, resid: np.ndarray) -> np.ndarray:
    """<y~, h_k> for every knot k of every row: (S, n + 1)."""
    return _reverse(resid * design.tc) - design.knot_padded * _reverse(resid)


class _Engine:
    """Statistics of the claimed window, of every admissible window and of every step, for many rows."""

    def __init__(self, t: np.ndarray, claimed_first: int, claimed_after: int, noise_kind: str,
                 max_windows: int = MAX_WINDOWS):
        self.design = d = _Design(t)
        d.knot_padded = np.concatenate([d.knot, [d.tc[-1] + 1.0]])
        self.noise_kind = noise_kind
        self.windows = admissible_windows(d, claimed_first, claimed_after, max_windows)
        self.first, self.after = claimed_first, claimed_after
        self.three = (d.n - claimed_after) >= MIN_POINTS_AFTER
        self.steps = np.arange(MIN_POINTS_PER_SIDE, d.n - MIN_POINTS_PER_SIDE + 1)
        self.step_norm = d.step_gram(self.steps)
        # Partialled columns of the claimed model, for its residuals (and the noise estimate on them).
        cols = [self._hinge_column(claimed_first)]
        if self.three:
            cols.append(self._hinge_column(claimed_after))
        self.claimed_cols = np.vstack(cols)
        self.claimed_gram_inv = np.linalg.inv(self.claimed_cols @ self.claimed_cols.T)
        # Jump at the window's start beside the two hinges: [u_first, h_first, (h_after)].
        jump_cols = np.vstack([self._step_column(claimed_first), self.claimed_cols])
        self.jump_cols = jump_cols
        self.jump_gram_inv = np.linalg.inv(jump_cols @ jump_cols.T)
        self.n_regressors = 2 + self.claimed_cols.shape[0]

    def _hinge_column(self, k: int) -> np.ndarray:
        d = self.design
        h = np.maximum(d.tc - d.knot[k], 0.0)
        return _line_residuals(d, h[None, :])[0]

    def _step_column(self, k: int) -> np.ndarray:
        d = self.design
        u = (np.arange(d.n) >= k).astype(float)
        return _line_residuals(d, u[None, :])[0]

    def statistics(self, rows: np.ndarray, sign: float) -> dict[str, np.ndarray]:
        """Per row: the claimed window's statistic, the largest over windows, the largest step |t|, and more."""
        d, w = self.design, self.windows
        resid = _line_residuals(d, rows)
        hinge = _hinge_products(d, resid)
        p_first, p_after = hinge[:, w.first], hinge[:, w.after]
        c1 = w.coef_first * p_first + w.coef_after * p_after
        scale = np.sqrt(self._long_run_variance(resid, p_first, p_after, c1))[:, None]
        z = sign * c1 / (scale * np.sqrt(w.c1_variance))
        level = _reverse(resid)[:, self.steps]
        step_t = np.abs(level) / (scale * np.sqrt(self.step_norm))
        coef = (resid @ self.claimed_cols.T) @ self.claimed_gram_inv
        jump_coef = (resid @ self.jump_cols.T) @ self.jump_gram_inv
        jump_z = sign * jump_coef[:, 1] / (scale[:, 0] * np.sqrt(self.jump_gram_inv[1, 1]))
        return {"claimed": z[:, w.claimed], "max": z.max(axis=1), "step_max": step_t.max(axis=1),
                "jump": jump_z, "coef": coef, "jump_coef": jump_coef, "hinge": hinge, "level": level}

    def _long_run_variance(self, resid, p_first, p_after, c1) -> np.ndarray:
        """Each row's noise, re-estimated on the residuals of its own best-fitting admissible window.

        The same rule for the data and every simulated series, so the statistic stays exchangeable (the
        claimed window's residuals would not do: the claimant picked that window, and removing it makes
        the data look quieter than any simulated series). Fitting the best window keeps a real change
        out of the noise estimate, where straight-line residuals would swallow it and most of the power.
        """
        d, w = self.design, self.windows
        c2 = w.coef_after * p_first + w.second_after * p_after
        best = np.argmax(c1 * p_first + c2 * p_after, axis=1)
        rows = np.arange(resid.shape[0])
        first, after = w.first[best], w.after[best]
        columns = [np.maximum(d.tc[None, :] - d.knot[first][:, None], 0.0)]
        three = (d.n - after) >= MIN_POINTS_AFTER
        columns.append(np.where(three[:, None], np.maximum(d.tc[None, :] - d.knot_padded[after][:, None], 0.0),
                                0.0))
        model_resid = resid - c1[rows, best][:, None] * _line_residuals(d, columns[0]) \
            - c2[rows, best][:, None] * _line_residuals(d, columns[1])
        fitted = estimate_noise_rows(model_resid, self.noise_kind, 4)
        # Floored at 1: strongly negative correlation must not narrow the scale below the white-noise one.
        return np.maximum(fitted.marginal_variance * np.maximum(fitted.variance_inflation, 1.0), 1e-300)


def window_change_test(t: np.ndarray, y: np.ndarray, claimed_first: int, claimed_after: int, direction: str,
                       noise: NoiseModel, n_simulations: int, rng: np.random.Generator,
                       max_windows: int = MAX_WINDOWS) -> WindowChangeTest:
    """Test the window ``[claimed_first, claimed_after)`` (indices into ``t``) for a change of slope.

    ``noise`` is the fitted model the null is simulated from; its kind also names the family whose
    variance inflation every series re-estimates. ``direction`` is the slope change that supports
    the claim.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(y, dtype=float)
    _check(t, claimed_first, claimed_after, direction, n_simulations)
    sign = 1.0 if direction == "increase" else -1.0
    engine = _Engine(t, claimed_first, claimed_after, noise.kind, max_windows)
    observed = engine.statistics(y[None, :], sign)
    null = {"claimed": [], "max": [], "step_max": [], "jump": []}
    per_chunk = max(1, CHUNK_VALUES // max(engine.windows.first.size + t.size, 1))
    for done in range(0, n_simulations, per_chunk):
        rows = simulate_noise(noise, t.size, min(per_chunk, n_simulations - done), rng)
        stats = engine.statistics(rows, sign)
        for key in null:
            null[key].append(stats[key])
    null = {key: np.concatenate(parts) for key, parts in null.items()}
    return _summarise(engine, t, y, observed, null, direction, n_simulations, noise)


def _summarise(engine: _Engine, t, y, observed, null, direction, n_simulations, noise) -> WindowChangeTest:
    d, w = engine.design, engine.windows
    coef = observed["coef"][0]
    # The claimed model's slopes: the line's slope is shifted by the hinge columns' projection on t.
    design = np.column_stack([np.ones(d.n), d.tc] + [np.maximum(d.tc - d.knot[k], 0.0)
                                                     for k in ([engine.first, engine.after] if engine.three
                                                               else [engine.first])])
    beta = np.linalg.lstsq(design, y, rcond=None)[0]
    slope_before = float(beta[1])
    slope_window = float(beta[1] + beta[2])
    slope_after = float(beta[1] + beta[2] + beta[3]) if engine.three else float("nan")
    jump_design = np.column_stack([design, (np.arange(d.n) >= engine.first).astype(float)])
    jump_beta = np.linalg.lstsq(jump_design, y, rcond=None)[0]
    rss_window = float(coef @ (engine.claimed_cols @ engine.claimed_cols.T) @ coef)
    # What the best admissible window's change of slope explains: a step must beat every one of them, or a
    # curving record (a kink elsewhere) would pass for a jump next to the claimed window.
    p_first, p_after = observed["hinge"][0, w.first], observed["hinge"][0, w.after]
    c1 = w.coef_first * p_first + w.coef_after * p_after
    c2 = w.coef_after * p_first + w.second_after * p_after
    rss_best_window = float(np.max(c1 * p_first + c2 * p_after))
    level = observed["level"][0]
    step_gain = level * level / engine.step_norm
    best = int(np.argmax(step_gain))
    step_index = int(engine.steps[best])
    step = StepCompetitor(
        time=float(t[step_index]), size=float(level[best] / engine.step_norm[best]),
        rss_reduction=float(step_gain[best]),
        p_value_adjusted=_mc_p(null["step_max"], float(observed["step_max"][0])),
        explains_as_well=bool(step_gain[best] >= max(rss_window, rss_best_window)))
    return WindowChangeTest(
        direction=direction, first_time=float(t[engine.first]), last_time=float(t[engine.after - 1]),
        model="three_segment" if engine.three else "hinge_to_end",
        slope_before=slope_before, slope_window=slope_window, slope_after=slope_after,
        slope_change=slope_window - slope_before, statistic=float(observed["claimed"][0]),
        p_value_nominal=_mc_p(null["claimed"], float(observed["claimed"][0])),
        p_value_adjusted=_mc_p(null["max"], float(observed["claimed"][0])),
        jump_slope_change=float(jump_beta[2]), jump_size=float(jump_beta[-1]),
        p_value_jump_nominal=_mc_p(null["jump"], float(observed["jump"][0])),
        rss_reduction=rss_window, step=step, n_windows=int(w.first.size),
        length_range=(int((w.after - w.first).min()), int((w.after - w.first).max())),
        n_simulations=int(n_simulations), noise=noise, null_max=null["max"])


def monte_carlo_se(p: float, n_simulations: int) -> float:
    """Binomial standard error of a simulated p-value (common practice, no source)."""
    return float(np.sqrt(max(p * (1.0 - p), 0.0) / max(n_simulations, 1)))


def _mc_p(null: np.ndarray, observed: float) -> float:
    """(1 + #{null >= observed}) / (1 + size) (Davison & Hinkley 1997, ch. 4): never zero."""
    return float((1 + np.count_nonzero(null >= observed)) / (1 + null.size))


def window_indices(t: np.ndarray, in_window: np.ndarray) -> tuple[int, int]:
    """First index of the window and first index after it, from a boolean mask over ``t``."""
    idx = np.flatnonzero(in_window)
    return int(idx[0]), int(idx[-1]) + 1


def _check(t, first, after, direction, n_simulations) -> None:
    if direction not in DIRECTIONS:
        raise ValueError(f"direction must be one of {DIRECTIONS}")
    if first < MIN_POINTS_PER_SIDE or after - first < MIN_POINTS_PER_SIDE or after > t.size:
        raise ValueError("the window needs at least three points before it and three inside it")
    if n_simulations < 1:
        raise ValueError("the number of simulations must be positive")
