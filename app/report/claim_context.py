"""The claim a report answers, as the report shows it: the words as said, who said them, where and when, and the
window they were audited over; and the change over that window in the series' own units."""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from app.report.numbers import is_number


@dataclass(frozen=True)
class ClaimView:
    text: str
    said_by: str  # "claimant, outlet, 2014-06-30", the parts given
    source_url: str  # shown as text always
    href: str | None  # a link only for http(s) addresses
    window: str  # "1998 to 2012 (15 points)", when the document echoes its window


def claim_view(document: dict[str, Any], safe_href: Callable[[str | None], str | None]) -> ClaimView | None:
    """The claim's record from a stored document; None when nothing was said about who claimed what.
    ``safe_href`` turns an address into a link only when it is safe to follow (the report's own rule)."""
    claim = document.get("claim") or {}
    parts = {name: str(claim.get(name) or "").strip() for name in ("text", "claimant", "outlet", "made_on",
                                                                      "source_url")}
    if not any(parts.values()):
        return None
    said_by = ", ".join(parts[name] for name in ("claimant", "outlet", "made_on") if parts[name])
    return ClaimView(text=parts["text"], said_by=said_by, source_url=parts["source_url"],
                     href=safe_href(parts["source_url"]), window=window_words(claim))


def window_words(claim: dict[str, Any]) -> str:
    """The periods a window held, as the data name them: "1998 to 2012 (15 points)"; empty when not echoed."""
    window = claim.get("window") or {}
    if not window.get("first"):
        return ""
    points = window.get("points")
    return f"{window['first']} to {window['last']} ({points} point{'s' if points != 1 else ''})"


def window_change_text(document: dict[str, Any]) -> str:
    """The change over the claimed window in the series' own units: the window's slope times its span,
    "about +0.45 °C over the 15 years"; empty when either is missing."""
    slope = (document.get("window") or {}).get("slope")
    claim = document.get("claim") or {}
    start, end = claim.get("start"), claim.get("end")
    if not (is_number(slope) and is_number(start) and is_number(end)) or end <= start:
        return ""
    span = float(end) - float(start)
    units = ((document.get("inputs") or {}).get("units") or "").strip()
    amount = _two_figures(float(slope) * span)
    return f"about {amount}{(' ' + units) if units else ''} over the {span:.4g} year{'s' if span != 1 else ''}"


def _two_figures(value: float) -> str:
    """A signed amount to two significant figures, with thousands separated: +0.45, -18,000."""
    if value == 0 or not math.isfinite(value):
        return "0" if value == 0 else "undetermined"
    decimals = max(0, 1 - math.floor(math.log10(abs(value))))
    rounded = round(value, 1 - math.floor(math.log10(abs(value))))
    return f"{rounded:+,.{decimals}f}".replace("-", "−")
