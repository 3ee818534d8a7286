"""Invented records for the calibration study: noise models, shapes of the mean, and the claimant's choice.

One definition serves the study (``python -m bench.calibration``) and the reduced tests that CI runs
(``tests/audit/test_calibration_cells.py``, ``tests/audit/test_consistency.py``).

A cell is one experiment: a mean curve, a noise model scaled to a marginal standard deviation, and a
claimant strategy that turns each simulated record into a claim. Every simulated record of a cell is
drawn in one vectorised call; claims are chosen for all records at once.

Units. Annual records rise 0.015 units per year with marginal noise sd 0.1 (a global annual temperature
record in degrees C, from memory). Monthly records rise 0.018 units per year with marginal noise sd 0.15,
the size of global monthly temperature anomalies since 1979 (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np
from scipy.signal import lfilter

from app.audit import Claim
from app.stats.windows import window_slopes

ANNUAL_SLOPE, ANNUAL_SD = 0.015, 0.1
MONTHLY_SLOPE, MONTHLY_SD = 0.018, 0.15
EARLIEST_START = 0.15  # a claimant's window leaves at least this share of the record before it
BURN_IN = 1000  # steps discarded so every model starts from its stationary distribution (0.9**1000 ~ 1e-46)
IMPULSE_TERMS = 4000  # psi weights summed for the marginal variance


@dataclass(frozen=True)
class NoiseSpec:
    """ARMA(p, q) noise x_t = sum ar_i x_{t-i} + e_t + sum ma_j e_{t-j}, scaled to a marginal sd.

    ``innovations`` "normal" or "t3": Student's t with 3 degrees of freedom divided by sqrt(3), its
    standard deviation (the variance of t with nu degrees of freedom is nu / (nu - 2); common practice,
    no source), so heavy tails come at the same variance.
    """

    label: str
    ar: tuple[float, ...] = ()
    ma: tuple[float, ...] = ()
    innovations: str = "normal"

    @property
    def _filter(self) -> tuple[list[float], list[float]]:
        return [1.0, *self.ma], [1.0, *(-a for a in self.ar)]

    def unit_innovation_sd(self) -> float:
        """Marginal sd for unit innovations: sqrt(sum of squared psi weights) of the MA(infinity) form."""
        impulse = np.zeros(IMPULSE_TERMS)
        impulse[0] = 1.0
        psi = lfilter(*self._filter, impulse)
        return float(np.sqrt(np.sum(psi * psi)))

    def simulate(self, n: int, count: int, sd: float, rng: np.random.Generator) -> np.ndarray:
        """``count`` stationary records of length ``n`` with marginal sd ``sd``, shape (count, n)."""
        shape = (count, n + BURN_IN)
        if self.innovations == "t3":
            e = rng.standard_t(3, size=shape) / math.sqrt(3.0)
        else:
            e = rng.standard_normal(shape)
        x = lfilter(*self._filter, e, axis=1)[:, BURN_IN:]
        return x * (sd / self.unit_innovation_sd())


AR1_05 = NoiseSpec("AR(1) 0.5", ar=(0.5,))


# --- claimant strategies: each maps the records (count, n) to one Claim per record -----------------------

def _earliest(n: int) -> int:
    return int(math.ceil(EARLIEST_START * n))


@dataclass(frozen=True)
class ExtremeWindow:
    """The flattest ("min") or steepest ("max") window of ``years`` years starting after the first 15%."""

    years: float
    pick: str
    kind: str

    @property
    def label(self) -> str:
        word = "flattest" if self.pick == "min" else "steepest"
        return f"{word} {self.years:g} y as {self.kind}"

    def claims(self, t: np.ndarray, records: np.ndarray, ppy: int) -> list[Claim]:
        length = int(round(self.years * ppy))
        slopes = window_slopes(t, records, length)
        first = _earliest(t.size)
        choose = np.argmin if self.pick == "min" else np.argmax
        starts = first + choose(slopes[:, first:], axis=1)
        return [Claim(float(t[i]), float(t[i + length - 1]), self.kind) for i in starts]


@dataclass(frozen=True)
class SpikeStart:
    """A pause claimed from the point with the largest positive residual (a spike year) to ``years`` later."""

    years: float = 10.0
    kind: str = "pause"

    @property
    def label(self) -> str:
        return f"spike start + {self.years:g} y as {self.kind}"

    def claims(self, t: np.ndarray, records: np.ndarray, ppy: int) -> list[Claim]:
        length = int(round(self.years * ppy))
        design = np.column_stack([np.ones_like(t), t - t.mean()])
        coefficients, *_ = np.linalg.lstsq(design, records.T, rcond=None)
        residuals = records - (design @ coefficients).T
        first, last = _earliest(t.size), t.size - 1 - length
        starts = first + np.argmax(residuals[:, first:last + 1], axis=1)
        return [Claim(float(t[i]), float(t[i + length]), self.kind) for i in starts]


@dataclass(frozen=True)
class FixedClaim:
    """The same claim for every record: from the point at ``start_index`` to the one at ``end_index``
    (default: the last), or between the times ``start`` and ``end`` as a user would type them."""

    kind: str
    start_index: int | None = None
    end_index: int = -1
    start: float | None = None
    end: float | None = None

    @property
    def label(self) -> str:
        return f"claimed {self.kind}"

    def claims(self, t: np.ndarray, records: np.ndarray, ppy: int) -> list[Claim]:
        start = float(t[self.start_index]) if self.start is None else self.start
        end = float(t[self.end_index]) if self.end is None else self.end
        return [Claim(start, end, self.kind)] * records.shape[0]


# --- cells ----------------------------------------------------------------------------------------------

@dataclass(frozen=True)
class Cell:
    name: str
    group: str  # "null" | "power"
    n: int
    sampling: str  # "annual" | "monthly"
    noise: NoiseSpec
    sd: float
    mean: Callable[[np.ndarray], np.ndarray]
    strategy: object  # ExtremeWindow | SpikeStart | FixedClaim
    true_slope: float | None = None  # the constant trend of a null cell: the long-term range should cover it
    support_limit: float | None = None  # our requirement on the share of trend_change_supported, if any
    first_year: float = 1880.0

    @property
    def points_per_year(self) -> int:
        return 1 if self.sampling == "annual" else 12

    def times(self) -> np.ndarray:
        return self.first_year + (np.arange(self.n) + 0.5) / self.points_per_year

    def draw(self, count: int, seed: int) -> tuple[np.ndarray, np.ndarray, list[Claim]]:
        """``count`` records of this cell and the claimant's claim for each, from ``seed``."""
        t = self.times()
        records = self.mean(t)[None, :] + self.noise.simulate(self.n, count, self.sd, np.random.default_rng(seed))
        return t, records, self.strategy.claims(t, records, self.points_per_year)


