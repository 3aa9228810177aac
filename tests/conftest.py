"""Shared test set-up: every test runs once per kernel backend.

The autouse ``backend`` fixture is parametrised over ``"numpy"`` and
``"c"``; the C run is skipped only where the C kernel is absent, and is a
failure instead when ``TONEBANK_REQUIRE_C=1`` (as in ``make test`` and CI).
"""

import os

import pytest
from hypothesis import HealthCheck, settings

import tonebank

# Derandomised so that property tests cannot flake between runs; the
# backend fixture is safe to share between examples.
settings.register_profile(
    "tonebank",
    derandomize=True,
    deadline=None,
    max_examples=40,
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
settings.load_profile("tonebank")

C_AVAILABLE = tonebank.backend_info()["c_available"]
REQUIRE_C = os.environ.get("TONEBANK_REQUIRE_C", "") == "1"


@pytest.fixture(params=["numpy", "c"], autouse=True)
def backend(request):
    """Run the test inside ``tonebank.use_backend(<param>)``."""
    name = request.param
    if name == "c" and not C_AVAILABLE:
        reason = tonebank.backend_info()["c_unavailable_reason"]
        if REQUIRE_C:
            pytest.fail(f"TONEBANK_REQUIRE_C=1 but the C kernel is unavailable: {reason}")
        pytest.skip(f"C kernel unavailable: {reason}")
    with tonebank.use_backend(name):
        yield name
