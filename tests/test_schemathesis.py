"""Property-based tests of the HTTP API against its own OpenAPI document.

Schemathesis generates requests from the document (the checked-in
``openapi/openapi.json``, which ``tests/test_service.py`` checks is the one served), schema-valid
(positive) and schema-violating (negative), sends them to the application in
process, and checks every answer: no server error, a documented status, content
type and headers, and a body that matches the documented schema.

``positive_data_acceptance`` is left out: the document cannot express the
library's cross-field rules (equal array lengths, increasing arc length, at most
one pressure form), so schema-valid cases may rightly be answered with 422.

For the batch, a schema-violating *case* is by design answered in place (200,
with a problem as that case's entry), so ``negative_data_rejection`` is replaced
there by a check that the answer has one entry per case.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path
from typing import Any

import hypothesis
import pytest
import schemathesis
import schemathesis_hooks
from schemathesis.generation import GenerationMode
from schemathesis.specs.openapi.checks import negative_data_rejection, positive_data_acceptance

from ibl_service.app import create_app
from ibl_service.config import Settings

#: Examples per operation: the full run (marked slow) and the quick one of the default run.
FULL_EXAMPLES = 100
QUICK_EXAMPLES = 3

#: Small limits keep generated bodies cheap; time limit generous for slow machines.
APP = create_app(Settings(max_points=400, max_batch=8, time_limit_s=20.0))
# Read from the file rather than fetched from the application: fetching it starts the
# application, whose start-up compiles every kernel, and this module is imported by each
# of the test run's workers while it collects the tests.
DOCUMENT = json.loads((Path(__file__).parents[1] / "openapi" / "openapi.json").read_text())
schema = schemathesis.openapi.from_dict(DOCUMENT)
schema.app, schema.location = APP, "/schema/openapi.json"
schema.config.generation.update(
    modes=[GenerationMode.POSITIVE, GenerationMode.NEGATIVE], max_examples=FULL_EXAMPLES
)


def _conforms(case: Any) -> None:
    batch = case.operation.path == "/v1/analyses/batch"
    excluded = [positive_data_acceptance, *([negative_data_rejection] if batch else [])]
    response = case.call_and_validate(excluded_checks=excluded)
    if batch and response.status_code == 200:
        (content_type,) = response.headers.get("content-type", [""])
        answer = (
            schemathesis_hooks.from_msgpack(None, response)
            if content_type.startswith(schemathesis_hooks.MSGPACK)
            else response.json()
        )
        assert len(answer["results"]) == len(case.body["cases"])


def _settings(examples: int) -> hypothesis.settings:
    return hypothesis.settings(
        deadline=None,
        max_examples=examples,
        derandomize=True,
        suppress_health_check=list(hypothesis.HealthCheck),
        database=None,
    )


@hypothesis.seed(20_250_601)
@_settings(QUICK_EXAMPLES)
@schema.parametrize()
def test_api_conforms_to_its_document_quick(case: Any) -> None:
    """The checks of the full run below, on fewer examples per operation."""
    _conforms(case)


@pytest.mark.slow
@hypothesis.seed(20_250_601)
@_settings(FULL_EXAMPLES)
@schema.parametrize()
def test_api_conforms_to_its_document(case: Any) -> None:
    _conforms(case)


@pytest.mark.slow
def test_in_depth_against_a_live_server() -> None:
    """``tests/live/schemathesis_deep.py``: ``ibl serve`` with two workers, every operation,
    every check, positive and negative data, until the server has answered at least 10,000
    requests; the script exits 0 only when schemathesis found no failure."""
    script = Path(__file__).parent / "live" / "schemathesis_deep.py"
    done = subprocess.run(
        [sys.executable, str(script)], capture_output=True, text=True, timeout=1800, check=False
    )
    print(done.stdout[-3000:])
    assert done.returncode == 0, done.stdout[-6000:] + done.stderr[-3000:]
