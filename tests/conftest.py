"""Fixtures: the app built through its factory, a client, and the OpenAPI checker."""

from __future__ import annotations

import copy
import os
import tempfile

import pytest
from hypothesis import HealthCheck, settings

from service import create_app
from service.examples import example_request

from .openapi_check import ResponseChecker

# Apps built by the tests (and gunicorn started by them) keep the scenario library in a
# scratch file, never in the checkout; tests of the library pass their own database.
os.environ.setdefault(
    "SHOCKPATH_LIBRARY_PATH", os.path.join(tempfile.mkdtemp(prefix="shockpath-tests-"), "library.sqlite3")
)

settings.register_profile(
    "ci", max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow]
)
settings.register_profile("thorough", max_examples=500, deadline=None)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


def pytest_collection_modifyitems(items):
    """Modules that start processes (tests marked slow: gunicorn, chromium, schemathesis) run
    first, each module's tests still together and in order: on several cores (pytest-xdist) the
    long tests then start early, and the last minute is many short tests the workers share."""
    slow = {item.module for item in items if item.get_closest_marker("slow")}
    items.sort(key=lambda item: item.module not in slow)


@pytest.fixture(autouse=True)
def floating_point_warnings_fail(monkeypatch):
    """The engine silences floating-point warnings in service; in tests they are errors, so
    that an overflow or invalid value on ordinary inputs fails the test that caused it."""
    monkeypatch.setattr("service.engine.paths.FLOATING_POINT", {})


@pytest.fixture(scope="session")
def compiled_kernels():
    """The engine's kernels in numba's on-disk cache, for a test that starts the service in
    another process: it then loads them instead of compiling them, which on a busy machine can
    outlast its start deadline (when that test runs first, or alone)."""
    from service.engine.kernel import warm_up

    warm_up()


@pytest.fixture(scope="session")
def app():
    return create_app({"TESTING": True})


@pytest.fixture(scope="session")
def checker(app):
    return ResponseChecker(app.extensions["shockpath.openapi"])


@pytest.fixture()
def client(app, checker):
    """A test client whose every response is validated against the OpenAPI document."""
    return checker.wrap(app.test_client())


@pytest.fixture()
def contract_request():
    return copy.deepcopy(example_request("contract-example"))
