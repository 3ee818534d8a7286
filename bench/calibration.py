"""``python -m bench.calibration [--quick] [--series N] [--simulations S] [--out FILE] [--only TEXT]
[--consistency N]``: a seeded simulation study of the audit's verdicts.

Null cells (a constant trend; the claimant picks the window) give the false-support rate, the coverage of
the long-term 95% range and how often the spell probability falls below 5%; power cells (real changes,
level shifts, overclaims) give the share of each verdict. Every share comes with its Wilson (1927) 95%
interval. The table is printed and written to ``bench/calibration.md`` (with date, machine, commit and
settings at the top). ``--consistency N`` instead audits about N records drawn from every cell and lists
where an audit's words contradict its own numbers (``tests/audit/consistency.py``).

Audits run in two processes; each audit is ``run_audit(series, claim, AuditOptions(seed=..., simulations=S))``
with every other option at its default, so the study judges the engine as users get it.
"""

from __future__ import annotations

import argparse
import importlib.util
import math
import os
import sys
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from multiprocessing import get_context
from pathlib import Path

import numpy as np
from scipy.stats import norm

from app.audit import AuditOptions, Claim, run_audit
from app.audit.verdict import VERDICT_CODES
from app.ingest.series import Series
from bench.machine import describe
from bench.scenarios import COVERAGE_RANGE, SPELL_BELOW_5_LIMIT, Cell, all_cells

HERE = Path(__file__).resolve().parent
DEFAULT_OUT = HERE / "calibration.md"
CHECKER = HERE.parent / "tests" / "audit" / "consistency.py"
WORKERS = 2
WILSON_Z = float(norm.ppf(0.975))  # for 95% intervals
SUPPORTED = "trend_change_supported"
# Every code the reworked engine may give, in table order; codes the engine in hand lacks show as 0.
KNOWN_CODES = ("consistent_with_trend", "trend_change_supported", "too_short_to_tell", "claim_contradicted",
               "no_long_term_trend", "level_shift", "change_differs_from_claim", "depends_on_noise_model")
SHORT = {"consistent_with_trend": "consistent", "trend_change_supported": "supported",
         "too_short_to_tell": "too short", "claim_contradicted": "contradicted", "no_long_term_trend": "no trend",
         "level_shift": "level shift", "change_differs_from_claim": "differs", "depends_on_noise_model": "noise-dep."}


def wilson(successes: int, trials: int, z: float = WILSON_Z) -> tuple[float, float]:
    """Wilson's (1927, JASA 22, 209-212) score interval for a binomial proportion."""
    if trials == 0:
        return 0.0, 1.0
    p = successes / trials
    denominator = 1.0 + z * z / trials
    centre = (p + z * z / (2 * trials)) / denominator
    half = z * math.sqrt(p * (1 - p) / trials + z * z / (4 * trials * trials)) / denominator
    return max(0.0, centre - half), min(1.0, centre + half)


def table_codes() -> tuple[str, ...]:
    """The engine's own vocabulary first, then the reworked engine's codes it does not know yet."""
    return tuple(VERDICT_CODES) + tuple(c for c in KNOWN_CODES if c not in VERDICT_CODES)


# --- one audit, in a worker process ----------------------------------------------------------------------

_checker_module = None


def load_checker():
    """The consistency checker lives with the tests; load it by path (``tests`` is not a package)."""
    global _checker_module
    if _checker_module is None:
        spec = importlib.util.spec_from_file_location("trendaudit_consistency", CHECKER)
        module = importlib.util.module_from_spec(spec)
        sys.modules[spec.name] = module  # dataclasses look their module up there
        spec.loader.exec_module(module)
        _checker_module = module
    return _checker_module


@dataclass(frozen=True)
class Task:
    sampling: str
    time: np.ndarray
    value: np.ndarray
    claim: Claim
    seed: int
    simulations: int
    true_slope: float | None
    check: bool = False


@dataclass(frozen=True)
class Outcome:
    code: str
    covered: bool | None
    spell_probability: float
    seconds: float
    contradictions: tuple[str, ...] = ()


def audit_one(task: Task) -> Outcome:
    started = time.perf_counter()
    result = run_audit(Series(task.time, task.value, task.sampling), task.claim,
                       AuditOptions(seed=task.seed, simulations=task.simulations))
    covered = None
    if task.true_slope is not None:
        low, high = result.long_term.chosen.ci
        covered = bool(low <= task.true_slope <= high)
    found = tuple(load_checker().contradictions(result)) if task.check else ()
    return Outcome(result.verdict.code, covered, float(result.spell.probability), time.perf_counter() - started,
                   found)


# --- one cell ---------------------------------------------------------------------------------------------

