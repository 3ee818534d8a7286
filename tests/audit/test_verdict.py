"""The verdict's precedence and wording, on constructed inputs (one case per code)."""

import dataclasses

import pytest

from app.audit.verdict import (
    CHANGE_SUPPORTED,
    CONSISTENT,
    CONTRADICTED,
    LEVEL_SHIFT,
    MODEL_DEPENDENT,
    NO_TREND,
    OTHER_CHANGE,
    TOO_SHORT,
    VERDICT_CODES,
    VerdictInputs,
    decide,
    decide_code,
    format_p,
    format_probability,
    format_range,
    format_rate,
    ordinal,
)

BASE = VerdictInputs(
    kind="pause", window_start=1998.0, window_end=2013.0, window_points=16, alpha=0.05,
    long_term_slope=0.018, long_term_ci=(0.014, 0.022), long_term_p=1e-9, long_term_mk_p=1e-6,
    window_slope=0.004, window_ci=(-0.01, 0.018), window_p_vs_zero=0.5,
    window_p_weaker=0.04, window_p_stronger=0.96, change_p_nominal=0.03, change_p_adjusted=0.4,
    spell_probability=0.6, years_to_detect=12.0, units="°C",
)


def case(**changes):
    return dataclasses.replace(BASE, **changes)


@pytest.mark.parametrize(
    "inputs, code",
    [
        (BASE, CONSISTENT),
        (case(years_to_detect=25.0), TOO_SHORT),
        (case(window_points=5, window_end=2002.0), TOO_SHORT),
        (case(long_term_p=0.2, long_term_mk_p=0.3), NO_TREND),
        # Either test finding the trend is enough: a smooth record defeats the effective-sample-size test.
        (case(long_term_p=0.2), CONSISTENT),
        (case(window_slope=0.03, window_ci=(0.01, 0.05), window_p_vs_zero=0.001), CONTRADICTED),
        (case(change_p_adjusted=0.01, window_slope=-0.01), CHANGE_SUPPORTED),
        # A pause is supported only when the window is consistent with no trend AND significantly flatter.
        (case(change_p_adjusted=0.01, window_slope=-0.01, window_p_weaker=0.2), OTHER_CHANGE),
        # A reversal needs a window significantly of the opposite sign; a halving is a different change.
        (case(kind="reversal", change_p_adjusted=0.01, window_slope=0.009, window_p_vs_zero=0.3), OTHER_CHANGE),
        (case(kind="reversal", change_p_adjusted=0.01, window_slope=-0.02, window_p_vs_zero=0.01), CHANGE_SUPPORTED),
        # A slowdown that significantly reversed did more than slow.
        (case(kind="slowdown", change_p_adjusted=0.01, window_slope=-0.02, window_p_vs_zero=0.01), OTHER_CHANGE),
        (case(kind="slowdown", change_p_adjusted=0.01, window_slope=0.006), CHANGE_SUPPORTED),
        # Support that another plausible noise model does not share is withheld.
        (case(change_p_adjusted=0.01, window_slope=-0.01, disagreeing_models=("arma11",)), MODEL_DEPENDENT),
        # A step near the window that explains the data as well comes before any comparison of trends.
        (case(step_found=True, window_slope=0.03, window_p_vs_zero=0.001), LEVEL_SHIFT),
        # A significant adjusted test but a window that moved the other way does not support a pause.
        (case(change_p_adjusted=0.01, window_slope=0.03), CONSISTENT),
        # Acceleration: supported only by a steeper window, contradicted by a significantly slower one.
        (case(kind="acceleration", window_slope=0.04, window_p_weaker=0.99, window_p_stronger=0.01,
              change_p_adjusted=0.01), CHANGE_SUPPORTED),
        (case(kind="acceleration", window_slope=0.002, window_p_weaker=0.01), CONTRADICTED),
        # A falling series: a "recovery" (reversal) is a rise in slope.
        (case(kind="reversal", long_term_slope=-0.05, window_slope=0.02, window_p_vs_zero=0.01,
              change_p_adjusted=0.02), CHANGE_SUPPORTED),
        (case(kind="reversal", long_term_slope=-0.05, window_slope=-0.08, window_p_vs_zero=0.001), CONTRADICTED),
    ],
)
def test_each_code_from_a_constructed_case(inputs, code):
    assert decide_code(inputs) == code


