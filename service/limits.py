"""Documented limits of one request; checked with 422 before any model work.

Sized on a 2-core machine so that the largest allowed request finishes well inside the
gunicorn timeout (see README, "Limits"). The OpenAPI document carries the same numbers.
"""

MAX_HORIZON = 600
MAX_POLICIES = 16
MAX_SHOCKS = 64
MAX_SHIFTERS_PER_CURVE = 32
MAX_BATCH_SCENARIOS = 1000
#: Total policy-periods of one batch: sum over scenarios of policies x (longest horizon + 1).
#: 200,000 (e.g. 1,000 scenarios x 4 policies x 49 periods) answers in about a second here
#: with a body of about 60 MB; larger sweeps belong in several batches or the Python API.
MAX_POLICY_PERIODS = 200_000
MAX_BODY_BYTES = 8 * 1024 * 1024
MAX_NAME_LENGTH = 80