@dataclass
class CellResult:
    cell: Cell
    outcomes: list[Outcome]
    wall_seconds: float
    codes: Counter = field(init=False)

    def __post_init__(self):
        self.codes = Counter(o.code for o in self.outcomes)

    @property
    def count(self) -> int:
        return len(self.outcomes)

    def share(self, code: str) -> tuple[float, float, float]:
        k = self.codes.get(code, 0)
        return (k / self.count, *wilson(k, self.count))

    def coverage(self) -> tuple[float, float, float] | None:
        flags = [o.covered for o in self.outcomes if o.covered is not None]
        if not flags:
            return None
        return (sum(flags) / len(flags), *wilson(sum(flags), len(flags)))

    def spell_below_5(self) -> tuple[float, float, float]:
        k = sum(o.spell_probability < 0.05 for o in self.outcomes)
        return (k / self.count, *wilson(k, self.count))

    def requirements(self) -> list[str]:
        """Each of our requirements this cell carries, as "met", "missed" or "missed (clearly)"."""
        found = []

        def judge(name, estimate, lower, upper, low_limit, high_limit):
            if (high_limit is not None and lower > high_limit) or (low_limit is not None and upper < low_limit):
                found.append(f"{name} missed (clearly)")
            elif (high_limit is not None and estimate > high_limit) or (low_limit is not None and estimate < low_limit):
                found.append(f"{name} missed")
            else:
                found.append(f"{name} met")

        if self.cell.support_limit is not None:
            judge("support", *self.share(SUPPORTED), None, self.cell.support_limit)
        if self.cell.group == "null":
            coverage = self.coverage()
            judge("coverage", *coverage, *COVERAGE_RANGE)
            judge("spell<5%", *self.spell_below_5(), None, SPELL_BELOW_5_LIMIT)
        return found


def make_pool() -> ProcessPoolExecutor:
    """Two worker processes, one BLAS thread each (the machine has two cores and is shared)."""
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    return ProcessPoolExecutor(max_workers=WORKERS, mp_context=get_context("spawn"))


def cell_seed(base_seed: int, cell: Cell) -> int:
    """A seed per cell from its name, so adding or reordering cells never changes another cell's records."""
    digest = sum((i + 1) * ord(ch) for i, ch in enumerate(cell.name))
    return int(np.random.SeedSequence([base_seed, digest]).generate_state(1, dtype=np.uint64)[0] % (2**62))


def tasks_for(cell: Cell, count: int, simulations: int, base_seed: int, check: bool = False) -> list[Task]:
    """One audit per record. When checking the wording, every other record is turned upside down (a falling
    series, as sea ice is): the claim's window is the claimant's pick on it too, since it depends on the
    times alone, and the words for direction ("steeper", "below", "kept falling") get exercised both ways."""
    seed = cell_seed(base_seed, cell)
    t, records, claims = cell.draw(count, seed)
    tasks = []
    for i in range(count):
        sign = -1.0 if check and i % 2 else 1.0
        true_slope = None if cell.true_slope is None else sign * cell.true_slope
        tasks.append(Task(cell.sampling, t, sign * records[i], claims[i], (seed + i) % (2**62), simulations,
                          true_slope, check))
    return tasks


