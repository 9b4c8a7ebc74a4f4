"""The API fuzzed from its own OpenAPI document: no 5xx, and every answer in the
documented shape, for every operation, signed in."""

from __future__ import annotations

from typing import Any

import schemathesis
from hypothesis import HealthCheck, given, settings
from schemathesis.checks import not_a_server_error
from schemathesis.specs.openapi.checks import response_schema_conformance, status_code_conformance

from tests.conftest import bearer_token

EXAMPLES_PER_OPERATION = 8
CHECKS = (not_a_server_error, status_code_conformance, response_schema_conformance)


def _fuzz(operation: Any, headers: dict[str, str]) -> None:
    @given(case=operation.as_strategy())
    @settings(
        max_examples=EXAMPLES_PER_OPERATION,
        deadline=None,
        suppress_health_check=list(HealthCheck),
        derandomize=True,
        database=None,
    )
    def run(case: Any) -> None:
        response = case.call(headers=headers)
        case.validate_response(response, checks=CHECKS)

    run()


def test_every_operation_holds_under_generated_input(app: Any, client: Any, directory: Any) -> None:
    token = bearer_token(client, directory.email("admin"))
    signed_in = {"Authorization": f"Bearer {token}"}
    schema = schemathesis.openapi.from_asgi("/openapi.json", app)
    operations = [result.ok() for result in schema.get_all_operations()]
    assert len(operations) >= 30
    for operation in operations:
        headers = {} if operation.path == "/api/v1/auth/token" else signed_in
        _fuzz(operation, headers)
