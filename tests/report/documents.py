"""Audit documents for the report tests, made by the real pipeline on the invented sample series.

Small simulation counts keep them quick; the numbers do not matter here, only that every part of the
document is present as ``app.audit.serialize.audit_document`` writes it, after a JSON round trip
(what the store gives back).
"""

from __future__ import annotations

import dataclasses
import json
from datetime import datetime, timezone
from functools import lru_cache

from app.audit import AuditOptions, Claim, audit_document, run_audit
from app.correlation import CorrelationOptions, correlation_document, run_correlation
from app.ingest import IngestOptions, read_csv_text
from app.settings import PROJECT_ROOT
from app.stats.adjust import Covariate

SAMPLES = PROJECT_ROOT / "sample_series"
CREATED = datetime(2025, 3, 14, 9, 26, tzinfo=timezone.utc)


@lru_cache(maxsize=None)
def sample_document(name: str = "quorvane-annual-temperature", start: float = 1998.0, end: float = 2012.5,
                    kind: str = "pause", label: str = "Quorvane temperature anomaly", units: str = "°C",
                    simulations: int = 200, seed: int = 20250314) -> str:
    """The stored form (JSON text) of one audit; parse it afresh in each test so none can alter another's."""
    table = read_csv_text((SAMPLES / f"{name}.csv").read_bytes(), IngestOptions(label=label, units=units))
    result = run_audit(table.series, Claim(start, end, kind), AuditOptions(simulations=simulations, seed=seed))
    return json.dumps(audit_document(result))


@lru_cache(maxsize=None)
def adjusted_document(factor: str = "ocean_index", simulations: int = 200, seed: int = 20250315) -> str:
    """An audit adjusted for a covariate: the monthly sample whose 'ocean_index' column drives part of it.

    ``factor`` renames the covariate, so a test can send a hostile name through the whole pipeline.
    """
    table = read_csv_text((SAMPLES / "wrenhollow-point-monthly-temperature.csv").read_bytes(),
                          IngestOptions(label="Wrenhollow Point temperature anomaly", units="°C"))
    index = table.extra_columns["ocean_index"]
    claim = Claim(2016 + 0.5 / 12, 2024 + 11.5 / 12, "reversal")
    result = run_audit(table.series, claim, AuditOptions(simulations=simulations, seed=seed),
                       covariates=[Covariate(factor, index.time, index.value)])
    return json.dumps(audit_document(result))


@lru_cache(maxsize=None)
def correlation_document_text(driver_label: str = "Greenhouse index", driver_units: str = "ppm",
                              response_label: str = "Quorvane temperature", response_units: str = "°C",
                              transform: str = "log", window_years: float = 15.0, simulations: int = 200,
                              seed: int = 20250316) -> str:
    """A stored correlation audit: the invented temperature that follows the invented greenhouse index."""
    table = read_csv_text((SAMPLES / "quorvane-forced-temperature.csv").read_bytes(),
                          IngestOptions(label=response_label, units=response_units))
    driver = dataclasses.replace(table.extra_columns["greenhouse_index"], label=driver_label, units=driver_units)
    result = run_correlation(driver, table.series, CorrelationOptions(window_years=window_years, transform=transform,
                                                                      simulations=simulations, seed=seed))
    return json.dumps(correlation_document(result))


def stored_body(document_json: str, audit_id: str = "AbCdEfGhIjKlMnOpQrStUvWx", title: str = "Has it stopped?"):
    """The API's body for one audit, as ``app.service.records.record_body`` builds it."""
    return {"id": audit_id, "kind": "audit", "title": title, "created_at": CREATED.isoformat().replace("+00:00", "Z"),
            **json.loads(document_json)}
