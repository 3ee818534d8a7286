"""Discontinuous segmentation: exact dynamic programming over all break dates (Bai & Perron 1998, 2003).

Each segment gets its own line (or level); breaks may fall after any observation that leaves
every segment at least ``min_size`` points. The cost of every segment comes from prefix sums
(``costs.py``), and the optimal partition into k + 1 segments for every k up to ``max_breaks``
follows from one recursion, ``best_k(b) = min_a best_{k-1}(a) + cost(a, b)``, vectorised over a.
Memory is O(n^2): series longer than ``MAX_POSITIONS`` points are searched on an even grid of
break positions (every ``ceil(n / MAX_POSITIONS)`` points), and the optimum is then exact on
that grid only.

A break time is the time of the last observation of the earlier segment, so the broken-trend
term of ``app.stats.breaks`` (``1[t > tb]``) and this one agree; Nile: 1898 (Cobb 1978).
"""

from __future__ import annotations

import math

import numpy as np

from app.errors import InputError, Location
from app.stats.segment.base import DEFAULT_MAX_BREAKS, DEFAULT_MIN_SIZE_YEARS, Piece, Search, Segmenter
from app.stats.segment.costs import COSTS, SegmentCost
from app.stats.segment.result import Segmentation

MAX_POSITIONS = 2000
BLOCK_VALUES = 65_536  # matrix entries computed at once (half a MB per temporary)


