"""Pair counts and order statistics of pairwise slopes, without forming every pair when there are too many.

Mann-Kendall's S and Sen's slope are defined over all n (n - 1) / 2 pairs of points. Up to
``MAX_PAIRS_IN_MEMORY`` pairs (about 2,000 points, 16 MB of slopes) Sen's order statistics
come from every slope held at once, computed exactly as scipy.stats.theilslopes does. Beyond
that (a series may have up to 200,000 points) nothing quadratic is formed:

- ``count_descents`` counts pairs i < j with x_j < x_i by a bottom-up merge sort vectorised
  over all blocks of a level: O(n log^2 n) for every row at once. S = C - D is two such counts.
- The number of slopes below s equals the descents of z = y - s t taken in time order
  (ties in time ordered by z, so pairs at equal times never count). A rank's slope is
  bracketed with a sample of pairs, the bracket narrowed by counting until it holds at most
  ``ENUMERATE_LIMIT`` slopes, and those are then listed: in the order of y - lo t they are the
  descents of y - hi t, so only the points out of order take part, and their slopes are
  computed directly from the data. The result is the same order statistic as the in-memory path,
  up to floating-point rounding of z for slopes within ~1e-13 of a bracket end.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
from scipy import stats

PAIR_BLOCK = 2_000_000
MAX_PAIRS_IN_MEMORY = 2_000_000
ENUMERATE_LIMIT = 500
SAMPLE_PAIRS = 200_000
SAMPLE_SEED = 20260101  # fixes which pairs guess the first bracket; affects speed only, never the answer


def count_descents(rows: np.ndarray) -> np.ndarray:
    """Per row of ``rows`` (size, n), the number of pairs i < j with rows[j] < rows[i] (ties not counted)."""
    rows = np.atleast_2d(rows)
    size, n = rows.shape
    values = stats.rankdata(rows, method="dense", axis=1).astype(np.int64) - 1
    span = int(values.max()) + 1 if values.size else 1
    position = np.arange(n)
    row = np.repeat(np.arange(size), n)
    total = np.zeros(size, dtype=np.int64)
    width = 1
    while width < n:
        # Each block of 2*width holds a sorted left half and a sorted right half; the key block*span + value
        # keeps every block's left halves in one globally sorted array.
        blocks_per_row = (n + 2 * width - 1) // (2 * width)
        block = (row.reshape(size, n) * blocks_per_row + position // (2 * width)).ravel()
        keyed = block * span + values.ravel()
        right = np.tile((position % (2 * width)) >= width, size)
        left_keys = keyed[~right]
        left_end = np.searchsorted(left_keys, (block[right] + 1) * span, side="left")
        larger_from = np.searchsorted(left_keys, keyed[right], side="right")
        total += np.bincount(row[right], weights=left_end - larger_from, minlength=size).astype(np.int64)
        values = (np.sort(keyed, kind="stable") - block * span).reshape(size, n)
        width *= 2
    return total


def pair_count(t: np.ndarray) -> int:
    """Number of pairs of points at different times."""
    _, counts = np.unique(t, return_counts=True)
    return int(t.size * (t.size - 1) // 2 - (counts * (counts - 1) // 2).sum())


def _pair_blocks(n: int, max_pairs: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """Index pairs (i, j), i < j, in blocks of whole i-rows holding about ``max_pairs`` pairs each."""
    start = 0
    while start < n - 1:
        counts = n - 1 - np.arange(start, n - 1)
        stop = start + max(1, int(np.searchsorted(np.cumsum(counts), max_pairs, side="right")))
        first = np.arange(start, stop)
        per_row = n - 1 - first
        i = np.repeat(first, per_row)
        j = i + 1 + np.arange(per_row.sum()) - np.repeat(np.cumsum(per_row) - per_row, per_row)
        yield i, j
        start = stop


def _all_slopes(t: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Every slope between points at different times, for every row: (size, pairs)."""
    blocks = []
    for i, j in _pair_blocks(t.size, max(PAIR_BLOCK // rows.shape[0], t.size)):
        dt = t[j] - t[i]
        keep = dt != 0
        blocks.append((rows[:, j[keep]] - rows[:, i[keep]]) / dt[keep])
    return np.concatenate(blocks, axis=1)


def _slopes_below(t_centred: np.ndarray, y: np.ndarray, s: float) -> int:
    z = y - s * t_centred
    return int(count_descents(z[np.lexsort((z, t_centred))])[0])


def _slopes_in(t: np.ndarray, y: np.ndarray, t_centred: np.ndarray, lo: float, hi: float) -> np.ndarray:
    """Every slope in [lo, hi), found among the points whose order changes between y - lo t and y - hi t."""
    z_lo, z_hi = y - lo * t_centred, y - hi * t_centred
    order = np.lexsort((t_centred, z_lo))
    q = z_hi[order]
    later_min = np.minimum.accumulate(q[::-1])[::-1]
    earlier_max = np.maximum.accumulate(q)
    moved = np.zeros(q.size, dtype=bool)
    moved[:-1] |= q[:-1] > later_min[1:]
    moved[1:] |= q[1:] < earlier_max[:-1]
    points = np.sort(order[moved])
    slopes = _all_slopes(t[points], y[points][None, :])[0]
    return slopes[(slopes >= lo) & (slopes < hi)]


def _select_by_counting(t: np.ndarray, y: np.ndarray, ranks: list[int], pairs: int) -> list[float]:
    t_centred = t - t.mean()
    counted: dict[float, int] = {}  # slope -> number of slopes below it; later ranks start from earlier counts

    def below(s: float) -> int:
        if s not in counted:
            counted[s] = _slopes_below(t_centred, y, s)
        return counted[s]

    rng = np.random.default_rng(SAMPLE_SEED)
    i, j = rng.integers(0, t.size, SAMPLE_PAIRS), rng.integers(0, t.size, SAMPLE_PAIRS)
    keep = t[i] != t[j]
    sample = np.sort((y[j[keep]] - y[i[keep]]) / (t[j[keep]] - t[i[keep]]))
    found = []
    for r in ranks:
        q = (r + 0.5) / pairs
        spread = 4.0 * np.sqrt(q * (1 - q) / sample.size) + 2.0 / sample.size
        lo, hi = (float(v) for v in np.quantile(sample, [max(q - spread, 0.0), min(q + spread, 1.0)]))
        width = max(hi - lo, abs(lo) * 1e-12, 1e-300)
        while below(lo) > r:  # the sample's guess missed: widen geometrically until the rank is inside
            lo, width = lo - width, 2.0 * width
        while below(hi) <= r:
            hi, width = hi + width, 2.0 * width
        # Counts made for earlier ranks may bound this one more tightly (both ends stay valid by monotonicity).
        lo = max([lo] + [v for v, c in counted.items() if c <= r])
        hi = min([hi] + [v for v, c in counted.items() if c > r])
        step = 0
        while below(hi) - below(lo) > ENUMERATE_LIMIT:
            # Alternate an interpolation in rank with a bisection so the bracket at least halves every two steps.
            fraction = (r + 0.5 - below(lo)) / (below(hi) - below(lo)) if step % 2 == 0 else 0.5
            mid = lo + (hi - lo) * min(max(fraction, 0.01), 0.99)
            if not lo < mid < hi:
                break
            lo, hi = (mid, hi) if below(mid) <= r else (lo, mid)
            step += 1
        inside = np.sort(_slopes_in(t, y, t_centred, lo, hi))
        # An empty or short list means rounding moved a slope across a bracket end; the nearest listed one is kept.
        found.append(float(inside[min(max(r - below(lo), 0), inside.size - 1)]) if inside.size else lo)
    return found


def slope_order_statistics(t: np.ndarray, rows: np.ndarray, ranks: list[int]) -> np.ndarray:
    """Values of rank ``ranks`` (0-based) among the pairwise slopes of each row of ``rows``: (size, len(ranks))."""
    rows = np.atleast_2d(rows)
    pairs = pair_count(t)
    if pairs <= MAX_PAIRS_IN_MEMORY:
        group = max(1, MAX_PAIRS_IN_MEMORY // max(pairs, 1))
        return np.concatenate([np.partition(_all_slopes(t, rows[k:k + group]), ranks, axis=1)[:, ranks]
                               for k in range(0, rows.shape[0], group)], axis=0)
    # Only a single long series gets here; simulations use short ones.
    return np.array([_select_by_counting(t, row, ranks, pairs) for row in rows])


def median_slopes(t: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """Sen's slope (median pairwise slope) of each row."""
    pairs = pair_count(t)
    return slope_order_statistics(t, rows, [(pairs - 1) // 2, pairs // 2]).mean(axis=1)
