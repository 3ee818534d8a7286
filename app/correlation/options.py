"""What the caller chooses for a correlation audit, and the checks that need no data."""

from __future__ import annotations

import math
from dataclasses import dataclass

from app.audit.claim import AuditOptions, check_options
from app.errors import ClaimError, Location
from app.stats.correlate import TRANSFORMS

DEFAULT_MAX_SIMULATIONS = 20000


@dataclass(frozen=True)
class CorrelationOptions:
    window_years: float = 15.0
    transform: str = "none"  # "none" | "log" | "cumulative": how the response is thought to follow the driver
    simulations: int = 2000
    seed: int | None = None  # None: the audit draws one and records it
    confidence: float = 0.95
    noise: str = "auto"  # the noise model of the null and of the slope's range (app.stats.noise.NOISE_CHOICES)


def check_correlation_options(options: CorrelationOptions, max_simulations: int = DEFAULT_MAX_SIMULATIONS,
                              field: str = "options") -> None:
    """Location fields follow the request body: window_years and transform at the top, the rest under options.

    Confidence, noise model, simulations and seed obey the pause audit's rules, checked by its own function.
    """
    if not (isinstance(options.window_years, (int, float)) and math.isfinite(options.window_years)
            and options.window_years > 0):
        raise ClaimError(f"window_years must be a positive number of years, got {options.window_years!r}",
                         location=Location(field="window_years"), fix="Give for example 15")
    if options.transform not in TRANSFORMS:
        raise ClaimError(f"unknown transform '{options.transform}'", location=Location(field="transform"),
                         fix="Use one of: " + ", ".join(TRANSFORMS))
    shared = AuditOptions(confidence=options.confidence, noise=options.noise, simulations=options.simulations,
                          seed=options.seed)
    check_options(shared, max_simulations, field)
