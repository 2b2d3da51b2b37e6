"""The shockpath engine: transition paths of a market under shocks and policies.

numpy, scipy and numba (the compiled period pass, kernel.py), and the project's leaf module of
constants, service.limits: this package
imports nothing of HTTP, marshmallow or the environment (tests/test_layers.py enforces it).
Each module's docstring states the equations it solves and their published source.
"""

from .batch import PolicyRows, ScenarioBatch, pack
from .errors import (
    EngineError,
    InfeasiblePolicyError,
    InputError,
    LinearFormRangeError,
    NonFiniteResultError,
)
from .kernel import warm_up
from .paths import PathArrays, solve
from .results import SERIES, PolicyPath, PolicySummary, ScenarioResult, assemble, solve_scenarios
from .scenario import (
    ADDITION_DEFAULTS,
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
    "ADDITION_DEFAULTS",
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
    "solve",
    "solve_scenarios",
    "warm_up",
]
