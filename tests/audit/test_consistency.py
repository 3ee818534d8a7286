"""The consistency checker (``consistency.py``): each rule on hand-made sentences, then over simulated audits.

The hand-made cases keep the checker honest: every rule must catch a made-up contradiction and pass a
correct sentence, so a checker that passes everything fails here. The simulated audits come from the
calibration study's cells (``bench/scenarios.py``); ``python -m bench.calibration --consistency 2000`` is
the long version.
"""

from __future__ import annotations

import dataclasses
import numpy as np
import pytest

from app.audit import AuditOptions, Claim, run_audit
from app.ingest.series import Series
from bench.calibration import make_pool, run_cell
from bench.scenarios import all_cells
from consistency import RULES, Facts, check_numeric_ranges, check_sentences, contradictions

ALPHA = 0.05

BASE = Facts(
    alpha=ALPHA, long_term_slope=0.015, long_term_p=1e-10, long_term_mk_p=1e-10, window_slope=0.004,
    values={"change_p_adjusted": 0.40, "change_p_nominal": 0.20, "long_term_p": 1e-10, "window_p_vs_zero": 0.3,
            "window_p_weaker": 0.1, "window_p_stronger": 0.9},
    spell_probability=0.30, years_to_detect=20.0, reference_years=140.0, window_points=15, window_years=15.0,
    window_value_range=0.4, reference_value_range=2.5, window_ci=(-0.01, 0.018), long_term_ci=(0.013, 0.017),
    rate_factor=10.0, slopes=(0.015, 0.004, -0.01, 0.018),
)


def facts(**changes) -> Facts:
    values = {**BASE.values, **changes.pop("values", {})}
    return dataclasses.replace(BASE, values=values, **changes)


def rules_hit(sentence: str, given: Facts) -> list[str]:
    return [found.split(":", 1)[0] for found in check_sentences([("summary", sentence)], given)]


# (rule, sentence, facts that contradict it, facts under which it is right)
CASES = [
    ("significance", "The window's trend was significantly below the long-term trend of +0.15 per decade (p = 0.200).",
     facts(window_slope=0.001), None),
    ("significance", "The window's trend was significantly below the long-term trend of +0.15 per decade (p = 0.010).",
     None, facts(window_slope=0.001)),
    ("significance", "The change in trend is not significant (adjusted p = 0.010).", facts(), None),
    ("significance", "The change in trend is not significant (adjusted p = 0.300).", None, facts()),
    ("significance", "The data do not show that the trend changed.",
     facts(values={"change_p_adjusted": 0.01}), facts(values={"change_p_adjusted": 0.4})),
    ("significance", "The data support a change in trend around 1998, even allowing for the chosen date.",
     facts(values={"change_p_adjusted": 0.3}), facts(values={"change_p_adjusted": 0.01})),
    ("zero percent", "Chance of a window this extreme somewhere in a record this long: 0.0%.",
     facts(spell_probability=0.0004), None),
    ("zero percent", "Chance of one somewhere in a record this long: 0%.", facts(spell_probability=0.004), None),
    ("zero percent", "Chance of one somewhere in a record this long: under 0.1%.", None,
     facts(spell_probability=0.0004)),
    ("zero rate", "Its trend ranges from +0.000 per decade to +0.72 per decade.", facts(), None),
    ("zero rate", "Its trend ranges from -0.000 °C per decade to +0.72 °C per decade.", facts(), None),
    ("zero rate", "Its trend ranges from +0.004 per decade to +0.72 per decade.", None, facts()),
    ("sign words", "The series kept rising during the claimed pause.", facts(window_slope=-0.002),
     facts(window_slope=0.02)),
    ("sign words", "The trend from 1998 to 2012 appears slower, not faster.", facts(window_slope=0.03),
     facts(window_slope=0.005)),
    # a falling series: steeper means more negative
    ("sign words", "The decline was steeper during the window.", facts(long_term_slope=-0.02, window_slope=-0.01),
     facts(long_term_slope=-0.02, window_slope=-0.03)),
    ("sign words", "The decline was flatter during the window.", facts(long_term_slope=-0.02, window_slope=-0.03),
     facts(long_term_slope=-0.02, window_slope=-0.01)),
    ("sign words", "The trend was +0.30 per decade (95% range +0.10 to +0.50 per decade), below the long-term trend "
     "of +0.15 per decade.", facts(), None),
    ("sign words", "The trend was +0.05 per decade (95% range -0.10 to +0.20 per decade), below the long-term trend "
     "of +0.15 per decade.", None, facts()),
    ("sign words", "The window's trend lies above the long-term trend.", facts(window_slope=0.004),
     facts(window_slope=0.03)),
    ("sign words", "Over the record the series shows a falling trend.", facts(long_term_slope=0.01), None),
    ("unusual", "A spell like this is not unusual (chance: 3%).", facts(spell_probability=0.03),
     facts(spell_probability=0.3)),
    ("unusual", "A spell like this is unusual.", facts(spell_probability=0.3), facts(spell_probability=0.01)),
    ("wide range", "The trend was -0.13 per decade (95% range -2.92 per decade to +2.67 per decade).",
     facts(window_value_range=0.2, window_years=10.0), facts(window_value_range=0.2, window_years=10.0,
                                                             window_points=5)),
    ("wide range", "The trend was -0.13 per decade (95% range -0.92 per decade to +0.67 per decade).", None,
     facts(window_value_range=0.2, window_years=10.0)),
    ("ordinal", "The claimed window ranks at the 81th percentile.", facts(), None),
    ("ordinal", "The claimed window ranks at the 12nd percentile.", facts(), None),
    ("ordinal", "It ranks 81st, 11th, 12th, 3rd and 22nd.", None, facts()),
    ("trend word", "The long-term rising trend held.", facts(long_term_p=0.3, long_term_mk_p=0.2),
     facts(long_term_p=0.3, long_term_mk_p=0.01)),
    ("years to detect", "Years of data needed to detect the long-term trend: 180; the window spans 15 years.",
     facts(years_to_detect=180.0), facts(years_to_detect=30.0)),
    ("years to detect", "About 180 years of data would be needed to detect it.", facts(years_to_detect=180.0),
     facts(years_to_detect=180.0, long_term_p=0.3)),
    ("years to detect", "A record of 180 years would detect a trend this size with 90% power.", None,
     facts(years_to_detect=180.0)),
]


