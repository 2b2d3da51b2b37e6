"""service/engine/shocks.py: each profile's path of fractional changes, and the summed-change
ceiling (service.limits.MAX_SHIFTER_CHANGE) that a growth path may not pass."""

from __future__ import annotations

import numpy as np
import pytest

from service import ProblemError, simulate
from service.engine.shocks import PROFILE_CODES, shock_paths
from service.limits import MAX_SHIFTER_CHANGE

from .builders import validation_base


def test_each_profile_follows_its_definition():
    codes = np.array([PROFILE_CODES[p] for p in ("step", "ramp", "growth", "path")])
    paths, too_large = shock_paths(
        codes,
        change=np.array([0.1, 0.2, 0.0, 0.0]),
        rate=np.array([0.0, 0.0, 0.05, 0.0]),
        start=np.array([2, 1, 1, 1]),
        ramp_periods=np.array([1, 2, 1, 1]),
        values=np.array([[0.0, 0.0], [0.0, 0.0], [0.0, 0.0], [0.3, 0.4]]),
        value_count=np.array([0, 0, 0, 2]),
        horizon=4,
    )
    assert paths[0].tolist() == [0.0, 0.0, 0.1, 0.1, 0.1]  # step from period 2
    assert paths[1].tolist() == [0.0, 0.1, 0.2, 0.2, 0.2]  # ramp over 2 periods
    assert paths[2] == pytest.approx([0.0, 0.05, 1.05**2 - 1, 1.05**3 - 1, 1.05**4 - 1], rel=1e-14)
    assert paths[3].tolist() == [0.0, 0.3, 0.4, 0.4, 0.4]  # the last value holds
    assert not too_large.any()


def test_growth_past_the_summed_change_ceiling_is_an_input_error():
    request = validation_base(form="constant_elasticity")
    rate = 1.0
    periods = int(np.ceil(np.log1p(MAX_SHIFTER_CHANGE) / np.log1p(rate))) + 1
    request["horizon"] = periods
    request["shocks"] = [{"shifter": "income", "profile": "growth", "rate": rate}]
    with pytest.raises(ProblemError) as info:
        simulate(request)
    assert [e["pointer"] for e in info.value.problem["errors"]] == ["/shocks/0"]
    request["horizon"] = periods - 3
    assert simulate(request)["periods"][-1] == periods - 3
