"""Hinge and broken-trend F statistics at every candidate date, for many series sharing one AR(1) phi.

When the prewhitening coefficient is fixed (the audit's case: the noise model was estimated once
from the reference period's residuals), every series and every design column goes through the
same Prais-Winsten transform ``P`` (``breaks.prais_winsten``), and each F statistic is ordinary
least squares on transformed data. With ``z = P y`` made orthogonal to the null columns ``P 1`` and
``P t`` (Frisch-Waugh-Lovell), the only per-series quantities a date needs are

    <z, P (f 1[index >= j])> = sum_{i >= j} z_i (P f)_i + phi f_{j-1} z_j      (f = 1 or t),

one reverse cumulative sum per family, so every date of every series costs O(1) after two passes
over the data. Everything that depends only on the design (the break columns' Gram matrices after
removing the null columns) is computed once per date. Both models come from the same sums, so a
hinge and a broken-trend test on the same simulated series share all the work.

Under an AR(1) null whose phi is the prewhitening phi, ``P`` of the noise is white (Prais-Winsten
whitens exactly, first row included), so the simulation draws the transformed series directly: the
same normal variates ``simulate_noise`` would draw, without filtering them and unfiltering them again.
This is the same computation as ``breaks.BatchBreakStats`` with a constant phi, which the tests check.
"""

from __future__ import annotations

import numpy as np

from app.stats.noise import NoiseModel, simulate_noise

CHUNK_VALUES = 200_000  # simulated values held at once (1.6 MB per working array), whatever the length


class WhitenedBreakStats:
    """F statistics and slope changes of the hinge and broken models at every date, phi fixed."""

    def __init__(self, t: np.ndarray, break_times: np.ndarray, phi: float):
        n = t.size
        self.n, self.phi = n, float(phi)
        centred = t - t.mean()
        self.first = np.searchsorted(t, break_times, side="right")  # first index after each break
        families = np.vstack([np.ones(n), centred])  # the step's and the slope's columns, before the break
        self.whitened_families = np.vstack([prais_winsten_rows(f[None, :], phi)[0] for f in families])
        self.null = self.whitened_families  # the null line's columns are the same two, whitened
        self.null_gram_inv = np.linalg.inv(self.null @ self.null.T)
        # The hinge (t - tb)_+ is (t - mean) 1[t > tb] + (mean - tb) 1[t > tb].
        self.hinge_mix = np.vstack([t.mean() - break_times, np.ones(break_times.size)])  # (2, m)
        self._design_grams(families)

    def _design_grams(self, families: np.ndarray) -> None:
        """Gram matrix of the two break families at each date, with the null columns partialled out."""
        j = self.first
        w = self.whitened_families
        # cross[i, f, date] = <P null_i, P (f 1[index >= j])>
        self.cross = np.stack([np.stack([_reverse_sums(w[i] * w[f], j) + self.phi * families[f, j - 1] * w[i, j]
                                         for f in range(2)]) for i in range(2)])
        gram = np.empty((2, 2, j.size))
        for f in range(2):
            for h in range(2):
                gram[f, h] = _reverse_sums(w[f] * w[h], j) - w[f, j] * w[h, j] + families[f, j] * families[h, j]
        gram -= np.einsum("ifm,ik,khm->fhm", self.cross, self.null_gram_inv, self.cross)
        mix = self.hinge_mix
        self.d_hinge = np.einsum("fm,fhm,hm->m", mix, gram, mix)
        self.d_hinge_step = np.einsum("fm,fm->m", mix, gram[:, 0])
        self.d_step = gram[0, 0]
        self.families = families
        self.blocks = np.unique(j)  # distinct first indices: a claimed date between observations repeats one
        self.block_of = np.searchsorted(self.blocks, j)

    def statistics(self, whitened: np.ndarray, model: str) -> tuple[np.ndarray, np.ndarray]:
        """(S, m) F statistic and slope change of ``model`` for rows already transformed by ``P``."""
        return self.both(whitened, (model,))[model]

    def both(self, whitened: np.ndarray, models) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        """F statistic and slope change, each (S, m), of each model, from one pass over the rows."""
        step, slope, rss_null = self._break_sums(np.atleast_2d(whitened))
        hinge = self.hinge_mix[0] * step + self.hinge_mix[1] * slope
        out = {}
        for model in models:
            if model == "hinge":
                change = hinge / self.d_hinge
                reduction, q = change * hinge, 1
            else:
                change, reduction = self._broken(hinge, step)
                q = 2
            out[model] = (self._f_stat(np.maximum(reduction, 0.0), rss_null, q), change)
        return out

    def null_maxima(self, whitened: np.ndarray, models, direction: str) -> dict[str, np.ndarray]:
        """Per row, the largest directional F over the dates, for each model.

        F rises with the reduction in RSS, so the maximum F is the F of the maximum reduction. For the
        hinge the reduction is ``r^2`` with ``r = <z, hinge> / sqrt(d)`` carrying the change's sign, so
        the largest directional reduction is the square of the most negative (or positive) ``r``.
        """
        step, slope, rss_null = self._break_sums(np.atleast_2d(whitened))
        hinge = self.hinge_mix[0] * step + self.hinge_mix[1] * slope
        out = {}
        for model in models:
            if model == "hinge":
                r = hinge / np.sqrt(self.d_hinge)
                if direction == "decrease":
                    reduction, q = np.minimum(r.min(axis=1), 0.0) ** 2, 1
                elif direction == "increase":
                    reduction, q = np.maximum(r.max(axis=1), 0.0) ** 2, 1
                else:
                    reduction, q = np.max(r * r, axis=1), 1
            else:
                change, reduction = self._broken(hinge, step)
                reduction = np.max(directional(np.maximum(reduction, 0.0), change, direction), axis=1)
                q = 2
            out[model] = self._f_stat(reduction, rss_null[:, 0], q)
        return out

    def _broken(self, hinge, step):
        """Slope change and RSS reduction of the hinge and step columns together."""
        det = self.d_hinge * self.d_step - self.d_hinge_step ** 2
        change = (self.d_step * hinge - self.d_hinge_step * step) / det
        second = (self.d_hinge * step - self.d_hinge_step * hinge) / det
        return change, change * hinge + second * step

    def _f_stat(self, reduction, rss_null, q):
        rss_full = np.maximum(rss_null - reduction, 1e-300)
        return (reduction / q) / (rss_full / (self.n - 2 - q))

    def _break_sums(self, z: np.ndarray):
        """<z, step column> and <z, slope column> at every date, both with the null line removed, and RSS0.

        Rows should hold no large multiple of the null line (simulated noise, or residuals): the line
        is removed by subtracting sums, which would cost digits on a big offset.
        """
        phi, w = self.phi, self.whitened_families
        # Sums of z and of z (P t) over the stretches between consecutive dates, one reading each.
        edges = np.concatenate([[0], self.blocks])
        level_tails = _tails_from_blocks(np.add.reduceat(z, edges, axis=1))
        slope_tails = _tails_from_blocks(np.add.reduceat(z * w[1], edges, axis=1))
        # The line's columns: <z, P 1> = sqrt(1 - phi^2) z_0 + (1 - phi) sum_{i >= 1} z_i, and <z, P t>.
        proj = np.column_stack([w[0, 0] * z[:, 0] + (1.0 - phi) * (level_tails[:, 0] - z[:, 0]), slope_tails[:, 0]])
        coef = proj @ self.null_gram_inv
        rss_null = (np.einsum("ij,ij->i", z, z) - np.einsum("ij,ij->i", proj, coef))[:, None]
        at_date = z[:, self.first]
        level_tails, slope_tails = level_tails[:, 1:], slope_tails[:, 1:]
        if self.block_of.size != self.blocks.size:
            level_tails, slope_tails = level_tails[:, self.block_of], slope_tails[:, self.block_of]
        step = ((1.0 - phi) * level_tails + phi * at_date
                - coef[:, :1] * self.cross[0, 0] - coef[:, 1:] * self.cross[1, 0])
        slope = (slope_tails + (phi * self.families[1, self.first - 1]) * at_date
                 - coef[:, :1] * self.cross[0, 1] - coef[:, 1:] * self.cross[1, 1])
        return step, slope, rss_null