def test_no_trend_takes_precedence_over_everything():
    assert decide_code(case(long_term_p=0.5, long_term_mk_p=0.5, change_p_adjusted=0.001, window_p_vs_zero=0.001)) == NO_TREND


def test_every_code_has_a_headline_and_a_short_summary():
    cases = [BASE, case(years_to_detect=25.0), case(long_term_p=0.2, long_term_mk_p=0.2),
             case(window_slope=0.03, window_p_vs_zero=0.001), case(change_p_adjusted=0.01, window_slope=-0.01),
             case(step_found=True, step_label="1990", step_size=0.4, step_p_adjusted=0.01),
             case(change_p_adjusted=0.01, window_slope=-0.01, disagreeing_models=("arma11",)),
             case(change_p_adjusted=0.01, window_slope=-0.01, window_p_weaker=0.2)]
    seen = set()
    for inputs in cases:
        verdict = decide(inputs)
        seen.add(verdict.code)
        assert verdict.headline and len(verdict.headline) < 120
        sentences = [s for s in verdict.summary.split(". ") if s.strip()]
        assert 2 <= len(sentences) <= 5, verdict.summary
        assert "nan" not in verdict.summary.lower()
    assert seen == set(VERDICT_CODES)


def test_wording_is_hedged_not_attribution():
    for inputs in (BASE, case(change_p_adjusted=0.01, window_slope=-0.01)):
        text = decide(inputs).summary.lower()
        assert "proves" not in text and "caused" not in text


def test_rates_are_shown_in_the_chosen_unit():
    assert format_rate(0.018, 10.0, "per decade", "°C") == "+0.18 °C per decade"
    assert format_rate(-0.0042, 100.0, "per century") == "-0.42 per century"


def test_rates_keep_significant_figures_in_small_and_large_units():
    # Series in small units must not print "+0.000"; large ones get thousands separators.
    assert format_rate(0.0000123, 10.0, "per decade") == "+0.00012 per decade"
    assert format_rate(84.8, 10.0, "per decade") == "+850 per decade"
    assert format_rate(-1234.5, 1.0, "per year") == "-1,200 per year"
    assert format_range(0.0101, 0.0104, 10.0, "per decade") == "+0.101 to +0.104 per decade"


def test_probabilities_never_read_zero_or_certain():
    assert format_probability(0.0004) == "under 0.1%"
    assert format_probability(0.004) == "0.4%"
    assert format_probability(0.25) == "25%"
    assert format_probability(0.9996) == "over 99.9%"


@pytest.mark.parametrize("p, alpha, text", [
    (0.0503, 0.05, "p = 0.0503"),  # found by the consistency run: written "0.050" beside "do not show a change"
    (0.04996, 0.05, "p = 0.04996"),
    (0.05, 0.05, "p = 0.050"),
    (0.123, 0.05, "p = 0.123"),
    (0.1004, 0.1, "p = 0.1004"),
    (0.1234, 0.1234, "p = 0.1234"),
    (0.12339, 0.1234, "p = 0.123"),  # already on its side at three decimals
    (0.0101, None, "p = 0.0101"),  # no alpha given: the usual levels are kept apart
    (0.0004, 0.05, "p < 0.001"),
])
def test_a_written_p_value_stays_on_its_side_of_alpha(p, alpha, text):
    assert format_p(p, alpha) == text


def test_a_p_value_just_above_alpha_is_not_written_as_alpha_in_the_verdict():
    text = decide(case(change_p_adjusted=0.0503)).summary
    assert "0.0503" in text and "p = 0.050)" not in text


@pytest.mark.parametrize("n, text", [(1, "1st"), (2, "2nd"), (3, "3rd"), (4, "4th"), (11, "11th"), (12, "12th"),
                                     (13, "13th"), (21, "21st"), (81, "81st"), (100, "100th"), (112, "112th")])
def test_ordinals(n, text):
    assert ordinal(n) == text


def test_a_rare_spell_is_not_called_ordinary():
    text = decide(case(spell_probability=0.0004)).summary
    assert "not unusual" not in text and "under 0.1%" in text and "0%" not in text.replace("0.1%", "")


def test_a_trend_that_is_not_significant_is_not_given_a_direction():
    text = decide(case(long_term_p=0.2, long_term_mk_p=0.01)).summary
    assert "rising trend" not in text and "falling trend" not in text
