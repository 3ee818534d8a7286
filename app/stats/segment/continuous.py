"""Continuous segmentation: lines joined at the breaks (a change of warming rate, not a jump).

The mean is ``a + b t + sum_k c_k (t - tau_k)_+`` with knots ``tau_k`` on a grid of candidate
times (whole years by default), every piece spanning at least ``min_size`` points. Joined
pieces do not decompose into independent segment costs, so dynamic programming does not apply;
the search is an exact enumeration of every admissible set of knots, made cheap by two facts:

* with the line's two columns partialled out once, the residual sum of squares of a knot set S
  is ``RSS0 - b_S' G_SS^-1 b_S`` where ``G`` and ``b`` are the Gram matrix and cross-products of
  the partialled-out hinge columns of all candidates (computed once, m x m);
* that quadratic form is ``|z|^2`` with ``z = L^-1 b_S`` and ``L`` the Cholesky factor of
  ``G_SS``; adding one knot appends one row to ``L`` and one entry to ``z``.

So the enumeration walks the tree of knot sets level by level (k knots -> k + 1), vectorised over
all nodes of a level in chunks, each child costing O(k) vector operations. 140 annual points with
10-year pieces and 4 breaks is about 3 million sets (about half a second).

On the way it keeps, for every number of breaks k, position j and candidate time c, the least RSS
of any k-knot set whose j-th knot is c: the profile of that break date with all the other
breaks re-optimised, from which ``base.py`` reads the break's interval.
"""

from __future__ import annotations

import numpy as np
from scipy import stats as sps

from app.errors import InputError, Location
from app.stats.segment.base import DEFAULT_MAX_BREAKS, DEFAULT_MIN_SIZE_YEARS, Piece, Search, Segmenter
from app.stats.segment.result import Segmentation

CHUNK = 400_000  # children expanded at once: bounds memory to a few tens of MB


