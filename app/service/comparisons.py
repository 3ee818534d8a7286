"""One claim, several datasets: each series audited as an ordinary audit, answered in one stored document.

    request ─> ComparisonJob (Claim + AuditOptions + 2..8 Series) ─> run_audit per series
            ─> comparison document (per dataset the verdict and trends; whether they agree) ─> store

Every dataset is audited with the same options and seed, so the datasets differ only in their data.
"""

from __future__ import annotations

import csv
import hashlib
import dataclasses
import io
from collections import Counter
from dataclasses import dataclass
from typing import Any, Sequence

from app import __version__
from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.audit.claim import check_claim
from app.errors import InputError, Location
from app.ingest import IngestOptions, Series, check_window_in_series, series_from_json
from app.report.context import VERDICT_LABELS
from app.service.audits import audit_options, make_claim, rename_fields, string_times
from app.service.csv_export import neutralise
from app.service.limits import check_string_lengths, check_work
from app.service.payloads import series_payload
from app.service.timeline import check_made_on
from app.settings import Settings
from app.vocabulary import DATASETS_AGREE, DATASETS_DIFFER
from app.store import COMPARISON, AuditRecord, AuditRepository, NewAudit

MIN_DATASETS, MAX_DATASETS = 2, 8  # our requirement
DOCUMENT_SCHEMA = "trendaudit.comparison/1"
NUMBER_WORDS = {1: "one", 2: "two", 3: "three", 4: "four", 5: "five", 6: "six", 7: "seven", 8: "eight"}


@dataclass(frozen=True)
class ComparisonJob:
    title: str
    claim: Claim
    options: AuditOptions
    series: tuple[Series, ...]
    input_document: dict[str, Any]


def check_dataset_count(count: int, field: str = "series") -> None:
    if not MIN_DATASETS <= count <= MAX_DATASETS:
        raise InputError(f"{count} datasets given; a comparison takes {MIN_DATASETS} to {MAX_DATASETS}",
                         location=Location(field=field),
                         fix=f"Send between {MIN_DATASETS} and {MAX_DATASETS} series of the same quantity")


def prepare_comparison_job(*, title: str, claim: Claim, options: AuditOptions, series: Sequence[Series],
                           sources: Sequence[dict[str, Any]], settings: Settings,
                           made_on: str | None = None) -> ComparisonJob:
    check_dataset_count(len(series))
    check_claim(claim)
    for i, one in enumerate(series):
        try:
            check_window_in_series(one, claim.start, claim.end)
        except InputError as error:
            raise rename_fields(error, {"claim.start": f"series[{i}]", "claim.end": f"series[{i}]"}) from None
    check_work(sum(one.n for one in series), options.simulations, settings.max_simulated_points)
    labels = [one.label or f"Dataset {i + 1}" for i, one in enumerate(series)]
    title = title.strip() or f"{claim.kind.capitalize()} claimed {claim.start:g} to {claim.end:g}, " \
                             f"in {len(series)} datasets"
    check_string_lengths({"title": title}, settings.max_string_length)
    claim_document = {**dataclasses.asdict(claim), **({"made_on": made_on} if made_on else {})}
    document = {"claim": claim_document, "options": dataclasses.asdict(options),
                "series": [series_payload(dataclasses.replace(one, label=label)) for one, label in zip(series, labels)],
                "sources": list(sources)}
    return ComparisonJob(title=title, claim=claim, options=options,
                         series=tuple(dataclasses.replace(one, label=label) for one, label in zip(series, labels)),
                         input_document=document)


def _dataset_row(document: dict[str, Any]) -> dict[str, Any]:
    inputs, window, long_term = document["inputs"], document["window"], document["long_term"]
    return {"label": inputs["label"], "units": inputs["units"], "n": inputs["n"], "start": inputs["start"],
            "end": inputs["end"], "sha256": inputs["sha256"], "code": document["verdict"]["code"],
            "headline": document["verdict"]["headline"], "window_slope": window["slope"], "window_ci": window["ci"],
            "long_term_slope": long_term["slope"], "long_term_ci": long_term["ci"],
            "change_p_adjusted": document["trend_change"]["p_value_adjusted"], "noise": document["noise"]["kind"]}


def _count_word(n: int, capital: bool = False) -> str:
    word = NUMBER_WORDS.get(n, str(n))
    return word.capitalize() if capital else word


