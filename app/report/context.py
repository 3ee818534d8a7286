"""The typed context the report template renders: every sentence and number, worked out from the stored audit.

``report_context`` reads the stored document (``app.audit.serialize.audit_document``) and the audit's
own record (id, title, source, creation time). It formats; it never computes a statistic.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timezone
from typing import Any
from urllib.parse import urlsplit

from app.report.claim_context import ClaimView, claim_view, window_change_text, window_words
from app.report.plain_words import (ROBUSTNESS_HEADINGS, KeyNumberWords, Words, fit_words, key_number_words,
                                    plain_paragraph, what_would_change)
from app.report.numbers import Rate, format_p, is_number, time_of, window_span
from app.vocabulary import (ACCELERATION, CHANGE_SUPPORTED, CONSISTENT, CONTRADICTED, LEVEL_SHIFT, MODEL_DEPENDENT,
                            NO_TREND, OTHER_CHANGE, PAUSE, REVERSAL, SLOWDOWN, TOO_SHORT)

VERDICT_LABELS = {
    CONSISTENT: "Consistent with the long-term trend",
    CHANGE_SUPPORTED: "A change in trend is supported",
    TOO_SHORT: "Too short to tell",
    CONTRADICTED: "The data contradict the claim",
    NO_TREND: "No long-term trend to compare with",
    LEVEL_SHIFT: "A jump in level, not a change in trend",
    MODEL_DEPENDENT: "Support depends on the noise model",
    OTHER_CHANGE: "A change, but not the one claimed",
}

CLAIM_WORDS = {
    PAUSE: "a pause",
    SLOWDOWN: "a slowdown",
    REVERSAL: "a reversal",
    ACCELERATION: "an acceleration",
}

METHOD_LABELS = {
    "white": "White noise (each point independent)",
    "ar1": "AR(1) noise (Santer et al. 2008)",
    "ar2": "AR(2) noise (two years' memory)",
    "arma11": "ARMA(1,1) noise (Foster & Rahmstorf 2011)",
    "gls_ar1": "Generalised least squares, AR(1) errors",
    "hac": "Newey-West (HAC) standard errors",
}

NOISE_WORDS = {"white": "white noise", "ar1": "AR(1) noise", "ar2": "AR(2) noise", "arma11": "ARMA(1,1) noise"}


@dataclass(frozen=True)
class KeyNumber:
    label: str
    value: str
    detail: str


@dataclass(frozen=True)
class RobustnessView:
    method: str
    is_chosen: bool
    window: str
    window_range: str
    long_term: str
    p_window: str
    p_change: str
    verdict: str
    holds: str
    fit: str = ""  # AICc above the best noise model, "+0.0" for the best; empty for rows that are not noise models
    heading: str = ""  # what the row assumes about the year-to-year swings, in plain words
    fit_words: str = ""  # "best fit", "about as good a fit", ...


@dataclass(frozen=True)
class SegmentView:
    span: str
    slope: str
    slope_range: str


@dataclass(frozen=True)
class SourceView:
    name: str
    url: str  # shown as text always
    href: str | None  # a link only for http(s) addresses
    notes: str


@dataclass(frozen=True)
class ProvenanceRow:
    label: str
    value: str
    code: bool = False  # monospaced: hashes, ids, seeds


@dataclass(frozen=True)
class Links:
    permalink: str
    json: str
    csv: str
    delete: str  # the desk's form target for deleting with the owner token


@dataclass(frozen=True)
class ReportContext:
    id: str
    title: str
    claim: ClaimView | None  # the claim as said, when its words or who said it were given
    claim_text: str
    verdict_code: str
    verdict_label: str
    headline: str
    summary: str
    reasons: tuple[str, ...]
    what_would_change: tuple[str, ...]
    robustness: tuple[RobustnessView, ...]
    p_window_header: str
    nonparametric: str
    whole_record: str
    segments: tuple[SegmentView, ...]
    rate_unit: str
    segment_years: str
    simulations: str
    noise_text: str
    confidence: str
    source: SourceView
    provenance: tuple[ProvenanceRow, ...]
    ingest_notes: tuple[str, ...]
    links: Links
    created_at: str
    seasonal_sentence: str = ""  # what was done about a seasonal cycle, said beside the verdict
    plain: tuple[Words, ...] = ()
    change_brief: str = ""
    key_words: tuple[KeyNumberWords, ...] = ()


def safe_href(url: str | None) -> str | None:
    """Only http and https addresses become links; anything else (javascript:, data:) stays plain text."""
    if not url:
        return None
    parts = urlsplit(url.strip())
    return url.strip() if parts.scheme in ("http", "https") and parts.netloc else None


def source_view_of(source: dict[str, Any] | None) -> SourceView:
    source = source or {}
    return SourceView(name=str(source.get("name") or ""), url=str(source.get("url") or ""),
                      href=safe_href(source.get("url")), notes=str(source.get("notes") or ""))


def _get(mapping: Any, *keys: str, default: Any = None) -> Any:
    for key in keys:
        if not isinstance(mapping, dict) or key not in mapping:
            return default
        mapping = mapping[key]
    return default if mapping is None else mapping


def created_text(created_at: Any) -> str:
    """Creation time to the minute, in UTC; the API's body carries it as ISO 8601 text."""
    if isinstance(created_at, str):
        try:
            created_at = datetime.fromisoformat(created_at.replace("Z", "+00:00"))
        except ValueError:
            return created_at
    if isinstance(created_at, datetime):
        if created_at.tzinfo is not None:
            created_at = created_at.astimezone(timezone.utc)
        return created_at.strftime("%Y-%m-%d %H:%M UTC")
    return str(created_at or "")


