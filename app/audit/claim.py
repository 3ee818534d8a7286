"""What the user asks: the claim (a window and its kind) and the audit's options."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from app.errors import ClaimError, Location
from app.ingest.window_edges import in_window
from app.stats.noise import CHOSEN_BY_DATA, NOISE_CHOICES
from app.vocabulary import CLAIM_KINDS

AUTO_NOISE = CHOSEN_BY_DATA  # the default: the noise model the data choose (smallest AICc)
NOISE_MODELS = NOISE_CHOICES
RATE_UNITS = {"per year": 1.0, "per decade": 10.0, "per century": 100.0}
MIN_WINDOW_POINTS = 3


@dataclass(frozen=True)
class Claim:
    """A claim that the series behaved differently between ``start`` and ``end`` (decimal years)."""

    start: float
    end: float
    kind: str = "pause"

    @property
    def says_faster(self) -> bool:
        """An acceleration claim says the trend grew steeper; the others say it weakened."""
        return self.kind == "acceleration"

    def slope_change_sign(self, long_term_slope: float) -> int:
        """The sign of the slope change that would support the claim.

        Claims are about the long-term trend, whatever its sign: a pause in a falling ice record
        is a *rise* in slope, an acceleration of that decline is a *fall*.
        """
        trend_sign = 1 if long_term_slope >= 0 else -1
        return trend_sign if self.says_faster else -trend_sign

    def direction(self, long_term_slope: float) -> str:
        return "increase" if self.slope_change_sign(long_term_slope) > 0 else "decrease"

    def tail(self, long_term_slope: float) -> str:
        """Which tail of the window-trend distribution counts as 'as extreme as claimed'."""
        return "high" if self.slope_change_sign(long_term_slope) > 0 else "low"


@dataclass(frozen=True)
class AuditOptions:
    confidence: float = 0.95
    noise: str = AUTO_NOISE  # the noise model used for every range and every simulation
    simulations: int = 2000
    seed: int | None = None  # None: the audit draws one and records it
    reference_start: float | None = None
    reference_end: float | None = None
    max_breaks: int = 4
    min_segment_years: float = 10.0
    sensitivity_years: float = 3.0
    rate_unit: str = "per decade"  # how slopes are shown to readers; per year inside


def check_claim(claim: Claim, field: str = "claim") -> None:
    """Checks that need no data: the kind and the order of the dates."""
    if claim.kind not in CLAIM_KINDS:
        raise ClaimError(f"unknown claim kind '{claim.kind}'", location=Location(field=f"{field}.kind"),
                         fix="Use one of: " + ", ".join(CLAIM_KINDS))
    if not claim.start < claim.end:
        raise ClaimError(f"the window start ({claim.start:g}) is not before its end ({claim.end:g})",
                         location=Location(field=f"{field}.start"), fix="Give a start earlier than the end")


def check_options(options: AuditOptions, max_simulations: int, field: str = "options") -> None:
    if not 0.5 <= options.confidence < 1.0:
        raise ClaimError(f"confidence {options.confidence:g} is out of range",
                         location=Location(field=f"{field}.confidence"), fix="Use a value such as 0.9, 0.95 or 0.99")
    if options.noise not in NOISE_MODELS:
        raise ClaimError(f"unknown noise model '{options.noise}'", location=Location(field=f"{field}.noise"),
                         fix="Use one of: " + ", ".join(NOISE_MODELS))
    if not 100 <= options.simulations <= max_simulations:
        raise ClaimError(f"{options.simulations} simulations is outside 100..{max_simulations}",
                         location=Location(field=f"{field}.simulations"),
                         fix=f"Ask for between 100 and {max_simulations} simulations")
    if options.seed is not None and not 0 <= options.seed < 2**63:
        raise ClaimError("the seed must be a non-negative integer below 2**63",
                         location=Location(field=f"{field}.seed"), fix="Give a whole number such as 12345")
    if options.rate_unit not in RATE_UNITS:
        raise ClaimError(f"unknown rate unit '{options.rate_unit}'", location=Location(field=f"{field}.rate_unit"),
                         fix="Use one of: " + ", ".join(RATE_UNITS))
    if (options.reference_start is not None and options.reference_end is not None
            and not options.reference_start < options.reference_end):
        raise ClaimError("the reference period's start is not before its end",
                         location=Location(field=f"{field}.reference_start"),
                         fix="Give a reference start earlier than its end, or leave both out")


def window_mask(series, start: float, end: float) -> np.ndarray:
    """Points the window [start, end) holds: those whose mid-period time lies inside
    (``app.ingest.window_edges.in_window``, the one rule every door shares)."""
    return in_window(series.time, start, end)
