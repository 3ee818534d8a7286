"""Trend Audit: checks claims that a long-running trend has paused, reversed or sped up."""

from importlib.metadata import PackageNotFoundError, version as _dist_version

try:
    __version__ = _dist_version("trendaudit")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0.1.0+source"
