"""What the correlation report shows, worked out from the stored correlation document; it formats, never computes.

The document is ``app.correlation.serialize.correlation_document``: the full-record regression of the
response on the (transformed) driver, the correlations of levels, detrended series and differences,
the rolling-window correlations and the simulated null.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from app.report.claim_context import ClaimView, claim_view
from app.report.context import (NOISE_WORDS, KeyNumber, Links, ProvenanceRow, SourceView, created_text, safe_href,
                                source_view_of)
from app.report.numbers import format_percent, format_time, is_number, shared_decimals
from app.vocabulary import NO_CLEAR_LINK, WEAK_WINDOWS_EXPECTED, WEAK_WINDOWS_UNUSUAL, WINDOWS_AGREE

CORRELATION_VERDICT_LABELS = {
    NO_CLEAR_LINK: "No clear link over the whole record",
    WEAK_WINDOWS_UNUSUAL: "Short windows weaker than the link explains",
    WINDOWS_AGREE: "Every window moves with the driver",
    WEAK_WINDOWS_EXPECTED: "Weak short windows are expected",
}
TRANSFORM_WORDS = {
    "none": "the driver as given",
    "log": "the logarithm of the driver (so the response is read per doubling of the driver)",
    "cumulative": "the running total of the driver",
}
STEP_WORDS = {"annual": "year-to-year", "quarterly": "quarter-to-quarter", "monthly": "month-to-month"}


@dataclass(frozen=True)
class CorrelationContext:
    id: str
    title: str
    claim: ClaimView | None  # the claim the audit answers, as said
    driver: str
    response: str
    verdict_code: str
    verdict_label: str
    headline: str
    summary: str
    reasons: tuple[str, ...]
    warnings: tuple[str, ...]
    key_numbers: tuple[KeyNumber, ...]
    window_years: str
    transform_words: str
    simulations: str
    noise_text: str
    confidence: str
    source: SourceView
    provenance: tuple[ProvenanceRow, ...]
    links: Links
    created_at: str


def _r(value: Any) -> str:
    return f"r = {value:.2f}".replace("-", "−") if is_number(value) else "undetermined"


def _sig(value: Any) -> str:
    return f"{value:.3g}".replace("-", "−") if is_number(value) else "undetermined"


def _time(doc: dict[str, Any], value: Any) -> str:
    return format_time(value, ((doc.get("inputs") or {}).get("response") or {}).get("sampling") or "")


def _series(doc: dict[str, Any], role: str) -> dict[str, Any]:
    return (doc.get("inputs") or {}).get(role) or {}


def _name(doc: dict[str, Any], role: str) -> str:
    return str(_series(doc, role).get("label") or f"the {role}")


def _conf(doc: dict[str, Any]) -> str:
    return f"{100 * float(doc.get('confidence') or (doc.get('options') or {}).get('confidence', 0.95)):.0f}%"


@dataclass(frozen=True)
class Relationship:
    """The full-record link in the reader's units: '+2.37 °C' 'per doubling of CO2', range '+2.00 to +2.74'."""

    amount: str
    per: str
    range: str

    @property
    def text(self) -> str:
        return f"{self.amount} {self.per}"


def relationship(doc: dict[str, Any]) -> Relationship:
    units = _series(doc, "response").get("units") or ""
    driver, driver_units = _name(doc, "driver"), _series(doc, "driver").get("units") or ""
    doubling = doc.get("per_doubling")
    if doc.get("transform") == "log" and isinstance(doubling, dict):
        value, interval, per = doubling.get("value"), doubling.get("ci"), f"per doubling of {driver}"
    else:
        value, interval = doc.get("slope"), doc.get("slope_ci")
        per = (f"per unit of cumulative {driver}" if doc.get("transform") == "cumulative" else
               f"per {driver_units} of {driver}" if driver_units else f"per unit of {driver}")
    interval = interval if interval and len(interval) == 2 else [None, None]
    decimals = shared_decimals(value, *interval)

    def signed(v: Any) -> str:
        return f"{v:+.{decimals}f}".replace("-", "−") if is_number(v) else "undetermined"

    span = f"{signed(interval[0])} to {signed(interval[1])}" if all(is_number(v) for v in interval) else "undetermined"
    return Relationship(f"{signed(value)}{' ' + units if units else ''}", per, span)


def weakest_window(doc: dict[str, Any]) -> tuple[str, Any]:
    """The span of the window whose correlation is weakest along the link, and that correlation."""
    rolling = doc.get("rolling") or {}
    sign = rolling.get("sign") or 1
    rs = rolling.get("r") or []
    finite = [(sign * r, i) for i, r in enumerate(rs) if is_number(r)]
    if not finite:
        return "", None
    _, index = min(finite)
    starts, ends = rolling.get("starts") or [], rolling.get("ends") or []
    span = f"{_time(doc, starts[index])} to {_time(doc, ends[index])}" if index < min(len(starts), len(ends)) else ""
    return span, rs[index]


