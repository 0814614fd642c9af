"""Schemathesis fuzzing of every operation against the running test server (bounded for CI).

Requests are generated from the OpenAPI schema the server publishes (valid and invalid
values, multipart uploads of random bytes) and sent to a live server holding a small lab,
once with a viewer's token (mostly refusals), once with a maker's (records and uploads) and
once with an administrator's (limits).  Each response must not be a server error and must
conform to the schema: a documented status code, content type and body.  Every operation gets
a fresh token, because the fuzzer may revoke the one it holds (DELETE /api/v1/tokens/current/).
CI runs this on SQLite and on PostgreSQL (.ci/run).
"""

from __future__ import annotations

import pytest
import requests
import schemathesis
from hypothesis import HealthCheck, Phase, given, settings
from schemathesis.checks import (
    content_type_conformance,
    not_a_server_error,
    response_schema_conformance,
    status_code_conformance,
)
from schemathesis.core.failures import Failure, FailureGroup

from .conftest import QcLab

CHECKS = [not_a_server_error, status_code_conformance, content_type_conformance,
          response_schema_conformance]
EXAMPLES_PER_OPERATION = 4


@pytest.fixture
def fuzz_lab(transactional_db, chain, administrator):
    """A few records of each kind, so list and detail bodies are checked with real rows."""
    lab = QcLab(chain, administrator)
    substrate = chain.decorated_substrate()
    lab.measure(substrate, "good_substrate_map.csv")
    chain.s.flag_raise(actor=chain.maker, target=substrate, category="handling",
                       message="Checked by the fuzz test.")
    return lab


def _new_token(user) -> str:
    from knox.models import AuthToken

    return AuthToken.objects.create(user=user)[1]


def _fuzz(operation, *, base_url: str, token: str) -> None:
    """Send EXAMPLES_PER_OPERATION generated requests to one operation and check each."""

    @given(case=operation.as_strategy())
    @settings(max_examples=EXAMPLES_PER_OPERATION, deadline=None, derandomize=True,
              database=None, phases=[Phase.explicit, Phase.generate],
              suppress_health_check=list(HealthCheck))
    def run(case):
        case.call_and_validate(base_url=base_url, headers={"Authorization": f"Token {token}"},
                               checks=CHECKS, timeout=30)

    run()


@pytest.mark.parametrize("role", ["viewer", "maker", "administrator"])
def test_no_server_error_and_responses_conform(live_server, fuzz_lab, role, request):
    user = request.getfixturevalue(role)
    raw = requests.get(f"{live_server.url}/api/v1/schema/",
                       headers={"Accept": "application/json"}, timeout=30).json()
    schema = schemathesis.openapi.from_dict(raw)
    operations = [result.ok() for result in schema.get_all_operations()]
    assert len(operations) >= 60  # every endpoint of the schema is fuzzed
    failures = []
    for operation in operations:
        try:
            _fuzz(operation, base_url=live_server.url, token=_new_token(user))
        except (Failure, FailureGroup, requests.RequestException) as error:  # report them all
            failures.append(f"{operation.label}: {error}")
    assert not failures, "\n\n".join(failures)
