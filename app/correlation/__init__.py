"""The driver-response correlation audit: does weak short-window co-movement contradict a long-run link?"""

from app.correlation.options import CorrelationOptions, check_correlation_options
from app.correlation.result import CorrelationResult, CorrelationVerdict
from app.correlation.run import run_correlation
from app.correlation.serialize import correlation_document

__all__ = ["CorrelationOptions", "CorrelationResult", "CorrelationVerdict", "check_correlation_options",
           "correlation_document", "run_correlation"]