def claim_text(doc: dict[str, Any]) -> str:
    claim = doc.get("claim") or {}
    what = CLAIM_WORDS.get(claim.get("kind"), str(claim.get("kind", "a change")))
    window = window_words(claim) or window_span(doc)
    return f"{what[0].upper()}{what[1:]} from {window}"


def summary_text(doc: dict[str, Any], summary: str) -> str:
    """The verdict's summary, then the change over the window in the series' own units."""
    change = window_change_text(doc)
    if not change:
        return summary
    return f"{summary} Over the claimed window the series' own trend amounts to {change}.".strip()


def _robustness(doc: dict[str, Any], rate: Rate) -> tuple[RobustnessView, ...]:
    chosen = _get(doc, "noise", "kind", default="ar1")
    rows = []
    for row in doc.get("robustness") or []:
        rows.append(RobustnessView(
            method=METHOD_LABELS.get(row.get("method"), str(row.get("method"))),
            is_chosen=row.get("method") == chosen,
            window=rate.number(row.get("window_slope")),
            window_range=rate.range_text(row.get("window_ci")),
            long_term=rate.number(row.get("long_term_slope")),
            p_window=format_p(row.get("p_window_vs_long_term")),
            p_change=format_p(row.get("change_p_adjusted")),
            verdict=VERDICT_LABELS.get(row.get("code"), str(row.get("code"))),
            holds="Yes" if row.get("holds") else "No",
            fit=f"+{row['criterion_delta']:.1f}" if is_number(row.get("criterion_delta")) else "",
            heading=ROBUSTNESS_HEADINGS.get(row.get("method"), str(row.get("method"))),
            fit_words=fit_words(row.get("criterion_delta")),
        ))
    return tuple(rows)


