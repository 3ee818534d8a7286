"""OpenAPI at /openapi.json and /docs, with a worked example for every endpoint that takes input."""

from __future__ import annotations

from .conftest import TEST_SIMULATIONS


def test_docs_page_is_served(client):
    page = client.get("/docs")
    assert page.status_code == 200 and "openapi.json" in page.text


def test_every_endpoint_is_documented(client):
    paths = client.get("/openapi.json").json()["paths"]
    expected = {("/api/v1/audits", "post"), ("/api/v1/audits", "get"), ("/api/v1/audits/{audit_id}", "get"),
                ("/api/v1/audits/{audit_id}", "delete"), ("/api/v1/audits/{audit_id}/data.csv", "get"),
                ("/audits/{audit_id}", "get"), ("/api/v1/samples", "get"), ("/api/v1/samples/{name}", "get"),
                ("/api/v1/trend", "post"), ("/healthz", "get"), ("/api/v1/correlations", "post"),
                ("/api/v1/correlations", "get"), ("/api/v1/correlations/{correlation_id}", "get"),
                ("/api/v1/correlations/{correlation_id}", "delete"),
                ("/api/v1/correlations/{correlation_id}/data.csv", "get"), ("/correlations/{correlation_id}", "get")}
    assert expected <= {(path, method) for path, ops in paths.items() for method in ops}


def test_create_documents_json_and_multipart_with_a_worked_example(client):
    spec = client.get("/openapi.json").json()
    content = spec["paths"]["/api/v1/audits"]["post"]["requestBody"]["content"]
    assert set(content) == {"application/json", "multipart/form-data"}
    schemas = spec["components"]["schemas"]
    for ref in (content["application/json"]["schema"]["$ref"], content["multipart/form-data"]["schema"]["$ref"]):
        assert ref.split("/")[-1] in schemas
    assert {"claim_start", "claim_end", "claim_kind", "file", "time_column", "value_column"} <= set(
        schemas["MultipartAuditForm"]["properties"])
    assert "Location" in spec["paths"]["/api/v1/audits"]["post"]["responses"]["201"]["headers"]


def test_the_documented_examples_work(client):
    """The worked examples are real requests: sent as they stand (with fewer simulations), they succeed."""
    schemas = client.get("/openapi.json").json()["components"]["schemas"]
    for name, path, status in (("AuditRequest", "/api/v1/audits", 201), ("TrendRequest", "/api/v1/trend", 200),
                               ("CorrelationRequest", "/api/v1/correlations", 201)):
        examples = schemas[name]["examples"]
        assert examples, name
        for example in examples:
            if "options" in example:
                example = {**example, "options": {**example["options"], "simulations": TEST_SIMULATIONS}}
            response = client.post(path, json=example)
            assert response.status_code == status, (name, response.text)


def test_the_covariate_examples_show_an_adjustment(client):
    schemas = client.get("/openapi.json").json()["components"]["schemas"]
    audit_example = next(e for e in schemas["AuditRequest"]["examples"] if e.get("covariates"))
    audit_example = {**audit_example, "options": {**audit_example["options"], "simulations": TEST_SIMULATIONS}}
    (factor,) = client.post("/api/v1/audits", json=audit_example).json()["adjustment"]["factors"]
    assert factor["lag"] == 1 and factor["ci"][0] < 0.08 < factor["ci"][1]  # the example's index enters a year late
    trend_example = next(e for e in schemas["TrendRequest"]["examples"] if e.get("covariates"))
    (factor,) = client.post("/api/v1/trend", json=trend_example).json()["adjustment"]["factors"]
    assert factor["lag"] == 1


def test_the_correlation_endpoints_are_documented_with_their_bodies(client):
    spec = client.get("/openapi.json").json()
    create = spec["paths"]["/api/v1/correlations"]["post"]
    assert create["requestBody"]["content"]["application/json"]["schema"]["$ref"].endswith("/CorrelationRequest")
    assert "Location" in create["responses"]["201"]["headers"]
    assert "text/csv" in spec["paths"]["/api/v1/correlations/{correlation_id}/data.csv"]["get"]["responses"]["200"][
        "content"]
    assert {"covariate_columns", "covariate_max_lag"} <= set(spec["components"]["schemas"]["MultipartAuditForm"][
        "properties"])


def test_every_parameterised_path_has_an_example(client):
    paths = client.get("/openapi.json").json()["paths"]
    for path, operations in paths.items():
        for operation in operations.values():
            for parameter in operation.get("parameters", []):
                if parameter["in"] == "path":
                    assert parameter.get("examples") or parameter["schema"].get("examples"), (path, parameter)
