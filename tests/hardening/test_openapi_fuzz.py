"""Schemathesis against /openapi.json: every operation, valid and invalid requests, a bounded number each.

The app runs in process (ASGI) on a private SQLite file, with API keys set and small simulation counts.
Every answer must be below 500; its status, media type, headers and body must be as the OpenAPI
document says; and a request that breaks the schema must be refused with a 4xx. One stored audit and
one stored correlation stand in for half the generated ids, so the reads that succeed are tried too.
Schema-valid requests are not required to succeed ("positive data acceptance" is left out): a series
can fit the schema and still be unusable (too short, a window outside the data), which is a 422.
"""

from __future__ import annotations

import collections
import json

import pytest
import schemathesis
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st
from hypothesis.errors import Unsatisfiable
from schemathesis.checks import not_a_server_error
from schemathesis.generation.modes import GenerationMode
from schemathesis.specs.openapi.checks import (content_type_conformance, negative_data_rejection,
                                               response_headers_conformance, response_schema_conformance,
                                               status_code_conformance)
from starlette.testclient import TestClient

from app.main import create_app
from app.settings import Settings
from api.conftest import audit_body

pytestmark = pytest.mark.slow  # about 40 s: every operation, twice 25 generated requests plus the examples

EXAMPLES_PER_OPERATION = 25  # per mode (valid, invalid); CI runs all of them
KEY = "schemathesis-key-0123456789"
CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance, response_headers_conformance,
          response_schema_conformance, negative_data_rejection]
FUZZ_SETTINGS = settings(max_examples=EXAMPLES_PER_OPERATION, deadline=None, database=None,
                         phases=[Phase.explicit, Phase.generate], suppress_health_check=list(HealthCheck))


@pytest.fixture(scope="module")
def fuzzed_app(tmp_path_factory):
    folder = tmp_path_factory.mktemp("schemathesis")
    app = create_app(Settings(database_url=f"sqlite:///{folder / 'fuzz.sqlite3'}", api_keys=KEY,
                              default_simulations=100, compute_workers=2, compute_queue=16,
                              request_timeout_seconds=30))
    with TestClient(app) as client:
        headers = {"Authorization": f"Bearer {KEY}"}
        audit = client.post("/api/v1/audits", json=audit_body(), headers=headers)
        assert audit.status_code == 201, audit.text
        correlation = client.post("/api/v1/correlations", headers=headers,
                                  json=_correlation_example(client.get("/openapi.json").json()))
        assert correlation.status_code == 201, correlation.text
        stored = {"audit_id": audit.json()["id"], "correlation_id": correlation.json()["id"]}
        yield app, schemathesis.openapi.from_asgi("/openapi.json", app), stored


def _correlation_example(openapi: dict) -> dict:
    example = json.loads(json.dumps(openapi["components"]["schemas"]["CorrelationRequest"]["examples"][0]))
    example["options"]["simulations"] = 200
    return example


def _with_key(case, mode: GenerationMode) -> None:
    """A valid key on every valid request; an invalid one keeps its key out only when that is its fault."""
    headers = case.headers if case.headers is not None else {}
    if mode is GenerationMode.POSITIVE or "Authorization" in headers:
        headers["Authorization"] = f"Bearer {KEY}"
    case.headers = headers


def _operations(schema):
    return [result.ok() for result in schema.get_all_operations()]


def test_every_operation_answers_as_documented(fuzzed_app):
    app, schema, stored = fuzzed_app
    statuses: dict[str, collections.Counter] = {}
    failures: list[str] = []
    operations = _operations(schema)
    assert len(operations) >= 15  # audits, correlations, samples, trend, health: all of them are here

    for operation in operations:
        seen = statuses.setdefault(operation.label, collections.Counter())
        id_names = [p.name for p in operation.path_parameters if p.name in stored]

        for mode in (GenerationMode.POSITIVE, GenerationMode.NEGATIVE):
            @FUZZ_SETTINGS
            @given(case=operation.as_strategy(generation_mode=mode), use_stored=st.booleans())
            def exercise(case, use_stored):
                if use_stored and mode is GenerationMode.POSITIVE:
                    for name in id_names:
                        case.path_parameters[name] = stored[name]
                _with_key(case, mode)
                response = case.call()
                seen[response.status_code] += 1
                try:
                    case.validate_response(response, checks=CHECKS)
                except BaseException as error:  # noqa: BLE001  (a FailureGroup: collected, reported together)
                    failures.append(f"{operation.label} [{mode.value}] {response.status_code}: {error}"[:1500])

            try:
                exercise()
            except Unsatisfiable:
                pass  # e.g. no invalid value exists for a free-text path parameter

        for strategy in schema.get_strategies_from_examples(operation):
            @settings(max_examples=3, deadline=None, database=None, phases=[Phase.generate],
                      suppress_health_check=list(HealthCheck))
            @given(case=strategy)
            def documented_example(case):
                _with_key(case, GenerationMode.POSITIVE)
                response = case.call()
                seen[response.status_code] += 1
                try:
                    case.validate_response(response, checks=CHECKS)
                except BaseException as error:  # noqa: BLE001
                    failures.append(f"{operation.label} [example] {response.status_code}: {error}"[:1500])

            documented_example()

    summary = {label: dict(sorted(counter.items())) for label, counter in statuses.items()}
    print("schemathesis answers per operation:", json.dumps(summary, indent=1))
    assert not failures, "\n\n".join(failures[:10])
    assert all(status < 500 for counter in statuses.values() for status in counter)
    # The examples in the document are real: each create example was stored, each stored read answered.
    for label in ("POST /api/v1/audits", "POST /api/v1/correlations"):
        assert statuses[label][201] >= 1, summary[label]
    for label in ("GET /api/v1/audits/{audit_id}", "GET /audits/{audit_id}", "GET /api/v1/audits/{audit_id}/data.csv"):
        assert statuses[label][200] >= 1 and statuses[label][404] >= 1, summary[label]