def run_cell(pool: ProcessPoolExecutor, cell: Cell, count: int, simulations: int, base_seed: int = 2026,
             check: bool = False) -> CellResult:
    started = time.perf_counter()
    outcomes = list(pool.map(audit_one, tasks_for(cell, count, simulations, base_seed, check),
                             chunksize=max(1, count // (4 * WORKERS))))
    return CellResult(cell, outcomes, time.perf_counter() - started)


# --- the table --------------------------------------------------------------------------------------------

def _percent(estimate: float, lower: float, upper: float) -> str:
    return f"{100 * estimate:.1f} ({100 * lower:.1f}-{100 * upper:.1f})"


def table(results: list[CellResult]) -> list[str]:
    codes = table_codes()
    seen_unknown = sorted({c for r in results for c in r.codes} - set(codes))
    codes = codes + tuple(seen_unknown)
    header = ["cell", "records", *(SHORT.get(c, c) for c in codes), "coverage", "spell<5%", "requirements",
              "wall s"]
    lines = ["| " + " | ".join(header) + " |", "|" + "|".join("---" for _ in header) + "|"]
    for r in results:
        coverage = r.coverage()
        row = [r.cell.name, str(r.count), *(_percent(*r.share(c)) if r.codes.get(c) else "0" for c in codes),
               _percent(*coverage) if coverage else "-",
               _percent(*r.spell_below_5()) if r.cell.group == "null" else "-",
               "; ".join(r.requirements()) or "-", f"{r.wall_seconds:.1f}"]
        lines.append("| " + " | ".join(row) + " |")
    return lines


def header_lines(machine: dict, mode: str, series: int, simulations: int, seed: int, wall: float,
                 command: str) -> list[str]:
    legend = ", ".join(f"{SHORT[c]} = `{c}`" for c in KNOWN_CODES)
    return [
        "# Calibration of the audit's verdicts",
        "",
        f"Run: {machine['when']}, commit {machine['commit']}, {mode} mode: {series} records per cell, "
        f"{simulations} simulations per audit, base seed {seed}, {WORKERS} worker processes; "
        f"{machine['nproc']} cores ({machine['cpu']}), Python {machine['python']}, numpy {machine['numpy']}, "
        f"scipy {machine['scipy']}, 1-minute load average at the start {machine['load_average_1min']}; "
        f"{wall:.0f} s in all. Command: `{command}`.",
        "",
        "Each cell: the share (%) of each verdict code with its Wilson (1927) 95% interval. Null cells: a constant "
        "trend (annual 0.015/y, marginal noise sd 0.1; monthly 0.018/y, sd 0.15) and a claimant who picks the "
        "window (after the first 15% of the record). Our requirements: null cells `trend_change_supported` at "
        "most 7%, coverage of the true slope by the long-term 95% range 91-97%, spell probability below 5% in "
        "at most 10% of records; the halving claimed as a reversal `trend_change_supported` at most 7%. "
        "\"missed (clearly)\" means the Wilson interval lies wholly outside the requirement. Power cells: "
        "AR(1) 0.5 annual noise, n = 140 unless named.",
        "",
        f"Codes: {legend}.",
        "",
    ]


def _print_consistency(results: list[CellResult]) -> list[str]:
    found = [(r.cell.name, c) for r in results for o in r.outcomes for c in o.contradictions]
    audits = sum(r.count for r in results)
    by_rule = Counter(c.split(":", 1)[0] for _, c in found)
    lines = [f"Consistency: {audits} audits, {len(found)} contradictions in "
             f"{sum(bool(o.contradictions) for r in results for o in r.outcomes)} audits.", ""]
    for rule, count in by_rule.most_common():
        example = next(c for _, c in found if c.startswith(rule + ":"))
        lines.append(f"- {rule}: {count}; e.g. {example}")
    return lines


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench.calibration", description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="few records per cell and fewer simulations (smoke)")
    parser.add_argument("--series", type=int, help="records per cell (default 300, quick 40)")
    parser.add_argument("--simulations", type=int, help="simulations per audit (default 1000, quick 200)")
    parser.add_argument("--seed", type=int, default=2026)
    parser.add_argument("--only", default="", help="run only cells whose name contains this text")
    parser.add_argument("--out", type=Path, default=None,
                        help=f"Markdown file (default {DEFAULT_OUT.name}; with --consistency, every contradiction)")
    parser.add_argument("--consistency", type=int, default=0, metavar="N",
                        help="audit about N records from every cell and list the contradictions instead")
    args = parser.parse_args(argv)
    cells = [c for c in all_cells() if args.only in c.name]
    if args.consistency:
        series = max(1, math.ceil(args.consistency / len(cells)))
        simulations = args.simulations or 200
    else:
        series = args.series or (40 if args.quick else 300)
        simulations = args.simulations or (200 if args.quick else 1000)
    machine = describe()
    mode = "consistency" if args.consistency else "quick" if args.quick else "full"
    print(f"Calibration ({mode}): {len(cells)} cells x {series} records, {simulations} simulations per audit",
          flush=True)
    started = time.perf_counter()
    results = []
    command = "python -m bench.calibration " + " ".join(argv if argv is not None else sys.argv[1:])
    out = args.out or (None if args.consistency else DEFAULT_OUT)
    with make_pool() as pool:
        for cell in cells:
            results.append(run_cell(pool, cell, series, simulations, args.seed, check=bool(args.consistency)))
            print(f"  {cell.name}: {results[-1].wall_seconds:.1f} s", flush=True)
            if out is not None and not args.consistency and len(results) < len(cells):
                # A long study keeps what it has: the table so far, marked as partial.
                _write(out, results, cells, args, machine, mode, series, simulations, started, command)
    text = _write(out, results, cells, args, machine, mode, series, simulations, started, command)
    print(text)
    return 0


def _write(out, results, cells, args, machine, mode, series, simulations, started, command) -> str:
    wall = time.perf_counter() - started
    lines = header_lines(machine, mode, series, simulations, args.seed, wall, command.strip())
    if len(results) < len(cells):
        lines += [f"Partial: {len(results)} of {len(cells)} cells so far.", ""]
    lines += _print_consistency(results) if args.consistency else table(results)
    text = "\n".join(lines) + "\n"
    if args.consistency and args.out:  # every contradiction, for reading through
        text += "\n" + "\n".join(f"- [{r.cell.name}] {c}" for r in results for o in r.outcomes
                                  for c in o.contradictions) + "\n"
    if out is not None:
        out.write_text(text, encoding="utf-8")
    return text


if __name__ == "__main__":
    sys.exit(main())
