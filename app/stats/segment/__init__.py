"""Multiple-breakpoint segmentation of a trend, in the manner of ruptures: costs apart from searches.

* ``costs.py``: per-segment least-squares costs from prefix sums (a line, or a level).
* ``discontinuous.py``: exact dynamic programming over every break date (Bai & Perron 1998, 2003).
* ``continuous.py``: joined lines, exact enumeration of knot sets on a grid of candidate times.
* ``base.py``: the ``Segmenter`` base class (``fit(t, y) -> Segmentation``), the AR(1)-aware BIC
  that picks the number of breaks, the breaks' profile-likelihood intervals and segment slopes.
"""

from app.stats.segment.base import Segmenter
from app.stats.segment.continuous import ContinuousSegmenter, segment_continuous
from app.stats.segment.discontinuous import DiscontinuousSegmenter, segment_discontinuous
from app.stats.segment.result import Segment, Segmentation

__all__ = ["ContinuousSegmenter", "DiscontinuousSegmenter", "Segment", "Segmentation", "Segmenter",
           "segment_continuous", "segment_discontinuous"]
