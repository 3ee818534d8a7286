"""Continuous segmentation: lines joined at the breaks (a change of warming rate, not a jump).

The mean is ``a + b t + sum_k c_k (t - tau_k)_+`` with knots ``tau_k`` on a grid of candidate
times (whole years by default), every piece spanning at least ``min_size`` points. Joined pieces
do not decompose into independent segment costs, but they do form a chain (``chain.py``): written
in the fitted values at the knots, the least RSS of everything up to a knot is a quadratic in the
value there, one quadratic per way of placing the earlier knots, and the next knot's quadratics
follow from the previous ones piece by piece. The search is exact dynamic programming over those
functions with functional pruning (``envelope.py``): of the quadratics that reach a knot, only
those on their lower envelope, below a ceiling, can be part of an optimum, and the rest are
dropped. The ceiling is the best RSS already found minus a lower bound on the RSS of the rest of
the series (separate lines, by ordinary dynamic programming over the same knots), so nothing
that could still win is ever dropped. The result equals enumerating every admissible knot set
(``tests/stats/test_segment.py`` checks it against brute force) at a small fraction of the cost:
140 annual points with 10-year pieces and 4 breaks hold about 3 million knot sets, of which
about a thousand quadratics per level survive. Records longer than ``MAX_KNOTS`` candidate steps
(300 years of whole-year knots) are searched on a coarser grid, still exactly.

The profile of a break date (the least RSS of any k-knot set whose j-th knot is c, every other
knot re-optimised), from which ``base.py`` reads the break's interval, joins the forward
quadratics at c with those of the same search run backwards in time. It is computed for the
number of breaks asked about, only below the ceiling the interval needs: dates whose profile
lies above it are left out, since they are outside the interval whatever their value.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats as sps

from app.errors import InputError, Location
from app.stats.segment.base import DEFAULT_MAX_BREAKS, DEFAULT_MIN_SIZE_YEARS, Piece, Search, Segmenter
from app.stats.segment.chain import KnotChain, extend, join
from app.stats.segment.envelope import envelope_members
from app.stats.segment.result import Segmentation

CHUNK = 20_000  # quadratics pruned at once: bounds the working arrays to a few tens of MB
QUICK_KEEP = 3  # quadratics per knot in the quick pass that only seeks upper bounds
TOLERANCE = 1e-9  # of the straight line's RSS: near-ties are kept, so rounding never drops an optimum
# Candidate knots at most. The search's cost grows with about the third power of their number (measured,
# 4 breaks: 0.13 s for 150 whole years, 0.54 s for 300, 6 s for 548), so longer records are searched
# on a grid of every 2, 3, ... years: exact on that grid, and the break dates and ranges fall on it.
MAX_KNOTS = 300


@dataclass(frozen=True)
class _Level:
    """Quadratics that survived pruning at one number of knots, sorted by their last knot."""

    last: np.ndarray  # index of the last knot
    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    parent: np.ndarray  # row in the previous level (-1 at the first knot)


class ContinuousSearch(Search):
    def __init__(self, t: np.ndarray, y: np.ndarray, knots: np.ndarray, max_breaks: int, min_size: int):
        self.t, self.min_size = t, min_size
        self.t_mean = float(t.mean())
        n = t.size
        points_up_to = np.searchsorted(t, knots, side="right")
        keep = (points_up_to >= min_size) & (n - points_up_to >= min_size)
        self.knots, self.points_up_to = knots[keep], points_up_to[keep]
        self._chain = KnotChain(t, y, self.knots, self.points_up_to)
        self._tolerance = TOLERANCE * max(self._chain.rss_line, 1e-300)
        self._best: dict[int, tuple[tuple, float]] = {0: ((), self._chain.rss_line)}
        self._profiles: dict[int, tuple[float, np.ndarray]] = {}  # k -> (ceiling, (k, m) least RSS)
        if max_breaks > 0 and self.knots.size:
            self._search(max_breaks)

    @staticmethod
    def critical_value(confidence: float, dof: float) -> float:
        """F(1, dof): profile interval of a regular parameter with an estimated scale (Bates & Watts 1988, ch. 6)."""
        return float(sps.f.ppf(confidence, 1, dof))

    def date_columns(self, breaks, coef):
        """d mean / d tau_k = -c_k 1[t > tau_k] (Muggeo 2003): the slopes' intervals include the dates' uncertainty."""
        return np.column_stack([-coef[2 + k] * (self.t > b) for k, b in enumerate(breaks)]) if breaks else None

    @property
    def best(self):
        return self._best

    def design(self, breaks, times: np.ndarray | None = None):
        times = self.t if times is None else np.asarray(times, dtype=float)
        columns = [np.ones_like(times), times - self.t_mean] + [np.maximum(times - k, 0.0) for k in breaks]
        return np.column_stack(columns)

    def n_coefficients(self, n_breaks):
        return 2 + n_breaks

    def break_times(self, breaks):
        return tuple(float(k) for k in breaks)

    def pieces(self, breaks):
        edges = [float(self.t[0]), *breaks, float(self.t[-1])]
        counts = np.diff(np.concatenate([[0], np.searchsorted(self.t, breaks, side="right"), [self.t.size]]))
        rows = self.design(breaks, np.array(edges))
        out = []
        for s in range(len(edges) - 1):
            slope_row = np.zeros(2 + len(breaks))
            slope_row[1] = 1.0
            slope_row[2:2 + s] = 1.0
            out.append(Piece(start=edges[s], end=edges[s + 1], n_points=int(counts[s]), slope_row=slope_row,
                             start_row=rows[s], end_row=rows[s + 1]))
        return out

    def profile(self, breaks, which, ceiling: float = np.inf):
        k = len(breaks)
        cached = self._profiles.get(k)
        if cached is None or cached[0] < ceiling:
            cached = (ceiling, self._profile_rows(k, ceiling))
            self._profiles[k] = cached
        rss = cached[1][which]
        reachable = np.isfinite(rss) & (rss <= ceiling + self._tolerance)
        return self.knots[reachable], rss[reachable]

    # ------------------------------------------------------------------ search

    def _search(self, max_breaks: int) -> None:
        """Best knot set for every number of knots.

        A quick pass keeping only the few lowest quadratics per knot finds good sets, whose RSS
        bound the optimum from above; the exact pass then prunes with those bounds.
        """
        chain = self._chain
        rest = _rest_bounds(chain, self.min_size, max_breaks + 1)
        closing = chain.closing()
        found = {0: self._chain.rss_line}
        levels: list[_Level] = []

        def visit(j, groups, parent, a, b, c):
            totals = join(a, b, c, *(x[groups] for x in closing))
            i = int(np.argmin(totals))
            if totals[i] < found.get(j, np.inf):
                found[j] = float(totals[i])
                self._best[j] = (self._path(levels, groups[i], parent[i]), float(totals[i]))

        def quick(j, groups, a, b, c):
            return _lowest_per_group(groups, a, b, c, QUICK_KEEP)

        _forward_pass(chain, self.min_size, max_breaks, quick, visit, levels)
        upper = dict(found)
        levels.clear()

        def exact(j, groups, a, b, c):
            if j == max_breaks:
                return np.ones(groups.size, dtype=bool)  # nothing follows the last knot
            reach = [min(upper.get(more, np.inf), *(found[i] for i in found if i <= more)) - rest[more - j + 1]
                     for more in range(j + 1, max_breaks + 1)]
            return envelope_members(groups, a, b, c, np.max(reach, axis=0)[groups], self._tolerance)

        _forward_pass(chain, self.min_size, max_breaks, exact, visit, levels)

    def _path(self, levels: list[_Level], last: int, parent: int) -> tuple[float, ...]:
        knots = [int(last)]
        for level in reversed(levels):
            if parent < 0:
                break
            knots.append(int(level.last[parent]))
            parent = int(level.parent[parent])
        return tuple(float(self.knots[i]) for i in reversed(knots))

    def _profile_rows(self, k: int, ceiling: float) -> np.ndarray:
        """(k, m): least RSS with knot j at each candidate, or inf where that exceeds ``ceiling``."""
        m = self.knots.size
        passes = []
        for chain in (self._chain, self._chain.mirrored()):
            rest = _rest_bounds(chain, self.min_size, k)
            levels: list[_Level] = []
            def select(j, groups, a, b, c, rest=rest):
                finishes = np.isfinite(rest[k - j + 1])  # where the rest cannot hold the other knots, nothing can
                room = np.full(finishes.size, -np.inf)
                room[finishes] = ceiling - rest[k - j + 1][finishes]
                return envelope_members(groups, a, b, c, room[groups], self._tolerance)

            _forward_pass(chain, self.min_size, k, select, None, levels)
            passes.append(levels)
        forward, backward = passes
        rows = np.full((k, m), np.inf)
        for j in range(k):
            before, after = forward[j], backward[k - 1 - j]
            after_last = m - 1 - after.last  # the backward pass counts knots from the end
            order = np.argsort(after_last, kind="stable")
            rows[j] = _pair_minimum(before, after, after_last[order], order, m)
        return rows


def _forward_pass(chain: KnotChain, min_size: int, n_levels: int, select, visit, levels: list[_Level]) -> None:
    """Quadratics level by level: ``visit`` sees every candidate, ``select(j, groups, a, b, c)`` picks survivors."""
    bounds = chain.bounds
    m = bounds.size
    following = np.searchsorted(bounds, bounds + min_size, side="left")
    chunks = [(np.arange(m), np.full(m, -1), *chain.opening())]
    for j in range(1, n_levels + 1):
        kept = []
        for groups, parent, a, b, c in chunks:
            if visit is not None and groups.size:
                visit(j, groups, parent, a, b, c)
            mask = select(j, groups, a, b, c)
            kept.append((groups[mask], a[mask], b[mask], c[mask], parent[mask]))
        level = _Level(*(np.concatenate(parts) for parts in zip(*kept)))
        levels.append(level)
        if j == n_levels or level.last.size == 0:
            return
        chunks = _children(chain, following, level, m)


def _lowest_per_group(groups: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray, keep: int) -> np.ndarray:
    """Mask of the ``keep`` quadratics with the lowest minima in each group (a heuristic, for upper bounds)."""
    order = np.lexsort((c - b * b / a, groups))
    first = np.searchsorted(groups[order], groups[order], side="left")
    mask = np.zeros(groups.size, dtype=bool)
    mask[order[np.arange(groups.size) - first < keep]] = True
    return mask


def _children(chain: KnotChain, following: np.ndarray, level: _Level, m: int):
    """Every survivor extended by one piece to every admissible next knot, in chunks of whole groups."""
    per_group = np.searchsorted(following[level.last], np.arange(m), side="right")
    cumulative = np.cumsum(per_group)
    begin = 0
    while begin < m:
        done = int(cumulative[begin - 1]) if begin else 0
        end = max(int(np.searchsorted(cumulative, done + CHUNK, side="right")), begin + 1)
        counts = per_group[begin:end]
        groups = np.repeat(np.arange(begin, end), counts)
        parent = np.arange(groups.size) - np.repeat(np.cumsum(counts) - counts, counts)
        a, b, c = extend(level.a[parent], level.b[parent], level.c[parent],
                         *chain.between(level.last[parent], groups))
        yield groups, parent, a, b, c
        begin = end


def _rest_bounds(chain: KnotChain, min_size: int, most_pieces: int) -> dict[int, np.ndarray]:
    """pieces -> (m,) least RSS of the points after each knot in that many separate lines: a lower bound."""
    bounds = chain.bounds
    following = np.searchsorted(bounds, bounds + min_size, side="left")
    index = np.arange(bounds.size)
    single = chain.line_costs(bounds[:, None], bounds[None, :])
    single = np.where(index[None, :] >= following[:, None], single, np.inf)
    rest = {1: chain.line_costs(bounds, chain.n)}
    for pieces in range(2, most_pieces + 1):
        rest[pieces] = np.min(single + rest[pieces - 1][None, :], axis=1)
    return rest


def _pair_minimum(before: _Level, after: _Level, after_last: np.ndarray, order: np.ndarray, m: int) -> np.ndarray:
    """For each knot, the least joined value over every forward and backward quadratic meeting there."""
    knots = np.arange(m)
    f_start = np.searchsorted(before.last, knots, side="left")
    f_count = np.searchsorted(before.last, knots, side="right") - f_start
    b_start = np.searchsorted(after_last, knots, side="left")
    b_count = np.searchsorted(after_last, knots, side="right") - b_start
    pairs = f_count * b_count
    out = np.full(m, np.inf)
    if not pairs.sum():
        return out
    knot = np.repeat(knots, pairs)
    within = np.arange(knot.size) - np.repeat(np.cumsum(pairs) - pairs, pairs)
    f = f_start[knot] + within // b_count[knot]
    g = order[b_start[knot] + within % b_count[knot]]
    values = join(before.a[f], before.b[f], before.c[f], after.a[g], after.b[g], after.c[g])
    np.minimum.at(out, knot, values)
    return out


class ContinuousSegmenter(Segmenter):
    form = "continuous"

    def __init__(self, max_breaks: int = DEFAULT_MAX_BREAKS, min_size_years: float = DEFAULT_MIN_SIZE_YEARS,
                 points_per_year: float = 1.0, candidate_step_years: float = 1.0, confidence: float = 0.95):
        super().__init__(max_breaks, confidence)
        for name, value in (("min_size_years", min_size_years), ("points_per_year", points_per_year),
                            ("candidate_step_years", candidate_step_years)):
            if not (np.isfinite(value) and value > 0):
                raise InputError(f"{name} must be a positive number, got {value}", location=Location(field=name))
        self.min_size = max(int(round(min_size_years * points_per_year)), 3)
        self.step = float(candidate_step_years)

    def search(self, t, y):
        step = candidate_step(t, self.step)
        grid = step * np.arange(np.ceil(t[0] / step), np.floor(t[-1] / step) + 1)
        knots = grid[(grid > t[0]) & (grid < t[-1])]
        return ContinuousSearch(t, y, knots, self.max_breaks, self.min_size)


def candidate_step(t: np.ndarray, step: float) -> float:
    """``step``, or the smallest multiple of it that leaves at most ``MAX_KNOTS`` candidate knots."""
    return step * max(1, int(np.ceil((t[-1] - t[0]) / step / MAX_KNOTS)))


def segment_continuous(t, y, max_breaks: int = DEFAULT_MAX_BREAKS, min_size_years: float = DEFAULT_MIN_SIZE_YEARS,
                       points_per_year: float = 1.0, candidate_step_years: float = 1.0, confidence: float = 0.95,
                       rng=None) -> Segmentation:
    """Exact continuous piecewise-linear fit on a grid of knots; number of breaks by AR(1) BIC.

    Knots lie on multiples of ``candidate_step_years`` (of a multiple of it on records spanning more
    than ``MAX_KNOTS`` steps); every piece holds at least ``min_size_years * points_per_year`` points.
    ``rng`` is accepted for a uniform call signature; nothing here is random.
    """
    return ContinuousSegmenter(max_breaks, min_size_years, points_per_year, candidate_step_years,
                               confidence).fit(t, y)
