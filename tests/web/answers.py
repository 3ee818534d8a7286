"""Reading the desk's answers in tests."""

from __future__ import annotations


def report_path(answer) -> str:
    """The report a desk form post made: it redirects to the page that shows the owner token once."""
    location = answer.headers["location"]
    assert answer.status_code == 303 and location.endswith("/created"), (answer.status_code, location)
    return location.removesuffix("/created")