def _key_numbers(doc: dict[str, Any]) -> tuple[KeyNumber, ...]:
    conf = _conf(doc)
    rolling, null, trends = doc.get("rolling") or {}, doc.get("null") or {}, doc.get("trends") or {}
    link = relationship(doc)
    n = (doc.get("inputs") or {}).get("n")
    step = STEP_WORDS.get(_series(doc, "response").get("sampling"), "step-to-step")
    band = null.get("share_below_half_band") or [None, None]
    weakest_span, weakest_r = weakest_window(doc)
    threshold = rolling.get("threshold", 0.5)
    windows = len(rolling.get("r") or [])
    return (
        KeyNumber("The link over the whole record", link.amount,
                  f"{link.per}; {conf} range {link.range}, allowing for the persistence of the residuals"
                  + (f" (about {doc['n_effective']:.0f} effectively independent points of {n})"
                     if is_number(doc.get("n_effective")) else "")),
        KeyNumber("Correlation of the two series as they are", _r(doc.get("r_levels")),
                  f"{n} shared times" + ("; both series trend, so this is high for any two trending series"
                                          if trends.get("both_trending") else "")),
        KeyNumber("Correlation once each series' own trend is removed", _r(doc.get("r_detrended")),
                  "the co-movement left around the two trends"),
        KeyNumber(f"Correlation of the {step} changes", _r(doc.get("r_differences")),
                  f"{doc.get('n_differences')} pairs of consecutive values; this mostly measures short-term "
                  f"co-movement"),
        KeyNumber(f"{_sig(rolling.get('window_years'))}-year windows with a correlation below {threshold:g}",
                  f"{format_percent(rolling.get('share_below_half'))} of {windows}",
                  f"a response that follows the link exactly, with noise like the data's, gives "
                  f"{format_percent(band[0])} to {format_percent(band[1])} (90% of "
                  f"{null.get('n_simulations')} simulations); as many or more in "
                  f"{format_percent(null.get('probability_share'))} of them"),
        KeyNumber("The weakest window", _r(weakest_r),
                  (f"{weakest_span}; " if weakest_span else "") + f"a window at least this weak came up in "
                  f"{format_percent(null.get('probability_min_r'))} of the simulations"),
    )


def _series_row(doc: dict[str, Any], role: str) -> ProvenanceRow:
    s = _series(doc, role)
    units = f" ({s['units']})" if s.get("units") else ""
    return ProvenanceRow(role.capitalize(), f"{s.get('label') or '(no label)'}{units}: {s.get('n')} points "
                                            f"({s.get('sampling') or 'irregular'}), {_time(doc, s.get('start'))} to "
                                            f"{_time(doc, s.get('end'))}; {s.get('missing', 0)} missing")


def _provenance(record_id: str, title: str, doc: dict[str, Any], source: SourceView,
                created: str) -> tuple[ProvenanceRow, ...]:
    inputs, options = doc.get("inputs") or {}, doc.get("options") or {}
    return (
        ProvenanceRow("Title", title or "(untitled)"),
        _series_row(doc, "driver"),
        _series_row(doc, "response"),
        ProvenanceRow("Times both series share", f"{inputs.get('n')}, {_time(doc, inputs.get('start'))} to "
                                                 f"{_time(doc, inputs.get('end'))}"),
        ProvenanceRow("Source", source.name or "(not given)"),
        ProvenanceRow("Driver's input hash (SHA-256)", _series(doc, "driver").get("sha256", ""), code=True),
        ProvenanceRow("Response's input hash (SHA-256)", _series(doc, "response").get("sha256", ""), code=True),
        ProvenanceRow("Software version", f"Trend Audit {doc.get('software_version', '')}", code=True),
        ProvenanceRow("Seed", str(doc.get("seed", "")), code=True),
        ProvenanceRow("Options", f"{_sig(options.get('window_years'))}-year windows, transform "
                                 f"{options.get('transform')}, confidence {options.get('confidence')}, noise model "
                                 f"{options.get('noise')}, {options.get('simulations')} simulations"),
        ProvenanceRow("Created", created),
        ProvenanceRow("Audit id", record_id, code=True),
    )


def _noise_text(doc: dict[str, Any]) -> str:
    noise = doc.get("noise") or {}
    words = NOISE_WORDS.get(noise.get("kind"), str(noise.get("kind", "")))
    text = f"The residuals about the fitted link are modelled as {words}"
    if noise.get("kind") in ("ar1", "arma11") and is_number(noise.get("phi")):
        text += f" with a lag-one autocorrelation of {noise['phi']:.2f}"
    return text + "."


def correlation_context(*, record_id: str, title: str, created_at: Any, document: dict[str, Any],
                        source: dict[str, Any] | None = None, base_url: str = "",
                        permalink: str | None = None) -> CorrelationContext:
    doc = document
    verdict = doc.get("verdict") or {}
    code = str(verdict.get("code", ""))
    source_view = source_view_of(source)
    created = created_text(created_at)
    base = base_url.rstrip("/")
    return CorrelationContext(
        id=record_id, title=title, claim=claim_view(doc, safe_href), driver=_name(doc, "driver"), response=_name(doc, "response"),
        verdict_code=code, verdict_label=CORRELATION_VERDICT_LABELS.get(code, code),
        headline=str(verdict.get("headline", "")), summary=str(verdict.get("summary", "")),
        reasons=tuple(verdict.get("reasons") or ()), warnings=tuple(doc.get("warnings") or ()),
        key_numbers=_key_numbers(doc), window_years=_sig(doc.get("window_years")),
        transform_words=TRANSFORM_WORDS.get(doc.get("transform"), str(doc.get("transform"))),
        simulations=f"{int((doc.get('null') or {}).get('n_simulations') or 0):,}", noise_text=_noise_text(doc),
        confidence=_conf(doc), source=source_view, provenance=_provenance(record_id, title, doc, source_view, created),
        links=Links(permalink=permalink or f"{base}/correlations/{record_id}",
                    json=f"/api/v1/correlations/{record_id}", csv=f"/api/v1/correlations/{record_id}/data.csv",
                    delete=f"/correlations/{record_id}/delete"),
        created_at=created)
