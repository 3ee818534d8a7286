"""Trend Audit's benchmark suite: ``python -m bench`` (full) or ``python -m bench --quick`` (the CI smoke run).

Each figure is a median over repeated runs in one process. Targets are reported as met or missed, never
asserted: a missed target is news for the README, not a failed build. Results go to the terminal as a
table and to ``bench/results/latest.json``; ``--write-readme`` puts the table in ``bench/README.md``.
"""
