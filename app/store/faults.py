"""Store faults, answered fast and in general words: a database that refuses connections, never answers,
is read-only or full becomes ``StoreUnavailable`` (503 with Retry-After), never a 500 or a hang.

Every repository method runs inside ``store_faults``; the cause is named in words a reader can act on
("cannot be reached", "did not answer in time", "is read-only", "is full"), never with the driver's message,
which may hold a path, a host or a user name. The full error goes to the server's log.
"""

from __future__ import annotations

import functools
import logging
from collections.abc import Callable
from typing import TypeVar

import psycopg
from psycopg import errors as pg_errors
from sqlalchemy import exc as sa_exc

from app.errors import Location, StoreUnavailable

log = logging.getLogger("trendaudit.store")
T = TypeVar("T")
STORE_RETRY_SECONDS = 10
# The driver-level faults that mean "the store cannot do this now", not "this request is wrong".
FAULTS = (sa_exc.OperationalError, sa_exc.InterfaceError, sa_exc.InternalError, sa_exc.TimeoutError,
          sa_exc.DisconnectionError)
CAUSES = (  # (words in the driver's message, the cause in general words), first match wins
    (("readonly", "read-only", "read only"), "the database is read-only"),
    (("disk is full", "disk full", "no space"), "the database's disk is full"),
    (("timeout", "timed out", "canceling statement", "did not answer"), "the database did not answer in time"),
)


def cause_of(error: BaseException) -> str:
    text = str(getattr(error, "orig", None) or error).lower()
    for words, cause in CAUSES:
        if any(word in text for word in words):
            return cause
    if isinstance(error, sa_exc.TimeoutError):
        return "the database did not answer in time"
    return "the database cannot be reached"


def unavailable(cause: str) -> StoreUnavailable:
    return StoreUnavailable(f"{cause}; nothing was stored", retry_after=STORE_RETRY_SECONDS,
                            location=Location(field="store"),
                            fix=f"Send the same request again in {STORE_RETRY_SECONDS} seconds; if it keeps "
                                "failing, tell the service's operator")


def store_faults(method: Callable[..., T]) -> Callable[..., T]:
    """Turns the store's faults raised by ``method`` into ``StoreUnavailable`` (module docstring)."""

    @functools.wraps(method)
    def guarded(*args, **kwargs) -> T:
        try:
            return method(*args, **kwargs)
        except FAULTS as error:
            if isinstance(error, sa_exc.IntegrityError):
                raise
            cause = cause_of(error)
            log.warning("store fault in %s (%s): %s", method.__qualname__, cause, error)
            raise unavailable(cause) from None

    return guarded


class DeadlineConnection(psycopg.Connection):
    """A PostgreSQL connection that waits at most ``deadline_seconds`` for any answer: a server that stops
    answering (a network that drops everything) ends the statement with an error instead of a hang. The
    server's own statement_timeout covers a server that is merely slow; this covers one that is gone."""

    deadline_seconds: float = 5.0

    def wait(self, gen, interval=0.1, timeout=None):  # psycopg's signature; a deadline when none is given
        try:
            return super().wait(gen, interval=interval, timeout=self.deadline_seconds if timeout is None else timeout)
        except pg_errors._WaitTimeout:
            self.pgconn.finish()  # its state is unknown: never hand it out again
            raise psycopg.OperationalError(f"the server did not answer within {self.deadline_seconds:g} s") from None


def deadline_connection(seconds: float) -> type[DeadlineConnection]:
    return type("DeadlineConnection", (DeadlineConnection,), {"deadline_seconds": seconds})