@pytest.mark.parametrize("rule, sentence, wrong, right", CASES, ids=[f"{c[0]}: {c[1][:40]}" for c in CASES])
def test_each_rule_catches_a_contradiction_and_passes_a_correct_sentence(rule, sentence, wrong, right):
    if wrong is not None:
        assert rule in rules_hit(sentence, wrong), f"{rule} missed: {sentence}"
    if right is not None:
        assert rules_hit(sentence, right) == [], check_sentences([("summary", sentence)], right)


def test_every_rule_has_a_case_that_it_catches():
    caught = {rule for rule, _, wrong, _ in CASES if wrong is not None}
    assert {rule.name for rule in RULES} <= caught


def test_ranges_are_checked_even_when_no_sentence_writes_them():
    assert check_numeric_ranges(facts(long_term_ci=(-2.0, 2.0))) != []
    assert check_numeric_ranges(facts(window_ci=(-2.0, 2.0))) != []
    assert check_numeric_ranges(facts(window_ci=(-2.0, 2.0)), window_written=True) == []
    assert check_numeric_ranges(facts()) == []


def test_the_checker_reads_a_real_audit():
    t = 1900.5 + np.arange(120)
    y = 0.015 * (t - t[0]) + 0.1 * np.random.default_rng(5).standard_normal(t.size)
    result = run_audit(Series(t, y, "annual"), Claim(1998.0, 2012.0, "pause"), AuditOptions(seed=5, simulations=200))
    found = contradictions(result)
    assert isinstance(found, list) and all(isinstance(item, str) for item in found)


AUDITS_PER_CELL = 5  # about 300 audits over the study's 63 cells
SIMULATIONS = 200


def _report(found: list[tuple[str, str]], audits: int, shown: int = 20) -> str:
    """Counts by rule, then the first ``shown`` contradictions taken by turns from each rule."""
    by_rule: dict[str, list[str]] = {}
    for cell, item in found:
        by_rule.setdefault(item.split(":", 1)[0], []).append(f"- [{cell}] {item}")
    head = [f"{len(found)} contradictions in {audits} audits: "
            + ", ".join(f"{rule} {len(items)}" for rule, items in by_rule.items())]
    turns = [items[i] for i in range(max(map(len, by_rule.values()), default=0)) for items in by_rule.values()
             if i < len(items)]
    return "\n".join(head + turns[:shown])


@pytest.mark.slow
def test_simulated_audits_say_what_their_numbers_say():
    found, audits = [], 0
    with make_pool() as pool:
        for cell in all_cells():
            result = run_cell(pool, cell, AUDITS_PER_CELL, SIMULATIONS, base_seed=77, check=True)
            audits += result.count
            found += [(cell.name, item) for outcome in result.outcomes for item in outcome.contradictions]
    if found:
        pytest.fail(_report(found, audits), pytrace=False)