def _nonparametric(doc: dict[str, Any], rate: Rate, conf: str) -> str:
    window_mk = _get(doc, "window", "mann_kendall", default={})
    window_sen = _get(doc, "window", "sen", default={})
    long_mk = _get(doc, "long_term", "mann_kendall", default={})
    return (f"Without assuming straight lines or normal noise: Sen's slope over the window is "
            f"{rate.text(window_sen.get('slope'))} ({conf} range {rate.range_text(window_sen.get('ci'))}), and the "
            f"Mann-Kendall test finds {_mk_words(window_mk)} in the window ({format_p(window_mk.get('p_value'))}). "
            f"Over the reference period Sen's slope is {rate.text(long_mk.get('sen_slope'))} and the test finds "
            f"{_mk_words(long_mk)} ({format_p(long_mk.get('p_value'))}, with the Hamed-Rao correction for "
            f"autocorrelation).")


def _mk_words(mk: dict[str, Any]) -> str:
    trend = mk.get("trend")
    return {"increasing": "a rising trend", "decreasing": "a falling trend"}.get(trend, "no clear trend")


def _whole_record(doc: dict[str, Any], rate: Rate) -> str:
    whole = doc.get("whole_record") or {}
    if not whole or whole.get("same_as_reference"):
        return "The reference period is the whole record."
    return (f"With the whole record as the reference period instead, the long-term trend is "
            f"{rate.text(whole.get('long_term_slope'))} and the verdict would be: "
            f"{VERDICT_LABELS.get(whole.get('code'), str(whole.get('code'))).lower()}.")


def _segments(doc: dict[str, Any], rate: Rate) -> tuple[SegmentView, ...]:
    return tuple(SegmentView(span=f"{time_of(doc, s.get('start'))} to {time_of(doc, s.get('end'))}",
                             slope=rate.text(s.get("slope")), slope_range=rate.range_text(s.get("slope_ci")))
                 for s in _get(doc, "segments", "segments", default=[]))


def _noise_text(doc: dict[str, Any]) -> str:
    noise = doc.get("noise") or {}
    kind = noise.get("kind", "ar1")
    words = NOISE_WORDS.get(kind, str(kind))
    how = "chosen by the data" if _get(doc, "options", "noise", default="") == "auto" else "set for this audit"
    parts = [f"The year-to-year variability is modelled as {words} ({how}"]
    selection = noise.get("selection") or {}
    if selection.get("runner_up"):
        parts.append(f"; next best {NOISE_WORDS.get(selection['runner_up'], selection['runner_up'])}")
    parts.append(")")
    if kind != "white" and is_number(noise.get("r1")):
        parts.append(f" with a lag-one autocorrelation of {noise['r1']:.2f}")
    units = _get(doc, "inputs", "units", default="")
    if is_number(noise.get("marginal_sd")):
        parts.append(f" and a standard deviation of {noise['marginal_sd']:.3g}{(' ' + units) if units else ''}")
    return "".join(parts) + ", estimated from the residuals around the long-term trend."


def _provenance(record_id: str, title: str, doc: dict[str, Any], source: SourceView, created: str
                ) -> tuple[ProvenanceRow, ...]:
    inputs = doc.get("inputs") or {}
    options = doc.get("options") or {}
    sampling = inputs.get("sampling") or "irregular"
    rows = [
        ProvenanceRow("Title", title or "(untitled)"),
        ProvenanceRow("Series", inputs.get("label") or "(no label)"),
        ProvenanceRow("Units", inputs.get("units") or "(none given)"),
        ProvenanceRow("Points audited", f"{inputs.get('n')} ({sampling}), {time_of(doc, inputs.get('start'))} to "
                                        f"{time_of(doc, inputs.get('end'))}; {inputs.get('missing', 0)} missing"),
        ProvenanceRow("Source", source.name or "(not given)"),
        ProvenanceRow("Input hash (SHA-256 of the numbers audited)", inputs.get("sha256", ""), code=True),
        ProvenanceRow("Software version", f"Trend Audit {doc.get('software_version', '')}", code=True),
        ProvenanceRow("Seed", str(doc.get("seed", "")), code=True),
        ProvenanceRow("Options", f"confidence {options.get('confidence')}, noise model {options.get('noise')}, "
                                 f"{options.get('simulations')} simulations, slopes shown {options.get('rate_unit')}"),
        ProvenanceRow("Created", created),
        ProvenanceRow("Audit id", record_id, code=True),
    ]
    return tuple(rows[:5] + _read_rows(inputs) + rows[5:])


