"""The JSON API driven by a schema-driven fuzzer (schemathesis) from its own OpenAPI document, in-process: no server error."""

from __future__ import annotations

import tempfile
from pathlib import Path

import schemathesis
from hypothesis import HealthCheck, settings
from servertools import FIGURES

from server.app import create_app

_folder = tempfile.TemporaryDirectory()
app = create_app(Path(_folder.name))
schema = schemathesis.openapi.from_asgi("/api/openapi.json", app)


@schema.parametrize()
@settings(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck), database=None)
def test_no_operation_gives_a_server_error(case):
    response = case.call()
    FIGURES["schemathesis: API requests sent"] += 1
    assert response.status_code < 500, (case.method, case.formatted_path, response.status_code, response.text[:300])
    if response.status_code >= 400:
        # Every refusal is the API's one error shape, with a message that says why.
        body = response.json()
        assert body["ok"] is False and body["status"] == response.status_code and body["message"], body


def test_the_schema_covers_every_api_route():
    operations = {(op.method.upper(), op.path) for op in (r.ok() for r in schema.get_all_operations())}
    assert ("PUT", "/api/sheets/{sheet_id}") in operations and ("POST", "/api/solve") in operations
    assert ("POST", "/api/sheets/{sheet_id}/revisions/{number}/signatures") in operations
    assert len(operations) >= 10
