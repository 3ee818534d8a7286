"""A joined piecewise-linear fit written in its values at the knots, one segment at a time.

Between two knots ``a < b`` the fitted line is ``v_a (1 - w) + v_b w`` with ``w = (t - a) / (b - a)``,
so a segment's residual sum of squares is a quadratic form in ``(v_a, v_b)``:
``P00 v_a^2 + 2 P01 v_a v_b + P11 v_b^2 - 2 r0 v_a - 2 r1 v_b + s``, whose coefficients come in O(1)
from prefix sums of 1, t, t^2, y, t y and y^2 over the segment's points. The whole fit is a chain of
such forms linked by the shared knot values, so the least RSS of the pieces up to a knot, as a
function of the value ``v`` there, is a quadratic ``A v^2 - 2 B v + C``, and adding the next segment
and minimising over the old knot's value gives the next knot's quadratic (``extend``).

The first piece is anchored at the first observation and the last at the last observation (any
two points of a line parametrise it). Time is centred and scaled, and the values are the residuals
of the straight-line fit (every joined fit contains that line, so no RSS changes): the prefix sums
then stay small and their differences keep their digits.
"""

from __future__ import annotations

import numpy as np


class KnotChain:
    """Segment quadratics of one series over the index ranges cut by candidate knots.

    ``bounds[c]`` is the number of points up to and including knot ``c`` (points at a knot belong to
    the earlier piece; either way their fitted value is the knot's, so no cost depends on it).
    """

    def __init__(self, t: np.ndarray, y: np.ndarray, knots: np.ndarray, bounds: np.ndarray):
        centre = float(t.mean())
        scale = float(t[-1] - t[0]) or 1.0
        u = (t - centre) / scale
        line = np.polynomial.polynomial.polyfit(u, y, 1)
        residuals = y - line[0] - line[1] * u
        self._set(u, residuals, (knots - centre) / scale, bounds)

    def _set(self, u: np.ndarray, r: np.ndarray, knots_u: np.ndarray, bounds: np.ndarray) -> None:
        self.u, self.r, self.knots_u, self.bounds = u, r, knots_u, bounds
        self.n = u.size
        zero = np.zeros(1)
        self._sums = [np.concatenate([zero, np.cumsum(x)]) for x in (np.ones_like(u), u, u * u, r, u * r, r * r)]
        self.rss_line = float(r @ r)
        self._table: list[np.ndarray] | None = None

    def mirrored(self) -> "KnotChain":
        """The same fit read backwards in time: knot ``c`` becomes knot ``m - 1 - c``."""
        out = KnotChain.__new__(KnotChain)
        out._set(-self.u[::-1], self.r[::-1].copy(), -self.knots_u[::-1], self.n - self.bounds[::-1])
        return out

    def _sums_over(self, start, stop):
        return [s[stop] - s[start] for s in self._sums]

    def between(self, first: np.ndarray, second: np.ndarray):
        """Coefficients (P00, P01, P11, r0, r1, s) of the pieces from knot ``first`` to knot ``second``."""
        if self._table is None:  # every pair once: a search asks for each pair many times
            every = np.arange(self.bounds.size)
            with np.errstate(invalid="ignore", divide="ignore"):
                self._table = [x.ravel() for x in self._piece(self.bounds[every, None], self.bounds[None, every],
                                                              self.knots_u[every, None], self.knots_u[None, every])]
        flat = first * self.bounds.size + second
        return tuple(x[flat] for x in self._table)

    def _piece(self, start, stop, left, right):
        count, su, suu, sy, suy, syy = self._sums_over(start, stop)
        width = right - left
        mean_u = su / count
        # Sum of (u - left)^2 through the piece's own mean: no large prefix sums cancel.
        sww = ((suu - su * mean_u) + count * (mean_u - left) ** 2) / (width * width)
        sw = (su - left * count) / width
        syw = (suy - left * sy) / width
        return count - 2.0 * sw + sww, sw - sww, sww, sy - syw, syw, syy

    def opening(self):
        """(A, B, C) per knot: least RSS of the first piece as a quadratic in the value at the knot."""
        p00, p01, p11, r0, r1, s = self._piece(0, self.bounds, self.u[0], self.knots_u)
        return p11 - p01 * p01 / p00, r1 - p01 * r0 / p00, s - r0 * r0 / p00

    def closing(self):
        """(A, B, C) per knot: least RSS of the last piece as a quadratic in the value at the knot."""
        p00, p01, p11, r0, r1, s = self._piece(self.bounds, self.n, self.knots_u, self.u[-1])
        return p00 - p01 * p01 / p11, r0 - p01 * r1 / p11, s - r1 * r1 / p11

    def line_costs(self, start, stop) -> np.ndarray:
        """RSS of a separate straight line on each index range [start, stop)."""
        count, su, suu, sy, suy, syy = self._sums_over(start, stop)
        with np.errstate(invalid="ignore", divide="ignore"):
            sxx = suu - su * su / count
            sxy = suy - su * sy / count
            return np.maximum(syy - sy * sy / count - sxy * sxy / sxx, 0.0)


def extend(a, b, c, p00, p01, p11, r0, r1, s):
    """Add a piece after a knot whose quadratic is (a, b, c); minimise over that knot's value."""
    d = a + p00
    shifted = b + r0
    return p11 - p01 * p01 / d, r1 - p01 * shifted / d, c + s - shifted * shifted / d


def join(a1, b1, c1, a2, b2, c2):
    """Least value over v of the sum of two quadratics in the same knot value."""
    b = b1 + b2
    return c1 + c2 - b * b / (a1 + a2)