class ContinuousSearch(Search):
    def __init__(self, t: np.ndarray, y: np.ndarray, knots: np.ndarray, max_breaks: int, min_size: int):
        self.t, self.min_size = t, min_size
        self.t_mean = float(t.mean())
        n = t.size
        points_up_to = np.searchsorted(t, knots, side="right")
        keep = (points_up_to >= min_size) & (n - points_up_to >= min_size)
        self.knots, self.points_up_to = knots[keep], points_up_to[keep]
        q, _ = np.linalg.qr(np.column_stack([np.ones(n), t - self.t_mean]))
        hinges = np.maximum(t[:, None] - self.knots[None, :], 0.0)
        hinges -= q @ (q.T @ hinges)
        y_rest = y - q @ (q.T @ y)
        self.gram = hinges.T @ hinges
        self.cross = hinges.T @ y_rest
        self.rss_line = float(y_rest @ y_rest)
        # First admissible index of the next knot: at least min_size points after this one.
        self.next_index = np.searchsorted(self.points_up_to, self.points_up_to + min_size, side="left")
        self._best: dict[int, tuple[tuple, float]] = {0: ((), self.rss_line)}
        self._profiles: dict[int, np.ndarray] = {}  # k -> (k, m) least RSS with knot j at each candidate
        self._enumerate(max_breaks)

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

    def profile(self, breaks, which):
        rss = self._profiles[len(breaks)][which]
        reachable = np.isfinite(rss)
        return self.knots[reachable], rss[reachable]

    # ------------------------------------------------------------------ enumeration

    def _enumerate(self, max_breaks: int) -> None:
        m = self.knots.size
        if max_breaks == 0 or m == 0:
            return
        self._profiles = {k: np.full((k, m), np.inf) for k in range(1, max_breaks + 1)}
        first = np.arange(m)
        diag = np.sqrt(self.gram[first, first])
        singles = _Nodes(knots=first[:, None], factor=[[diag]], z=[self.cross / diag],
                         rss=self.rss_line - (self.cross / diag) ** 2)
        self._record(np.empty((m, 0), dtype=int), first, singles.rss)
        if max_breaks > 1:
            self._expand(singles, max_breaks)

    def _record(self, earlier: np.ndarray, new: np.ndarray, rss: np.ndarray) -> None:
        """Update the best set and the per-position profiles with the sets (earlier knots..., new knot).

        ``earlier`` holds the knot indices before the new one, shape (sets, size - 1).
        """
        if rss.size == 0:
            return
        size = earlier.shape[1] + 1
        profile = self._profiles[size]
        for j in range(size - 1):
            np.minimum.at(profile[j], earlier[:, j], rss)
        np.minimum.at(profile[size - 1], new, rss)
        i = int(np.argmin(rss))
        if np.isfinite(rss[i]) and (size not in self._best or rss[i] < self._best[size][1]):
            self._best[size] = (tuple(float(self.knots[j]) for j in [*earlier[i], new[i]]), float(rss[i]))

    def _expand(self, nodes: "_Nodes", max_breaks: int) -> None:
        """Add one knot to every set (in chunks of children), record them, and recurse."""
        size = nodes.knots.shape[1]
        starts = self.next_index[nodes.knots[:, -1]]
        counts = np.maximum(self.knots.size - starts, 0)
        boundaries = np.concatenate([[0], np.cumsum(counts)])
        begin = 0
        while begin < counts.size:
            end = max(int(np.searchsorted(boundaries, boundaries[begin] + CHUNK, side="right")) - 1, begin + 1)
            parent = np.repeat(np.arange(begin, end), counts[begin:end])
            new = starts[parent] + np.arange(parent.size) - np.repeat(boundaries[begin:end] - boundaries[begin],
                                                                       counts[begin:end])
            row, diag, z_new, rss = self._extend(nodes, parent, new)
            earlier = nodes.knots[parent]
            self._record(earlier, new, rss)
            if size + 1 < max_breaks:
                factor = [[entry[parent] for entry in r] for r in nodes.factor] + [row + [diag]]
                children = _Nodes(knots=np.column_stack([earlier, new]), factor=factor,
                                  z=[entry[parent] for entry in nodes.z] + [z_new], rss=rss)
                self._expand(children, max_breaks)
            begin = end

    def _extend(self, nodes: "_Nodes", parent: np.ndarray, new: np.ndarray):
        """The new Cholesky row (forward substitution L l = G[S, new]), its pivot, the new z entry and the RSS."""
        size = nodes.knots.shape[1]
        row = []
        for i in range(size):
            value = self.gram[nodes.knots[parent, i], new]
            for r in range(i):
                value = value - nodes.factor[i][r][parent] * row[r]
            row.append(value / nodes.factor[i][i][parent])
        pivot = self.gram[new, new] - sum(v * v for v in row)
        ok = pivot > 1e-12 * self.gram[new, new]  # knots too close to tell apart add no new direction
        diag = np.sqrt(np.where(ok, pivot, 1.0))
        z_new = (self.cross[new] - sum(row[r] * nodes.z[r][parent] for r in range(size))) / diag
        rss = np.where(ok, nodes.rss[parent] - z_new * z_new, np.inf)
        return row, diag, z_new, rss


class _Nodes:
    """A batch of knot sets of one size: knot indices, the Cholesky factor's rows, z = L^-1 b, and RSS."""

    def __init__(self, knots, factor, z, rss):
        self.knots, self.factor, self.z, self.rss = knots, factor, z, rss


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
        grid = self.step * np.arange(np.ceil(t[0] / self.step), np.floor(t[-1] / self.step) + 1)
        knots = grid[(grid > t[0]) & (grid < t[-1])]
        return ContinuousSearch(t, y, knots, self.max_breaks, self.min_size)


def segment_continuous(t, y, max_breaks: int = DEFAULT_MAX_BREAKS, min_size_years: float = DEFAULT_MIN_SIZE_YEARS,
                       points_per_year: float = 1.0, candidate_step_years: float = 1.0, confidence: float = 0.95,
                       rng=None) -> Segmentation:
    """Exact continuous piecewise-linear fit on a grid of knots; number of breaks by AR(1) BIC.

    Knots lie on multiples of ``candidate_step_years``; every piece holds at least
    ``min_size_years * points_per_year`` points. ``rng`` is accepted for a uniform call
    signature; nothing here is random.
    """
    return ContinuousSegmenter(max_breaks, min_size_years, points_per_year, candidate_step_years,
                               confidence).fit(t, y)