def straight(slope: float) -> Callable[[np.ndarray], np.ndarray]:
    return lambda t: slope * (t - t[0])


def kinked(slope: float, factor: float, change_index: int) -> Callable[[np.ndarray], np.ndarray]:
    """``slope`` until the point at ``change_index``, ``factor * slope`` after it, joined there."""
    return lambda t: slope * (t - t[0]) + (factor - 1.0) * slope * np.maximum(t - t[change_index], 0.0)


NULL_NOISES = (
    (AR1_05, "annual", 140),
    (NoiseSpec("AR(1) 0.8", ar=(0.8,)), "monthly", 480),
    (NoiseSpec("ARMA(1,1) 0.9/-0.5", ar=(0.9,), ma=(-0.5,)), "monthly", 480),
    (NoiseSpec("ARMA(1,1) 0.9/-0.5", ar=(0.9,), ma=(-0.5,)), "monthly", 1200),
    (NoiseSpec("AR(2) 0.5/0.3", ar=(0.5, 0.3)), "annual", 140),
    (NoiseSpec("AR(1) 0.5 t(3)", ar=(0.5,), innovations="t3"), "annual", 140),
)
NULL_STRATEGIES = (
    ExtremeWindow(10, "min", "pause"),
    ExtremeWindow(15, "min", "pause"),
    ExtremeWindow(10, "max", "acceleration"),
    ExtremeWindow(15, "max", "acceleration"),
    SpikeStart(10, "pause"),
)
FALSE_SUPPORT_LIMIT = 0.07  # our requirement: trend_change_supported on a constant trend
COVERAGE_RANGE = (0.91, 0.97)  # our requirement: the long-term 95% range covers the true slope
SPELL_BELOW_5_LIMIT = 0.10  # our requirement: records whose spell probability is below 5%


