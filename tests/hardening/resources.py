"""A process's resident memory, read from /proc (Linux): what the memory checks sample."""

from __future__ import annotations

import os

PAGE_BYTES = os.sysconf("SC_PAGE_SIZE")


def rss_bytes(pid: int) -> int:
    """Resident set size now: the second field of /proc/PID/statm, in pages (proc(5))."""
    with open(f"/proc/{pid}/statm") as statm:
        return int(statm.read().split()[1]) * PAGE_BYTES
