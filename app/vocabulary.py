"""The words the whole project shares, each defined once: the kinds of claim, and the verdict codes of the
pause audit and of the driver-response audit. Everything else imports them from here; the wording of each
(labels, sentences) lives with whoever shows it, keyed by these names."""

PAUSE, SLOWDOWN, REVERSAL, ACCELERATION = "pause", "slowdown", "reversal", "acceleration"
CLAIM_KINDS = (PAUSE, SLOWDOWN, REVERSAL, ACCELERATION)

# The pause audit's verdicts (precedence and wording: app.audit.verdict).
CONSISTENT = "consistent_with_trend"
CHANGE_SUPPORTED = "trend_change_supported"
TOO_SHORT = "too_short_to_tell"
CONTRADICTED = "claim_contradicted"
NO_TREND = "no_long_term_trend"
LEVEL_SHIFT = "level_shift"
MODEL_DEPENDENT = "depends_on_noise_model"
OTHER_CHANGE = "change_differs_from_claim"
VERDICT_CODES = (CONSISTENT, CHANGE_SUPPORTED, TOO_SHORT, CONTRADICTED, NO_TREND, LEVEL_SHIFT, MODEL_DEPENDENT,
                 OTHER_CHANGE)

# The driver-response audit's verdicts (precedence and wording: app.correlation.wording).
NO_CLEAR_LINK = "no_clear_link"
WEAK_WINDOWS_UNUSUAL = "weak_windows_unusual"
WINDOWS_AGREE = "windows_agree"
WEAK_WINDOWS_EXPECTED = "weak_windows_expected"

# A comparison of one claim on several datasets (wording: app.service.comparisons).
DATASETS_AGREE = "datasets_agree"
DATASETS_DIFFER = "datasets_differ"