def directional(f_stat: np.ndarray, change: np.ndarray, direction: str) -> np.ndarray:
    """F where the slope change has the claimed sign, else 0 ("any": F whatever the sign)."""
    if direction == "decrease":
        return np.where(change < 0, f_stat, 0.0)
    if direction == "increase":
        return np.where(change > 0, f_stat, 0.0)
    return f_stat


def whitened_null(noise: NoiseModel, phi: float, n: int, rows: int, rng: np.random.Generator) -> np.ndarray:
    """``P`` of ``rows`` simulated null series: the innovations themselves when P whitens the noise exactly."""
    if noise.theta == 0.0 and noise.phi2 == 0.0 and (noise.phi == phi or (noise.kind == "white" and phi == 0.0)):
        # simulate_noise draws these same variates (times sigma, which no F statistic sees) and filters them.
        return rng.standard_normal((rows, n))
    return prais_winsten_rows(simulate_noise(noise, n, rows, rng), phi)


def null_chunks(n: int, total: int) -> list[int]:
    """Simulations per chunk, so no working array exceeds ``CHUNK_VALUES`` values."""
    per = max(1, CHUNK_VALUES // max(n, 1))
    return [min(per, total - done) for done in range(0, total, per)]


def prais_winsten_rows(x: np.ndarray, phi: float) -> np.ndarray:
    """Prais-Winsten transform of every row: z_0 = sqrt(1 - phi^2) x_0, z_t = x_t - phi x_{t-1}."""
    z = np.array(x, dtype=float, copy=True)
    z[:, 1:] -= phi * x[:, :-1]
    z[:, 0] *= np.sqrt(1.0 - phi * phi)
    return z


def _tails_from_blocks(blocks: np.ndarray) -> np.ndarray:
    """Block sums (S, k) -> sums from each block to the end (S, k)."""
    return np.cumsum(blocks[:, ::-1], axis=1)[:, ::-1]


def _reverse_sums(x: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """sum_{i >= j} x[..., i] for each j >= 1 in ``starts``, along the last axis."""
    running = np.cumsum(x, axis=-1)
    return running[..., -1:] - running[..., starts - 1]
