"""The report's palette, called Skerry: a few colour-blind-safe hues on a white ground.

The hues are picked from the set Okabe & Ito (2008, "Color Universal Design") chose to stay distinct
under the common colour-vision deficiencies, then darkened where they carry thin lines or text, so
the blue and the vermilion (the two roles every chart uses: long-term trend and claimed window) also
differ in lightness and survive greyscale printing. Every role is also told apart by line style or
a label, never by colour alone.
"""

from __future__ import annotations

from matplotlib.colors import LinearSegmentedColormap

PALETTE_NAME = "Skerry"

INK = "#1d232b"  # text, axes
MUTED = "#5d6873"  # secondary text, grid labels
GRID = "#d9dcd6"
PAPER = "#ffffff"  # chart background: white prints cleanly
OBSERVED = "#7a8591"  # the data themselves: quiet slate, so the fitted lines read first
LONG_TERM = "#0a5f94"  # the reference (long-term) trend: deep blue
WINDOW = "#c24f00"  # the claimed window: vermilion
SIMULATED = "#8cc3e6"  # draws from the no-change model: sky blue
SEGMENTS = "#007a5e"  # the segmented fit: bluish green
MARK = "#a3508a"  # single marks: detection threshold, the claimed cell
ADJUSTED = "#007a5e"  # the series with known factors taken out, and its trend: bluish green, as SEGMENTS
ADJUSTED_DATA = "#5aa690"  # ... its data points, lighter than its trend line
DRIVER = "#c24f00"  # a driver beside its response (the response keeps LONG_TERM's blue)

# Diverging around the long-term slope: blue where windows ran faster than it, vermilion where
# slower, white where the same. Blue-to-orange diverging maps stay readable for red-green deficiency.
SLOPE_DIVERGING = LinearSegmentedColormap.from_list(
    "skerry_diverging", ["#a33f00", "#e89a5c", "#f7f5f0", "#6aa7d0", "#084d78"])
