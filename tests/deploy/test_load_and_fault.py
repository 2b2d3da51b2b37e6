"""The short load-and-fault run (deploy/loadtest.py --check): gunicorn under wrk, one worker
killed half-way, SIGTERM with a request in flight. Needs wrk; CI installs it and sets
SHOCKPATH_REQUIRE_WRK=1 so that a missing wrk fails there instead of skipping."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
pytestmark = pytest.mark.slow


def test_the_service_survives_a_killed_worker_and_shuts_down_gracefully(compiled_kernels):
    if shutil.which("wrk") is None:
        if os.environ.get("SHOCKPATH_REQUIRE_WRK"):
            pytest.fail("wrk is required here (apt-get install wrk)")
        pytest.skip("wrk is not installed (Debian package wrk)")
    result = subprocess.run(
        [sys.executable, "deploy/loadtest.py", "--seconds", "4", "--check"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert result.returncode == 0, result.stdout[-3000:] + result.stderr[-3000:]
    assert "load and fault checks passed" in result.stdout
