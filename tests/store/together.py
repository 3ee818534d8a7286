"""Running the same work on several threads at once, for the store's concurrency tests."""

from __future__ import annotations

import threading
from collections.abc import Callable


def run_together(work: Callable[[], object], threads: int = 4, timeout: float = 60.0) -> list[BaseException]:
    """Starts ``work`` on ``threads`` threads released together; returns what they raised (empty if nothing)."""
    barrier = threading.Barrier(threads)
    errors: list[BaseException] = []

    def run() -> None:
        barrier.wait()
        try:
            work()
        except BaseException as error:  # collected so the test can report it
            errors.append(error)

    started = [threading.Thread(target=run) for _ in range(threads)]
    for thread in started:
        thread.start()
    for thread in started:
        thread.join(timeout=timeout)
    return errors