def agreement(rows: Sequence[dict[str, Any]]) -> dict[str, Any]:
    """Whether the datasets give the same verdict, and one sentence saying so."""
    counts = Counter(row["code"] for row in rows)
    (top, top_count), = counts.most_common(1)
    total = len(rows)
    label = lambda code: VERDICT_LABELS.get(code, code).lower()  # noqa: E731
    if top_count == total:
        everyone = "Both datasets give" if total == 2 else f"All {_count_word(total)} datasets give"
        sentence = f"{everyone} the same verdict: {label(top)}."
    else:
        tied = [code for code, count in counts.items() if count == top_count]
        others = [row for row in rows if row["code"] != top]
        said = lambda chosen: "; ".join(f"{row['label']}: {label(row['code'])}" for row in chosen)  # noqa: E731
        differ = said(others)
        if len(tied) > 1:
            sentence = f"The {_count_word(total)} datasets disagree: no verdict has a majority ({said(rows)})."
        else:
            sentence = (f"{_count_word(top_count, capital=True)} of {_count_word(total)} datasets agree "
                        f"({label(top)}); {'the other differs' if len(others) == 1 else 'the others differ'}: "
                        f"{differ}.")
    return {"all_agree": top_count == total, "majority_code": top if top_count * 2 > total else None,
            "agreeing": top_count, "datasets": total, "counts": dict(counts), "sentence": sentence}


def compute_comparison_document(job: ComparisonJob) -> dict[str, Any]:
    """Every dataset audited (CPU-bound: runs in the compute pool), then compared."""
    documents = []
    for i, one in enumerate(job.series):
        try:
            documents.append(audit_document(run_audit(one, job.claim, job.options)))
        except InputError as error:
            raise rename_fields(error, {"claim.start": f"series[{i}]", "claim.end": f"series[{i}]"}) from None
    rows = [_dataset_row(doc) for doc in documents]
    agree = agreement(rows)
    seed = documents[0]["seed"]
    return {"schema": DOCUMENT_SCHEMA, "software_version": __version__, "seed": seed,
            "claim": job.input_document["claim"], "options": {**dataclasses.asdict(job.options), "seed": seed},
            "rate": documents[0]["rate"], "datasets": rows, "agreement": agree,
            "verdict": {"code": DATASETS_AGREE if agree["all_agree"] else DATASETS_DIFFER,
                        "headline": agree["sentence"], "summary": agree["sentence"]}}


def store_comparison(audits: AuditRepository, job: ComparisonJob, document: dict[str, Any]) -> tuple[AuditRecord, str]:
    seed = document.get("seed")
    input_document = {**job.input_document, "options": {**job.input_document["options"], "seed": seed}}
    summary = {"verdict": {"code": document["verdict"]["code"], "headline": document["verdict"]["headline"]},
               "claim": input_document["claim"], "labels": [row["label"] for row in document["datasets"]],
               "n": sum(one.n for one in job.series)}
    digest = "".join(one.sha256() for one in job.series)
    return audits.create(NewAudit(
        title=job.title, input_document=input_document, result_document=document,
        input_sha256=hashlib.sha256(digest.encode()).hexdigest(), seed=seed,
        software_version=document.get("software_version") or __version__, summary=summary, kind=COMPARISON))


def comparison_data_csv(input_document: dict[str, Any], result_document: dict[str, Any]) -> str:
    """One row per dataset: its verdict and its trends, per year as stored."""
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(["dataset", "n", "verdict", "window_slope", "window_ci_low", "window_ci_high",
                     "long_term_slope", "long_term_ci_low", "long_term_ci_high", "change_p_adjusted"])
    for row in result_document.get("datasets") or []:
        writer.writerow([neutralise(str(row["label"])), row["n"], row["code"], row["window_slope"],
                         *(row["window_ci"] or [None, None]), row["long_term_slope"],
                         *(row["long_term_ci"] or [None, None]), row["change_p_adjusted"]])
    return out.getvalue()


def comparison_job_from_json(request: Any, settings: Settings) -> ComparisonJob:
    """``request``: the JSON body, validated against the API's ``ComparisonRequest`` schema."""
    texts: dict[str, str | None] = {"title": request.title}
    for i, given in enumerate(request.series):
        texts.update({f"series[{i}].label": given.label, f"series[{i}].units": given.units,
                      **string_times(given.time, f"series[{i}].time")})
    check_string_lengths(texts, settings.max_string_length)
    check_dataset_count(len(request.series))
    values = request.ingest.model_dump()
    reading = IngestOptions(decimal_comma=values["decimal_comma"], missing_sentinels=tuple(values["missing_sentinels"]),
                            anomaly_base=values["anomaly_base"], annual_means=values["annual_means"],
                            max_points=settings.max_points,
                            **({"min_months_per_year": values["min_months_per_year"]}
                               if values["min_months_per_year"] is not None else {}))
    series = [series_from_json(given.model_dump(exclude_none=True), reading, field=f"series[{i}]")
              for i, given in enumerate(request.series)]
    return prepare_comparison_job(
        title=request.title, claim=make_claim(request.claim.start, request.claim.end, request.claim.kind),
        options=audit_options(request.options.model_dump(), settings), series=series,
        sources=[source.model_dump() for source in request.sources], settings=settings,
        made_on=check_made_on(request.claim.made_on))
