"""``python -m bench [--quick] [--only NAMES] [--write-readme]``: run, print the table, write the JSON.

Exit status: 0 whether targets are met or missed (the table says which); 1 when a benchmark itself
fails to run, so a benchmark that rots is noticed.
"""

from __future__ import annotations

import argparse
import importlib
import json
import os
import sys
import time
import traceback
from pathlib import Path

from bench.figures import Figure
from bench.machine import describe

SUITES = ("audit", "montecarlo", "segmentation", "noise", "report", "memory", "http", "timeline", "batch")
HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results" / "latest.json"
READMES = (HERE / "README.md", HERE.parent / "README.md")  # the bench's own and the project's
START, END = "<!-- results:start -->", "<!-- results:end -->"


def _format(value: float, unit: str) -> str:
    if unit == "count":
        return f"{value:.0f}"
    if unit == "x":
        return f"{value:,.1f}x"
    if unit == "ms":
        return f"{value:.1f} ms"
    if unit == "MB":
        return f"{value:,.0f} MB"
    if unit == "req/s":
        return f"{value:.2f} req/s"
    return f"{value:.3f} {unit}"


def table(figures: list[Figure]) -> list[str]:
    rows = [("figure", "value", "target", "status")]
    rows += [(f.name, _format(f.value, f.unit), f.target, f.status) for f in figures]
    widths = [max(len(r[i]) for r in rows) for i in range(4)]
    lines = ["| " + " | ".join(cell.ljust(w) for cell, w in zip(row, widths)) + " |" for row in rows]
    lines.insert(1, "|" + "|".join("-" * (w + 2) for w in widths) + "|")
    return lines


def machine_line(machine: dict) -> str:
    return (f"{machine['when']}, commit {machine['commit']}: {machine['nproc']} cores ({machine['cpu']}), "
            f"Python {machine['python']}, numpy {machine['numpy']}, scipy {machine['scipy']}, "
            f"1-minute load average at the start {machine['load_average_1min']}")


def write_readme(lines: list[str], machine: dict, mode: str) -> None:
    """Replaces the table between the markers in each README that has them."""
    block = "\n".join([START, "", f"Latest {mode} run: {machine_line(machine)}.", "", *lines, "", END])
    for readme in READMES:
        text = readme.read_text(encoding="utf-8")
        if START in text:
            head, rest = text.split(START, 1)
            readme.write_text(head + block + rest.split(END, 1)[1], encoding="utf-8")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m bench", description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="fewer repeats and a shorter load test (CI)")
    parser.add_argument("--only", default=",".join(SUITES), help=f"comma-separated, from: {', '.join(SUITES)}")
    parser.add_argument("--write-readme", action="store_true", help="put the table in bench/README.md and README.md")
    args = parser.parse_args(argv)
    names = [name.strip() for name in args.only.split(",") if name.strip()]
    unknown = sorted(set(names) - set(SUITES))
    if unknown:
        parser.error(f"unknown benchmark(s): {', '.join(unknown)}")
    machine = describe()
    mode = "quick" if args.quick else "full"
    print(f"Trend Audit benchmarks ({mode}): {machine_line(machine)}", flush=True)
    figures: list[Figure] = []
    failed = []
    for name in names:
        started = time.perf_counter()
        try:
            found = importlib.import_module(f"bench.suites.{name}").run(args.quick)
        except Exception:  # noqa: BLE001 - one broken benchmark must not hide the others' figures
            traceback.print_exc()
            failed.append(name)
            continue
        figures.extend(found)
        print(f"  {name}: {time.perf_counter() - started:.1f} s", flush=True)
    lines = table(figures)
    print("\n".join(lines))
    missed = [f.name for f in figures if f.met is False]
    print(f"{sum(f.met is True for f in figures)} targets met, {len(missed)} missed"
          + (f"; failed to run: {', '.join(failed)}" if failed else ""))
    RESULTS.parent.mkdir(parents=True, exist_ok=True)
    RESULTS.write_text(json.dumps({"mode": mode, "machine": machine, "failed": failed,
                                   "figures": [f.as_dict() for f in figures]}, indent=2), encoding="utf-8")
    if args.write_readme:
        write_readme(lines, machine, mode)
    return 1 if failed else 0


if __name__ == "__main__":
    os.environ.setdefault("PYTHONHASHSEED", "0")
    sys.exit(main())
