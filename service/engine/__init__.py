"""The shockpath engine: transition paths of a market under shocks and policies.

Pure numpy and scipy: this package imports nothing of HTTP, marshmallow or the environment
(tests/engine/test_fence.py enforces it). The model is ../shared/MODEL.md, module by module.
"""

from .batch import PolicyRows, ScenarioBatch, pack
from .errors import (
    EngineError,
    InfeasiblePolicyError,
    InputError,
    LinearFormRangeError,
    NonFiniteResultError,
)
from .paths import PathArrays, solve
from .results import SERIES, PolicyPath, PolicySummary, ScenarioResult, assemble, simulate
from .scenario import (
    Adjustment,
    DiscountStep,
    Market,
    Policy,
    Scenario,
    Shock,
    Welfare,
)

MODEL_VERSION = "1.0.0"

__all__ = [
    "MODEL_VERSION",
    "SERIES",
    "Adjustment",
    "DiscountStep",
    "EngineError",
    "InfeasiblePolicyError",
    "InputError",
    "LinearFormRangeError",
    "Market",
    "NonFiniteResultError",
    "PathArrays",
    "Policy",
    "PolicyPath",
    "PolicyRows",
    "PolicySummary",
    "Scenario",
    "ScenarioBatch",
    "ScenarioResult",
    "Shock",
    "Welfare",
    "assemble",
    "pack",
    "simulate",
    "solve",
]