def _read_rows(inputs: dict[str, Any]) -> list[ProvenanceRow]:
    """How the file was read (sheet, column, layout), where a link's data came from, and the seasonal cycle."""
    rows = []
    if inputs.get("value_column"):
        where = f"“{inputs['value_column']}”"
        if inputs.get("sheet"):
            where += f", sheet “{inputs['sheet']}”"
        if inputs.get("layout") and inputs["layout"] != "long":
            where += f", read as a {inputs['layout']} table"
        rows.append(ProvenanceRow("Column audited", where))
    fetched = inputs.get("provenance") or {}
    if fetched:
        rows += [ProvenanceRow("Fetched from", str(fetched.get("url", ""))),
                 ProvenanceRow("Final address", str(fetched.get("final_url", ""))),
                 ProvenanceRow("Retrieved", f"{fetched.get('retrieved_at')} (HTTP {fetched.get('status')}, "
                                            f"{fetched.get('size', 0):,} bytes)"),
                 ProvenanceRow("File hash (SHA-256 of the bytes fetched)", str(fetched.get("sha256", "")), code=True)]
    seasonal = inputs.get("seasonal") or {}
    if seasonal.get("sentence"):
        rows.append(ProvenanceRow("Seasonal cycle", seasonal["sentence"]))
    return rows


def report_context(*, audit_id: str, title: str, created_at: Any, document: dict[str, Any],
                   source: dict[str, Any] | None = None, base_url: str = "",
                   permalink: str | None = None) -> ReportContext:
    doc = document
    rate = Rate.of(doc)
    conf = f"{100 * float(_get(doc, 'options', 'confidence', default=0.95)):.0f}%"
    source_view = source_view_of(source)
    created = created_text(created_at)
    verdict = doc.get("verdict") or {}
    code = verdict.get("code", "")
    base = base_url.rstrip("/")
    link = permalink or f"{base}/audits/{audit_id}"
    return ReportContext(
        id=audit_id,
        title=title,
        claim=claim_view(doc, safe_href),
        claim_text=claim_text(doc),
        verdict_code=code,
        verdict_label=VERDICT_LABELS.get(code, code),
        headline=verdict.get("headline", ""),
        summary=summary_text(doc, verdict.get("summary", "")),
        reasons=tuple(verdict.get("reasons") or ()),
        what_would_change=tuple(verdict.get("what_would_change") or ()),
        robustness=_robustness(doc, rate),
        p_window_header=("Window's trend stronger than the long-term one? (p)" if _get(doc, "claim", "kind") ==
                         "acceleration" else "Window's trend weaker than the long-term one? (p)"),
        nonparametric=_nonparametric(doc, rate, conf),
        whole_record=_whole_record(doc, rate),
        segments=_segments(doc, rate),
        rate_unit=rate.axis_unit,
        segment_years=f"{float(_get(doc, 'options', 'min_segment_years', default=10.0)):g}",
        simulations=f"{int(_get(doc, 'spell', 'n_simulations', default=0)):,}",
        noise_text=_noise_text(doc),
        confidence=conf,
        source=source_view,
        provenance=_provenance(audit_id, title, doc, source_view, created),
        ingest_notes=tuple(_get(doc, "inputs", "notes", default=())),
        links=Links(permalink=link, json=f"/api/v1/audits/{audit_id}",
                    csv=f"/api/v1/audits/{audit_id}/data.csv", delete=f"/audits/{audit_id}/delete"),
        created_at=created,
        seasonal_sentence=str(_get(doc, "inputs", "seasonal", "sentence", default="") or ""),
        plain=plain_paragraph(doc),
        change_brief=what_would_change(doc),
        key_words=key_number_words(doc, conf),
    )