def null_cells() -> list[Cell]:
    cells = []
    for noise, sampling, n in NULL_NOISES:
        slope, sd = (ANNUAL_SLOPE, ANNUAL_SD) if sampling == "annual" else (MONTHLY_SLOPE, MONTHLY_SD)
        for strategy in NULL_STRATEGIES:
            cells.append(Cell(f"{noise.label} {sampling} n={n}; {strategy.label}", "null", n, sampling, noise, sd,
                              straight(slope), strategy, true_slope=slope, support_limit=FALSE_SUPPORT_LIMIT))
    return cells


KINKS = ((0.5, "half", "slowdown"), (0.0, "zero", "pause"), (-1.0, "reversal", "reversal"))
KINK_SHARES = (0.2, 0.3, 0.4)
KINK_SDS = (0.05, 0.1, 0.2)
POWER_N = 140


def kink_cell(factor: float, word: str, kind: str, share: float, sd: float, claimed: str | None = None,
              support_limit: float | None = None) -> Cell:
    index = POWER_N - int(round(share * POWER_N))
    claimed = claimed or kind
    return Cell(f"slope to {word} for last {share:.0%}, sd {sd:g}; claimed {claimed}", "power", POWER_N, "annual",
                AR1_05, sd, kinked(ANNUAL_SLOPE, factor, index), FixedClaim(claimed, start_index=index),
                support_limit=support_limit)


def _pause_that_ended(t: np.ndarray) -> np.ndarray:
    """0.01 per year to 1945, flat 1945-1975, then 0.018 per year: one joined line."""
    return 0.01 * (np.minimum(t, 1945.0) - 1880.0) + 0.018 * np.maximum(t - 1975.0, 0.0)


def _quadratic(t: np.ndarray) -> np.ndarray:
    """Slope rising steadily from 0.005 to 0.025 per year over the record (0.015 on average)."""
    u = t - t[0]
    return 0.005 * u + (0.020 / (2.0 * u[-1])) * u * u


def _step(at_index: int, size: float, slope: float = 0.0) -> Callable[[np.ndarray], np.ndarray]:
    return lambda t: slope * (t - t[0]) + size * (t >= t[at_index])


NILE_STEP_INDEX = 28  # the Nile's step falls 28 years into its 100 (a change near 1898 in 1871-1970; from memory)
JUMP_INDEX = int(0.7 * POWER_N)
OVERCLAIM_INDEX = POWER_N - int(round(0.2 * POWER_N))


def power_cells() -> list[Cell]:
    cells = [kink_cell(factor, word, kind, share, sd)
             for factor, word, kind in KINKS for share in KINK_SHARES for sd in KINK_SDS]
    cells += [
        Cell("pause that ended: 0.01/y to 1945, flat to 1975, 0.018/y after; claimed pause 1945-1975", "power",
             141, "annual", AR1_05, ANNUAL_SD, _pause_that_ended, FixedClaim("pause", start=1945.0, end=1975.0)),
        Cell("quadratic (slope 0.005 to 0.025/y); claimed acceleration, last 40%", "power", POWER_N, "annual",
             AR1_05, ANNUAL_SD, _quadratic, FixedClaim("acceleration", start_index=POWER_N - 56)),
        Cell("step of 3 sd, no trend (Nile-like, n=100); claimed pause 15 y after the step", "power", 100, "annual",
             AR1_05, ANNUAL_SD, _step(NILE_STEP_INDEX, 3 * ANNUAL_SD),
             FixedClaim("pause", start_index=NILE_STEP_INDEX, end_index=NILE_STEP_INDEX + 15)),
        Cell("jump of +3 sd at 70% on an unchanged trend; claimed acceleration after it", "power", POWER_N, "annual",
             AR1_05, ANNUAL_SD, _step(JUMP_INDEX, 3 * ANNUAL_SD, ANNUAL_SLOPE),
             FixedClaim("acceleration", start_index=JUMP_INDEX)),
        kink_cell(0.5, "half", "slowdown", 0.2, ANNUAL_SD, claimed="reversal", support_limit=FALSE_SUPPORT_LIMIT),
        kink_cell(0.5, "half", "slowdown", 0.2, ANNUAL_SD, claimed="pause"),
    ]
    return cells


def all_cells() -> list[Cell]:
    return null_cells() + power_cells()


def cell_named(name: str) -> Cell:
    for cell in all_cells():
        if cell.name == name:
            return cell
    raise KeyError(name)