class DiscontinuousSearch(Search):
    def __init__(self, t: np.ndarray, y: np.ndarray, cost: SegmentCost, max_breaks: int, min_size: int):
        self.t, self.cost, self.min_size = t, cost, min_size
        n = t.size
        step = math.ceil(n / MAX_POSITIONS)
        self.positions = np.unique(np.append(np.arange(0, n + 1, step), n))
        self.matrix = _cost_matrix(cost, self.positions, min_size)
        self._best, self._forward = _optimal_partitions(self.matrix, max_breaks, self.positions, min_size)

    @staticmethod
    def critical_value(confidence: float, dof: float) -> float:
        return float(-2.0 * np.log(1.0 - np.sqrt(confidence)))

    @property
    def best(self):
        return self._best

    def _bounds(self, breaks: tuple) -> list[int]:
        return [0, *breaks, self.t.size]

    def design(self, breaks):
        bounds = self._bounds(breaks)
        p = self.cost.params_per_segment
        design = np.zeros((self.t.size, p * (len(bounds) - 1)))
        for s, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
            design[a:b, s * p:(s + 1) * p] = self.cost.columns(self.t[a:b])
        return design

    def n_coefficients(self, n_breaks):
        return self.cost.params_per_segment * (n_breaks + 1)

    def break_times(self, breaks):
        return tuple(float(self.t[b - 1]) for b in breaks)

    def pieces(self, breaks):
        bounds = self._bounds(breaks)
        p = self.cost.params_per_segment
        width = p * (len(bounds) - 1)
        out = []
        for s, (a, b) in enumerate(zip(bounds[:-1], bounds[1:])):
            rows = np.zeros((3, width))
            rows[1:, s * p:(s + 1) * p] = self.cost.columns(self.t[[a, b - 1]])
            if p == 2:
                rows[0, s * p + 1] = 1.0
            out.append(Piece(start=float(self.t[a]), end=float(self.t[b - 1]), n_points=b - a,
                             slope_row=rows[0], start_row=rows[1], end_row=rows[2]))
        return out

    def profile(self, breaks, which, ceiling=np.inf):
        """Least total cost with break ``which`` at each position and every other break re-optimised.

        Forward: the best ``which + 1`` segments ending at the position; backward: the best
        ``k - which`` segments from it to the end (the same recursion run from the other side).
        """
        backward = self.matrix[:, -1].copy()
        block = max(1, BLOCK_VALUES // backward.size)
        for _ in range(len(breaks) - which - 1):
            backward = np.concatenate([np.min(self.matrix[first:first + block] + backward[None, :], axis=1)
                                       for first in range(0, backward.size, block)])
        total = self._forward[which] + backward
        reachable = np.isfinite(total) & (self.positions > 0) & (self.positions < self.t.size)
        return self.t[self.positions[reachable] - 1], total[reachable]


def _cost_matrix(cost: SegmentCost, positions: np.ndarray, min_size: int) -> np.ndarray:
    """Cost of every segment between two positions (inf where too short), a block of rows at a time.

    Whole-matrix arithmetic would hold a dozen temporaries of the matrix's size; blocks keep them small.
    """
    size = positions.size
    matrix = np.full((size, size), np.inf)
    block = max(1, BLOCK_VALUES // size)
    for first in range(0, size, block):
        rows = positions[first:first + block, None]
        reach = int(np.searchsorted(positions, positions[first] + min_size))  # no shorter segment is costed
        columns = positions[None, reach:]
        matrix[first:first + block, reach:] = np.where(columns - rows >= min_size, cost.costs(rows, columns), np.inf)
    return matrix


def _optimal_partitions(matrix: np.ndarray, max_breaks: int, positions: np.ndarray, min_size: int):
    """Least total cost of 1..max_breaks + 1 segments covering positions[0]..positions[-1], with the breaks.

    Also returns forward[k][b]: the least cost of k + 1 segments from the start to position b.
    """
    last = positions.size - 1
    best = {0: ((), float(matrix[0, last]))}
    previous = matrix[0].copy()  # one segment from the start to each position
    forward = [previous]
    choices = []
    size = positions.size
    block = max(1, BLOCK_VALUES // size)
    for k in range(1, max_breaks + 1):
        choice, reached = np.empty(size, dtype=np.intp), np.empty(size)
        for first in range(0, size, block):
            # previous segments end at a, the new one runs from a to b; later a are too close to any b here
            columns = slice(first, min(first + block, size))
            reach = max(int(np.searchsorted(positions, positions[columns.stop - 1] - min_size, side="right")), 1)
            total = previous[:reach, None] + matrix[:reach, columns]
            least = np.argmin(total, axis=0)
            choice[columns] = least
            reached[columns] = total[least, np.arange(least.size)]
        previous = reached
        forward.append(previous)
        choices.append(choice)
        if not np.isfinite(previous[last]):
            break
        breaks, end = [], last
        for level in range(k, 0, -1):
            end = int(choices[level - 1][end])
            breaks.append(int(positions[end]))
        best[k] = (tuple(reversed(breaks)), float(previous[last]))
    return best, forward


class DiscontinuousSegmenter(Segmenter):
    form = "discontinuous"

    def __init__(self, max_breaks: int = DEFAULT_MAX_BREAKS, min_size_points: int = 10, cost: str = "linear",
                 confidence: float = 0.95):
        super().__init__(max_breaks, confidence)
        if cost not in COSTS:
            raise InputError(f"unknown segment cost '{cost}'", location=Location(field="cost"),
                             fix=f"use one of {', '.join(COSTS)}")
        fewest = COSTS[cost].params_per_segment + 1
        if not (isinstance(min_size_points, (int, np.integer)) and min_size_points >= fewest):
            raise InputError(f"min_size_points must be a whole number >= {fewest}, got {min_size_points}",
                             location=Location(field="min_size_points"),
                             fix="a segment needs more points than its line has coefficients")
        self.cost = cost
        self.min_size = int(min_size_points)

    @property
    def cost_name(self) -> str:
        return self.cost

    def search(self, t, y):
        return DiscontinuousSearch(t, y, COSTS[self.cost](t, y), self.max_breaks, self.min_size)


def segment_discontinuous(t, y, max_breaks: int = DEFAULT_MAX_BREAKS, min_size_points: int | None = None,
                          confidence: float = 0.95, rng=None, cost: str = "linear",
                          points_per_year: float | None = None) -> Segmentation:
    """Exact least-squares segmentation into separately fitted lines (or levels), number of breaks by AR(1) BIC.

    ``min_size_points`` defaults to 10 years of points (``points_per_year`` given, or read off the
    median spacing of ``t``). ``rng`` is accepted for a uniform call signature; nothing here is random.
    """
    if min_size_points is None:
        per_year = points_per_year or _points_per_year(t)
        min_size_points = max(int(round(DEFAULT_MIN_SIZE_YEARS * per_year)), 3)
    return DiscontinuousSegmenter(max_breaks, min_size_points, cost, confidence).fit(t, y)


def _points_per_year(t) -> float:
    t = np.asarray(t, dtype=float)
    spacing = float(np.median(np.diff(t))) if t.size > 1 else 1.0
    return max(1.0 / spacing, 1.0) if spacing > 0 else 1.0
