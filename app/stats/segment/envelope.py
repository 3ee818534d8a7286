"""Which quadratics of a group can be the group's least one somewhere below a ceiling.

The joined-line search keeps, for each knot and number of knots so far, one quadratic
``A v^2 - 2 B v + C`` per way of placing the earlier knots: the least RSS so far as a function of
the value ``v`` at the knot. Only the lower envelope of a group matters for anything that follows,
and only where it lies below ``ceiling`` (the largest RSS any later answer may need; the rest of the
fit adds a non-negative cost). This is functional pruning in the manner of Maidstone, Hocking,
Rigaill & Fearnhead (2017) and of CPOP for changes in slope (Fearnhead, Maidstone & Letchford 2019).

The test is conservative and vectorised: each group's domain ``{v : q(v) <= ceiling}`` is cut into
``GRID`` intervals; a quadratic is dropped only when, from the left end of every interval it could
matter in, it provably stays above the quadratic that is least there: with ``d = q - q_least``,
``d(v_k + x) = d(v_k) + d'(v_k) x + (A - A_least) x^2`` is bounded below on ``0 <= x <= h``
by ``d(v_k) + min(0, d'(v_k)) h + min(0, A - A_least) h^2``. A kept quadratic that is not on the
envelope costs time only; a dropped one is never needed, so the search stays exact.
"""

from __future__ import annotations

import numpy as np

GRIDS = (8, 32)  # intervals per group's domain: a coarse round, then a fine one on its survivors


def envelope_members(groups: np.ndarray, a: np.ndarray, b: np.ndarray, c: np.ndarray, ceiling: np.ndarray,
                     tolerance: float) -> np.ndarray:
    """Mask of the quadratics that may be a group's least below its ceiling.

    ``groups`` is sorted; ``ceiling`` is per quadratic (its group's) and may be infinite, in which
    case the whole group is kept. ``tolerance`` (in RSS units) keeps near-ties.
    """
    keep = np.zeros(groups.size, dtype=bool)
    with np.errstate(invalid="ignore", divide="ignore"):
        lowest = c - b * b / a
    alive = lowest <= ceiling + tolerance
    unbounded = alive & ~np.isfinite(ceiling)
    keep[unbounded] = True
    rows = np.flatnonzero(alive & np.isfinite(ceiling))
    if rows.size:
        rows = rows[_below_leader(groups[rows], a[rows], b[rows], c[rows], ceiling[rows], lowest[rows], tolerance)]
    for grid in GRIDS:
        if not rows.size:
            break
        rows = rows[_members(groups[rows], a[rows], b[rows], c[rows], ceiling[rows], lowest[rows], tolerance, grid)]
    keep[rows] = True
    return keep


def _below_leader(groups, a, b, c, ceiling, lowest, tolerance):
    """Cheap first round: keep what dips below its group's lowest-minimum quadratic within its own domain."""
    first = np.concatenate([[True], groups[1:] != groups[:-1]])
    starts = np.flatnonzero(first)
    group_of = np.cumsum(first) - 1
    order = np.lexsort((lowest, groups))
    leader = order[starts][group_of]
    radius = np.sqrt(np.maximum(ceiling + tolerance - lowest, 0.0) / a)
    centre = b / a
    lo, hi = (centre - radius)[:, None], (centre + radius)[:, None]
    return _dips_below(a, b, c, leader[:, None], lo, hi, tolerance)[:, 0] | (leader == np.arange(groups.size))


def _members(groups, a, b, c, ceiling, lowest, tolerance, grid):
    first = np.concatenate([[True], groups[1:] != groups[:-1]])
    starts = np.flatnonzero(first)
    group_of = np.cumsum(first) - 1
    if starts.size == groups.size:
        return np.ones(groups.size, dtype=bool)  # every group has one member
    centre = b / a
    radius = np.sqrt(np.maximum(ceiling + tolerance - lowest, 0.0) / a)
    low, high = centre - radius, centre + radius
    left = np.minimum.reduceat(low, starts)
    step = (np.maximum.reduceat(high, starts) - left) / grid
    v = left[group_of, None] + step[group_of, None] * np.arange(grid + 1)
    values = (a[:, None] * v - 2.0 * b[:, None]) * v + c[:, None]
    least = np.minimum.reduceat(values, starts, axis=0)
    rows = np.arange(groups.size)[:, None]
    which = np.minimum.reduceat(np.where(values <= least[group_of], rows, groups.size), starts, axis=0)[group_of]
    lo, hi = v[:, :-1], v[:, 1:]
    needed = (lo <= high[:, None]) & (hi >= low[:, None])
    for end in (which[:, :-1], which[:, 1:]):  # the least quadratic at either end of each interval
        needed &= _dips_below(a, b, c, end, lo, hi, tolerance)
    return np.any(needed, axis=1)


def _dips_below(a, b, c, other, lo, hi, tolerance):
    """Whether q - q_other falls below -tolerance somewhere on [lo, hi] (exact minimum of a quadratic)."""
    da = a[:, None] - a[other]
    db = b[:, None] - b[other]
    dc = c[:, None] - c[other]
    with np.errstate(invalid="ignore", divide="ignore"):
        vertex = np.where(da > 0, np.clip(db / np.where(da > 0, da, 1.0), lo, hi), lo)
    low = np.minimum(np.minimum((da * lo - 2.0 * db) * lo, (da * hi - 2.0 * db) * hi), (da * vertex - 2.0 * db) * vertex)
    return low + dc < tolerance
