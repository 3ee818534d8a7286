"""The calibration study, reduced for CI: every null cell and the key power and overclaim cells.

The cells and their generators are the study's own (``bench/scenarios.py``, run in full by
``python -m bench.calibration``). With 80 records per null cell a test fails only when a cell is clearly
miscalibrated: the Wilson (1927) 95% interval of a rate lies wholly outside our requirement. Power floors
fail when the interval of the power lies wholly below the floor, i.e. when power collapses.
"""

from __future__ import annotations

import pytest

from bench.calibration import SUPPORTED, make_pool, run_cell
from bench.scenarios import (ANNUAL_SD, COVERAGE_RANGE, FALSE_SUPPORT_LIMIT, KINKS, SPELL_BELOW_5_LIMIT, kink_cell,
                             null_cells, power_cells)

pytestmark = pytest.mark.slow

NULL_RECORDS = 80
POWER_RECORDS = 60
SIMULATIONS = 250  # per audit; the adjusted p-value needs only its 5% quantile
BASE_SEED = 20261204


def _param(cell, requirement, *values):
    return pytest.param(cell, *values, id=f"{cell.name} [{requirement}]")


@pytest.fixture(scope="module")
def pool():
    with make_pool() as executor:
        yield executor


_results = {}


def _run(pool, cell, records):
    """Each cell is audited once per session however many of its requirements are tested."""
    if cell.name not in _results:
        _results[cell.name] = run_cell(pool, cell, records, SIMULATIONS, BASE_SEED)
    return _results[cell.name]


def _codes(result) -> str:
    return ", ".join(f"{code} {count}" for code, count in result.codes.most_common())


def _rate(name, estimate, lower, upper) -> str:
    return f"{name} {estimate:.3f} (Wilson {lower:.3f}-{upper:.3f})"


@pytest.mark.parametrize("cell", [_param(c, "support") for c in null_cells()])
def test_null_cell_false_support(pool, cell):
    result = _run(pool, cell, NULL_RECORDS)
    support = result.share(SUPPORTED)
    found = f"{cell.name}: {_rate('supported', *support)}; codes {_codes(result)}"
    print("\n" + found)
    assert support[1] <= FALSE_SUPPORT_LIMIT, found  # our requirement: at most 7%


@pytest.mark.parametrize("cell", [_param(c, "coverage") for c in null_cells()])
def test_null_cell_long_term_coverage(pool, cell):
    coverage = _run(pool, cell, NULL_RECORDS).coverage()
    found = f"{cell.name}: {_rate('coverage of the true slope', *coverage)}"
    print("\n" + found)
    assert coverage[2] >= COVERAGE_RANGE[0] and coverage[1] <= COVERAGE_RANGE[1], found  # our requirement: 91-97%


@pytest.mark.parametrize("cell", [_param(c, "spell") for c in null_cells()])
def test_null_cell_spell_probability(pool, cell):
    spell = _run(pool, cell, NULL_RECORDS).spell_below_5()
    found = f"{cell.name}: {_rate('spell probability below 5%', *spell)}"
    print("\n" + found)
    assert spell[1] <= SPELL_BELOW_5_LIMIT, found  # our requirement: at most 10%


# Floors on the share of trend_change_supported, about 25 points under the engine's quick-study power
# (bench/calibration.md), so only a collapse fails.
POWER_FLOORS = (
    (kink_cell(*KINKS[1], 0.3, ANNUAL_SD), 0.70),  # slope to zero for the last 30%, claimed pause
    (kink_cell(*KINKS[1], 0.4, 0.2), 0.45),  # the same for 40% at twice the noise
    (kink_cell(*KINKS[0], 0.4, ANNUAL_SD), 0.55),  # slope halved for the last 40%, claimed slowdown
    (kink_cell(*KINKS[2], 0.2, ANNUAL_SD), 0.75),  # reversal for the last 20%, claimed reversal
)


@pytest.mark.parametrize("cell, floor", [pytest.param(c, f, id=c.name) for c, f in POWER_FLOORS])
def test_real_changes_are_found(pool, cell, floor):
    result = _run(pool, cell, POWER_RECORDS)
    power, _, power_high = result.share(SUPPORTED)
    print(f"\n{cell.name}: supported {power:.3f} (Wilson upper {power_high:.3f}); codes {_codes(result)}")
    assert power_high >= floor, f"power collapsed: {power:.3f}; codes {_codes(result)}"


def _overclaim_cell():
    return next(c for c in power_cells() if c.support_limit is not None)


@pytest.mark.parametrize("cell", [_param(_overclaim_cell(), "support")])
def test_a_halving_is_not_supported_as_a_reversal(pool, cell):
    result = _run(pool, cell, POWER_RECORDS)
    support, support_low, _ = result.share(SUPPORTED)
    print(f"\n{cell.name}: supported {support:.3f} (Wilson lower {support_low:.3f}); codes {_codes(result)}")
    assert support_low <= cell.support_limit, f"overclaim supported {support:.3f}; codes {_codes(result)}"


def test_a_step_is_not_read_as_a_change_of_slope(pool):
    cell = next(c for c in power_cells() if c.name.startswith("step of 3 sd"))
    result = _run(pool, cell, POWER_RECORDS)
    support, support_low, _ = result.share(SUPPORTED)
    print(f"\n{cell.name}: supported {support:.3f}; codes {_codes(result)}")
    assert support_low <= FALSE_SUPPORT_LIMIT, f"a step passed as a change of slope {support:.3f}; {_codes(result)}"


def test_a_pause_that_ended_is_found(pool):
    """Flat from 1945 to 1975 between two rises: the window-bounded test sees it (a hinge to the record's end
    found it in none of 200 records)."""
    cell = next(c for c in power_cells() if c.name.startswith("pause that ended"))
    result = _run(pool, cell, POWER_RECORDS)
    power, _, power_high = result.share(SUPPORTED)
    print(f"\n{cell.name}: supported {power:.3f}; codes {_codes(result)}")
    assert power_high >= 0.5, f"power collapsed: {power:.3f}; codes {_codes(result)}"
