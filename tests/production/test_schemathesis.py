"""Property-based API tests generated from our own OpenAPI document (schemathesis, in-process).

Every operation gets a bounded number of generated requests; none may answer 5xx, and every answer must
conform to the document (status, content type, headers, schema), and requests the document calls invalid
must be rejected. The check that every schema-valid request is accepted is left out: a site has rules
across fields (a grid inside its band, ids that refer to systems) that an OpenAPI schema cannot state.
The app has a token, as the document's bearer security declares: schemathesis sends it, and checks that the
operations declaring security refuse requests without it or with a wrong one.
"""

import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.specs.openapi.checks import positive_data_acceptance

from cohop.api import create_app

TOKEN = "schemathesis-token-0123456789"
app = create_app({"TESTING": True, "COHOP_MAX_SOLVE_S": 0.2, "COHOP_MAX_SIMULATED_ATTEMPTS": 200_000,
                  "COHOP_TOKENS": (TOKEN,)})
schema = schemathesis.openapi.from_wsgi("/openapi.json", app)


@schema.parametrize()
@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
def test_every_endpoint_conforms_and_never_fails(case):
    case.call_and_validate(headers={"Authorization": f"Bearer {TOKEN}"}, excluded_checks=[positive_data_acceptance])
