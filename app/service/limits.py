"""Limits on what one request may ask: string lengths, the body's size, the work of its simulations."""

from __future__ import annotations

from app.errors import InputError, LimitExceeded, Location


def body_too_large(limit: int) -> LimitExceeded:
    return LimitExceeded(f"the request body is larger than this service's limit of {limit:,} bytes",
                         body_too_large=True, location=Location(field="body"),
                         fix="Send a smaller file: cut the series to the years that matter, or use monthly "
                             "or annual values instead of daily ones")


def check_string_lengths(fields: dict[str, str | None], limit: int) -> None:
    """422 naming the first field whose text is longer than the limit, or holds a NUL character (which no
    title or label needs, and which PostgreSQL cannot store in a text column)."""
    for name, text in fields.items():
        if text is not None and len(text) > limit:
            raise LimitExceeded(f"the text is {len(text):,} characters long; the limit is {limit:,}",
                                location=Location(field=name), fix=f"Shorten '{name}' to at most {limit:,} characters")
        if text is not None and "\x00" in text:
            raise InputError("the text holds a NUL character (code 0)", location=Location(field=name),
                             fix=f"Remove the NUL character from '{name}'")


def check_work(n_points: int, simulations: int, limit: int, field: str = "options.simulations") -> None:
    """Points times simulations bounds an audit's time and memory; refuse what would run past the limit."""
    if n_points * simulations > limit:
        most = max(100, limit // max(n_points, 1))
        raise LimitExceeded(f"{simulations} simulations of a {n_points}-point series is more work than this "
                            f"service does in one request ({limit:,} simulated points)",
                            location=Location(field=field),
                            fix=f"Ask for at most {most} simulations for a series this long, or send fewer points")
