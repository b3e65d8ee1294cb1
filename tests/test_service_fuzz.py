"""Property-based fuzzing of the live service from its own OpenAPI (schemathesis).

Requests are drawn from the published schema, valid (positive) and invalid
(negative) alike; every answer must be a documented status and never a 5xx, of the
documented content type, and match the documented response schema (the screening's
FeatureCollection is checked against ``icing/data/schemas/hazards-v1.json``);
invalid requests must be refused. The examples are bounded so the run stays near a
minute.
"""

import pytest

schemathesis = pytest.importorskip("schemathesis")

from hypothesis import HealthCheck, given, settings  # noqa: E402
from schemathesis import GenerationMode, checks  # noqa: E402

CHECKS = [
    checks.not_a_server_error,
    checks.status_code_conformance,
    checks.content_type_conformance,
    checks.response_schema_conformance,
]
EXAMPLES = {"POST": 60, "GET": 5}  # per operation and mode; the POSTs run screenings


@pytest.fixture(scope="module")
def operations(live_service):
    schema = schemathesis.openapi.from_url(
        live_service.url + "/openapi.json", headers=live_service.headers
    )
    return [result.ok() for result in schema.get_all_operations()]


@pytest.mark.parametrize("mode", [GenerationMode.POSITIVE, GenerationMode.NEGATIVE])
def test_no_request_drawn_from_the_openapi_breaks_the_service(operations, live_service, mode):
    assert {op.path for op in operations} >= {"/v1/screen", "/v1/profile", "/v1/forecasts"}
    extra = [checks.negative_data_rejection] if mode == GenerationMode.NEGATIVE else []
    for op in operations:
        if mode == GenerationMode.NEGATIVE and op.method.upper() == "GET":
            continue  # nothing to send wrong: no parameters

        @given(case=op.as_strategy(generation_mode=mode))
        @settings(
            max_examples=EXAMPLES[op.method.upper()],
            deadline=None,
            suppress_health_check=list(HealthCheck),
            database=None,
        )
        def call(case):
            case.call_and_validate(headers=live_service.headers, checks=CHECKS + extra, timeout=60)

        call()


def test_the_documented_examples_work(operations, live_service):
    """The request examples of the OpenAPI are answered 200, matching the response schema."""
    ran = 0
    for op in operations:
        for strategy in op.schema.get_strategies_from_examples(op):

            @given(case=strategy)
            @settings(max_examples=3, deadline=None, suppress_health_check=list(HealthCheck))
            def call(case):
                response = case.call_and_validate(
                    headers=live_service.headers, checks=CHECKS, timeout=60
                )
                assert response.status_code == 200, response.text

            call()
            ran += 1
    assert ran >= 2  # screen and profile
