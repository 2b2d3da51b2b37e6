"""service/engine/schedules.py: supply elasticity over time against Nerlove's partial
adjustment (sources in tests/catalogue.py) and the linear schedule's end points."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from service import simulate
from service.engine.schedules import rate_from_half_life

from ..catalogue import nerlove_half_life, nerlove_share_closed
from ..strategies import floats
from .builders import supply_path


@pytest.mark.parametrize("rate", [0.1, 0.25, 0.5, 0.9])
def test_geometric_schedule_closes_nerloves_share_of_the_gap(rate):
    sr, lr = 0.2, 1.4
    eps = supply_path(sr, lr, {"schedule": "geometric", "rate": rate}, 12)
    for t in range(0, 12):
        # Nerlove (1958), The Dynamics of Supply: after t periods 1 - (1 - lambda)^t of the gap is closed
        # (period 1 is the impact period).
        assert (eps[t + 1] - sr) / (lr - sr) == pytest.approx(
            nerlove_share_closed(rate, t), rel=1e-12, abs=1e-15
        )


@pytest.mark.parametrize("half_life", [1.0, 2.0, 3.0, 5.0])
def test_half_life_schedule_is_half_way_at_period_one_plus_h(half_life):
    sr, lr = 0.1, 2.1
    eps = supply_path(sr, lr, {"schedule": "geometric", "half_life": half_life}, 10)[1 + int(half_life)]
    # Nerlove (1958), The Dynamics of Supply: half the gap is closed after one half-life.
    assert (eps - sr) / (lr - sr) == pytest.approx(0.5, rel=1e-12)
    # Nerlove (1958): half-life ln 0.5 / ln(1 - lambda), of the engine's lambda for h.
    assert nerlove_half_life(float(rate_from_half_life(half_life))) == pytest.approx(half_life, rel=1e-12)


def test_nerlove_default_rate_is_short_over_long_run():
    sr, lr = 0.3, 1.5
    eps = supply_path(sr, lr, {"schedule": "geometric"}, 4)
    lam = sr / lr
    # Nerlove (1958), The Dynamics of Supply: short-run elasticity = lambda x long-run elasticity.
    assert eps[2] == pytest.approx(sr + (lr - sr) * lam, rel=1e-12)


@given(st.integers(0, 10), floats(0.0, 1.0), floats(0.1, 3.0), st.integers(12, 30))
def test_linear_schedule_starts_at_short_run_and_ends_at_long_run(k, sr, lr, horizon):
    body = simulate(
        {
            "market": {
                "price": 100.0,
                "quantity": 1000.0,
                "demand": {"price_elasticity": -0.5},
                "supply": {"short_run_elasticity": sr, "long_run_elasticity": lr},
            },
            "adjustment": {"schedule": "linear", "periods": k},
            "horizon": horizon,
            "policies": [{"name": "free", "kind": "none"}],
        }
    )
    eps = body["supply_elasticity"]
    assert eps[0] == sr
    assert eps[1] == (sr if k > 0 else lr)
    assert eps[-1] == pytest.approx(lr, rel=1e-15)
    assert eps[k + 1] == pytest.approx(lr, rel=1e-15)
    steps = np.diff(eps[1:])
    assert np.all(steps >= -1e-15) if lr >= sr else np.all(steps <= 1e-15)
